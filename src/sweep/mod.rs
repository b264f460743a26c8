//! Parameter sweeps: the model run at every point of a grid over one or more
//! parameters (linear or logarithmic spacing), each point's final pattern
//! read off and put in a class ([`class`]). Points run in parallel, one
//! thread each, keeping only the last three snapshots; results do not depend on
//! the thread count. Everything here is a model prediction.

pub mod class;
pub mod shard;

use rayon::prelude::*;

use crate::integrate::{Recording, StepError};
use crate::model::{Model, Param};
use crate::progress::{Counter, Progress};
use crate::readout::{self, Boundary, Domain};

pub use class::{PatternClass, SheetWavelength, changing_gene, classify, settle_rates};

/// The most points a sweep may have (the product of the axes' counts).
pub const MAX_POINTS: usize = 1_000_000;

/// One axis of a sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    /// The parameter as written (`gene.production`, a constant, …).
    pub name: String,
    /// The parameter.
    pub param: Param,
    /// Its values, in order.
    pub values: Vec<f64>,
    /// True for logarithmic spacing.
    pub log: bool,
}

/// Why an axis cannot be swept.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("sweep axis `{text}`: {why}; {fix}")]
pub struct AxisError {
    /// The axis as written.
    pub text: String,
    /// What is wrong.
    pub why: String,
    /// How to fix it.
    pub fix: String,
}

impl Axis {
    /// Reads `NAME=FROM:TO:POINTS` or `NAME=FROM:TO:POINTS:log` for `model`:
    /// POINTS values from FROM to TO inclusive, evenly spaced, or evenly in
    /// the logarithm. Each parameter stays where the model file allows it
    /// ([`Param::lower_bound`]): > 0 (thresholds, Hill coefficients,
    /// lengths), ≥ 0 (production, decay, diffusion, peaks, baselines, edge
    /// influxes and levels), or any finite value (constants of the rate
    /// expressions, biases, sigmoid weights).
    ///
    /// # Errors
    /// [`AxisError`] saying what is wrong and how to write it.
    pub fn parse(model: &Model, text: &str) -> Result<Axis, AxisError> {
        let bad = |why: String, fix: &str| AxisError { text: text.into(), why, fix: fix.into() };
        let form = "write NAME=FROM:TO:POINTS or NAME=FROM:TO:POINTS:log, e.g. amber.production=0.5:2:21:log";
        let (name, range) = text.split_once('=').ok_or_else(|| bad("no `=`".into(), form))?;
        let name = name.trim().to_string();
        let param = model.parse_param(&name).map_err(|why| bad(why, "name a parameter as in a mutant's scale"))?;
        let parts: Vec<&str> = range.split(':').map(str::trim).collect();
        let log = match parts.get(3) {
            None => false,
            Some(&"log") => true,
            Some(&"linear") => false,
            Some(other) => return Err(bad(format!("spacing `{other}`"), "give log or linear, or leave it out")),
        };
        if !(3..=4).contains(&parts.len()) {
            return Err(bad(format!("{} fields after `=`", parts.len()), form));
        }
        let number = |s: &str| s.parse::<f64>().ok().filter(|v| v.is_finite());
        let (Some(from), Some(to)) = (number(parts[0]), number(parts[1])) else {
            return Err(bad("FROM or TO is not a number".into(), form));
        };
        let points: usize = parts[2]
            .parse()
            .ok()
            .filter(|n| (2..=10_000).contains(n))
            .ok_or_else(|| bad(format!("POINTS is `{}`", parts[2]), "give 2 to 10000 points"))?;
        if from == to {
            return Err(bad("FROM equals TO".into(), "give a range"));
        }
        // A parameter that cannot change the run is not swept (a scale of 0
        // is no reason: a sweep sets values, it does not scale them).
        let mut probe = model.clone();
        if let Some(p) = probe.param_mut(param) {
            *p = 1.0;
        }
        if let Some(why) = probe.no_effect(param) {
            return Err(bad(why, "sweep a parameter that acts"));
        }
        let lowest = from.min(to);
        if log && lowest <= 0.0 {
            return Err(bad("a log axis through 0 or below".into(), "give FROM and TO > 0 for log spacing"));
        }
        match param.lower_bound() {
            Some(true) if lowest <= 0.0 => {
                return Err(bad(format!("{name} must stay > 0"), "give a range inside what the model file allows"));
            }
            Some(false) if lowest < 0.0 => {
                return Err(bad(format!("{name} must stay >= 0"), "give a range inside what the model file allows"));
            }
            _ => {}
        }
        let values = (0..points)
            .map(|k| {
                let f = k as f64 / (points - 1) as f64;
                if k == 0 {
                    from
                } else if k == points - 1 {
                    to
                } else if log {
                    (from.ln() + f * (to.ln() - from.ln())).exp()
                } else {
                    from + f * (to - from)
                }
            })
            .collect();
        if let Param::Gene(_, crate::model::GeneParam::Diffusion) = param {
            let hops = from.max(to) / (model.grid.spacing_um * model.grid.spacing_um);
            if hops > crate::model::MAX_HOPS_PER_MIN {
                return Err(bad(
                    format!("D/h² reaches {hops:.1e} per minute, past any tissue"),
                    "check the units: diffusion in µm²/min, as in the model file",
                ));
            }
        }
        Ok(Axis { name, param, values, log })
    }
}

