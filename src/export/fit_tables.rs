//! Fit tables: estimates, starts, weak combinations, objective trace,
//! residuals, correlations and profiles. Parameter values are in the
//! parameter's own unit (that of its key in the model file); objectives are
//! Σr², residuals in σ. Numbers as Rust's `{}` prints them ([`shortest`]).

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::table_writer::{Cells, TableWriter, header_of, shortest, shortest_opt};
use super::{ExportError, write_atomic, write_rows};
use crate::fit::{FitProblem, FitResult};

/// A row of `fit.csv`: one free parameter's estimate. The profile-likelihood
/// interval is the 95 % interval; an open side ends at the search bound (not
/// determined on that side). The curvature interval is approximate (see
/// [`crate::fit`]).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct FitRow<'a> {
    /// Parameter, as named in `[fit]`.
    pub parameter: &'a str,
    /// Best value.
    #[serde(serialize_with = "shortest")]
    pub value: f64,
    /// The model file's value.
    #[serde(serialize_with = "shortest")]
    pub start: f64,
    /// Lower search bound.
    #[serde(serialize_with = "shortest")]
    pub min: f64,
    /// Upper search bound.
    #[serde(serialize_with = "shortest")]
    pub max: f64,
    /// `log` or `linear`: how the range was searched.
    pub scale: &'a str,
    /// Within 0.1 % of the search range of a bound.
    pub at_bound: bool,
    /// Lower end of the profile-likelihood interval.
    #[serde(serialize_with = "shortest")]
    pub profile_low: f64,
    /// Upper end of the profile-likelihood interval.
    #[serde(serialize_with = "shortest")]
    pub profile_high: f64,
    /// The lower end is the search bound (the profile never rose by 3.84).
    pub low_open: bool,
    /// The upper end is the search bound.
    pub high_open: bool,
    /// Lower end of the curvature interval; empty when the curvature is singular.
    #[serde(serialize_with = "shortest_opt")]
    pub approx_low: Option<f64>,
    /// Upper end of the curvature interval; empty when the curvature is singular.
    #[serde(serialize_with = "shortest_opt")]
    pub approx_high: Option<f64>,
    /// Part of a combination the data do not fix.
    pub in_weak_combination: bool,
    /// Both profile sides closed, not at a bound, in no weak combination.
    pub determined: bool,
}

/// A row of `fit_starts.csv` before its parameter columns (each start's
/// values after the polish, one column per parameter).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct StartRow<'a> {
    /// Start number, from 1.
    pub start: usize,
    /// Its seed.
    pub seed: u64,
    /// The global search's population converged (else its budget ran out).
    pub search_converged: bool,
    /// Best objective of the global search.
    #[serde(serialize_with = "shortest")]
    pub search_objective: f64,
    /// Objective after the polish.
    #[serde(serialize_with = "shortest")]
    pub objective: f64,
    /// The polish stopped on its convergence rule.
    pub polish_converged: bool,
    /// Why the polish stopped, in words.
    pub polish: &'a str,
}

/// A row of `fit_combinations.csv` before its parameter columns (the
/// direction, in the scaled parameters): a combination the data do not fix.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct CombinationRow<'a> {
    /// Combination number, from 1.
    pub combination: usize,
    /// Linearised 95 % half-width along the direction, in units of the
    /// search range (`inf` when no data touch it).
    #[serde(serialize_with = "shortest")]
    pub half_width_of_range: f64,
    /// In words.
    pub meaning: &'a str,
}

/// A row of `fit_trace.csv`: the best objective after a generation.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct TraceRow {
    /// Objective evaluations so far.
    pub evaluations: usize,
    /// Best objective so far, Σr².
    #[serde(serialize_with = "shortest")]
    pub best_objective: f64,
}

/// A row of `fit_residuals.csv`: an empty `measured_pct` is an extra
/// simulated boundary, an empty `simulated_pct` a missing one; both cost
/// the penalty.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct ResidualRow<'a> {
    /// Genotype (`wild type` or a mutant).
    pub genotype: &'a str,
    /// Time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Gene.
    pub gene: &'a str,
    /// `rising` or `falling`.
    pub direction: &'a str,
    /// Measured position, % of the axis length.
    #[serde(serialize_with = "shortest_opt")]
    pub measured_pct: Option<f64>,
    /// Simulated position at the best fit, % of the axis length.
    #[serde(serialize_with = "shortest_opt")]
    pub simulated_pct: Option<f64>,
    /// σ, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub sigma_pct: f64,
    /// (simulated − measured) / σ, or the penalty.
    #[serde(serialize_with = "shortest")]
    pub residual: f64,
}

