//! Replicate embryos: the same model run many times with the noise of its
//! `[noise]` section (see [`crate::model::noise`]), and the precision of
//! every boundary: its mean position and positional error (sd) at every
//! snapshot, how often it exists, the spread of domain widths, and the
//! positional error decoded from all genes jointly.
//!
//! Embryo i has its own seed, derived from the model's seed and i by
//! SplitMix64 (Steele, Lea & Flood 2014, OOPSLA, "Fast splittable
//! pseudorandom number generators"), so any thread count gives the same
//! bytes. Embryos run in parallel, in blocks of [`BLOCK`]; each block's
//! readouts are folded into running statistics in embryo order, so memory
//! does not grow with the number of embryos. Everything here is a model
//! prediction.

mod checks;
mod embryos;
pub mod intervals;
mod mutants;
pub mod ragged;
pub mod shard;
mod stats;

pub use checks::{Share, StepChange, attribute, attribute_with, halved_step, halved_step_with};
pub use embryos::{Embryos, Readout, Simulated, Sources, embryo, embryo_seed, read_one, recordings, splitmix64};
pub use mutants::{PairedShift, paired_shifts, paired_shifts_with};

pub use stats::{ProfileStats, Running};

use rayon::prelude::*;
use serde::Serialize;

use crate::StepError;
use crate::model::Model;
use crate::progress::{Counter, Progress};
use crate::readout::{self, Boundary, Domain, pair_in_order};

/// The file beside `precision.csv` that says which model text (SHA-256),
/// which mutant (or none), how many embryos and which seed made it.
pub const ORIGIN: &str = "replicates.json";

/// SHA-256 of a model file's text, hex (as `replicates.json` records it).
pub fn text_sha256(text: &str) -> String {
    use sha2::{Digest, Sha256};
    Sha256::digest(text.as_bytes()).iter().map(|b| format!("{b:02x}")).collect()
}

/// Embryos run in parallel between two folds into the statistics.
pub const BLOCK: usize = 32;

/// The spread of one boundary of the reference embryo at one snapshot.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BoundaryPrecision {
    /// Snapshot time, min.
    pub time_min: f64,
    /// Gene.
    pub gene: String,
    /// "rising" or "falling".
    pub direction: String,
    /// The noise-free embryo's position, µm.
    pub reference_um: f64,
    /// Fraction of embryos in which this boundary exists: the gene has as
    /// many boundaries of this direction as the noise-free embryo, paired in
    /// order along the axis ([`readout::pair_in_order`]).
    pub present_fraction: f64,
    /// Embryos in which it exists (the sample behind the mean and sd).
    pub embryos: usize,
    /// Fraction of embryos in which the gene's profile crossed its level in
    /// flickers of one or two nuclei at this snapshot, merged into its
    /// boundaries before pairing ([`ragged`]).
    pub ragged_fraction: f64,
    /// Fraction of embryos in which the gene has another number of
    /// boundaries of this direction (a stripe lost or gained, or a ragged
    /// boundary crossing its level several times): not counted in the spread.
    pub miscounted_fraction: f64,
    /// Mean position over the embryos that have it, µm.
    pub mean_um: f64,
    /// Positional error: sd of the position, µm.
    pub sd_um: f64,
    /// Mean position, % of the axis length.
    pub mean_pct: f64,
    /// Positional error, % of the axis length.
    pub sd_pct: f64,
}

/// The spread of the width of one domain of the reference embryo, last snapshot.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WidthSpread {
    /// Gene.
    pub gene: String,
    /// The noise-free embryo's domain start, µm.
    pub reference_start_um: f64,
    /// The noise-free embryo's domain width, µm.
    pub reference_width_um: f64,
    /// Fraction of embryos in which the gene has as many domains as the
    /// noise-free embryo (its domains then pair in order along the axis).
    pub present_fraction: f64,
    /// Mean width, µm.
    pub mean_width_um: f64,
    /// Sd of the width, µm.
    pub sd_width_um: f64,
}

