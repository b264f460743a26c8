//! Helpers the verbs share: default folders, and a model or run folder read as a recording.

use std::path::{Path, PathBuf};

use anyhow::Context;

use anlage::model::Model;

pub fn default_out(model: &Path) -> PathBuf {
    beside_model(model, "run")
}

/// `<model stem>_<what>` next to the model file.
pub fn beside_model(model: &Path, what: &str) -> PathBuf {
    let stem = model.file_stem().map_or_else(|| "model".into(), |s| s.to_string_lossy().into_owned());
    model.with_file_name(format!("{stem}_{what}"))
}

/// A recording with the model's genes and snapshot times but no states, to
/// check picture options before anything is simulated.
pub fn planned_recording(model: &Model) -> anlage::Recording {
    let mut planned = anlage::Recording::for_model(model);
    planned.times = model.clock.snapshot_times();
    planned
}

/// A model file is simulated (quietly, with a progress bar on a terminal);
/// a run folder is read back with the model copy it holds. Returns the model,
/// the recording and the folder outputs go to.
pub fn model_and_recording(source: &Path, out: Option<&Path>) -> anyhow::Result<(Model, anlage::Recording, PathBuf)> {
    if source.is_dir() {
        let model = Model::load(&source.join("model.toml"))?;
        let saved = anlage::run_folder::load(source)?;
        Ok((model, saved.recording, out.map_or_else(|| source.to_path_buf(), Path::to_path_buf)))
    } else {
        let model = Model::load(source)?;
        let options = anlage::RunOptions {
            parallel: true,
            progress: Some(std::sync::Arc::new(super::bar::Bar::new(false))),
            ..Default::default()
        };
        let run = anlage::simulate(&model, &options).with_context(|| format!("simulating {}", source.display()))?;
        Ok((model, run.recording, out.map_or_else(|| default_out(source), Path::to_path_buf)))
    }
}

/// Name of the checkpoint file in a run folder.
pub const CHECKPOINT: &str = "checkpoint.bin";

/// `-o -`: the verb's main table goes to standard output and nothing is
/// written to disk.
pub fn table_to_stdout(out: Option<&Path>) -> bool {
    out == Some(Path::new("-"))
}

/// Refuses picture options with `-o -`: nothing is drawn when the table
/// goes to standard output.
///
/// # Errors
/// The first picture option given.
pub fn refuse_pictures_with_stdout(
    out: Option<&Path>,
    look: &super::args::PictureArgs,
    verb: &str,
) -> anyhow::Result<()> {
    if table_to_stdout(out) {
        look.refuse_all(&format!("{verb} -o -"), "writes only its table, to standard output")?;
    }
    Ok(())
}

/// Refuses `-o -` together with `--json`: both would use standard output.
pub fn refuse_json_with_stdout(out: Option<&Path>, json: bool) -> anyhow::Result<()> {
    if json && table_to_stdout(out) {
        anyhow::bail!(anlage::render::StyleError::OutOfRange {
            option: "-o".into(),
            value: "-".into(),
            fix: "-o - and --json both write to standard output; give one of them".into(),
        });
    }
    Ok(())
}

/// Writes a table to standard output with `write` (for `-o -`).
pub fn write_table_to_stdout(write: impl FnOnce(&mut dyn std::io::Write) -> std::io::Result<()>) -> anyhow::Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    write(&mut out).and_then(|()| out.flush()).context("writing the table to standard output")
}

/// Where a verb's report goes: standard output, or standard error when
/// standard output carries its table (`-o -`).
#[derive(Debug, Clone, Copy)]
pub struct Report {
    /// Print to standard error.
    pub to_stderr: bool,
}

impl Report {
    /// The report of a verb whose output option is `out`.
    pub fn for_out(out: Option<&Path>) -> Report {
        Report { to_stderr: table_to_stdout(out) }
    }

    /// Prints one line.
    pub fn line(self, text: std::fmt::Arguments) {
        if self.to_stderr {
            eprintln!("{text}");
        } else {
            println!("{text}");
        }
    }
}

/// `say!(report, "format", args…)`: one line of a verb's [`Report`].
macro_rules! say {
    ($report:expr, $($arg:tt)*) => {
        $report.line(format_args!($($arg)*))
    };
}
pub(crate) use say;

/// Refuses an output picture path that is not a `.png` file (the SVG and
/// any animation are written beside it, named after it: `also`).
///
/// # Errors
/// [`anlage::render::StyleError`] naming `-o`.
pub fn require_png(path: &Path, also: &str) -> Result<(), anlage::render::StyleError> {
    if path.extension().is_some_and(|e| e.eq_ignore_ascii_case("png")) {
        return Ok(());
    }
    Err(anlage::render::StyleError::OutOfRange {
        option: "-o".into(),
        value: path.display().to_string(),
        fix: format!("name a .png file; {also}"),
    })
}

/// Loads a model for a verb that simulates rows of fixed size, refusing a
/// growing row ([growth]) before any work, rather than failing at every
/// point of a screen or sweep.
pub fn load_fixed(path: &std::path::Path, verb: &str) -> anyhow::Result<Model> {
    let model = Model::load(path)?;
    if model.growth.is_some() {
        return Err(anyhow::Error::new(anlage::StepError::Growing).context(format!("{}: `{verb}`", path.display())));
    }
    Ok(model)
}
