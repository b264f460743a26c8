//! Sensitivity of every boundary to every parameter, d x / d ln p, told
//! apart by how the boundary moves (issue: a bistable boundary on a row of
//! discrete nuclei is pinned between two nuclei and moves in jumps of one
//! nucleus, so a small central difference is either about 0 or a jump
//! divided by the step, both meaningless).
//!
//! For each parameter p the boundary's position x is computed at nine
//! offsets u of ln p across ±[`SCAN_LN`]:
//! - **pinned** when it moves by at least half a nucleus spacing over the
//!   scan, yet every position stays within 0.2 spacing of the wild type's
//!   plus a whole number of spacings, and it both rests (moves less than 0.2
//!   spacing between some neighbouring scan points) and jumps (by at least
//!   half a spacing between others): it moves in jumps of whole nuclei and
//!   hardly in between; the parameter values where the boundary jumps are found by
//!   bisection (to 1e-4 in ln p), and the sensitivity is the secant
//!   `(x(+Δ) − x(−Δ)) / 2Δ` over a range Δ that spans at least two jumps
//!   (widened from ±0.1 up to ±0.8 in ln p);
//! - **smooth** otherwise: central differences `(x(p·e^δ) − x(p·e^−δ)) / 2δ`
//!   at δ and 2δ (δ = [`SENSITIVITY_STEP`] unless chosen) must agree within
//!   2 % (or 1e-3 spacing per unit ln p); the smaller step's value is
//!   reported. If they disagree, δ/2 and δ are tried. If they still
//!   disagree while every scan position sits on the nuclear grid (within 0.2
//!   spacing, having moved half a spacing or more), the boundary is
//!   **pinned** with jumps closer together than the scan's points: its
//!   sensitivity is the secant over the scan, ±[`SCAN_LN`], and its jumps
//!   are not listed. Otherwise the row is **unresolved** (the smaller step's
//!   value is given but marked).
//!
//! Common practice, no source, for the thresholds.

use rayon::prelude::*;
use serde::Serialize;

use crate::integrate::StepError;
use crate::model::{Edit, Model, Mutant, Param};
use crate::readout::{Boundary, predicted_final_boundaries as final_boundaries};

/// Default step δ in ln p (a 1 % change each way).
pub const SENSITIVITY_STEP: f64 = 0.01;
/// Half-width of the scan in ln p that tells pinned from smooth boundaries.
pub const SCAN_LN: f64 = 0.1;
/// Widest secant range for a pinned boundary, ln p.
pub const MAX_SECANT_LN: f64 = 0.8;

/// How one wild-type boundary responds to one parameter: a row of
/// `sensitivity.csv` (numbers in the csv crate's form; an empty cell for None).
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize, Default)]
pub struct SensitivityRow {
    /// Parameter name.
    pub parameter: String,
    /// Its wild-type value, in the unit of its key in the model file.
    pub value: f64,
    /// Gene of the boundary.
    pub gene: String,
    /// Direction of the boundary.
    pub direction: String,
    /// Wild-type position, % of axis length.
    pub position_pct: f64,
    /// "smooth", "pinned" or "unresolved" (see the module doc); "lost" when
    /// the boundary vanishes nearby.
    pub kind: String,
    /// d position / d ln p, µm (secant for pinned boundaries).
    pub d_um_per_ln: Option<f64>,
    /// d position / d ln p, % of axis length.
    pub d_pct_per_ln: Option<f64>,
    /// The step δ (smooth) or the secant's half-range Δ (pinned), in ln p.
    pub step_ln: f64,
    /// Parameter values at which a pinned boundary jumps, `;`-separated.
    pub jumps_at: String,
}

fn nearest(b: &Boundary, among: &[Boundary]) -> Option<f64> {
    among
        .iter()
        .filter(|c| c.gene == b.gene && c.direction == b.direction)
        .map(|c| c.position_um)
        .min_by(|x, y| (x - b.position_um).abs().total_cmp(&(y - b.position_um).abs()))
}

