//! Sharded screens ([`crate::shard`]): the items are the mutants (crosses
//! included), each kept as its rows of `shifts.csv`; the merge runs the wild
//! type again (one run, the same bytes) and gives back the whole screen.

use std::path::Path;
use std::sync::atomic::AtomicBool;

use super::{Screen, mutant_shifts};
use crate::model::{Model, Mutant};
use crate::progress::Progress;
use crate::readout::{Boundary, Shift};
use crate::shard::{Job, Ran, Shard, ShardError};

/// The sharded job of screening `mutants` of `model`, rerun by `rerun`.
/// Each mutant's name and changes are part of the job: shards of another
/// list are refused.
pub fn job(model: &Model, mutants: &[Mutant], rerun: String) -> Job {
    let settings = mutants.iter().map(|m| format!("{}: {:?}", m.name, m.edits)).collect();
    Job::new("screen", model, settings, mutants.len(), rerun)
}

/// Runs shard `shard` of the screen `job` of `mutants` against the wild
/// type's final boundaries `wild_type`, into `dir`.
///
/// # Errors
/// [`ShardError::Bad`] if the file cannot be written.
#[allow(clippy::too_many_arguments)]
pub fn run_shard(
    model: &Model,
    mutants: &[Mutant],
    wild_type: &[Boundary],
    job: &Job,
    shard: Shard,
    dir: &Path,
    stop: &AtomicBool,
    progress: &dyn Progress,
) -> Result<Ran, ShardError> {
    let genes: Vec<String> = model.genes.iter().map(|g| g.name.clone()).collect();
    crate::shard::run(job, shard, dir, stop, "mutants", progress, |i| {
        mutant_shifts(model, wild_type, &genes, &mutants[i])
    })
}

/// Merges the shards of the screen `job` in `dir/shards` into the whole
/// screen, with the wild type's final boundaries `wild_type`.
///
/// # Errors
/// As [`crate::shard::merge`].
pub fn merge(mutants: &[Mutant], wild_type: Vec<Boundary>, job: &Job, dir: &Path) -> Result<Screen, ShardError> {
    let shifts: Vec<Vec<Shift>> = crate::shard::merge(job, dir)?;
    Ok(Screen { wild_type, shifts, mutants: mutants.iter().map(|m| m.name.clone()).collect() })
}
