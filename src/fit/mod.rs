//! Fitting a circuit to measured boundaries: the parameters that put the
//! simulated boundaries where the embryos show them, in the wild type and
//! mutants at once, and how well the data pin each one down.
//!
//! Global search by differential evolution ([`optimise`]) on the weighted
//! least-squares objective ([`objective`]); then the local curvature:
//! with `J = ∂r/∂u` (residuals over parameters scaled to the unit range,
//! least-squares slopes over offsets wide enough to move a boundary by a few
//! nuclei, since boundaries of sharp switches move in nucleus-sized jumps), the Gauss–Newton approximation `H ≈ JᵀJ` to half the
//! Hessian of Σr² gives the covariance `(JᵀJ)⁻¹` and 95 % intervals
//! `u ± 1.96 σ_u` (Bates & Watts 1988, Nonlinear Regression Analysis and Its
//! Applications, §2.3). Intervals come from a linearisation: approximate.

pub mod objective;
pub mod optimise;
pub mod problem;

use nalgebra::DMatrix;

pub use objective::Residual;
pub use optimise::{DeOptions, DeResult};
pub use problem::{FitProblem, FitSetupError, FreeParam, WILD_TYPE};

/// The 97.5 % point of the standard normal (two-sided 95 %).
const Z95: f64 = 1.959_963_984_540_054;
/// First half-width of the slope offsets, in units of the search range (common practice, no source).
const STEP: f64 = 1e-4;
/// Largest half-width, in units of the search range.
const MAX_STEP: f64 = 0.1;
/// Nuclei some boundary must move across ±h to set the half-width h (common practice, no source).
const STAIRS: f64 = 3.0;

/// What a fit found for one parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    /// Best value.
    pub value: f64,
    /// Approximate 95 % interval (None when the curvature is singular).
    pub interval: Option<(f64, f64)>,
    /// Within 0.1 % of the search range of a bound.
    pub at_bound: bool,
    /// The interval stays inside the search range and the parameter is not at a bound.
    pub determined: bool,
}

/// A finished fit.
#[derive(Debug, Clone)]
pub struct FitResult {
    /// One per free parameter.
    pub estimates: Vec<Estimate>,
    /// Σr² at the best point.
    pub objective: f64,
    /// The residuals there.
    pub residuals: Vec<Residual>,
    /// Optimiser record.
    pub search: DeResult,
    /// Correlation matrix of the parameters (None when the curvature is singular).
    pub correlation: Option<Vec<Vec<f64>>>,
    /// Degrees of freedom: residuals − parameters.
    pub dof: usize,
    /// Profile likelihoods of the parameters asked for in `[fit] profile`.
    pub profiles: Vec<Profile>,
}

/// The profile of one parameter: at each fixed value, the objective minimised
/// over the other free parameters. Where it stays within 3.84 (the 95 % point
/// of χ² with one degree of freedom) of the best objective is the
/// profile-likelihood interval (Venzon & Moolgavkar 1988, Appl. Statist.
/// 37:87; Raue et al. 2009, Bioinformatics 25:1923).
#[derive(Debug, Clone, PartialEq)]
pub struct Profile {
    /// Index of the parameter.
    pub param: usize,
    /// (value, minimised objective), in increasing value.
    pub points: Vec<(f64, f64)>,
}

/// Points of each profile.
const PROFILE_POINTS: usize = 9;
/// 95 % point of χ² with one degree of freedom.
const CHI2_95: f64 = 3.841_458_820_694_124;

impl FitResult {
    /// The best values, in parameter order.
    pub fn values(&self) -> Vec<f64> {
        self.estimates.iter().map(|e| e.value).collect()
    }
}

