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
