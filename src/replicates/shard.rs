//! Sharded replicates ([`crate::shard`]): the item is an embryo. A shard
//! runs, for each of its embryos, every set of embryos the job needs (every
//! source on; each source alone; half the noise step; the wild type of a
//! pairing; each mutant of a screen) and saves their readouts exactly. The
//! merge reads them back through [`Saved`], which stands in for the
//! simulations, so the statistics are folded in embryo order from the same
//! numbers and the merged tables are the bytes of an unsharded run.

use std::path::Path;
use std::sync::atomic::AtomicBool;

use serde::{Deserialize, Serialize};

use super::{Embryos, Readout, Sources, embryo, pass, read_one};
use crate::model::Model;
use crate::progress::Progress;
use crate::readout::{Boundary, Domain};
use crate::shard::{Job, Ran, Real, Shard, ShardError};

/// One set of embryos: its name, the model its embryos are made from, and
/// the noise sources on.
#[derive(Debug, Clone)]
pub struct Pass {
    /// Its name ([`pass`]).
    pub label: String,
    /// The model embryos are made from ([`embryo`]).
    pub model: Model,
    /// The sources on.
    pub sources: Sources,
}

impl Pass {
    fn new(label: String, model: &Model, sources: Sources) -> Pass {
        Pass { label, model: model.clone(), sources }
    }
}

/// The sets of embryos of `anlage replicates` on `model`: every source on;
/// with `attribute`, each source alone; with `check_step`, half the noise
/// step (when the runs are stochastic); given the `wild_type` that `model`
/// is a mutant of, that wild type (the mutant's own embryos are those of
/// every source on).
pub fn replicate_passes(model: &Model, attribute: bool, check_step: bool, wild_type: Option<&Model>) -> Vec<Pass> {
    let mut out = vec![Pass::new(pass::ALL.into(), model, Sources::all(model))];
    if attribute {
        out.extend(Sources::each(model).into_iter().map(|(name, s)| Pass::new(pass::alone(&name), model, s)));
    }
    if check_step && let Some(finer) = super::checks::with_half_step(model) {
        out.push(Pass::new(pass::HALF_STEP.into(), &finer, Sources::all(model)));
    }
    if let Some(w) = wild_type {
        out.push(Pass::new(pass::WILD_TYPE.into(), w, Sources::all(w)));
    }
    out
}

/// Each mutant of a screen as (name, the wild type with its changes).
pub fn screen_models(wild_type: &Model, mutants: &[crate::model::Mutant]) -> Vec<(String, Model)> {
    mutants.iter().map(|m| (m.name.clone(), wild_type.with_mutant(m))).collect()
}

/// The sets of embryos of a screen with replicates: the wild type and each
/// mutant (a name and the wild type with its changes, [`screen_models`]).
pub fn screen_passes(wild_type: &Model, mutants: &[(String, Model)]) -> Vec<Pass> {
    let mut out = vec![Pass::new(pass::WILD_TYPE.into(), wild_type, Sources::all(wild_type))];
    out.extend(mutants.iter().map(|(name, m)| Pass::new(pass::mutant(name), m, Sources::all(m))));
    out
}

/// A readout as a shard file keeps it, every number exactly.
#[derive(Debug, Clone, Serialize, Deserialize)]
struct SavedReadout {
    /// (time, gene, direction, µm, %, steepness, width).
    boundaries: Vec<(Real, String, String, Real, Real, Real, Real)>,
    domains: Vec<Domain>,
    profiles: Vec<Vec<Real>>,
}

/// One embryo as a shard file keeps it: each set's readout, or why it failed.
type SavedEmbryo = Vec<(String, Result<SavedReadout, String>)>;

fn save(r: &Readout) -> SavedReadout {
    SavedReadout {
        boundaries: r
            .boundaries
            .iter()
            .map(|b| {
                (
                    Real(b.time_min),
                    b.gene.clone(),
                    b.direction.to_string(),
                    Real(b.position_um),
                    Real(b.position_pct),
                    Real(b.steepness_per_um),
                    Real(b.width_um),
                )
            })
            .collect(),
        domains: r.domains.clone(),
        profiles: r.profiles.iter().map(|p| p.iter().map(|&v| Real(v)).collect()).collect(),
    }
}

