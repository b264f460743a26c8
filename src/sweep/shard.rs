//! Sharded sweeps ([`crate::shard`]): each point keeps what the tables and
//! the picture need, so the merged sweep writes exactly the bytes of an
//! unsharded run.

use std::path::Path;
use std::sync::atomic::AtomicBool;

use serde::{Deserialize, Serialize};

use super::{Axis, PatternClass, Point, SheetWavelength, Sweep};
use crate::model::Model;
use crate::progress::Progress;
use crate::readout::{Boundary, Domain};
use crate::shard::{Job, Ran, Shard, ShardError};

/// One point as a shard file keeps it: what the tables and the picture need.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
struct SavedPoint {
    index: usize,
    values: Vec<f64>,
    class: String,
    failure: Option<String>,
    /// (time, gene, direction, µm, %).
    boundaries: Vec<(f64, String, String, f64, f64)>,
    domains: Vec<Domain>,
    /// (gene, µm) of a repeating sheet pattern.
    #[serde(default)]
    wavelength: Option<(String, f64)>,
}

fn class_named(name: &str) -> Option<PatternClass> {
    PatternClass::ALL.into_iter().find(|c| c.name() == name)
}

/// The saved form of a point.
fn save(index: usize, p: &Point) -> SavedPoint {
    SavedPoint {
        index,
        values: p.values.clone(),
        class: p.class.name().into(),
        failure: p.failure.clone(),
        boundaries: p
            .boundaries
            .iter()
            .map(|b| (b.time_min, b.gene.clone(), b.direction.to_string(), b.position_um, b.position_pct))
            .collect(),
        domains: p.domains.clone(),
        wavelength: p.wavelength.as_ref().map(|w| (w.gene.clone(), w.wavelength_um)),
    }
}

/// The sharded job of sweeping `model` over `axes`, rerun by `rerun`. Axes
/// are compared by value (`0.5:2:6` and `0.5:2.0:6` are the same axis).
pub fn job(model: &Model, axes: &[Axis], rerun: String) -> Job {
    let total: usize = axes.iter().map(|a| a.values.len()).product();
    let settings = axes
        .iter()
        .map(|a| {
            let (from, to) = (a.values.first().copied().unwrap_or(0.0), a.values.last().copied().unwrap_or(0.0));
            format!("{}={from:?}:{to:?}:{}{}", a.name, a.values.len(), if a.log { ":log" } else { "" })
        })
        .collect();
    Job::new("sweep", model, settings, total, rerun)
}

/// Runs shard `shard` of the sweep `job` of `model` over `axes` into `dir`
/// ([`crate::shard::run`]).
///
/// # Errors
/// [`ShardError::Bad`] if the file cannot be written.
pub fn run_shard(
    model: &Model,
    axes: &[Axis],
    job: &Job,
    shard: Shard,
    dir: &Path,
    stop: &AtomicBool,
    progress: &dyn Progress,
) -> Result<Ran, ShardError> {
    let grid = super::empty_sweep(model, axes);
    crate::shard::run(job, shard, dir, stop, "points", progress, |i| save(i, &super::point_at(model, axes, &grid, i)))
}

/// Merges the shards of the sweep `job` of `model` over `axes` in
/// `dir/shards` into the whole sweep.
///
/// # Errors
/// As [`crate::shard::merge`].
pub fn merge(model: &Model, axes: &[Axis], job: &Job, dir: &Path) -> Result<Sweep, ShardError> {
    let saved: Vec<SavedPoint> = crate::shard::merge(job, dir)?;
    let points = saved
        .into_iter()
        .map(|p| Point {
            class: class_named(&p.class).unwrap_or(PatternClass::Failed),
            values: p.values,
            failure: p.failure,
            boundaries: p
                .boundaries
                .into_iter()
                .map(|(time_min, gene, direction, position_um, position_pct)| Boundary {
                    time_min,
                    gene,
                    direction: if direction == "rising" { "rising" } else { "falling" },
                    position_um,
                    position_pct,
                    steepness_per_um: f64::NAN,
                    width_um: f64::NAN,
                })
                .collect(),
            domains: p.domains,
            wavelength: p.wavelength.map(|(gene, wavelength_um)| SheetWavelength { gene, wavelength_um }),
        })
        .collect();
    Ok(Sweep { points, ..super::empty_sweep(model, axes) })
}
