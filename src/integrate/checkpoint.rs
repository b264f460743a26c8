//! Checkpoints: everything a run needs to continue exactly where it was.
//!
//! One file, `checkpoint.bin`: the line `anlage-checkpoint 1`, one line of
//! JSON (the model text, the integrator's scalars, the loop position, the
//! step counts, the snapshot times and the array shapes), then the arrays as
//! little-endian f64 in the order listed. Floats in the JSON are written in
//! shortest round-trip form, so a resumed run continues bit for bit.

use std::io::{BufRead, Read, Write};
use std::path::{Path, PathBuf};

use ndarray::Array2;
use serde::{Deserialize, Serialize};

use super::StepStats;

const MAGIC: &str = "anlage-checkpoint 1";

/// The integrator's state: levels and rates at the last three accepted steps.
#[derive(Debug, Clone, PartialEq)]
pub struct StepperState {
    /// Time of `u`, min.
    pub t: f64,
    /// Accepted states held (1–3).
    pub history: usize,
    /// Last two steps, min.
    pub k1: f64,
    /// The step before, min.
    pub k2: f64,
    /// State, previous state and the one before, [gene, nucleus].
    pub u: [Array2<f64>; 3],
    /// Rates at `u` and at the previous state.
    pub f: [Array2<f64>; 2],
}

/// Where the time loop is.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Progress {
    /// Index of the next snapshot time to record.
    pub next_snapshot: usize,
    /// Fixed steps taken.
    pub steps_taken: usize,
    /// Error control: the next step to try, min.
    pub next_step_min: f64,
}

/// A saved run in progress.
#[derive(Debug, Clone, PartialEq)]
pub struct Checkpoint {
    /// The model file's text (the run continues with exactly this model).
    pub model_text: String,
    /// Where the model file was (relative paths in it, e.g. `initial_file`, resolve from there).
    pub model_path: PathBuf,
    /// The integrator.
    pub stepper: StepperState,
    /// The loop.
    pub progress: Progress,
    /// Steps so far.
    pub stats: StepStats,
    /// Snapshots recorded so far.
    pub times: Vec<f64>,
    /// Their states.
    pub states: Vec<Array2<f64>>,
}

#[derive(Serialize, Deserialize)]
struct Header {
    model_text: String,
    model_path: PathBuf,
    t: f64,
    history: usize,
    k1: f64,
    k2: f64,
    progress: Progress,
    steps: usize,
    rejected: usize,
    min_step_min: f64,
    max_step_min: f64,
    times: Vec<f64>,
    /// Genes × nuclei of every array.
    shape: [usize; 2],
}

/// A checkpoint that cannot be read.
#[derive(Debug, thiserror::Error)]
#[error("{}: {problem}; {fix}", path.display())]
pub struct CheckpointError {
    /// The file.
    pub path: PathBuf,
    /// What is wrong.
    pub problem: String,
    /// What to do.
    pub fix: String,
}

/// The parts of a checkpoint, borrowed from a run in progress (so that taking
/// a checkpoint copies nothing but the integrator's arrays).
pub struct CheckpointParts<'a> {
    /// The model file's text.
    pub model_text: &'a str,
    /// Where the model file was.
    pub model_path: &'a Path,
    /// The integrator.
    pub stepper: &'a StepperState,
    /// The loop.
    pub progress: Progress,
    /// Steps so far.
    pub stats: StepStats,
    /// The snapshots so far.
    pub recording: &'a super::Recording,
}

impl CheckpointParts<'_> {
    /// Writes the checkpoint body (the caller makes the write atomic).
    ///
    /// # Errors
    /// Any write error.
    pub fn write(&self, w: &mut dyn Write) -> std::io::Result<()> {
        let s = self.stepper;
        let header = Header {
            model_text: self.model_text.to_string(),
            model_path: self.model_path.to_path_buf(),
            t: s.t,
            history: s.history,
            k1: s.k1,
            k2: s.k2,
            progress: self.progress,
            steps: self.stats.steps,
            rejected: self.stats.rejected,
            min_step_min: self.stats.min_step_min,
            max_step_min: self.stats.max_step_min,
            times: self.recording.times.clone(),
            shape: [s.u[0].nrows(), s.u[0].ncols()],
        };
        writeln!(w, "{MAGIC}")?;
        serde_json::to_writer(&mut *w, &header)?;
        writeln!(w)?;
        let write = |w: &mut dyn Write, a: &Array2<f64>| -> std::io::Result<()> {
            for v in a.iter() {
                w.write_all(&v.to_le_bytes())?;
            }
            Ok(())
        };
        for a in s.u.iter().chain(s.f.iter()) {
            write(w, a)?;
        }
        for state in self.recording.states() {
            let state = state.map_err(std::io::Error::other)?;
            write(w, &state)?;
        }
        Ok(())
    }
}