fn restore(s: SavedReadout) -> Readout {
    Readout {
        boundaries: s
            .boundaries
            .into_iter()
            .map(|(t, gene, direction, um, pct, steep, width)| Boundary {
                time_min: t.0,
                gene,
                direction: if direction == "rising" { "rising" } else { "falling" },
                position_um: um.0,
                position_pct: pct.0,
                steepness_per_um: steep.0,
                width_um: width.0,
            })
            .collect(),
        domains: s.domains,
        profiles: s.profiles.into_iter().map(|p| p.into_iter().map(|v| v.0).collect()).collect(),
    }
}

/// The sharded job `kind` of `n` embryos of `passes` on `model` (whose text
/// and seed the job records), with `settings` (the options the embryos
/// depend on, in words), rerun by `rerun`.
pub fn job(kind: &'static str, model: &Model, passes: &[Pass], settings: Vec<String>, n: usize, rerun: String) -> Job {
    let mut settings = settings;
    settings.push(format!("embryos {n}"));
    settings.extend(passes.iter().map(|p| format!("set {}", p.label)));
    Job::new(kind, model, settings, n, rerun)
}

/// Embryos of a shard that failed: how many, and the first (embryo, set, why).
pub type Failed = (usize, Option<(usize, String, String)>);

/// Runs shard `shard` of `job`: every set of `passes` for each of its
/// embryos, into `dir` ([`crate::shard::run`]). A failed embryo is saved as
/// such (the merge refuses the set, as an unsharded run would) and counted
/// in the [`Failed`] returned.
///
/// # Errors
/// [`ShardError::Bad`] if the file cannot be written.
pub fn run_shard(
    passes: &[Pass],
    job: &Job,
    shard: Shard,
    dir: &Path,
    stop: &AtomicBool,
    progress: &dyn Progress,
) -> Result<(Ran, Failed), ShardError> {
    let failed = std::sync::Mutex::new((0usize, None));
    let ran = crate::shard::run(job, shard, dir, stop, "embryos", progress, |i| -> SavedEmbryo {
        passes
            .iter()
            .map(|p| {
                let r = read_one(&embryo(&p.model, i, &p.sources)).map_err(|e| e.to_string());
                if let Err(why) = &r {
                    let mut f = failed.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
                    f.0 += 1;
                    // The lowest embryo, as the merge would report it.
                    if f.1.as_ref().is_none_or(|(j, _, _)| i < *j) {
                        f.1 = Some((i, p.label.clone(), why.clone()));
                    }
                }
                (p.label.clone(), r.as_ref().map(save).map_err(Clone::clone))
            })
            .collect()
    })?;
    Ok((ran, failed.into_inner().unwrap_or_else(std::sync::PoisonError::into_inner)))
}

/// Embryos saved by the shards of a job: they stand in for the simulations
/// when the merge folds the statistics.
#[derive(Debug, Clone)]
pub struct Saved {
    /// By embryo: each set's readout, or why it failed.
    embryos: Vec<Vec<(String, Result<Readout, String>)>>,
}

impl Embryos for Saved {
    fn read(&self, set: &str, i: usize, _: &Model) -> Result<Readout, String> {
        self.embryos
            .get(i)
            .and_then(|sets| sets.iter().find(|(label, _)| label == set))
            .map(|(_, r)| r.clone())
            .unwrap_or_else(|| Err(format!("embryo {i} of set `{set}` is not in the shards; run the shards again")))
    }
}

/// The embryos of `job` saved by its shards in `dir` (as [`crate::shard::merge`]).
///
/// # Errors
/// As [`crate::shard::merge`].
pub fn merge(job: &Job, dir: &Path) -> Result<Saved, ShardError> {
    let saved: Vec<SavedEmbryo> = crate::shard::merge(job, dir)?;
    Ok(Saved {
        embryos: saved
            .into_iter()
            .map(|sets| sets.into_iter().map(|(label, r)| (label, r.map(restore))).collect())
            .collect(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A readout survives the shard file exactly, infinities included.
    #[test]
    fn a_readout_survives_its_shard_file_exactly() {
        let r = Readout {
            boundaries: vec![Boundary {
                time_min: 60.0,
                gene: "wren".into(),
                direction: "falling",
                position_um: 0.1 + 0.2,
                position_pct: 1.0 / 3.0,
                steepness_per_um: 0.0,
                width_um: f64::INFINITY,
            }],
            domains: Vec::new(),
            profiles: vec![vec![1e-300, 2.0 / 7.0]],
        };
        let text = serde_json::to_string(&save(&r)).unwrap();
        let back = restore(serde_json::from_str(&text).unwrap());
        assert_eq!(back, r);
    }
}
