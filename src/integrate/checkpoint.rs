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

/// The first line of a checkpoint: the format and its version. Version 2
/// ends with the SHA-256 of everything after this line.
const MAGIC: &str = "anlage-checkpoint 2";

/// Writes through to `inner` and hashes what it writes.
struct Hashing<'a> {
    inner: &'a mut dyn Write,
    hasher: sha2::Sha256,
}

impl Write for Hashing<'_> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let n = self.inner.write(buf)?;
        sha2::Digest::update(&mut self.hasher, &buf[..n]);
        Ok(n)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.inner.flush()
    }
}

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
        let mut h = Hashing { inner: w, hasher: <sha2::Sha256 as sha2::Digest>::new() };
        serde_json::to_writer(&mut h, &header)?;
        writeln!(h)?;
        let write = |w: &mut dyn Write, a: &Array2<f64>| -> std::io::Result<()> {
            for v in a.iter() {
                w.write_all(&v.to_le_bytes())?;
            }
            Ok(())
        };
        for a in s.u.iter().chain(s.f.iter()) {
            write(&mut h, a)?;
        }
        for state in self.recording.states() {
            let state = state.map_err(std::io::Error::other)?;
            write(&mut h, &state)?;
        }
        let digest = sha2::Digest::finalize(h.hasher);
        h.inner.write_all(&digest)
    }
}

impl Checkpoint {
    /// Checks that the saved arrays have the shape `model` needs (genes × nuclei).
    ///
    /// # Errors
    /// [`CheckpointError`] when they do not (a damaged or edited checkpoint).
    pub fn check_fits(&self, model: &crate::model::Model, path: &Path) -> Result<(), CheckpointError> {
        let want = (model.genes.len(), model.grid.len());
        let all = self.stepper.u.iter().chain(&self.stepper.f).chain(&self.states);
        match all.map(|a| a.dim()).find(|d| *d != want) {
            Some(got) => Err(CheckpointError {
                path: path.to_path_buf(),
                problem: format!("holds arrays of {got:?} (genes, nuclei) but its model has {want:?}"),
                fix: "the checkpoint is damaged or was edited; start the run again".into(),
            }),
            None if self.times.len() != self.states.len() => Err(CheckpointError {
                path: path.to_path_buf(),
                problem: "holds a different number of snapshot times and snapshots".into(),
                fix: "the checkpoint is damaged or was edited; start the run again".into(),
            }),
            None => Ok(()),
        }
    }

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
        let size = file.metadata().map_err(|e| fail(e.to_string()))?.len();
        let mut r = std::io::BufReader::new(file);
        let mut line = String::new();
        (&mut r).take(64).read_line(&mut line).map_err(|e| fail(e.to_string()))?;
        if line.trim_end() != MAGIC {
            return Err(fail(format!(
                "is not an anlage checkpoint of format version 2 (its first line is `{}`)",
                line.trim_end().chars().take(40).collect::<String>()
            )));
        }
        let magic_len = line.len() as u64;
        line.clear();
        // The header holds the model's text: at most 64 MiB.
        (&mut r).take(64 << 20).read_line(&mut line).map_err(|e| fail(e.to_string()))?;
        let h: Header = serde_json::from_str(&line).map_err(|e| fail(format!("has a damaged header: {e}")))?;
        let mut hasher = <sha2::Sha256 as sha2::Digest>::new();
        sha2::Digest::update(&mut hasher, line.as_bytes());
        let [g, n] = h.shape;
        // Its size must be what the header says, before anything is allocated.
        let arrays = (5 + h.times.len() as u128) * g as u128 * n as u128 * 8;
        let want = magic_len as u128 + line.len() as u128 + arrays + 32;
        if want != size as u128 {
            return Err(fail(format!(
                "is {size} bytes but its header describes {want}: it is {}",
                if (size as u128) < want {
                    "cut short or its header is damaged"
                } else {
                    "longer than its content (damaged)"
                }
            )));
        }
        let mut read_array = || -> Result<Array2<f64>, CheckpointError> {
            let mut bytes = vec![0u8; g * n * 8];
            r.read_exact(&mut bytes).map_err(|_| fail("is cut short".into()))?;
            sha2::Digest::update(&mut hasher, &bytes);
            let values = bytes.chunks_exact(8).map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes"))).collect();
            Ok(Array2::from_shape_vec((g, n), values).expect("shape from the header"))
        };
        let u = [read_array()?, read_array()?, read_array()?];
        let f = [read_array()?, read_array()?];
        let states = (0..h.times.len()).map(|_| read_array()).collect::<Result<Vec<_>, _>>()?;
        let mut stored = [0u8; 32];
        r.read_exact(&mut stored).map_err(|_| fail("is cut short".into()))?;
        if sha2::Digest::finalize(hasher).as_slice() != stored {
            return Err(fail("is damaged: its checksum (SHA-256) does not match its content".into()));
        }
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

    /// A checkpoint with a flipped bit, extra bytes at its end, a cut-short
    /// end or an edited shape is refused with a reason, never read as if whole.
    #[test]
    fn damaged_checkpoints_are_refused() {
        let grid = Grid { nx: 3, ny: 1, spacing_um: 1.0, edges: Edges::Sealed };
        let state = |v: f64| Array2::from_elem((1, 3), v);
        let stepper = StepperState {
            t: 1.0,
            history: 3,
            k1: 0.1,
            k2: 0.1,
            u: [state(1.0), state(2.0), state(3.0)],
            f: [state(4.0), state(5.0)],
        };
        let recording = crate::Recording::with_states(
            grid,
            vec!["g".into()],
            vec![[0, 0, 0]],
            vec![0.0],
            vec![state(0.5)],
            vec![0.0],
        );
        let parts = CheckpointParts {
            model_text: "text",
            model_path: Path::new("m.toml"),
            stepper: &stepper,
            progress: Progress { next_snapshot: 1, steps_taken: 0, next_step_min: 0.1 },
            stats: StepStats::default(),
            recording: &recording,
        };
        let mut good = Vec::new();
        parts.write(&mut good).unwrap();
        let file = std::env::temp_dir().join(format!("anlage-checkpoint-damaged-{}", std::process::id()));
        let read = |bytes: &[u8]| {
            std::fs::write(&file, bytes).unwrap();
            Checkpoint::read(&file).map(|_| ()).map_err(|e| e.problem)
        };
        assert_eq!(read(&good), Ok(()));
        let mut flipped = good.clone();
        let at = flipped.len() - 60;
        flipped[at] ^= 0x10;
        assert!(read(&flipped).unwrap_err().contains("checksum"));
        let mut longer = good.clone();
        longer.extend_from_slice(b"junk");
        assert!(read(&longer).unwrap_err().contains("longer than its content"));
        assert!(read(&good[..good.len() - 9]).unwrap_err().contains("cut short"));
        let edited = String::from_utf8_lossy(&good).replacen("\"shape\":[1,3]", "\"shape\":[100000,100000000]", 1);
        assert!(read(edited.as_bytes()).unwrap_err().contains("bytes but its header describes"));
        std::fs::remove_file(&file).unwrap();
    }
}