impl Checkpoint {
    /// Reads a checkpoint file.
    ///
    /// # Errors
    /// [`CheckpointError`] if the file is missing, not a checkpoint or cut short.
    pub fn read(path: &Path) -> Result<Checkpoint, CheckpointError> {
        let fail = |problem: String| CheckpointError {
            path: path.to_path_buf(),
            problem,
            fix: "resume from the folder of a run started with --checkpoint-every, or start the run again".into(),
        };
        let file = std::fs::File::open(path).map_err(|e| fail(format!("cannot be opened: {e}")))?;
        let mut r = std::io::BufReader::new(file);
        let mut line = String::new();
        r.read_line(&mut line).map_err(|e| fail(e.to_string()))?;
        if line.trim_end() != MAGIC {
            return Err(fail("is not an anlage checkpoint (version 1)".into()));
        }
        line.clear();
        r.read_line(&mut line).map_err(|e| fail(e.to_string()))?;
        let h: Header = serde_json::from_str(&line).map_err(|e| fail(format!("has a damaged header: {e}")))?;
        let [g, n] = h.shape;
        let mut read_array = || -> Result<Array2<f64>, CheckpointError> {
            let mut bytes = vec![0u8; g * n * 8];
            r.read_exact(&mut bytes).map_err(|_| fail("is cut short".into()))?;
            let values = bytes.chunks_exact(8).map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes"))).collect();
            Ok(Array2::from_shape_vec((g, n), values).expect("shape from the header"))
        };
        let u = [read_array()?, read_array()?, read_array()?];
        let f = [read_array()?, read_array()?];
        let states = (0..h.times.len()).map(|_| read_array()).collect::<Result<Vec<_>, _>>()?;
        Ok(Checkpoint {
            model_text: h.model_text,
            model_path: h.model_path,
            stepper: StepperState { t: h.t, history: h.history, k1: h.k1, k2: h.k2, u, f },
            progress: h.progress,
            stats: StepStats {
                steps: h.steps,
                rejected: h.rejected,
                min_step_min: h.min_step_min,
                max_step_min: h.max_step_min,
            },
            times: h.times,
            states,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Edges, Grid};

    /// Every float comes back with the same bits. 5/22 is a step the sheet
    /// demo really took; serde_json's default float parser read it back one
    /// ulp off, and the resumed run drifted from the uninterrupted one at
    /// round-off level (fixed by its correctly rounded parser).
    #[test]
    fn scalars_round_trip_to_the_bit() {
        let awkward = [5.0 / 22.0, 21.818181818181813, 0.1 + 0.2, 2.0 / 3.0, 1e-300, 123456.789e-7, f64::MAX];
        let grid = Grid { nx: 3, ny: 1, spacing_um: 1.0, edges: Edges::Sealed };
        let state = |v: f64| Array2::from_elem((1, 3), v);
        for (i, &x) in awkward.iter().enumerate() {
            let y = awkward[(i + 1) % awkward.len()];
            let stepper = StepperState {
                t: x,
                history: 3,
                k1: y,
                k2: x,
                u: [state(x), state(y), state(1.0)],
                f: [state(y), state(x)],
            };
            let recording = crate::Recording::with_states(
                grid,
                vec!["g".into()],
                vec![[0, 0, 0]],
                vec![x],
                vec![state(y)],
                vec![0.0],
            );
            let stats = StepStats { steps: 7, rejected: 1, min_step_min: y, max_step_min: x };
            let progress = Progress { next_snapshot: 1, steps_taken: 0, next_step_min: y };
            let parts = CheckpointParts {
                model_text: "text",
                model_path: Path::new("m.toml"),
                stepper: &stepper,
                progress,
                stats,
                recording: &recording,
            };
            let file = std::env::temp_dir().join(format!("anlage-checkpoint-test-{}-{i}", std::process::id()));
            let mut bytes = Vec::new();
            parts.write(&mut bytes).unwrap();
            std::fs::write(&file, bytes).unwrap();
            let back = Checkpoint::read(&file).unwrap();
            std::fs::remove_file(&file).unwrap();
            assert_eq!(back.stepper, stepper, "{x:e}, {y:e}");
            assert_eq!(back.progress, progress);
            assert_eq!(back.stats, stats);
            assert_eq!(back.times, vec![x]);
            assert_eq!(back.states, vec![state(y)]);
        }
    }
}