/// Runs the fit; `report(evaluations, best objective)` after each generation.
pub fn fit(problem: &FitProblem, parallel: bool, report: &mut dyn FnMut(usize, f64)) -> FitResult {
    let dim = problem.params.len();
    let f = |u: &[f64]| objective::objective(problem, &problem.values(u));
    let start: Vec<f64> = problem.params.iter().map(|p| p.unit(p.start)).collect();
    let opts = DeOptions { seed: problem.seed, evaluations: problem.evaluations, restarts: problem.restarts, parallel };
    let search = optimise::minimise(dim, &f, Some(&start), &opts, report);
    let best = problem.values(&search.best);
    let residuals = objective::residuals(problem, &best).unwrap_or_default();
    let objective = residuals.iter().map(|r| r.value * r.value).sum();
    let cov = covariance(problem, &search.best, &residuals);
    let estimates = problem
        .params
        .iter()
        .enumerate()
        .map(|(j, p)| {
            let u = search.best[j];
            let at_bound = !(1e-3..=1.0 - 1e-3).contains(&u);
            let (interval, inside) = match &cov {
                Some(c) if c[(j, j)] >= 0.0 => {
                    let half = Z95 * c[(j, j)].sqrt();
                    (Some((p.value(u - half), p.value(u + half))), u - half >= 0.0 && u + half <= 1.0)
                }
                _ => (None, false),
            };
            Estimate { value: best[j], interval, at_bound, determined: inside && !at_bound }
        })
        .collect();
    let correlation = cov
        .as_ref()
        .map(|c| (0..dim).map(|i| (0..dim).map(|j| c[(i, j)] / (c[(i, i)] * c[(j, j)]).sqrt()).collect()).collect());
    let profiles =
        problem.profile.iter().map(|&j| profile(problem, &search.best, objective, j, &cov, parallel)).collect();
    FitResult {
        estimates,
        objective,
        dof: residuals.len().saturating_sub(dim),
        residuals,
        search,
        correlation,
        profiles,
    }
}

/// The profile of parameter `j` around the best point `u`: a grid over ±3σ
/// (at least ±5 % of the search range, widened until the ends rise past the
/// 95 % line), the others re-fitted at each point by a short
/// differential-evolution search started from the best point.
fn profile(
    problem: &FitProblem,
    u: &[f64],
    best: f64,
    j: usize,
    cov: &Option<DMatrix<f64>>,
    parallel: bool,
) -> Profile {
    let dim = u.len();
    let others: Vec<f64> = u.iter().enumerate().filter(|(k, _)| *k != j).map(|(_, v)| *v).collect();
    let at = |k: usize, fixed: f64| -> f64 {
        if dim == 1 {
            return objective::objective(problem, &problem.values(&[fixed]));
        }
        let f = |rest: &[f64]| {
            let mut v = rest.to_vec();
            v.insert(j, fixed);
            objective::objective(problem, &problem.values(&v))
        };
        let opts = DeOptions {
            seed: problem.seed.wrapping_add(1 + k as u64),
            evaluations: (problem.evaluations / 10).max(40 * dim),
            restarts: 1,
            parallel,
        };
        optimise::minimise(dim - 1, &f, Some(&others), &opts, &mut |_, _| {}).value
    };
    // Widen the grid (up to three doublings) until both ends rise past the
    // 95 % line or reach the bounds: boundaries that move in nucleus-sized
    // jumps can leave the profile flatter than the curvature suggests.
    let mut half = cov.as_ref().map_or(0.05, |c| (3.0 * c[(j, j)].max(0.0).sqrt()).max(0.05));
    let mut points = Vec::new();
    for _ in 0..4 {
        let (lo, hi) = ((u[j] - half).max(0.0), (u[j] + half).min(1.0));
        points = (0..PROFILE_POINTS)
            .map(|k| {
                let fixed = lo + (hi - lo) * k as f64 / (PROFILE_POINTS - 1) as f64;
                (problem.params[j].value(fixed), at(k, fixed))
            })
            .collect::<Vec<_>>();
        let open_low = lo > 0.0 && points[0].1 - best < CHI2_95;
        let open_high = hi < 1.0 && points[PROFILE_POINTS - 1].1 - best < CHI2_95;
        if !(open_low || open_high) {
            break;
        }
        half *= 2.0;
    }
    Profile { param: j, points }
}