/// Sensitivities of every wild-type boundary to every parameter that acts
/// ([`Model::parameters`]), parameters in parallel.
///
/// # Errors
/// [`StepError`] if the wild type fails; a perturbed run that fails leaves its row empty.
pub fn sensitivity(model: &Model, step_ln: f64, parallel: bool) -> Result<Vec<SensitivityRow>, StepError> {
    sensitivity_with(model, step_ln, parallel, &crate::progress::Silent)
}

/// [`sensitivity`], telling `progress` as parameters finish (stage "parameters").
///
/// # Errors
/// As [`sensitivity`].
pub fn sensitivity_with(
    model: &Model,
    step_ln: f64,
    parallel: bool,
    progress: &dyn crate::progress::Progress,
) -> Result<Vec<SensitivityRow>, StepError> {
    let wt = final_boundaries(model)?;
    let params = model.parameters();
    let done = crate::progress::Counter::begin(progress, "parameters", params.len());
    let one = |p: &Param| {
        let rows = rows_for(model, *p, &wt, step_ln);
        done.tick();
        rows
    };
    let rows: Vec<Vec<SensitivityRow>> =
        if parallel { params.par_iter().map(one).collect() } else { params.iter().map(one).collect() };
    Ok(rows.concat())
}

/// The rows of one parameter.
pub(crate) fn rows_for(model: &Model, p: Param, wt: &[Boundary], step_ln: f64) -> Vec<SensitivityRow> {
    let at = |u: f64| -> Option<Vec<Boundary>> {
        if u == 0.0 {
            return Some(wt.to_vec());
        }
        let m = Mutant { name: String::new(), edits: vec![Edit::Scale(p, u.exp())] };
        final_boundaries(&model.with_mutant(&m)).ok()
    };
    let spacing = model.grid.spacing_um;
    let length = model.grid.length_um();
    let value = model.param_value(p).unwrap_or(f64::NAN);
    let grid: Vec<f64> = (0..9).map(|k| SCAN_LN * (k as f64 / 4.0 - 1.0)).collect();
    let scans: Vec<Option<Vec<Boundary>>> = grid.iter().map(|&u| at(u)).collect();
    let mut out = Vec::new();
    for b in wt {
        let x_of = |r: &Option<Vec<Boundary>>| r.as_ref().and_then(|v| nearest(b, v));
        let xs: Option<Vec<f64>> = scans.iter().map(x_of).collect();
        let row = |kind: &str, d_um: Option<f64>, step: f64, jumps: String| SensitivityRow {
            parameter: model.param_name(p),
            value,
            gene: b.gene.clone(),
            direction: b.direction.to_string(),
            position_pct: b.position_pct,
            kind: kind.to_string(),
            d_um_per_ln: d_um,
            d_pct_per_ln: d_um.map(|v| 100.0 * v / length),
            step_ln: step,
            jumps_at: jumps,
        };
        let Some(xs) = xs else {
            out.push(row("lost", None, SCAN_LN, String::new()));
            continue;
        };
        let x_at = |u: f64| at(u).as_ref().and_then(|v| nearest(b, v));
        let x0 = xs[4];
        let range =
            xs.iter().copied().fold(f64::NEG_INFINITY, f64::max) - xs.iter().copied().fold(f64::INFINITY, f64::min);
        let off_grid =
            xs.iter().map(|x| (x - x0) - spacing * ((x - x0) / spacing).round()).fold(0.0f64, |a, r| a.max(r.abs()));
        // A pinned boundary rests between jumps: some neighbouring scan
        // points show no movement. (A smooth boundary that happens to move
        // about one spacing per scan step is also near whole spacings.)
        let steps: Vec<f64> = xs.windows(2).map(|w| (w[1] - w[0]).abs()).collect();
        let rests = steps.iter().any(|d| *d < 0.2 * spacing);
        let jumps = steps.iter().any(|d| *d >= 0.5 * spacing);
        if range >= 0.5 * spacing && off_grid < 0.2 * spacing && rests && jumps {
            // Pinned: widen the secant until it spans two jumps.
            let mut half = SCAN_LN;
            let mut jumps = jumps_in(&grid, &xs, spacing, &x_at);
            while jumps.len() < 2 && half < MAX_SECANT_LN {
                half *= 2.0;
                let wide: Vec<f64> = (0..9).map(|k| half * (k as f64 / 4.0 - 1.0)).collect();
                let Some(wxs) = wide.iter().map(|&u| x_at(u)).collect::<Option<Vec<f64>>>() else { break };
                jumps = jumps_in(&wide, &wxs, spacing, &x_at);
            }
            let secant = x_at(half).zip(x_at(-half)).map(|(a, c)| (a - c) / (2.0 * half));
            let text: Vec<String> = jumps.iter().map(|u| format!("{:.6e}", value * u.exp())).collect();
            out.push(row("pinned", secant, half, text.join(";")));
            continue;
        }
        // Smooth: two central differences must agree.
        let central = |d: f64| x_at(d).zip(x_at(-d)).map(|(a, c)| (a - c) / (2.0 * d));
        let mut found = None;
        for d in [step_ln, 0.5 * step_ln] {
            if let (Some(small), Some(large)) = (central(d), central(2.0 * d))
                && (small - large).abs() <= (0.02 * large.abs()).max(1e-3 * spacing)
            {
                found = Some((small, d));
                break;
            }
        }
        match found {
            Some((v, d)) => out.push(row("smooth", Some(v), d, String::new())),
            // On the nuclear grid at every scan point, moving, and central
            // differences that never agree: a pinned boundary whose jumps
            // come closer together than the scan's points (so it never rests
            // between two of them). The secant over the scan averages over
            // its jumps; they are too many to list.
            None if range >= 0.5 * spacing && off_grid < 0.2 * spacing => {
                out.push(row("pinned", Some((xs[8] - xs[0]) / (2.0 * SCAN_LN)), SCAN_LN, String::new()));
            }
            None => out.push(row("unresolved", central(step_ln), step_ln, String::new())),
        }
    }
    out
}