/// What the replicates showed.
#[derive(Debug, Clone)]
pub struct Replicates {
    /// Embryos run.
    pub n: usize,
    /// Gene names.
    pub genes: Vec<String>,
    /// Snapshot times, min.
    pub times: Vec<f64>,
    /// Axis length, µm.
    pub length_um: f64,
    /// Nucleus spacing along the axis, µm.
    pub spacing_um: f64,
    /// True on a sheet: profiles, boundaries and spreads are those of the
    /// mean over the central strip of rows (as every readout of a sheet).
    pub sheet: bool,
    /// Per snapshot and reference boundary.
    pub boundaries: Vec<BoundaryPrecision>,
    /// Per domain of the reference embryo at the last snapshot.
    pub widths: Vec<WidthSpread>,
    /// Per snapshot: embryos with a boundary of a gene and direction that the
    /// noise-free embryo has none of then (not in [`Self::boundaries`]).
    pub unreferenced: Vec<usize>,
    /// Final profiles across embryos.
    pub profiles: ProfileStats,
    /// Positional error decoded from all genes at each nucleus, µm ([`ProfileStats::decoded_error_um`]).
    pub decoded_um: Vec<f64>,
}

impl Replicates {
    /// The last snapshot's rows of [`Self::boundaries`].
    pub fn final_boundaries(&self) -> impl Iterator<Item = &BoundaryPrecision> {
        let last = self.times.last().copied().unwrap_or(0.0);
        self.boundaries.iter().filter(move |b| readout::same_time(b.time_min, last))
    }

    /// The decoded positional error at a position, µm: linear between the
    /// two nearest nuclei, or the nearer one's value where either is not
    /// finite (nothing decoded, or position not readable).
    pub fn decoded_at(&self, x_um: f64) -> f64 {
        let h = self.spacing_um;
        let f = (x_um / h - 0.5).clamp(0.0, (self.decoded_um.len() - 1) as f64);
        let i = (f.floor() as usize).min(self.decoded_um.len().saturating_sub(2));
        let w = f - i as f64;
        match self.decoded_um.get(i + 1) {
            Some(next) if next.is_finite() && self.decoded_um[i].is_finite() => {
                (1.0 - w) * self.decoded_um[i] + w * next
            }
            Some(next) if w > 0.5 => *next,
            _ => self.decoded_um[i],
        }
    }
}

/// An embryo that failed, or all of them.
#[derive(Debug, thiserror::Error)]
pub enum ReplicateError {
    /// The noise-free reference embryo failed.
    #[error("the noise-free embryo failed: {0}")]
    Reference(StepError),
    /// Some embryos failed: their statistics would describe only the survivors.
    #[error(
        "{failed} of {total} embryos failed (first: embryo {first}: {why}); statistics over the others would be biased, so none are reported — make the noise smaller or the steps safer"
    )]
    Embryos {
        /// How many failed.
        failed: usize,
        /// How many were run.
        total: usize,
        /// The first that failed.
        first: usize,
        /// Why.
        why: String,
    },
}

/// Runs `one(i)` (which reports its own progress, and says why it failed)
/// for embryos 0..n in parallel blocks of [`BLOCK`] and hands each result to `fold` in embryo order (so the statistics do not depend on
/// the thread count, and at most a block of results is held at a time).
///
/// # Errors
/// [`ReplicateError::Embryos`] if any embryo failed (the others are still folded).
fn for_each_embryo<T: Send>(
    n: usize,
    one: impl Fn(usize) -> Result<T, String> + Sync,
    mut fold: impl FnMut(usize, T),
) -> Result<(), ReplicateError> {
    let mut failure: Option<(usize, String)> = None;
    let mut failed = 0;
    for start in (0..n).step_by(BLOCK) {
        let block: Vec<Result<T, String>> = (start..(start + BLOCK).min(n)).into_par_iter().map(&one).collect();
        for (k, r) in block.into_iter().enumerate() {
            match r {
                Ok(r) => fold(start + k, r),
                Err(e) => {
                    failed += 1;
                    failure.get_or_insert((start + k, e));
                }
            }
        }
    }
    match failure {
        Some((first, why)) => Err(ReplicateError::Embryos { failed, total: n, first, why }),
        None => Ok(()),
    }
}