/// A row of `fit_correlation.csv` before its columns (the correlation with
/// each parameter, headed by its name).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct CorrelationRow<'a> {
    /// Parameter.
    pub parameter: &'a str,
}

/// A row of `fit_profiles.csv`: a point a profile search tried.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct ProfilePointRow<'a> {
    /// The profiled parameter.
    pub parameter: &'a str,
    /// Its value there.
    #[serde(serialize_with = "shortest")]
    pub value: f64,
    /// The objective minimised over the other parameters, Σr².
    #[serde(serialize_with = "shortest")]
    pub objective: f64,
    /// Objective − the best; below 3.84 lies inside the 95 % profile interval.
    #[serde(serialize_with = "shortest")]
    pub above_best: f64,
}

/// `T`'s header, then the names of the free parameters.
fn with_parameters<T: Serialize + Default>(problem: &FitProblem) -> std::io::Result<Vec<String>> {
    let mut header = header_of::<T>()?;
    header.extend(problem.params.iter().map(|p| p.name.clone()));
    Ok(header)
}

/// `fit.csv`: one [`FitRow`] per free parameter.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_fit(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    let rows: Vec<FitRow> = problem
        .params
        .iter()
        .zip(&r.estimates)
        .map(|(p, e)| FitRow {
            parameter: &p.name,
            value: e.value,
            start: p.start,
            min: p.min,
            max: p.max,
            scale: if p.log { "log" } else { "linear" },
            at_bound: e.at_bound,
            profile_low: e.interval.0,
            profile_high: e.interval.1,
            low_open: !e.closed.0,
            high_open: !e.closed.1,
            approx_low: e.approx.map(|i| i.0),
            approx_high: e.approx.map(|i| i.1),
            in_weak_combination: e.in_weak,
            determined: e.determined,
        })
        .collect();
    write_rows(&rows, path)
}

/// `fit_starts.csv`: a [`StartRow`] and the values, per start.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_starts(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        let mut table = TableWriter::new(w, &with_parameters::<StartRow>(problem)?)?;
        for (k, s) in r.starts.iter().enumerate() {
            let row = StartRow {
                start: k + 1,
                seed: s.seed,
                search_converged: s.search_converged,
                search_objective: s.search_value,
                objective: s.value,
                polish_converged: s.polish.converged,
                polish: &s.polish.reason,
            };
            table.row((row, Cells(&s.values)))?;
        }
        table.finish()
    })
}

/// `fit_combinations.csv`: a [`CombinationRow`] and the direction, per
/// combination the data do not fix; only the header when there are none.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_combinations(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        let mut table = TableWriter::new(w, &with_parameters::<CombinationRow>(problem)?)?;
        for (k, c) in r.weak.iter().enumerate() {
            let row = CombinationRow { combination: k + 1, half_width_of_range: c.half_width, meaning: &c.text };
            table.row((row, Cells(&c.direction)))?;
        }
        table.finish()
    })
}

/// `fit_trace.csv`: a [`TraceRow`] after each generation.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_trace(r: &FitResult, path: &Path) -> Result<(), ExportError> {
    let rows: Vec<TraceRow> =
        r.search.trace.iter().map(|&(evaluations, best_objective)| TraceRow { evaluations, best_objective }).collect();
    write_rows(&rows, path)
}

/// `fit_residuals.csv`: a [`ResidualRow`] per residual.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_residuals(r: &FitResult, path: &Path) -> Result<(), ExportError> {
    let rows: Vec<ResidualRow> = r
        .residuals
        .iter()
        .map(|x| ResidualRow {
            genotype: &x.genotype,
            time_min: x.time_min,
            gene: &x.gene,
            direction: &x.direction,
            measured_pct: x.measured_pct,
            simulated_pct: x.simulated_pct,
            sigma_pct: x.sigma_pct,
            residual: x.value,
        })
        .collect();
    write_rows(&rows, path)
}

