//! Sharded screens ([`crate::shard`]): the items are the mutants (crosses
//! included), each kept as its rows of `shifts.csv`; the merge runs the wild
//! type again (one run, the same bytes) and gives back the whole screen.
//! Sensitivity shards the same way, one item per parameter.

use std::path::Path;
use std::sync::atomic::AtomicBool;

use super::{Screen, mutant_shifts};
use crate::model::{Model, Mutant};
use crate::progress::Progress;
use crate::readout::{Boundary, Shift};
use crate::shard::{Job, Ran, Real, Shard, ShardError};

use serde::{Deserialize, Serialize};

use super::SensitivityRow;

/// The sharded job of screening `mutants` of `model`, rerun by `rerun`.
/// Each mutant's name and changes are part of the job: shards of another
/// list are refused.
pub fn job(model: &Model, mutants: &[Mutant], rerun: String) -> Job {
    let settings = mutants
        .iter()
        .map(|m| {
            format!("{}: {}", m.name, m.edits.iter().map(|e| model.describe_edit(e)).collect::<Vec<_>>().join(", "))
        })
        .collect();
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
/// screen, with the wild type's final outcome `wild_type`.
///
/// # Errors
/// As [`crate::shard::merge`].
pub fn merge(mutants: &[Mutant], wild_type: super::FinalOutcome, job: &Job, dir: &Path) -> Result<Screen, ShardError> {
    let shifts: Vec<Vec<Shift>> = crate::shard::merge(job, dir)?;
    Ok(Screen {
        wild_type: wild_type.boundaries,
        shifts,
        mutants: mutants.iter().map(|m| m.name.clone()).collect(),
        wild_type_changing: wild_type.changing,
    })
}

/// A row of `sensitivity.csv` as a shard file keeps it (floats exactly,
/// non-finite ones included).
#[derive(Debug, Clone, Serialize, Deserialize)]
struct SavedRow {
    parameter: String,
    value: Real,
    gene: String,
    direction: String,
    position_pct: Real,
    kind: String,
    d_um_per_ln: Option<Real>,
    d_pct_per_ln: Option<Real>,
    step_ln: Real,
    jumps_at: String,
}

impl From<SensitivityRow> for SavedRow {
    fn from(r: SensitivityRow) -> SavedRow {
        SavedRow {
            parameter: r.parameter,
            value: Real(r.value),
            gene: r.gene,
            direction: r.direction,
            position_pct: Real(r.position_pct),
            kind: r.kind,
            d_um_per_ln: r.d_um_per_ln.map(Real),
            d_pct_per_ln: r.d_pct_per_ln.map(Real),
            step_ln: Real(r.step_ln),
            jumps_at: r.jumps_at,
        }
    }
}

impl From<SavedRow> for SensitivityRow {
    fn from(r: SavedRow) -> SensitivityRow {
        SensitivityRow {
            parameter: r.parameter,
            value: r.value.0,
            gene: r.gene,
            direction: r.direction,
            position_pct: r.position_pct.0,
            kind: r.kind,
            d_um_per_ln: r.d_um_per_ln.map(|v| v.0),
            d_pct_per_ln: r.d_pct_per_ln.map(|v| v.0),
            step_ln: r.step_ln.0,
            jumps_at: r.jumps_at,
        }
    }
}

/// The sharded job of the sensitivity of `model` with step `step_ln`: one
/// item per parameter that acts ([`Model::parameters`]); rerun by `rerun`.
pub fn sensitivity_job(model: &Model, step_ln: f64, rerun: String) -> Job {
    let params = model.parameters();
    let mut settings = vec![format!("step {step_ln:?}")];
    settings.extend(params.iter().map(|&p| model.param_name(p)));
    Job::new("sensitivity", model, settings, params.len(), rerun)
}

/// Runs shard `shard` of the sensitivity `job` into `dir`, against the wild
/// type's final boundaries `wild_type`.
///
/// # Errors
/// [`ShardError::Bad`] if the file cannot be written.
#[allow(clippy::too_many_arguments)]
pub fn run_sensitivity_shard(
    model: &Model,
    step_ln: f64,
    wild_type: &[Boundary],
    job: &Job,
    shard: Shard,
    dir: &Path,
    stop: &AtomicBool,
    progress: &dyn Progress,
) -> Result<Ran, ShardError> {
    let params = model.parameters();
    crate::shard::run(job, shard, dir, stop, "parameters", progress, |i| {
        super::sensitivity::rows_for(model, params[i], wild_type, step_ln)
            .into_iter()
            .map(SavedRow::from)
            .collect::<Vec<_>>()
    })
}

/// Merges the shards of the sensitivity `job` in `dir/shards`: the rows of
/// every parameter, in the order of an unsharded run.
///
/// # Errors
/// As [`crate::shard::merge`].
pub fn merge_sensitivity(job: &Job, dir: &Path) -> Result<Vec<SensitivityRow>, ShardError> {
    let per_param: Vec<Vec<SavedRow>> = crate::shard::merge(job, dir)?;
    Ok(per_param.into_iter().flatten().map(SensitivityRow::from).collect())
}
