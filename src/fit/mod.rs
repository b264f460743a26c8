//! Fitting a circuit to measured boundaries: the parameters that put the
//! simulated boundaries where the embryos show them, in the wild type and
//! mutants at once, and how well the data pin each one down.
//!
//! 1. Global search by differential evolution ([`optimise`]) on the
//!    weighted least-squares objective ([`objective`]), from one or several
//!    seeds (starts);
//! 2. a local polish of each start's best point by bounded
//!    Levenberg–Marquardt ([`lsq::polish`]);
//! 3. at the best point: slopes J = ∂r/∂u over steps wide enough to move a
//!    boundary by a few nuclei (boundaries of sharp switches move in
//!    nucleus-sized jumps); the curvature interval u ± 1.96·√((JᵀJ)⁻¹)ⱼⱼ
//!    (approximate: a linearisation; Bates & Watts 1988, Nonlinear Regression
//!    Analysis and Its Applications, §2.3); the combinations of parameters
//!    the data do not fix (eigenvectors of JᵀJ);
//! 4. for every parameter, the profile-likelihood interval: each bound where
//!    the objective, re-minimised over the other parameters, rises 3.84
//!    above the best ([`lsq::profile_bound`]).

pub mod lsq;
pub mod objective;
pub mod optimise;
pub mod problem;
pub mod quality;
pub mod shard;
pub mod spread;

use rayon::prelude::*;

pub use lsq::{Bound, Polish, Weak};
pub use objective::Residual;
pub use optimise::{DeOptions, DeResult};
pub use problem::{FitProblem, FitSetupError, FreeParam, WILD_TYPE};
pub use quality::{Combination, Convergence, Start, describe_combination};
pub use spread::{OptimaSpread, optima_spread};

/// Nuclei some boundary must move across ±h to set a slope step h (common practice, no source).
const STAIRS: f64 = 3.0;

/// What a fit found for one parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    /// Best value.
    pub value: f64,
    /// Profile-likelihood 95 % interval (values); an open side ends at the search bound.
    pub interval: (f64, f64),
    /// Whether the profile crossed 3.84 below and above the best value.
    pub closed: (bool, bool),
    /// Curvature (Laplace) 95 % interval, approximate (None when JᵀJ is singular).
    pub approx: Option<(f64, f64)>,
    /// Within 0.1 % of the search range of a bound.
    pub at_bound: bool,
    /// Part of a combination the data do not fix.
    pub in_weak: bool,
    /// Both profile sides closed, not at a bound, in no weak combination.
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
    /// The global search of the best start.
    pub search: DeResult,
    /// Every start.
    pub starts: Vec<Start>,
    /// How the optima of the starts spread (None for one start).
    pub spread: Option<OptimaSpread>,
    /// How the search ended, in numbers and words.
    pub convergence: Convergence,
    /// Correlation matrix of the parameters from the curvature (None when singular).
    pub correlation: Option<Vec<Vec<f64>>>,
    /// Degrees of freedom: measured boundaries − parameters.
    pub dof: usize,
    /// P(χ² with `dof` degrees of freedom ≥ objective): how often noise of the
    /// stated size alone would give a fit this poor (None without degrees of freedom).
    pub p_value: Option<f64>,
    /// Combinations of parameters that the data do not fix.
    pub weak: Vec<Combination>,
    /// The profile of every parameter: (parameter, value, objective) at each point tried.
    pub profiles: Vec<Profile>,
    /// Objective evaluations, all stages.
    pub evaluations: usize,
}

/// The profile of one parameter: at each fixed value, the objective minimised
/// over the other free parameters (Venzon & Moolgavkar 1988, Appl. Statist.
/// 37:87; Raue et al. 2009, Bioinformatics 25:1923).
#[derive(Debug, Clone, PartialEq)]
pub struct Profile {
    /// Index of the parameter.
    pub param: usize,
    /// (value, minimised objective), in increasing value.
    pub points: Vec<(f64, f64)>,
}

impl FitResult {
    /// The best values, in parameter order.
    pub fn values(&self) -> Vec<f64> {
        self.estimates.iter().map(|e| e.value).collect()
    }
}

/// The residual function of a problem on the unit cube.
fn residual_fn(problem: &FitProblem) -> impl Fn(&[f64]) -> Option<Vec<f64>> + Sync + '_ {
    move |u: &[f64]| objective::residuals(problem, &problem.values(u)).map(|r| r.iter().map(|x| x.value).collect())
}

