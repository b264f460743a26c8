//! The memory plan of a run: how many bytes the integrator's working arrays
//! and the recording take, whether the recording streams to a scratch file,
//! and the budget a model must fit (checked when the model is loaded).

use crate::model::Model;

/// A recording above this size is streamed to disk when a scratch folder is
/// given, bytes (common practice, no source: a quarter of a GiB leaves room
/// for the integrator's own arrays on an ordinary workstation).
pub const STREAM_ABOVE_BYTES: u64 = 256 << 20;

/// Largest working memory a model may ask for before it is refused, bytes.
pub const MEMORY_BUDGET_BYTES: u64 = 12 << 30;

/// Environment variable that sets the memory budget, GiB.
pub const MEMORY_BUDGET_VAR: &str = "ANLAGE_MEMORY_GIB";

/// The memory budget, bytes: `ANLAGE_MEMORY_GIB` (a positive number of GiB)
/// if set, else [`MEMORY_BUDGET_BYTES`].
///
/// # Errors
/// The text of the variable if it is not a positive number.
pub fn memory_budget_bytes() -> Result<u64, String> {
    match std::env::var(MEMORY_BUDGET_VAR) {
        Err(_) => Ok(MEMORY_BUDGET_BYTES),
        Ok(text) => match text.trim().parse::<f64>() {
            Ok(gib) if gib.is_finite() && gib > 0.0 => Ok((gib * (1u64 << 30) as f64) as u64),
            _ => Err(text),
        },
    }
}

/// Recordings larger than this are streamed to a scratch file rather than
/// held in memory, bytes: [`STREAM_ABOVE_BYTES`], or a quarter of a
/// smaller memory budget (so a streamed run always fits the budget's check).
pub fn stream_above_bytes() -> u64 {
    let budget = memory_budget_bytes().unwrap_or(MEMORY_BUDGET_BYTES);
    STREAM_ABOVE_BYTES.min(budget / 4)
}

/// What a run of a model holds in memory, bytes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MemoryPlan {
    /// The integrator's working arrays ([`working_bytes`]).
    pub working: u64,
    /// The whole recording: snapshots × genes × nuclei × 8.
    pub recording: u64,
    /// True if the recording streams to a scratch file (it is larger than
    /// [`stream_above_bytes`]).
    pub streams: bool,
}

impl MemoryPlan {
    /// The plan of a run of `model`.
    pub fn of(model: &Model) -> MemoryPlan {
        let recording = model.snapshot_count() as u64 * model.genes.len() as u64 * model.grid.len() as u64 * 8;
        MemoryPlan { working: working_bytes(model), recording, streams: recording > stream_above_bytes() }
    }

    /// Bytes held in memory: the working arrays, plus the recording unless it
    /// is streamed (then a snapshot's worth of buffers at most, counted as the
    /// stream threshold).
    pub fn resident(&self) -> u64 {
        self.working + self.recording.min(stream_above_bytes())
    }
}

/// Bytes of the integrator's working arrays: per gene, the stepper's
/// state, rates and trial step plus one spare (4) and the scheme's own
/// ([`crate::model::Scheme::arrays_per_gene`]: SBDF2 3, for 7 in all), input
/// rows (gradients, x, t, neighbour means) and the gradient shapes, plus two
/// spare fields for solver scratch.
fn working_bytes(model: &Model) -> u64 {
    let per_field = model.grid.len() as u64 * 8;
    let genes = model.genes.len() as u64;
    let per_gene = 4 + model.clock.scheme.arrays_per_gene();
    let inputs = model.gradients.len() as u64 + 2 + if model.circuit.neighbours { genes } else { 0 };
    (per_gene * genes + inputs + model.gradients.len() as u64 + 2) * per_field
}