/// The names of the sets of embryos a replicate job runs ([`Embryos`]).
pub mod pass {
    /// Every noise source on.
    pub const ALL: &str = "all";
    /// Every source on, half the noise step.
    pub const HALF_STEP: &str = "half step";
    /// The wild type of a mutant's pairing.
    pub const WILD_TYPE: &str = "wild type";

    /// One source alone.
    pub fn alone(source: &str) -> String {
        format!("alone: {source}")
    }

    /// A mutant of a screen.
    pub fn mutant(name: &str) -> String {
        format!("mutant: {name}")
    }
}

/// Runs `n` embryos of `model` with the noise `sources` and summarises them.
/// `each` sees every embryo's boundaries (all snapshots), in embryo order.
///
/// # Errors
/// [`ReplicateError`] if the reference or any embryo fails.
pub fn run(
    model: &Model,
    n: usize,
    sources: &Sources,
    progress: &dyn Progress,
    each: &mut dyn FnMut(usize, &[Boundary]),
) -> Result<Replicates, ReplicateError> {
    run_with(&Simulated, pass::ALL, model, n, sources, progress, each)
}

/// [`run`] with the embryos of set `pass` read from `embryos`.
///
/// # Errors
/// As [`run`].
pub fn run_with(
    embryos: &dyn Embryos,
    pass: &str,
    model: &Model,
    n: usize,
    sources: &Sources,
    progress: &dyn Progress,
    each: &mut dyn FnMut(usize, &[Boundary]),
) -> Result<Replicates, ReplicateError> {
    let reference = read_one(&embryo(model, 0, &Sources::none(model))).map_err(ReplicateError::Reference)?;
    let times = model.clock.snapshot_times();
    let at = |list: &[Boundary], t: f64| -> Vec<Boundary> {
        list.iter().filter(|b| readout::same_time(b.time_min, t)).cloned().collect()
    };
    let reference_at: Vec<Vec<Boundary>> = times.iter().map(|&t| at(&reference.boundaries, t)).collect();
    let mut positions: Vec<Vec<Running>> = reference_at.iter().map(|r| vec![Running::default(); r.len()]).collect();
    let mut miscounted: Vec<Vec<usize>> = reference_at.iter().map(|r| vec![0; r.len()]).collect();
    let mut ragged: Vec<Vec<usize>> = reference_at.iter().map(|r| vec![0; r.len()]).collect();
    let mut unreferenced = vec![0usize; times.len()];
    let mut widths = vec![Running::default(); reference.domains.len()];
    let mut profiles = ProfileStats::new(model.genes.len(), model.grid.nx);
    let periodic = model.grid.edges == crate::model::Edges::Periodic;
    let flickers =
        ragged::Flickers::new(&reference.boundaries, model.grid.spacing_um, model.grid.length_um(), periodic);
    let last_time = times.last().copied().unwrap_or(0.0);
    let counter = Counter::begin(progress, "embryos", n);
    let folded = for_each_embryo(
        n,
        |i| {
            let r = embryos.read(pass, i, &embryo(model, i, sources));
            counter.tick();
            let mut r = r?;
            let (merged, ragged) = flickers.merge(&r.boundaries);
            r.boundaries = merged;
            // A gene whose final boundaries lost flickers has its domains
            // rebuilt from them (on a sealed row).
            let mut rebuilt: Vec<&String> = Vec::new();
            for m in ragged.iter().filter(|m| readout::same_time(m.time_min, last_time) && !periodic) {
                if rebuilt.contains(&&m.gene) {
                    continue;
                }
                rebuilt.push(&m.gene);
                let gene = &m.gene;
                let mine: Vec<Boundary> = r
                    .boundaries
                    .iter()
                    .filter(|b| &b.gene == gene && readout::same_time(b.time_min, last_time))
                    .cloned()
                    .collect();
                r.domains.retain(|d| &d.gene != gene);
                r.domains.extend(ragged::domains_from(&mine, model.grid.length_um()));
            }
            Ok((r, ragged))
        },
        |i, (r, ragged_here)| {
            each(i, &r.boundaries);
            for (s, &t) in times.iter().enumerate() {
                let mine = at(&r.boundaries, t);
                let known =
                    |b: &Boundary| reference_at[s].iter().any(|q| q.gene == b.gene && q.direction == b.direction);
                unreferenced[s] += usize::from(!mine.iter().all(known));
                let mut hit = vec![false; reference_at[s].len()];
                for (j, (x, other_count)) in pair_in_order(&reference_at[s], &mine).into_iter().enumerate() {
                    if let Some(x) = x {
                        positions[s][j].push(x);
                    }
                    miscounted[s][j] += usize::from(other_count);
                }
                // A merged flicker counts for the noise-free boundary of its
                // gene nearest to it.
                for m in ragged_here.iter().filter(|m| readout::same_time(m.time_min, t)) {
                    let nearest =
                        reference_at[s].iter().enumerate().filter(|(_, b)| b.gene == m.gene).min_by(|a, b| {
                            (a.1.position_um - m.at_um).abs().total_cmp(&(b.1.position_um - m.at_um).abs())
                        });
                    if let Some((j, _)) = nearest {
                        hit[j] = true;
                    }
                }
                for (j, h) in hit.iter().enumerate() {
                    ragged[s][j] += usize::from(*h);
                }
            }
            // Domains pair in order too, gene by gene, where the counts agree.
            for (j, d) in reference.domains.iter().enumerate() {
                let of = |list: &[Domain]| -> Vec<f64> {
                    list.iter().filter(|e| e.gene == d.gene).map(|e| e.width_um).collect()
                };
                let (refs, mine) = (of(&reference.domains), of(&r.domains));
                let rank = reference.domains[..j].iter().filter(|e| e.gene == d.gene).count();
                if refs.len() == mine.len() {
                    widths[j].push(mine[rank]);
                }
            }
            profiles.push(&r.profiles);
        },
    );
    drop(counter);
    folded?;
    let length = model.grid.length_um();
    let pct = |um: f64| 100.0 * um / length;
    let boundaries = times
        .iter()
        .zip(&reference_at)
        .zip(positions.iter().zip(&miscounted).zip(&ragged))
        .flat_map(|((&t, refs), ((runs, miss), rag))| {
            refs.iter().zip(runs).zip(miss).zip(rag).map(move |(((b, r), m), rg)| BoundaryPrecision {
                time_min: t,
                gene: b.gene.clone(),
                direction: b.direction.to_string(),
                reference_um: b.position_um,
                present_fraction: r.n as f64 / n as f64,
                embryos: r.n,
                ragged_fraction: *rg as f64 / n as f64,
                miscounted_fraction: *m as f64 / n as f64,
                mean_um: r.mean(),
                sd_um: r.sd(),
                mean_pct: pct(r.mean()),
                sd_pct: pct(r.sd()),
            })
        })
        .collect();
    let widths = reference
        .domains
        .iter()
        .zip(&widths)
        .map(|(d, r)| WidthSpread {
            gene: d.gene.clone(),
            reference_start_um: d.start_um,
            reference_width_um: d.width_um,
            present_fraction: r.n as f64 / n as f64,
            mean_width_um: r.mean(),
            sd_width_um: r.sd(),
        })
        .collect();
    let decoded_um = profiles.decoded_error_um(model.grid.spacing_um);
    Ok(Replicates {
        n,
        genes: model.genes.iter().map(|g| g.name.clone()).collect(),
        times,
        length_um: length,
        spacing_um: model.grid.spacing_um,
        sheet: model.grid.is_sheet(),
        boundaries,
        widths,
        unreferenced,
        profiles,
        decoded_um,
    })
}