/// Runs the fit; `report(evaluations, best objective)` after each generation
/// of the global search: every start ([`run_start`]), then [`finish`].
pub fn fit(problem: &FitProblem, parallel: bool, report: &mut dyn FnMut(usize, f64)) -> FitResult {
    let runs = (0..problem.starts.max(1))
        .map(|k| {
            let offset = k * problem.evaluations;
            run_start(problem, k, parallel, &mut |n, b| report(offset + n, b))
        })
        .collect();
    finish(problem, runs, parallel)
}

/// Start `k` (from 0) of the fit: the global search from seed `seed + k`
/// (start 0's first population includes the model file's values) and the
/// local polish of its best point. Starts are independent, so they
/// can run anywhere (sharded) and be finished together.
pub fn run_start(problem: &FitProblem, k: usize, parallel: bool, report: &mut dyn FnMut(usize, f64)) -> StartRun {
    let dim = problem.params.len();
    let res = residual_fn(problem);
    let f = |u: &[f64]| objective::objective(problem, &problem.values(u));
    let start: Vec<f64> = problem.params.iter().map(|p| p.unit(p.start)).collect();
    let all: Vec<usize> = (0..dim).collect();
    let seed = problem.seed.wrapping_add(k as u64);
    let opts = DeOptions { seed, evaluations: problem.evaluations, restarts: problem.restarts, parallel };
    // Only the first start holds the model file's values: the others start
    // from random populations alone, so that their optima are independent
    // samples (an elitist search seeded with a good file value would end
    // there in every start, and agreeing starts would prove nothing).
    let search = optimise::minimise(dim, &f, (k == 0).then_some(start.as_slice()), &opts, report);
    let (_, steps) = residuals_and_steps(problem, &res, &search.best, parallel);
    let polish = lsq::polish(&res, &search.best, &all, &steps, parallel);
    StartRun { start: Start::new(seed, &search, polish, problem), search }
}

/// One start as run: its polished outcome and its global search.
#[derive(Debug, Clone, PartialEq)]
pub struct StartRun {
    /// The polished start.
    pub start: Start,
    /// Its global search.
    pub search: DeResult,
}