/// Refuses two axes over one parameter (the last would silently win).
///
/// # Errors
/// [`AxisError`] naming the parameter.
pub fn check_axes(axes: &[Axis]) -> Result<(), AxisError> {
    for (i, a) in axes.iter().enumerate() {
        if axes[..i].iter().any(|b| b.param == a.param) {
            return Err(AxisError {
                text: a.name.clone(),
                why: "the parameter is swept twice".into(),
                fix: "give each parameter one --axis".into(),
            });
        }
    }
    Ok(())
}

/// What one point of a sweep gave.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    /// The value of each axis's parameter.
    pub values: Vec<f64>,
    /// Its class (or [`PatternClass::Failed`]).
    pub class: PatternClass,
    /// Final boundaries.
    pub boundaries: Vec<Boundary>,
    /// Final domains.
    pub domains: Vec<Domain>,
    /// Why the run failed, if it did.
    pub failure: Option<String>,
    /// On a sheet with a repeating pattern (spots, stripes, labyrinth):
    /// its dominant wavelength.
    pub wavelength: Option<SheetWavelength>,
}

/// A finished sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct Sweep {
    /// The axes; points vary the last axis fastest.
    pub axes: Vec<Axis>,
    /// Gene names.
    pub genes: Vec<String>,
    /// Axis length, µm.
    pub length_um: f64,
    /// Whether the tissue is a sheet (points then carry wavelengths).
    pub sheet: bool,
    /// Every point, in grid order.
    pub points: Vec<Point>,
}

impl Sweep {
    /// The grid index of each axis for point `k` (last axis fastest).
    pub fn indices(&self, mut k: usize) -> Vec<usize> {
        let mut out = vec![0; self.axes.len()];
        for (a, axis) in self.axes.iter().enumerate().rev() {
            out[a] = k % axis.values.len();
            k /= axis.values.len();
        }
        out
    }
}

/// The model at one point: each axis's parameter set to its value.
pub fn model_at(model: &Model, axes: &[Axis], values: &[f64]) -> Model {
    let mut m = model.clone();
    for (axis, v) in axes.iter().zip(values) {
        if let Some(p) = m.param_mut(axis.param) {
            *p = *v;
        }
    }
    m
}

/// Runs one point: the last snapshot kept, read off, and whether it still changes.
fn run_point(model: &Model) -> Result<(Recording, bool, Vec<Boundary>, Vec<Domain>), StepError> {
    let rec = readout::recording_at(model, &[model.clock.until_min])?;
    let last = rec.len() - 1;
    let boundaries = readout::boundaries_at(&rec, last)?;
    let domains = readout::final_domains(&rec);
    let changing = changing_gene(model, &rec)?.is_some();
    Ok((rec, changing, boundaries, domains))
}

/// Runs the model at every point of the grid spanned by `axes` (in parallel
/// when `parallel`), telling `progress` as points finish (stage "points").
/// A point whose run fails is kept, with its reason, as
/// [`PatternClass::Failed`].
pub fn run_sweep(model: &Model, axes: &[Axis], parallel: bool, progress: &dyn Progress) -> Sweep {
    let total: usize = axes.iter().map(|a| a.values.len()).product();
    let indices: Vec<usize> = (0..total).collect();
    let points = run_sweep_points(model, axes, &indices, parallel, progress);
    Sweep { points, ..empty_sweep(model, axes) }
}

/// A sweep of `model` over `axes` with no points yet.
pub fn empty_sweep(model: &Model, axes: &[Axis]) -> Sweep {
    Sweep {
        axes: axes.to_vec(),
        genes: model.genes.iter().map(|g| g.name.clone()).collect(),
        length_um: model.grid.length_um(),
        sheet: model.grid.is_sheet(),
        points: Vec::new(),
    }
}

/// Runs the grid points `indices` (last axis fastest) of the sweep of
/// `model` over `axes`, in that order.
pub fn run_sweep_points(
    model: &Model,
    axes: &[Axis],
    indices: &[usize],
    parallel: bool,
    progress: &dyn Progress,
) -> Vec<Point> {
    let counter = Counter::begin(progress, "points", indices.len());
    let grid = empty_sweep(model, axes);
    let one = |&k: &usize| -> Point {
        let point = point_at(model, axes, &grid, k);
        counter.tick();
        point
    };
    if parallel { indices.par_iter().map(one).collect() } else { indices.iter().map(one).collect() }
}

/// Runs grid point `k` of the sweep of `model` over `axes` (`grid` is
/// [`empty_sweep`] of them) and classifies it; a failed run is kept, with
/// its reason, as [`PatternClass::Failed`].
pub(crate) fn point_at(model: &Model, axes: &[Axis], grid: &Sweep, k: usize) -> Point {
    let values: Vec<f64> = grid.indices(k).iter().zip(axes).map(|(&i, a)| a.values[i]).collect();
    let m = model_at(model, axes, &values);
    match run_point(&m) {
        Ok((rec, changing, boundaries, domains)) => {
            let (class, wavelength) = classify(&rec, changing, &boundaries, &domains);
            Point { values, class, boundaries, domains, failure: None, wavelength }
        }
        Err(e) => Point {
            values,
            class: PatternClass::Failed,
            boundaries: Vec::new(),
            domains: Vec::new(),
            failure: Some(e.to_string()),
            wavelength: None,
        },
    }
}