/// `fit_correlation.csv`: the parameters' correlation matrix, a
/// [`CorrelationRow`] and one column per parameter; not written when the
/// curvature is singular.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_correlation(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    let Some(c) = &r.correlation else { return Ok(()) };
    write_atomic(path, |w| {
        let mut table = TableWriter::new(w, &with_parameters::<CorrelationRow>(problem)?)?;
        for (p, row) in problem.params.iter().zip(c) {
            table.row((CorrelationRow { parameter: &p.name }, Cells(row)))?;
        }
        table.finish()
    })
}

/// `fit_profiles.csv`: a [`ProfilePointRow`] for every point the profile
/// searches tried.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_profiles(problem: &FitProblem, r: &FitResult, path: &Path) -> Result<(), ExportError> {
    let rows: Vec<ProfilePointRow> = r
        .profiles
        .iter()
        .flat_map(|p| {
            p.points.iter().map(|&(value, objective)| ProfilePointRow {
                parameter: &problem.params[p.param].name,
                value,
                objective,
                above_best: objective - r.objective,
            })
        })
        .collect();
    write_rows(&rows, path)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::export::write_rows_to;

    /// Writes `row` (and `cells`) as a table and reads its one record back.
    fn written<T: Serialize + Default>(row: T, cells: &[f64]) -> (String, csv::StringRecord) {
        let mut out = Vec::new();
        let header = [header_of::<T>().unwrap(), vec!["p,\"q\"".to_string(); cells.len()]].concat();
        let mut t = TableWriter::new(&mut out, &header).unwrap();
        t.row((row, Cells(cells))).unwrap();
        t.finish().unwrap();
        let record = csv::Reader::from_reader(out.as_slice()).records().next().unwrap().unwrap();
        (String::from_utf8(out).unwrap(), record)
    }

    /// Every row type of the fit tables reads back as written, parameter
    /// names and words with commas and quotes included.
    #[test]
    fn fit_rows_round_trip_through_a_csv_reader() {
        let name = "co,b\"alt.production";
        let fit = FitRow {
            parameter: name,
            value: 0.5,
            start: 1.0,
            max: 4.0,
            scale: "log",
            approx_high: Some(2.0),
            determined: true,
            ..Default::default()
        };
        let (text, record) = written(fit, &[]);
        assert!(
            text.ends_with("\"co,b\"\"alt.production\",0.5,1,0,4,log,false,0,0,false,false,,2,false,true\n"),
            "{text}"
        );
        assert_eq!(record.deserialize::<FitRow>(None).unwrap(), fit);
        let start = StartRow { start: 1, seed: 7, objective: 1e-7, polish: "stopped, \"flat\"", ..Default::default() };
        let (_, record) = written(start, &[0.25, 3.0]);
        assert_eq!(record.deserialize::<(StartRow, Vec<f64>)>(None).unwrap(), (start, vec![0.25, 3.0]));
        let combination = CombinationRow { combination: 1, half_width_of_range: f64::INFINITY, meaning: "a \"b\", c" };
        let (text, record) = written(combination, &[0.6, -0.8]);
        assert!(text.ends_with("1,inf,\"a \"\"b\"\", c\",0.6,-0.8\n"), "{text}");
        assert_eq!(record.deserialize::<(CombinationRow, Vec<f64>)>(None).unwrap(), (combination, vec![0.6, -0.8]));
        let trace = TraceRow { evaluations: 40, best_objective: 12.5 };
        assert_eq!(written(trace, &[]).1.deserialize::<TraceRow>(None).unwrap(), trace);
        let residual = ResidualRow {
            genotype: "head x2, \"late\"",
            time_min: 240.0,
            gene: "amber",
            direction: "falling",
            measured_pct: None,
            simulated_pct: Some(45.5),
            sigma_pct: 1.25,
            residual: 5.0,
        };
        assert_eq!(written(residual, &[]).1.deserialize::<ResidualRow>(None).unwrap(), residual);
        let correlation = CorrelationRow { parameter: name };
        let (_, record) = written(correlation, &[1.0, -0.5]);
        assert_eq!(record.deserialize::<(CorrelationRow, Vec<f64>)>(None).unwrap(), (correlation, vec![1.0, -0.5]));
        let point = ProfilePointRow { parameter: name, value: 150.0, objective: 3.5, above_best: 0.0 };
        let mut out = Vec::new();
        write_rows_to(&[point], &mut out).unwrap();
        let record = csv::Reader::from_reader(out.as_slice()).records().next().unwrap().unwrap();
        assert_eq!(record.deserialize::<ProfilePointRow>(None).unwrap(), point);
    }
}