/// `(JᵀJ)⁻¹` in unit-range coordinates at `u`, or None if a residual appears
/// or disappears within the difference step, or the matrix is singular.
fn covariance(problem: &FitProblem, u: &[f64], at: &[Residual]) -> Option<DMatrix<f64>> {
    let dim = u.len();
    let n = at.len();
    let mut jac = DMatrix::<f64>::zeros(n, dim);
    let nucleus_pct = 100.0 / problem.model.grid.nx as f64;
    for j in 0..dim {
        // Boundaries of a sharp switch move in nucleus-sized jumps, so the
        // residuals are staircases in each parameter. The slope is the
        // least-squares slope over offsets ±h/2, ±h, ±2h, with h grown until
        // some boundary moves by several nuclei across ±h (a regression over
        // several stairs instead of the derivative of one).
        let residuals_at = |offset: f64| -> Option<(f64, Vec<f64>)> {
            let z = (u[j] + offset).clamp(0.0, 1.0);
            let mut v = u.to_vec();
            v[j] = z;
            let r = objective::residuals(problem, &problem.values(&v))?;
            (r.len() == n).then(|| (z - u[j], r.iter().map(|x| x.value).collect()))
        };
        let mut h = STEP;
        loop {
            let (_, a) = residuals_at(-h)?;
            let (_, b) = residuals_at(h)?;
            let moved_pct = a.iter().zip(&b).zip(at).map(|((a, b), r)| (b - a).abs() * r.sigma_pct).fold(0.0, f64::max);
            if moved_pct >= STAIRS * nucleus_pct || h >= MAX_STEP {
                break;
            }
            h *= 2.0;
        }
        let samples: Vec<(f64, Vec<f64>)> =
            [-2.0, -1.0, -0.5, 0.5, 1.0, 2.0].iter().map(|m| residuals_at(m * h)).collect::<Option<_>>()?;
        let mean_d = samples.iter().map(|s| s.0).sum::<f64>() / samples.len() as f64;
        let sxx: f64 = samples.iter().map(|s| (s.0 - mean_d).powi(2)).sum();
        if sxx <= 0.0 {
            return None;
        }
        for i in 0..n {
            let mean_r = samples.iter().map(|s| s.1[i]).sum::<f64>() / samples.len() as f64;
            jac[(i, j)] = samples.iter().map(|s| (s.0 - mean_d) * (s.1[i] - mean_r)).sum::<f64>() / sxx;
        }
    }
    let h = jac.transpose() * &jac;
    let inv = h.try_inverse()?;
    inv.iter().all(|v| v.is_finite()).then_some(inv)
}

/// The model file with the fitted values written in: valid input for `anlage
/// run` (comments of the original are not kept).
///
/// # Errors
/// A message if the text cannot be rewritten (a bug) or does not validate.
pub fn fitted_model_text(problem: &FitProblem, values: &[f64], objective: f64) -> Result<String, String> {
    use crate::model::Param;
    let mut doc: toml::Table = toml::from_str(&problem.model.text).map_err(|e| e.to_string())?;
    for (p, v) in problem.params.iter().zip(values) {
        let (array, index) = match p.param {
            Param::Gene(i, _) => (("gene", None), i),
            Param::Gradient(k, _) => (("gradient", None), k),
            Param::Link(k, _) => (("circuit", Some("link")), k),
            Param::Constant(k) => {
                let name = &problem.model.circuit.parameters[k].0;
                let constants = doc
                    .get_mut("circuit")
                    .and_then(|c| c.get_mut("parameters"))
                    .and_then(|t| t.as_table_mut())
                    .ok_or("missing circuit parameters")?;
                constants.insert(name.clone(), toml::Value::Float(*v));
                continue;
            }
        };
        let key = p.param.key();
        let mut table = doc.get_mut(array.0).ok_or("missing table")?;
        if let Some(inner) = array.1 {
            table = table.get_mut(inner).ok_or("missing links")?;
        }
        let entry = table.get_mut(index).and_then(|e| e.as_table_mut()).ok_or("missing entry")?;
        entry.insert(key.into(), toml::Value::Float(*v));
    }
    let body = toml::to_string(&doc).map_err(|e| e.to_string())?;
    let text = format!(
        "# Fitted by `anlage fit` from {} (objective {objective:.6}).\n\
         # A model consistent with the measured boundaries, not proof of the mechanism.\n{body}",
        problem.model.file.display()
    );
    crate::model::Model::from_toml(&text, &problem.model.file).map_err(|e| e.to_string())?;
    Ok(text)
}