/// Finishes a fit from its starts (in start order): takes the best, profiles
/// every parameter around it (polishing again if a profile finds a lower
/// objective), and judges the fit.
pub fn finish(problem: &FitProblem, runs: Vec<StartRun>, parallel: bool) -> FitResult {
    let dim = problem.params.len();
    let res = residual_fn(problem);
    let all: Vec<usize> = (0..dim).collect();
    let mut evaluations: usize = runs.iter().map(|r| r.search.evaluations + r.start.polish.evaluations).sum();
    let (starts, mut searches): (Vec<Start>, Vec<DeResult>) = runs.into_iter().map(|r| (r.start, r.search)).unzip();
    let best_start = (0..starts.len()).min_by(|&a, &b| starts[a].value.total_cmp(&starts[b].value)).unwrap_or(0);
    let search = searches.swap_remove(best_start);
    let mut u = starts[best_start].polish.u.clone();
    let mut notes = Vec::new();
    // Profiles re-optimise around the best point; one that finds a lower
    // objective shows the minimum was missed: start again from there (twice at most).
    let mut round = 0;
    let (objective, residuals, jac, cov, bounds, missed) = loop {
        let (residuals, steps) = residuals_and_steps(problem, &res, &u, parallel);
        let objective: f64 = residuals.iter().map(|r| r.value * r.value).sum();
        let jac = lsq::regression_slopes(&res, &u, residuals.len(), &steps, parallel);
        evaluations += dim * 10;
        let cov = jac.as_ref().and_then(lsq::covariance);
        let tasks: Vec<(usize, f64)> = (0..dim).flat_map(|j| [(j, -1.0), (j, 1.0)]).collect();
        let one = |&(j, dir): &(usize, f64)| {
            let first = cov.as_ref().map_or(0.02, |c| c[(j, j)].sqrt());
            lsq::profile_bound(&res, &u, objective, j, dir, &steps, first)
        };
        let bounds: Vec<Bound> =
            if parallel { tasks.par_iter().map(one).collect() } else { tasks.iter().map(one).collect() };
        evaluations += bounds.iter().map(|b| b.evaluations).sum::<usize>();
        let better = bounds.iter().filter_map(|b| b.better.as_ref()).min_by(|a, b| a.0.total_cmp(&b.0)).cloned();
        match better {
            Some((value, at)) if round < 2 => {
                notes.push(format!(
                    "a profile found a lower objective ({value:.4} < {objective:.4}): the search had missed the minimum; \
                     polished again from there"
                ));
                let p = lsq::polish(&res, &at, &all, &steps, parallel);
                evaluations += p.evaluations;
                u = p.u;
                round += 1;
            }
            other => break (objective, residuals, jac, cov, bounds, other.is_some()),
        }
    };
    let weak_dirs = jac.as_ref().map(|j| lsq::weak_combinations(j, 1.0)).unwrap_or_default();
    let weak: Vec<Combination> = weak_dirs.iter().map(|w| Combination::new(w, problem, &u)).collect();
    if missed {
        notes.push("a profile still found a lower objective after two re-polishes".to_string());
    }
    let convergence = Convergence::judge(&search, &starts, best_start, missed, notes);
    let measured = residuals.iter().filter(|r| r.measured_pct.is_some()).count();
    let dof = measured.saturating_sub(dim);
    let p_value = quality::chi2_survival(objective, dof);
    // The 3.84 rule holds for the right model at its minimum: nothing is
    // called determined when the fit has not converged or fits poorly.
    let trusted = convergence.local && p_value.is_none_or(|p| p >= quality::POOR_FIT);
    let estimates = (0..dim)
        .map(|j| {
            let p = &problem.params[j];
            let (lo, hi) = (&bounds[2 * j], &bounds[2 * j + 1]);
            let at_bound = !(1e-3..=1.0 - 1e-3).contains(&u[j]);
            let approx = cov.as_ref().map(|c| {
                let half = lsq::Z95 * c[(j, j)].sqrt();
                (p.value(u[j] - half), p.value(u[j] + half))
            });
            let in_weak = weak.iter().any(|w| w.members.contains(&j));
            Estimate {
                value: p.value(u[j]),
                interval: (p.value(lo.u).clamp(p.min, p.max), p.value(hi.u).clamp(p.min, p.max)),
                closed: (lo.closed, hi.closed),
                approx,
                at_bound,
                in_weak,
                determined: trusted && lo.closed && hi.closed && !at_bound && !in_weak,
            }
        })
        .collect();
    let profiles = (0..dim)
        .map(|j| {
            let mut points: Vec<(f64, f64)> = bounds[2 * j]
                .points
                .iter()
                .chain(&bounds[2 * j + 1].points)
                .chain(std::iter::once(&(u[j], objective)))
                .map(|&(z, f)| (problem.params[j].value(z), f))
                .collect();
            points.sort_by(|a, b| a.0.total_cmp(&b.0));
            Profile { param: j, points }
        })
        .collect();
    let correlation = cov
        .as_ref()
        .map(|c| (0..dim).map(|i| (0..dim).map(|j| c[(i, j)] / (c[(i, i)] * c[(j, j)]).sqrt()).collect()).collect());
    FitResult {
        estimates,
        objective,
        p_value,
        dof,
        residuals,
        search,
        spread: optima_spread(problem, &starts),
        starts,
        convergence,
        correlation,
        weak,
        profiles,
        evaluations,
    }
}

/// The residuals at `u` and each parameter's slope step there
/// ([`lsq::stair_steps`]): a step must move some residual by the change that
/// counts as a boundary moving [`STAIRS`] nuclei, STAIRS × (one nucleus, % of
/// the axis) / σᵢ; the first step where that cannot be found.
fn residuals_and_steps(problem: &FitProblem, res: &lsq::Res, u: &[f64], parallel: bool) -> (Vec<Residual>, Vec<f64>) {
    let residuals = objective::residuals(problem, &problem.values(u)).unwrap_or_default();
    let nucleus_pct = 100.0 / problem.model.grid.nx as f64;
    let min_move: Vec<f64> = residuals.iter().map(|r| STAIRS * nucleus_pct / r.sigma_pct).collect();
    let steps = lsq::stair_steps(res, u, residuals.len(), &min_move, parallel)
        .unwrap_or_else(|| vec![lsq::FIRST_STEP; u.len()]);
    (residuals, steps)
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
            Param::Edge(g, ..) => {
                let gene = doc
                    .get_mut("gene")
                    .and_then(|t| t.get_mut(g))
                    .and_then(|e| e.as_table_mut())
                    .ok_or("missing gene")?;
                let mut table = gene;
                let path: Vec<&str> = p.param.key().split('.').collect();
                let (last, inner) = path.split_last().ok_or("empty key")?;
                for part in inner {
                    table = table.get_mut(*part).and_then(|t| t.as_table_mut()).ok_or("missing edge rule")?;
                }
                table.insert((*last).into(), toml::Value::Float(*v));
                continue;
            }
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
