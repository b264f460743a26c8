//! Checks on a replicate run: how much of each boundary's variance each
//! noise source explains alone, and whether halving the noise step changes
//! the answer beyond sampling error.

use serde::Serialize;

use super::{Embryos, ReplicateError, Replicates, Simulated, Sources, pass, run_with};
use crate::model::Model;
use crate::progress::Progress;

/// How much of each final boundary's variance one noise source explains alone.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Share {
    /// The source ("initial levels", "intrinsic", "vary <parameter>").
    pub source: String,
    /// Gene of the boundary.
    pub gene: String,
    /// Direction of the boundary.
    pub direction: String,
    /// The noise-free position, µm.
    pub reference_um: f64,
    /// Positional error with this source alone, µm.
    pub sd_alone_um: f64,
    /// Its variance over the variance with every source on.
    pub fraction: f64,
}

/// Reruns the embryos with each source alone and compares the variance of
/// every final boundary with `all` (the run with every source on). The same
/// embryos are used (common random numbers), so the fractions of
/// independent sources that add linearly sum to about 1.
///
/// # Errors
/// As [`run`].
pub fn attribute(
    model: &Model,
    n: usize,
    all: &Replicates,
    progress: &dyn Progress,
) -> Result<Vec<Share>, ReplicateError> {
    attribute_with(&Simulated, model, n, all, progress)
}

/// [`attribute`] with the embryos read from `embryos`.
///
/// # Errors
/// As [`run_with`].
pub fn attribute_with(
    embryos: &dyn Embryos,
    model: &Model,
    n: usize,
    all: &Replicates,
    progress: &dyn Progress,
) -> Result<Vec<Share>, ReplicateError> {
    let mut out = Vec::new();
    for (name, sources) in Sources::each(model) {
        let alone = run_with(embryos, &pass::alone(&name), model, n, &sources, progress, &mut |_, _| {})?;
        for (a, b) in all.final_boundaries().zip(alone.final_boundaries()) {
            out.push(Share {
                source: name.clone(),
                gene: a.gene.clone(),
                direction: a.direction.clone(),
                reference_um: a.reference_um,
                sd_alone_um: b.sd_um,
                fraction: (b.sd_um * b.sd_um) / (a.sd_um * a.sd_um),
            });
        }
    }
    Ok(out)
}

/// How a final boundary changes when the noise step is halved.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StepChange {
    /// Gene of the boundary.
    pub gene: String,
    /// Direction of the boundary.
    pub direction: String,
    /// Mean position with the model's noise step, µm.
    pub mean_um: f64,
    /// Mean position with half the step, µm.
    pub mean_half_um: f64,
    /// Positional error with the model's step, µm.
    pub sd_um: f64,
    /// Positional error with half the step, µm.
    pub sd_half_um: f64,
    /// True if both changes are within 3 standard errors of a difference
    /// of two independent estimates (means: √(2/n)·sd; sds: sd/√(n − 1)).
    pub unchanged: bool,
}

/// Reruns the embryos with half the noise step and compares every final
/// boundary's mean and positional error with `all`: Euler–Maruyama's error
/// falls with the step, so a step whose halving changes nothing beyond the
/// sampling error is small enough for this many embryos. Empty for a model
/// without intrinsic or additive noise (its runs are deterministic).
///
/// # Errors
/// As [`run`].
pub fn halved_step(
    model: &Model,
    n: usize,
    all: &Replicates,
    progress: &dyn Progress,
) -> Result<Vec<StepChange>, ReplicateError> {
    halved_step_with(&Simulated, model, n, all, progress)
}

/// The model with half the noise step, if its runs are stochastic.
pub fn with_half_step(model: &Model) -> Option<Model> {
    let k = model.noise.step_min.filter(|_| model.noise.is_stochastic())?;
    let mut finer = model.clone();
    finer.noise.step_min = Some(0.5 * k);
    Some(finer)
}

/// [`halved_step`] with the embryos read from `embryos`.
///
/// # Errors
/// As [`run_with`].
pub fn halved_step_with(
    embryos: &dyn Embryos,
    model: &Model,
    n: usize,
    all: &Replicates,
    progress: &dyn Progress,
) -> Result<Vec<StepChange>, ReplicateError> {
    let Some(finer) = with_half_step(model) else {
        return Ok(Vec::new());
    };
    let half = run_with(embryos, pass::HALF_STEP, &finer, n, &Sources::all(model), progress, &mut |_, _| {})?;
    Ok(all
        .final_boundaries()
        .zip(half.final_boundaries())
        .map(|(a, b)| {
            let nn = n as f64;
            let sd = a.sd_um.max(b.sd_um);
            let mean_ok = (a.mean_um - b.mean_um).abs() <= 3.0 * (2.0 / nn).sqrt() * sd;
            let sd_ok = (a.sd_um - b.sd_um).abs() <= 3.0 * sd / (nn - 1.0).sqrt();
            StepChange {
                gene: a.gene.clone(),
                direction: a.direction.clone(),
                mean_um: a.mean_um,
                mean_half_um: b.mean_um,
                sd_um: a.sd_um,
                sd_half_um: b.sd_um,
                unchanged: mean_ok && sd_ok,
            }
        })
        .collect())
}
