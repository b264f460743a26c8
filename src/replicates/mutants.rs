//! Mutants with replicates: every embryo of the wild type and of each
//! mutant shares its seed (common random numbers), so a shift is a mean of
//! paired differences and a change of precision is a comparison of
//! correlated variances ([`intervals::paired_sd_ratio`]).

use serde::Serialize;

use super::intervals::{self, Paired};
use super::{Embryos, ReplicateError, Simulated, Sources, embryo, for_each_embryo, pass, read_one};
use crate::model::Model;
use crate::progress::{Counter, Progress};
use crate::readout::{self, Boundary, pair_in_order};

/// How a mutant moves one final boundary of the wild type, embryo by embryo,
/// and whether it changes the boundary's precision.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PairedShift {
    /// The mutant.
    pub mutant: String,
    /// Gene of the boundary.
    pub gene: String,
    /// Direction of the boundary.
    pub direction: String,
    /// The noise-free wild type's position, µm.
    pub reference_um: f64,
    /// Fraction of embryos in which both the wild type and the mutant have it
    /// (the same number of boundaries of this gene and direction as the
    /// noise-free wild type, paired in order).
    pub present_fraction: f64,
    /// Mean wild-type position over those embryos, µm.
    pub wild_type_mean_um: f64,
    /// Wild-type positional error, µm.
    pub wild_type_sd_um: f64,
    /// Mean mutant position, µm.
    pub mutant_mean_um: f64,
    /// Mutant positional error, µm.
    pub mutant_sd_um: f64,
    /// Mean of the shift (mutant − wild type of the same embryo), µm.
    pub shift_um: f64,
    /// Standard error of that mean, µm (sd of the shifts / √n).
    pub shift_se_um: f64,
    /// Sd of the shift between embryos, µm.
    pub shift_sd_um: f64,
    /// 95 % interval of the mean shift, low end, µm ([`intervals::mean_interval`]).
    pub shift_low_um: f64,
    /// Its high end, µm.
    pub shift_high_um: f64,
    /// Mutant positional error over the wild type's.
    pub sd_ratio: f64,
    /// 95 % interval of that ratio for paired embryos, low end
    /// ([`intervals::paired_sd_ratio`]).
    pub sd_ratio_low: f64,
    /// Its high end.
    pub sd_ratio_high: f64,
    /// "less precise" or "more precise" when the interval excludes 1 and the
    /// ratio is off 1 by more than [`intervals::SAME_WITHIN`], else "same";
    /// otherwise why it cannot be said (see [`precision_words`]).
    pub precision: String,
}

/// Runs `n` embryos of the wild type and of every mutant (a name and the
/// wild type with that mutant's changes) with the same seeds, so each
/// mutant embryo has the wild-type embryo's parameter factors and noise
/// stream, and summarises how each final boundary of the noise-free wild
/// type moves in each mutant: rows mutant by mutant, boundaries in the
/// wild type's order. An embryo's wild type and mutants run one after the
/// other on one thread; embryos run in parallel.
///
/// # Errors
/// As [`super::run`].
pub fn paired_shifts(
    wild_type: &Model,
    mutants: &[(String, Model)],
    n: usize,
    progress: &dyn Progress,
) -> Result<Vec<PairedShift>, ReplicateError> {
    let passes: Vec<String> = mutants.iter().map(|(name, _)| pass::mutant(name)).collect();
    paired_shifts_with(&Simulated, wild_type, mutants, &passes, n, progress)
}

