//! anlage: simulate how a gene-regulatory circuit, read out in every nucleus of
//! a row or sheet coupled by diffusion and fed by gradients, forms domains and
//! boundaries.
//!
//! ```text
//! model file ──Model::load──▶ Model ──simulate──▶ Run { Recording, stats }
//!                     Recording ──readout──▶ boundaries, domains
//!                     Run ──write_run──▶ profiles.csv, states.npy, boundaries.csv, domains.csv, summary.json
//! ```
//! Units: µm, min, arbitrary concentration units (a.u.).
//!
//! ```
//! use anlage::{model::Model, simulate, RunOptions};
//! let text = r#"
//! [tissue]
//! nuclei = [20]
//! spacing_um = 5.0
//! [clock]
//! until_min = 10.0
//! step_min = 0.01
//! snapshot_every_min = 5.0
//! [[gene]]
//! name = "solo"
//! production = 2.0
//! decay = 0.5
//! "#;
//! let model = Model::from_toml(text, "solo.toml".as_ref()).unwrap();
//! let run = simulate(&model, &RunOptions::default()).unwrap();
//! // x(t) = p/d + (x0 − p/d)·e^(−d t) with x0 = 0: 4·(1 − e^(−5)).
//! let x = run.recording.final_state()[[0, 7]];
//! approx::assert_relative_eq!(x, 4.0 * (1.0 - (-5.0f64).exp()), max_relative = 1e-5);
//! ```
#![warn(missing_docs)]
// Errors are cold paths, and a model error carries the file, line, column,
// field and fix it reports; boxing them would buy nothing measurable.
#![allow(clippy::result_large_err)]
// `!(x <= limit)` is how NaN is caught along with values past a limit.
#![allow(clippy::neg_cmp_op_on_partial_ord)]
// Index loops over several arrays at once follow the equations they implement.
#![allow(clippy::needless_range_loop)]

pub mod compare;
pub mod error;
pub mod export;
pub mod files;
pub mod fit;
pub mod growth;
pub mod integrate;
pub mod kinetics;
pub mod measure;
pub mod model;
pub mod page;
pub mod phase;
pub mod progress;

pub mod readout;
pub mod render;
pub mod replicates;
pub mod run_folder;
pub mod screen;
pub mod shard;
pub mod sweep;

mod outputs;
pub mod reference;
mod simd;
pub mod tissue;
pub use outputs::{
    BasinReport, PictureKind, WriteError, write_basins, write_figure, write_picture, write_pictures, write_portrait,
};
pub use outputs::{ReplicateJob, ReplicateReport, write_fit, write_replicates, write_screen, write_sensitivity};
pub use outputs::{
    SCREEN_REPLICATES, write_screen_files, write_screen_replicates, write_sensitivity_files, write_sweep,
    write_sweep_files,
};
pub use outputs::{SHIFTS_OVER_TIME, write_bifurcation, write_fold_curves, write_shifts_over_time};
pub use run_folder::{Summary, write_run};

use std::time::Instant;

pub use integrate::{Recording, STREAM_ABOVE_BYTES, StepError, StepStats};

use model::Model;

/// How to run a simulation.
#[derive(Clone)]
pub struct RunOptions {
    /// Use rayon inside the run (results are identical either way).
    pub parallel: bool,
    /// Told of each snapshot taken (stage "snapshots", note "t = … min") and
    /// of checkpoints that could not be written; `None` reports nothing.
    pub progress: Option<std::sync::Arc<dyn progress::Progress>>,
    /// Simulate the intrinsic noise of the model's `[noise]` section
    /// ([`integrate::stochastic`]); without it, or for a model without such
    /// noise, the run is deterministic.
    pub stochastic: bool,
    /// Stream the snapshots to an unnamed scratch file in this folder as they
    /// are taken, so memory does not grow with them. Without a folder, a
    /// recording larger than [`integrate::memory::stream_above_bytes`] streams to the
    /// system's temporary folder (`anlage run` gives its output folder).
    pub stream_to: Option<std::path::PathBuf>,
}

impl Default for RunOptions {
    fn default() -> Self {
        RunOptions { parallel: true, progress: None, stochastic: false, stream_to: None }
    }
}

impl std::fmt::Debug for RunOptions {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("RunOptions")
            .field("parallel", &self.parallel)
            .field("progress", &self.progress.is_some())
            .field("stochastic", &self.stochastic)
            .field("stream_to", &self.stream_to)
            .finish()
    }
}

/// A finished simulation.
#[derive(Debug)]
pub struct Run {
    /// Snapshots.
    pub recording: Recording,
    /// Step counts.
    pub stats: StepStats,
    /// Wall time of the integration, s.
    pub wall_time_s: f64,
}

/// Simulates a model from its initial state to the end of its clock.
///
/// # Errors
/// [`StepError`] if the state becomes non-finite or error-controlled steps collapse.
pub fn simulate(model: &Model, options: &RunOptions) -> Result<Run, StepError> {
    simulate_with(model, options, None)
}

