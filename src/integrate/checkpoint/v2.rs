//! Reading checkpoints of format 2 (anlage before each scheme had a type of
//! its own): after the header, the arrays u, u⁻¹, u⁻², f and f⁻¹ whatever
//! the scheme (for ARK4 the last was D∇²u and the earlier states were
//! unused), with `history`, `k1` and `k2` in the header. They are read as
//! format 3: the rates and D∇²u are evaluated again on restore.

use std::path::PathBuf;

use ndarray::Array2;
use serde::Deserialize;

use super::Progress;
use crate::integrate::scheme::Scheme;

/// The first line of a format 2 checkpoint.
pub(super) const MAGIC: &str = "anlage-checkpoint 2";
/// Arrays after the header, before the snapshots.
pub(super) const ARRAYS: usize = 5;

/// The header of a version 2 checkpoint: `history` states held, the last
/// two steps `k1`, `k2` (min); the scheme is the model's.
#[derive(Deserialize)]
pub(super) struct Header {
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
    shape: [usize; 2],
}

impl Header {
    /// The version 3 header of the same checkpoint: the scheme read from the
    /// model text's `clock.scheme` (SBDF2 when absent), SBDF2's history
    /// numbers named (ARK4 had none that it needs).
    pub(super) fn upgrade(self) -> Result<super::Header, String> {
        let model: toml::Table =
            toml::from_str(&self.model_text).map_err(|e| format!("holds a model text that cannot be read: {e}"))?;
        let key = model.get("clock").and_then(|c| c.get("scheme")).and_then(|s| s.as_str());
        let scheme = match key {
            None => Scheme::default(),
            Some(key) => {
                Scheme::from_key(key).ok_or_else(|| format!("names a scheme this version does not know, `{key}`"))?
            }
        };
        let history_numbers = match scheme {
            Scheme::Sbdf2 => vec![
                super::Named { name: "held_states".into(), value: self.history as f64 },
                super::Named { name: "step_before_last_min".into(), value: self.k2 },
            ],
            _ => Vec::new(),
        };
        Ok(super::Header {
            model_text: self.model_text,
            model_path: self.model_path,
            scheme: scheme.key().into(),
            t: self.t,
            last_step_min: self.k1,
            history_numbers,
            history_arrays: scheme.history_arrays().iter().map(|s| s.to_string()).collect(),
            progress: self.progress,
            steps: self.steps,
            rejected: self.rejected,
            min_step_min: self.min_step_min,
            max_step_min: self.max_step_min,
            times: self.times,
            shape: self.shape,
        })
    }
}

/// The history arrays of `scheme` from format 2's arrays after the state
/// (u⁻¹, u⁻², f, f⁻¹ or D∇²u): SBDF2 keeps u⁻¹, u⁻² and f⁻¹; ARK4 none.
pub(super) fn history_arrays(scheme: Scheme, after_state: Vec<Array2<f64>>) -> Vec<Array2<f64>> {
    let mut old = after_state.into_iter();
    let (u1, u2, _f, f1) = (old.next(), old.next(), old.next(), old.next());
    match scheme {
        Scheme::Sbdf2 => [u1, u2, f1].into_iter().flatten().collect(),
        // ARK4 is one-step; format 2 knew no other scheme.
        _ => Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::super::tests::read;
    use super::super::{History, StepperState};
    use super::*;

    /// A version 2 checkpoint, laid out as the version 2 writer did (this
    /// file's history): the magic line, the header with `history`, `k1` and
    /// `k2`, the arrays u, u⁻¹, u⁻², f, f⁻¹ (D∇²u for ARK4), one snapshot, the
    /// SHA-256 of all after the first line.
    fn version_2(model_text: &str) -> Vec<u8> {
        let header = serde_json::json!({
            "model_text": model_text, "model_path": "m.toml", "t": 2.5, "history": 3, "k1": 0.25, "k2": 0.125,
            "progress": {"next_snapshot": 1, "steps_taken": 0, "next_step_min": 0.5},
            "steps": 10, "rejected": 2, "min_step_min": 0.1, "max_step_min": 0.25, "times": [0.0], "shape": [1, 3]
        });
        let mut body = serde_json::to_vec(&header).unwrap();
        body.push(b'\n');
        for array in 1..=6 {
            for _ in 0..3 {
                body.extend_from_slice(&(array as f64).to_le_bytes());
            }
        }
        let digest = <sha2::Sha256 as sha2::Digest>::digest(&body);
        [format!("{MAGIC}\n").as_bytes(), &body, digest.as_slice()].concat()
    }

    /// Version 2 checkpoints are still read: SBDF2's earlier states and
    /// rates become its named history, ARK4's D∇²u (evaluated again on
    /// restore, as the rates are) is dropped; the scheme is the model's
    /// (common practice, no source).
    #[test]
    fn version_2_checkpoints_are_read() {
        let array = |v: f64| Array2::from_elem((1, 3), v);
        let sbdf2 = read(&version_2("[clock]\nuntil_min = 5.0\n"), "v2-sbdf2").unwrap();
        let want = StepperState {
            scheme: Scheme::Sbdf2,
            t: 2.5,
            last_step: 0.25,
            u: array(1.0),
            history: History { numbers: vec![3.0, 0.125], arrays: vec![array(2.0), array(3.0), array(5.0)] },
        };
        assert_eq!(sbdf2.stepper, want);
        assert_eq!((sbdf2.states, sbdf2.times, sbdf2.stats.rejected), (vec![array(6.0)], vec![0.0], 2));
        let ark4 = read(&version_2("[clock]\nscheme = \"ark4\"\n"), "v2-ark4").unwrap();
        let want = StepperState { scheme: Scheme::Ark4, history: History::default(), ..want };
        assert_eq!(ark4.stepper, want);
        assert_eq!(ark4.states, vec![array(6.0)]);
        let mut damaged = version_2("[clock]\n");
        let at = damaged.len() - 40;
        damaged[at] ^= 1;
        assert!(read(&damaged, "v2-damaged").unwrap_err().problem.contains("checksum"));
    }
}