/// The offsets (ln p) where a boundary jumps by at least half a spacing
/// between neighbouring scan points `us` (positions `xs`), each located by
/// bisection to 1e-4 in ln p with `x_at`.
fn jumps_in(us: &[f64], xs: &[f64], spacing: f64, x_at: &dyn Fn(f64) -> Option<f64>) -> Vec<f64> {
    let mut out = Vec::new();
    for k in 0..us.len() - 1 {
        bisect_jumps(us[k], us[k + 1], xs[k], xs[k + 1], spacing, x_at, &mut out);
    }
    out
}

/// Every jump between `lo` and `hi` (positions `x_lo`, `x_hi`): the first is
/// bisected, and the rest of the interval is searched again, so two jumps
/// between neighbouring scan points are both found.
fn bisect_jumps(
    lo: f64,
    hi: f64,
    x_lo: f64,
    x_hi: f64,
    spacing: f64,
    x_at: &dyn Fn(f64) -> Option<f64>,
    out: &mut Vec<f64>,
) {
    if (x_hi - x_lo).abs() < 0.5 * spacing {
        return;
    }
    let (mut a, mut b) = (lo, hi);
    while b - a > 1e-4 {
        let mid = 0.5 * (a + b);
        match x_at(mid) {
            Some(x) if (x - x_lo).abs() < 0.5 * spacing => a = mid,
            Some(_) => b = mid,
            None => return,
        }
    }
    out.push(0.5 * (a + b));
    if let Some(x_after) = x_at(b)
        && b < hi
    {
        bisect_jumps(b, hi, x_after, x_hi, spacing, x_at, out);
    }
}
