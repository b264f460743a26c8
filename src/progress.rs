//! How the library tells its caller how far a long computation has got.
//!
//! The library never draws or prints: it calls a [`Progress`] the caller
//! gives (the command line draws a bar on a terminal; a notebook or a test
//! may count, log or ignore). Calls can come from rayon workers, so an
//! implementation must be `Sync`; counts only go up within one stage.

use std::sync::atomic::{AtomicU64, Ordering};

/// Receives progress reports. Every method has an empty default.
pub trait Progress: Sync + Send {
    /// A stage of `total` units begins; `what` names the units
    /// ("snapshots", "mutants", "parameters", "snapshots' fates").
    fn begin(&self, what: &str, total: u64) {
        let _ = (what, total);
    }
    /// `done` units of the current stage are finished; `note` is a short
    /// status such as the model time ("t = 12.5 min"), or empty.
    fn advance(&self, done: u64, note: &str) {
        let _ = (done, note);
    }
    /// The current stage is over.
    fn finish(&self) {}
    /// Something failed that does not stop the work or change its results
    /// (e.g. a checkpoint that could not be written).
    fn warn(&self, message: &str) {
        let _ = message;
    }
}

/// Reports nothing.
#[derive(Debug, Clone, Copy, Default)]
pub struct Silent;

impl Progress for Silent {}

/// Counts finished units of work done in parallel and reports each new count.
pub(crate) struct Counter<'a> {
    progress: &'a dyn Progress,
    done: AtomicU64,
}

impl<'a> Counter<'a> {
    /// Begins a stage of `total` units named `what`.
    pub(crate) fn begin(progress: &'a dyn Progress, what: &str, total: usize) -> Self {
        progress.begin(what, total as u64);
        Counter { progress, done: AtomicU64::new(0) }
    }
    /// One more unit is finished.
    pub(crate) fn tick(&self) {
        let done = self.done.fetch_add(1, Ordering::Relaxed) + 1;
        self.progress.advance(done, "");
    }
}

impl Drop for Counter<'_> {
    fn drop(&mut self) {
        self.progress.finish();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::Mutex;

    #[derive(Default)]
    struct Log(Mutex<Vec<String>>);
    impl Progress for Log {
        fn begin(&self, what: &str, total: u64) {
            self.0.lock().unwrap().push(format!("begin {what} {total}"));
        }
        fn advance(&self, done: u64, _: &str) {
            self.0.lock().unwrap().push(format!("{done}"));
        }
        fn finish(&self) {
            self.0.lock().unwrap().push("end".into());
        }
    }

    #[test]
    fn a_counter_reports_each_unit_once_and_ends_the_stage() {
        use rayon::prelude::*;
        let log = Log::default();
        {
            let c = Counter::begin(&log, "mutants", 50);
            (0..50).into_par_iter().for_each(|_| c.tick());
        }
        let lines = log.0.into_inner().unwrap();
        assert_eq!(lines.first().map(String::as_str), Some("begin mutants 50"));
        assert_eq!(lines.last().map(String::as_str), Some("end"));
        let mut counts: Vec<u64> = lines[1..lines.len() - 1].iter().map(|s| s.parse().unwrap()).collect();
        counts.sort_unstable();
        assert_eq!(counts, (1..=50).collect::<Vec<u64>>());
    }
}