/// Checkpoints of a long run: where, how often, and where to continue from.
#[derive(Debug, Clone)]
pub struct Checkpointing {
    /// The checkpoint file (written atomically, replaced each time).
    pub file: std::path::PathBuf,
    /// Wall time between checkpoints.
    pub every: std::time::Duration,
    /// A checkpoint of this model to continue from.
    pub resume: Option<integrate::Checkpoint>,
    /// Set (by a signal handler) to stop: a checkpoint is written at the next
    /// accepted step and the run ends with [`StepError::Stopped`].
    pub stop: Option<std::sync::Arc<std::sync::atomic::AtomicBool>>,
}

/// Locks a mutex, also after a panic elsewhere left it poisoned.
fn lock<T>(m: &std::sync::Mutex<T>) -> std::sync::MutexGuard<'_, T> {
    m.lock().unwrap_or_else(std::sync::PoisonError::into_inner)
}

/// [`simulate`] with checkpoints: saves the run every `every` of wall time and
/// can continue from a checkpoint; a resumed run gives the same bytes as an
/// uninterrupted one. A checkpoint that cannot be written is reported on
/// stderr and the run goes on.
///
/// # Errors
/// [`StepError`] if the state becomes non-finite or error-controlled steps collapse.
pub fn simulate_with(model: &Model, options: &RunOptions, plan: Option<&Checkpointing>) -> Result<Run, StepError> {
    if model.growth.is_some() {
        return Err(StepError::Growing);
    }
    let start = Instant::now();
    let tissue = tissue::Tissue::new(model);
    let kinetics = kinetics::build(model);
    let mut recording = Recording::for_model(model);
    // A recording too large for memory streams even when no folder is given
    // (then to the system's temporary folder), so every caller fits the
    // budget the model was checked against.
    let scratch =
        options.stream_to.clone().or_else(|| integrate::MemoryPlan::of(model).streams.then(std::env::temp_dir));
    if let Some(dir) = &scratch {
        recording
            .stream_to(dir)
            .map_err(|e| StepError::Recording(format!("making a scratch file in {}: {e}", dir.display())))?;
    }
    let resume = plan.and_then(|p| p.resume.as_ref());
    if let Some(c) = resume {
        for (t, state) in c.times.iter().zip(&c.states) {
            recording.push(*t, state).map_err(|e| StepError::Recording(e.to_string()))?;
        }
    }
    let mut write_error = None;
    // Shared by the two callbacks, which may run on a worker of the pool.
    let recording = std::sync::Mutex::new(recording);

    let report: &dyn progress::Progress = options.progress.as_deref().unwrap_or(&progress::Silent);
    report.begin("snapshots", model.snapshot_count() as u64);
    report.advance(lock(&recording).times.len() as u64, "");
    let mut last_saved = Instant::now();
    let model_path = std::path::absolute(&model.file).unwrap_or_else(|_| model.file.clone());
    let mut warned = false;
    let mut on_snapshot = |t: f64, state: &ndarray::Array2<f64>| {
        let taken = {
            let mut rec = lock(&recording);
            if let Err(e) = rec.push(t, state) {
                write_error.get_or_insert(e);
            }
            rec.times.len() as u64
        };
        report.advance(taken, &format!("t = {t:.1} min"));
    };
    let stochastic = options.stochastic && model.noise.is_stochastic();
    let stats = if stochastic {
        // Checkpoints are not taken in stochastic runs (they are short, one embryo of many).
        integrate::stochastic::integrate_stochastic(
            model,
            kinetics.as_ref(),
            &tissue,
            options.parallel,
            &mut on_snapshot,
        )
    } else {
        integrate::integrate_from(
            model,
            kinetics.as_ref(),
            &tissue,
            options.parallel,
            resume,
            &mut on_snapshot,
            |stepper, progress, stats| {
                let Some(plan) = plan else { return true };
                let stopping = plan.stop.as_ref().is_some_and(|s| s.load(std::sync::atomic::Ordering::Relaxed));
                // The last step is saved too, so that a run stopped while its
                // outputs are written resumes without simulating again.
                let last = stepper.time() >= model.clock.until_min * (1.0 - 1e-12);
                if last_saved.elapsed() < plan.every && !stopping && !last {
                    return true;
                }
                let rec = lock(&recording);
                let saved = stepper.save();
                let checkpoint = integrate::CheckpointParts {
                    model_text: &model.text,
                    model_path: &model_path,
                    stepper: &saved,
                    progress,
                    stats,
                    recording: &rec,
                };
                if let Err(e) = export::write_atomic_durable(&plan.file, |w| checkpoint.write(w))
                    && !warned
                {
                    report.warn(&format!("checkpoint not written: {e}"));
                    warned = true;
                }
                last_saved = Instant::now();
                !stopping
            },
        )
    };
    report.finish();
    if let Some(e) = write_error {
        return Err(StepError::Recording(format!("writing a snapshot to the scratch file: {e}")));
    }
    let mut recording = recording.into_inner().unwrap_or_else(std::sync::PoisonError::into_inner);
    let stats = stats?;
    recording.floor_from_run()?;
    Ok(Run { recording, stats, wall_time_s: start.elapsed().as_secs_f64() })
}