/// [`paired_shifts`] with the embryos read from `embryos`: the wild type's
/// as set [`pass::WILD_TYPE`], mutant k's as set `passes[k]`.
///
/// # Errors
/// As [`super::run`].
pub fn paired_shifts_with(
    embryos: &dyn Embryos,
    wild_type: &Model,
    mutants: &[(String, Model)],
    passes: &[String],
    n: usize,
    progress: &dyn Progress,
) -> Result<Vec<PairedShift>, ReplicateError> {
    let reference = read_one(&embryo(wild_type, 0, &Sources::none(wild_type))).map_err(ReplicateError::Reference)?;
    let last = wild_type.clock.until_min;
    let finals = |bs: Vec<Boundary>| -> Vec<Boundary> {
        bs.into_iter().filter(|b| readout::same_time(b.time_min, last)).collect()
    };
    let refs = finals(reference.boundaries.clone());
    // Each model's embryos are repaired against its own noise-free embryo:
    // a mutant's new stripe is its own, not a flicker of the wild type's.
    let flickers_of = |m: &Model, own: Vec<Boundary>| {
        let periodic = m.grid.edges == crate::model::Edges::Periodic;
        super::ragged::Flickers::new(&finals(own), m.grid.spacing_um, m.grid.length_um(), periodic)
    };
    let mut flickers = vec![flickers_of(wild_type, reference.boundaries)];
    for (_, m) in mutants {
        let own = read_one(&embryo(m, 0, &Sources::none(m))).map_err(ReplicateError::Reference)?;
        flickers.push(flickers_of(m, own.boundaries));
    }
    let mut acc = vec![vec![Paired::default(); refs.len()]; mutants.len()];
    let counter = Counter::begin(progress, "embryos", n * (1 + mutants.len()));
    let final_of = |m: &Model, set: &str, i: usize, name: &str, f: &super::ragged::Flickers| {
        let r = embryos.read(set, i, &embryo(m, i, &Sources::all(m)));
        counter.tick();
        Ok::<_, String>(f.merge(&finals(r.map_err(|e| format!("{name}: {e}"))?.boundaries)).0)
    };
    let one = |i: usize| -> Result<(Vec<Boundary>, Vec<Vec<Boundary>>), String> {
        let w = final_of(wild_type, pass::WILD_TYPE, i, "wild type", &flickers[0])?;
        let ms = mutants
            .iter()
            .zip(passes)
            .zip(&flickers[1..])
            .map(|(((name, m), set), f)| final_of(m, set, i, name, f))
            .collect::<Result<Vec<_>, _>>()?;
        Ok((w, ms))
    };
    let folded = for_each_embryo(n, one, |_, (w, ms)| {
        let on_w = pair_in_order(&refs, &w);
        for (k, m) in ms.iter().enumerate() {
            for (j, (a, b)) in on_w.iter().zip(pair_in_order(&refs, m)).enumerate() {
                if let (Some(xw), Some(xm)) = (a.0, b.0) {
                    acc[k][j].push(xw, xm);
                }
            }
        }
    });
    drop(counter);
    folded?;
    Ok(mutants
        .iter()
        .zip(&acc)
        .flat_map(|((name, _), per)| {
            refs.iter().zip(per).map(move |(b, p)| {
                let (sd_shift, mean_shift) = (p.sd_difference(), p.mean_y() - p.mean_x());
                let (shift_low_um, shift_high_um) = intervals::mean_interval(mean_shift, sd_shift, p.n);
                let (sd_ratio, sd_ratio_low, sd_ratio_high) = intervals::paired_sd_ratio(p);
                PairedShift {
                    mutant: name.clone(),
                    gene: b.gene.clone(),
                    direction: b.direction.to_string(),
                    reference_um: b.position_um,
                    present_fraction: p.n as f64 / n as f64,
                    wild_type_mean_um: p.mean_x(),
                    wild_type_sd_um: p.sd_x(),
                    mutant_mean_um: p.mean_y(),
                    mutant_sd_um: p.sd_y(),
                    shift_um: mean_shift,
                    shift_se_um: sd_shift / (p.n as f64).sqrt(),
                    shift_sd_um: sd_shift,
                    shift_low_um,
                    shift_high_um,
                    sd_ratio,
                    sd_ratio_low,
                    sd_ratio_high,
                    precision: precision_words(p, n, sd_ratio, sd_ratio_low, sd_ratio_high),
                }
            })
        })
        .collect())
}

/// A boundary in fewer than this fraction of the embryo pairs is not
/// compared for precision: the pairs that have it are a selected few, and
/// their spreads say little about the others (common practice, no source).
pub const COMPARABLE_FRACTION: f64 = 0.9;

/// The precision verdict of one boundary over `n` embryo pairs `p`:
/// "absent" in no pair, "in only N % of pairs" below
/// [`COMPARABLE_FRACTION`], "no spread" when no embryo differs from another
/// (no noise reaches this boundary), "too few embryos" below three pairs,
/// else the verdict of the ratio's interval ([`intervals::verdict`]).
fn precision_words(p: &Paired, n: usize, ratio: f64, low: f64, high: f64) -> String {
    let present = p.n as f64 / n as f64;
    if p.n == 0 {
        "absent".into()
    } else if present < COMPARABLE_FRACTION {
        format!("not compared: in only {:.0} % of embryo pairs", 100.0 * present)
    } else if p.sd_x() == 0.0 && p.sd_y() == 0.0 {
        "no spread: every embryo the same".into()
    } else if p.n < 3 {
        "too few embryos".into()
    } else {
        intervals::verdict(ratio, low, high, "less precise", "more precise").into()
    }
}
