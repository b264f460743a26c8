//! Checkpoints: everything a run needs to continue exactly where it was.
//!
//! One file, `checkpoint.bin`: the line `anlage-checkpoint 3`, one line of
//! JSON (the model text, the scheme, the accepted state's time and last
//! step, the names and values of the scheme's history numbers, the names of
//! its history arrays, the loop position, the step counts, the snapshot
//! times and the array shape), then the arrays as little-endian f64: the
//! state, the history arrays in the order named, the snapshots; then the
//! SHA-256 of everything after the first line. Floats in the JSON are
//! written in shortest round-trip form, so a resumed run continues bit for
//! bit.
//!
//! Version 2 (anlage before the schemes had types of their own) held the
//! state, two earlier states and two arrays of rates whatever the scheme,
//! the second of them D∇²u for ARK4; it is still read.

use std::io::{BufRead, Read, Write};
use std::path::{Path, PathBuf};

use ndarray::Array2;
use serde::{Deserialize, Serialize};

use super::StepStats;
use super::scheme::{History, Scheme};

mod v2;

/// The first line of a checkpoint: the format and its version.
const MAGIC: &str = "anlage-checkpoint 3";

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

/// The integrator's state: the accepted state and the scheme's history
/// (the rates at the state are evaluated again when it is restored).
#[derive(Debug, Clone, PartialEq)]
pub struct StepperState {
    /// The scheme.
    pub scheme: Scheme,
    /// Time of `u`, min.
    pub t: f64,
    /// The step that led to `u`, min (0 before the first).
    pub last_step: f64,
    /// Levels [gene, nucleus], a.u.
    pub u: Array2<f64>,
    /// The scheme's history, laid out as [`Scheme::history_numbers`] and
    /// [`Scheme::history_arrays`] name it.
    pub history: History,
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

/// A named number of a scheme's history.
#[derive(Serialize, Deserialize)]
struct Named {
    name: String,
    value: f64,
}

#[derive(Serialize, Deserialize)]
struct Header {
    model_text: String,
    model_path: PathBuf,
    /// [`Scheme::key`].
    scheme: String,
    t: f64,
    last_step_min: f64,
    history_numbers: Vec<Named>,
    /// Names of the history arrays, in the order they follow the state.
    history_arrays: Vec<String>,
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
        let numbers = s.scheme.history_numbers().iter().zip(&s.history.numbers);
        let header = Header {
            model_text: self.model_text.to_string(),
            model_path: self.model_path.to_path_buf(),
            scheme: s.scheme.key().into(),
            t: s.t,
            last_step_min: s.last_step,
            history_numbers: numbers.map(|(name, value)| Named { name: (*name).into(), value: *value }).collect(),
            history_arrays: s.scheme.history_arrays().iter().map(|name| (*name).into()).collect(),
            progress: self.progress,
            steps: self.stats.steps,
            rejected: self.stats.rejected,
            min_step_min: self.stats.min_step_min,
            max_step_min: self.stats.max_step_min,
            times: self.recording.times.clone(),
            shape: [s.u.nrows(), s.u.ncols()],
        };
        assert_eq!(s.history.arrays.len(), header.history_arrays.len(), "the scheme's history layout");
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
        for a in std::iter::once(&s.u).chain(&s.history.arrays) {
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
    /// Checks that the checkpoint was written with the scheme `model` asks
    /// for and that the saved arrays have the shape it needs (genes × nuclei).
    ///
    /// # Errors
    /// [`CheckpointError`] when they do not (a damaged or edited checkpoint).
    pub fn check_fits(&self, model: &crate::model::Model, path: &Path) -> Result<(), CheckpointError> {
        let want = (model.genes.len(), model.grid.len());
        if self.stepper.scheme != model.clock.scheme {
            return Err(CheckpointError {
                path: path.to_path_buf(),
                problem: format!(
                    "was written by a run with the {} scheme but its model asks for {}",
                    self.stepper.scheme.key(),
                    model.clock.scheme.key()
                ),
                fix: "the checkpoint is damaged or was edited; start the run again".into(),
            });
        }
        let all = std::iter::once(&self.stepper.u).chain(&self.stepper.history.arrays).chain(&self.states);
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
        let first = line.trim_end().to_string();
        if first != MAGIC && first != v2::MAGIC {
            let version = first.strip_prefix("anlage-checkpoint ").and_then(|v| v.parse::<u32>().ok());
            return Err(match version {
                Some(v) if v < 2 => CheckpointError {
                    path: path.to_path_buf(),
                    problem: format!("was written by an older version of anlage (checkpoint format {v})"),
                    fix: "this version cannot continue it; rerun the model from the start".into(),
                },
                Some(v) => CheckpointError {
                    path: path.to_path_buf(),
                    problem: format!("was written by a newer version of anlage (checkpoint format {v})"),
                    fix: "continue it with that version, or rerun the model from the start".into(),
                },
                None => fail(format!(
                    "is not an anlage checkpoint (its first line is `{}`)",
                    first.chars().take(40).collect::<String>()
                )),
            });
        }
        let magic_len = line.len() as u64;
        line.clear();
        // The header holds the model's text: at most 64 MiB.
        (&mut r).take(64 << 20).read_line(&mut line).map_err(|e| fail(e.to_string()))?;
        let damaged = |e: serde_json::Error| fail(format!("has a damaged header: {e}"));
        let h = if first == MAGIC {
            serde_json::from_str::<Header>(&line).map_err(damaged)?
        } else {
            let old: v2::Header = serde_json::from_str(&line).map_err(damaged)?;
            old.upgrade().map_err(fail)?
        };
        let scheme = Scheme::from_key(&h.scheme)
            .ok_or_else(|| fail(format!("names a scheme this version does not know, `{}`", h.scheme)))?;
        let names = |list: &[&str]| list.iter().map(|s| s.to_string()).collect::<Vec<_>>();
        let number_names: Vec<String> = h.history_numbers.iter().map(|n| n.name.clone()).collect();
        if number_names != names(scheme.history_numbers()) || h.history_arrays != names(scheme.history_arrays()) {
            return Err(fail(format!(
                "holds a history for the {} scheme that this version does not lay out so ({:?}, {:?})",
                h.scheme, number_names, h.history_arrays
            )));
        }
        let mut hasher = <sha2::Sha256 as sha2::Digest>::new();
        sha2::Digest::update(&mut hasher, line.as_bytes());
        let [g, n] = h.shape;
        // Arrays on disk: the state and the history (version 3), or the
        // state, two earlier states and two of rates (version 2); then the
        // snapshots.
        let kept = if first == MAGIC { 1 + h.history_arrays.len() } else { v2::ARRAYS };
        // Its size must be what the header says, before anything is allocated.
        let arrays = (kept as u128 + h.times.len() as u128) * g as u128 * n as u128 * 8;
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
        let mut kept: Vec<Array2<f64>> = (0..kept).map(|_| read_array()).collect::<Result<_, _>>()?;
        let states = (0..h.times.len()).map(|_| read_array()).collect::<Result<Vec<_>, _>>()?;
        let mut stored = [0u8; 32];
        r.read_exact(&mut stored).map_err(|_| fail("is cut short".into()))?;
        if sha2::Digest::finalize(hasher).as_slice() != stored {
            return Err(fail("is damaged: its checksum (SHA-256) does not match its content".into()));
        }
        let arrays = if first == MAGIC { kept.split_off(1) } else { v2::history_arrays(scheme, kept.split_off(1)) };
        let u = kept.pop().expect("the state");
        Ok(Checkpoint {
            model_text: h.model_text,
            model_path: h.model_path,
            stepper: StepperState {
                scheme,
                t: h.t,
                last_step: h.last_step_min,
                u,
                history: History { numbers: h.history_numbers.iter().map(|n| n.value).collect(), arrays },
            },
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

    /// A saved integrator with `scheme`'s history layout, every number and
    /// array filled from `x` and `y` in turn.
    fn saved(scheme: Scheme, x: f64, y: f64) -> StepperState {
        let state = |v: f64| Array2::from_elem((1, 3), v);
        let pick = |i: usize| if i.is_multiple_of(2) { x } else { y };
        StepperState {
            scheme,
            t: x,
            last_step: y,
            u: state(x),
            history: History {
                numbers: (0..scheme.history_numbers().len()).map(pick).collect(),
                arrays: (0..scheme.history_arrays().len()).map(|i| state(pick(i + 1))).collect(),
            },
        }
    }

    fn write(stepper: &StepperState, progress: Progress, stats: StepStats, time: f64, state: &Array2<f64>) -> Vec<u8> {
        let grid = Grid { nx: 3, ny: 1, spacing_um: 1.0, edges: Edges::Sealed };
        let recording = crate::Recording::with_states(
            grid,
            vec!["g".into()],
            vec![[0, 0, 0]],
            vec![time],
            vec![state.clone()],
            vec![0.0],
        );
        let parts = CheckpointParts {
            model_text: "text",
            model_path: Path::new("m.toml"),
            stepper,
            progress,
            stats,
            recording: &recording,
        };
        let mut bytes = Vec::new();
        parts.write(&mut bytes).unwrap();
        bytes
    }

    /// Reads `bytes` as a checkpoint file named after `name`.
    pub(super) fn read(bytes: &[u8], name: &str) -> Result<Checkpoint, CheckpointError> {
        let file = std::env::temp_dir().join(format!("anlage-checkpoint-{name}-{}", std::process::id()));
        std::fs::write(&file, bytes).unwrap();
        let back = Checkpoint::read(&file);
        std::fs::remove_file(&file).unwrap();
        back
    }

    /// Every float comes back with the same bits, for every scheme's
    /// history. 5/22 is a step the sheet demo really took; serde_json's
    /// default float parser read it back one ulp off, and the resumed run
    /// drifted from the uninterrupted one at round-off level (fixed by its
    /// correctly rounded parser).
    #[test]
    fn scalars_round_trip_to_the_bit() {
        let awkward = [5.0 / 22.0, 21.818181818181813, 0.1 + 0.2, 2.0 / 3.0, 1e-300, 123456.789e-7, f64::MAX];
        for scheme in Scheme::ALL {
            for (i, &x) in awkward.iter().enumerate() {
                let y = awkward[(i + 1) % awkward.len()];
                let stepper = saved(scheme, x, y);
                let stats = StepStats { steps: 7, rejected: 1, min_step_min: y, max_step_min: x };
                let progress = Progress { next_snapshot: 1, steps_taken: 0, next_step_min: y };
                let snapshot = Array2::from_elem((1, 3), y);
                let back = read(&write(&stepper, progress, stats, x, &snapshot), &format!("bits-{i}")).unwrap();
                assert_eq!(back.stepper, stepper, "{scheme:?}: {x:e}, {y:e}");
                assert_eq!(back.progress, progress);
                assert_eq!(back.stats, stats);
                assert_eq!(back.times, vec![x]);
                assert_eq!(back.states, vec![snapshot]);
            }
        }
    }

    /// The header names the scheme and its history: SBDF2's earlier states
    /// and rates by what they are (common practice, no source).
    #[test]
    fn the_header_names_the_history() {
        let stepper = saved(Scheme::Sbdf2, 1.0, 2.0);
        let bytes = write(
            &stepper,
            Progress { next_snapshot: 1, steps_taken: 0, next_step_min: 0.1 },
            StepStats::default(),
            0.0,
            &stepper.u,
        );
        let header = String::from_utf8_lossy(&bytes).lines().nth(1).unwrap().to_string();
        for needle in [
            "\"scheme\":\"sbdf2\"",
            "\"last_step_min\":2.0",
            "{\"name\":\"held_states\",\"value\":1.0}",
            "\"history_arrays\":[\"previous_state\",\"state_before_previous\",\"previous_rates\"]",
        ] {
            assert!(header.contains(needle), "{needle} not in {header}");
        }
    }

    /// A checkpoint with a flipped bit, extra bytes at its end, a cut-short
    /// end, an edited shape or an edited history is refused with a reason,
    /// never read as if whole; for every scheme's layout.
    #[test]
    fn damaged_checkpoints_are_refused() {
        for scheme in Scheme::ALL {
            let stepper = saved(scheme, 1.0, 2.0);
            let progress = Progress { next_snapshot: 1, steps_taken: 0, next_step_min: 0.1 };
            let good = write(&stepper, progress, StepStats::default(), 0.0, &Array2::from_elem((1, 3), 0.5));
            let read = |bytes: &[u8]| read(bytes, "damaged").map(|_| ()).map_err(|e| e.problem);
            assert_eq!(read(&good), Ok(()));
            let mut flipped = good.clone();
            let at = flipped.len() - 60;
            flipped[at] ^= 0x10;
            assert!(read(&flipped).unwrap_err().contains("checksum"), "{scheme:?}");
            let mut longer = good.clone();
            longer.extend_from_slice(b"junk");
            assert!(read(&longer).unwrap_err().contains("longer than its content"));
            assert!(read(&good[..good.len() - 9]).unwrap_err().contains("cut short"));
            let text = String::from_utf8_lossy(&good);
            let edited = text.replacen("\"shape\":[1,3]", "\"shape\":[100000,100000000]", 1);
            assert!(read(edited.as_bytes()).unwrap_err().contains("bytes but its header describes"));
            let names = text.split("\"history_arrays\":").nth(1).unwrap().split(']').next().unwrap();
            let edited = text.replacen(&format!("\"history_arrays\":{names}]"), "\"history_arrays\":[\"extra\"]", 1);
            assert!(read(edited.as_bytes()).unwrap_err().contains("does not lay out so"), "{scheme:?}");
            let edited = text.replacen(&format!("\"scheme\":\"{}\"", scheme.key()), "\"scheme\":\"euler\"", 1);
            assert!(read(edited.as_bytes()).unwrap_err().contains("does not know, `euler`"), "{scheme:?}");
        }
    }

    /// Other versions are refused with what to do.
    #[test]
    fn other_versions_are_refused_with_what_to_do() {
        let older = read(b"anlage-checkpoint 1\n{}\n", "v1").unwrap_err();
        assert!(older.problem.contains("older version") && older.fix.contains("rerun"), "{older}");
        let newer = read(b"anlage-checkpoint 9\n{}\n", "v9").unwrap_err();
        assert!(newer.problem.contains("newer version"), "{newer}");
        let other = read(b"P6\n", "other").unwrap_err();
        assert!(other.problem.contains("is not an anlage checkpoint"), "{other}");
    }
}
