//! Fit tables: estimates, objective trace, residuals and correlations.

use std::path::Path;

use super::{ExportError, opt, write_atomic};
use crate::fit::{FitProblem, FitResult};

/// `fit.csv`: `parameter, value, start, min, max, scale, at_bound,
/// profile_low, profile_high, low_open, high_open, approx_low, approx_high,
/// in_weak_combination, determined`. The profile-likelihood interval is the
/// 95 % interval; an open side ends at the search bound (not determined on
/// that side). The curvature interval is approximate (see [`crate::fit`]).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_fit(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(
            w,
            "parameter,value,start,min,max,scale,at_bound,profile_low,profile_high,low_open,high_open,approx_low,approx_high,in_weak_combination,determined"
        )?;
        for (p, e) in problem.params.iter().zip(&r.estimates) {
            writeln!(
                w,
                "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}",
                p.name,
                e.value,
                p.start,
                p.min,
                p.max,
                if p.log { "log" } else { "linear" },
                e.at_bound,
                e.interval.0,
                e.interval.1,
                !e.closed.0,
                !e.closed.1,
                opt(e.approx.map(|i| i.0)),
                opt(e.approx.map(|i| i.1)),
                e.in_weak,
                e.determined
            )?;
        }
        Ok(())
    })
}

/// `fit_starts.csv`: `start, seed, search_converged, search_objective,
/// objective, polish_converged, polish`, then one column per parameter.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_starts(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        let names: Vec<&str> = problem.params.iter().map(|p| p.name.as_str()).collect();
        writeln!(
            w,
            "start,seed,search_converged,search_objective,objective,polish_converged,polish,{}",
            names.join(",")
        )?;
        for (k, s) in r.starts.iter().enumerate() {
            let values: Vec<String> = s.values.iter().map(|v| v.to_string()).collect();
            writeln!(
                w,
                "{},{},{},{},{},{},{},{}",
                k + 1,
                s.seed,
                s.search_converged,
                s.search_value,
                s.value,
                s.polish.converged,
                s.polish.reason,
                values.join(",")
            )?;
        }
        Ok(())
    })
}

/// `fit_combinations.csv`: `combination, half_width_of_range, meaning`, then
/// one column per parameter (the direction in the scaled parameters): the
/// combinations the data do not fix; only the header when there are none.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_combinations(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        let names: Vec<&str> = problem.params.iter().map(|p| p.name.as_str()).collect();
        writeln!(w, "combination,half_width_of_range,meaning,{}", names.join(","))?;
        for (k, c) in r.weak.iter().enumerate() {
            let dir: Vec<String> = c.direction.iter().map(|v| v.to_string()).collect();
            writeln!(w, "{},{},\"{}\",{}", k + 1, c.half_width, c.text.replace('"', "'"), dir.join(","))?;
        }
        Ok(())
    })
}

/// `fit_trace.csv`: `evaluations, best_objective` after each generation.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_trace(r: &FitResult, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "evaluations,best_objective")?;
        for (n, v) in &r.search.trace {
            writeln!(w, "{n},{v}")?;
        }
        Ok(())
    })
}

/// `fit_residuals.csv`: `genotype, time_min, gene, direction, measured_pct,
/// simulated_pct, sigma_pct, residual` (empty measured: an extra simulated
/// boundary; empty simulated: a missing one; both cost the penalty).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_residuals(r: &FitResult, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "genotype,time_min,gene,direction,measured_pct,simulated_pct,sigma_pct,residual")?;
        for x in &r.residuals {
            writeln!(
                w,
                "{},{},{},{},{},{},{},{}",
                x.genotype,
                x.time_min,
                x.gene,
                x.direction,
                opt(x.measured_pct),
                opt(x.simulated_pct),
                x.sigma_pct,
                x.value
            )?;
        }
        Ok(())
    })
}

/// `fit_correlation.csv`: the parameters' correlation matrix (header row and
/// first column name the parameters); not written when the curvature is singular.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_correlation(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    let Some(c) = &r.correlation else { return Ok(()) };
    write_atomic(path, |w| {
        let names: Vec<&str> = problem.params.iter().map(|p| p.name.as_str()).collect();
        writeln!(w, "parameter,{}", names.join(","))?;
        for (name, row) in names.iter().zip(c) {
            let cells: Vec<String> = row.iter().map(|v| v.to_string()).collect();
            writeln!(w, "{name},{}", cells.join(","))?;
        }
        Ok(())
    })
}

/// `fit_profiles.csv`: `parameter, value, objective, above_best` at every
/// point the profile searches tried (`above_best` < 3.84 lies inside the 95 %
/// profile interval).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_profiles(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "parameter,value,objective,above_best")?;
        for p in &r.profiles {
            for (v, f) in &p.points {
                writeln!(w, "{},{v},{f},{}", problem.params[p.param].name, f - r.objective)?;
            }
        }
        Ok(())
    })
}
