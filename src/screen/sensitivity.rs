//! Sensitivity of every boundary to every parameter: central differences on
//! log-parameters, d x / d ln p ≈ (x(p·e^δ) − x(p·e^−δ)) / 2δ (common practice,
//! no source), δ = [`SENSITIVITY_STEP`] unless chosen.

use rayon::prelude::*;
use serde::Serialize;

use super::final_boundaries;
use crate::integrate::StepError;
use crate::model::{Edit, Model, Mutant, Param};
use crate::readout::Boundary;

/// Default step δ in ln p (a 1 % change each way).
pub const SENSITIVITY_STEP: f64 = 0.01;

/// How one wild-type boundary responds to one parameter.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SensitivityRow {
    /// Parameter name.
    pub parameter: String,
    /// Its wild-type value.
    pub value: f64,
    /// Gene of the boundary.
    pub gene: String,
    /// Direction of the boundary.
    pub direction: String,
    /// Wild-type position, % of axis length.
    pub position_pct: f64,
    /// d position / d ln p, µm (None if the boundary vanished at ±δ).
    pub d_um_per_ln: Option<f64>,
    /// d position / d ln p, % of axis length.
    pub d_pct_per_ln: Option<f64>,
    /// The step δ used, in ln p.
    pub step_ln: f64,
}

fn nearest(b: &Boundary, among: &[Boundary]) -> Option<f64> {
    among
        .iter()
        .filter(|c| c.gene == b.gene && c.direction == b.direction)
        .map(|c| c.position_um)
        .min_by(|x, y| (x - b.position_um).abs().total_cmp(&(y - b.position_um).abs()))
}

/// Sensitivities of every wild-type boundary to every non-zero parameter.
///
/// # Errors
/// [`StepError`] if the wild type fails; a perturbed run that fails leaves its row empty.
pub fn sensitivity(model: &Model, step_ln: f64, parallel: bool) -> Result<Vec<SensitivityRow>, StepError> {
    let wt = final_boundaries(model)?;
    let params = model.parameters();
    let jobs: Vec<(Param, f64)> = params.iter().flat_map(|p| [(*p, step_ln.exp()), (*p, (-step_ln).exp())]).collect();
    let run = |(p, f): &(Param, f64)| {
        let m = Mutant { name: String::new(), edits: vec![Edit::Scale(*p, *f)] };
        final_boundaries(&model.with_mutant(&m)).ok()
    };
    let results: Vec<Option<Vec<Boundary>>> =
        if parallel { jobs.par_iter().map(run).collect() } else { jobs.iter().map(run).collect() };
    let length = model.grid.length_um();
    let mut rows = Vec::new();
    for (k, p) in params.iter().enumerate() {
        let (plus, minus) = (&results[2 * k], &results[2 * k + 1]);
        for b in &wt {
            let d = plus.as_ref().and_then(|pl| nearest(b, pl)).zip(minus.as_ref().and_then(|mi| nearest(b, mi)));
            let d_um = d.map(|(a, c)| (a - c) / (2.0 * step_ln));
            rows.push(SensitivityRow {
                parameter: model.param_name(*p),
                value: model.param_value(*p).unwrap_or(f64::NAN),
                gene: b.gene.clone(),
                direction: b.direction.to_string(),
                position_pct: b.position_pct,
                d_um_per_ln: d_um,
                d_pct_per_ln: d_um.map(|v| 100.0 * v / length),
                step_ln,
            });
        }
    }
    Ok(rows)
}
