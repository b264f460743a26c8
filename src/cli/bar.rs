//! The progress bar on standard error: the command line's [`Progress`].

use std::sync::Mutex;

use anlage::progress::Progress;
use indicatif::{ProgressBar, ProgressStyle};

/// Draws one bar per stage (hidden when standard error is not a terminal,
/// or when `quiet`); prints warnings at once, above the bar.
pub struct Bar {
    quiet: bool,
    bar: Mutex<Option<ProgressBar>>,
}

impl Bar {
    /// A bar that draws unless `quiet`.
    pub fn new(quiet: bool) -> Self {
        Bar { quiet, bar: Mutex::new(None) }
    }

    fn with(&self, f: impl FnOnce(&ProgressBar)) {
        if let Some(bar) = self.bar.lock().unwrap_or_else(std::sync::PoisonError::into_inner).as_ref() {
            f(bar);
        }
    }
}

impl Progress for Bar {
    fn begin(&self, what: &str, total: u64) {
        if self.quiet {
            return;
        }
        let bar = ProgressBar::new(total);
        let template = format!("{{bar:40}} {{pos}}/{{len}} {what}{{msg}}, {{elapsed}} elapsed, ~{{eta}} left");
        bar.set_style(ProgressStyle::with_template(&template).unwrap_or_else(|_| ProgressStyle::default_bar()));
        if let Some(old) = self.bar.lock().unwrap_or_else(std::sync::PoisonError::into_inner).replace(bar) {
            old.finish_and_clear();
        }
    }

    fn advance(&self, done: u64, note: &str) {
        self.with(|bar| {
            bar.set_position(done);
            if !note.is_empty() {
                bar.set_message(format!(", {note}"));
            }
        });
    }

    fn finish(&self) {
        if let Some(bar) = self.bar.lock().unwrap_or_else(std::sync::PoisonError::into_inner).take() {
            bar.finish_and_clear();
        }
    }

    fn warn(&self, message: &str) {
        let line = format!("anlage: warning: {message}");
        match self.bar.lock().unwrap_or_else(std::sync::PoisonError::into_inner).as_ref() {
            Some(bar) => bar.suspend(|| eprintln!("{line}")),
            None => eprintln!("{line}"),
        }
    }
}
