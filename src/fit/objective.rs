//! The fit objective: a weighted sum of squared boundary differences over
//! every genotype, `Σ ((x_sim − x_meas)/σ)²`, positions in % of the axis.
//!
//! σ is the measured standard error: `sd/√n` when the table gives n, `sd`
//! without n, and 1 % of the axis when the table gives no sd (common
//! practice, no source). The sd is first raised to the row's resolution and
//! the floor `sd_floor_pct` ([`crate::compare::floored_sd`]).
//!
//! Penalties ([`pair`]): within one genotype, measured boundaries are grouped
//! by gene, direction and time, and so are the simulated ones. A measured
//! boundary with no simulated partner in its group, and a simulated boundary
//! left over in a group that has measurements, each cost a residual of
//! [`PENALTY_PCT`]/σ, as if half an axis off. Simulated boundaries of a
//! gene, direction or time that was not measured in that genotype cost
//! nothing: the data say nothing about them.

use crate::compare::MeasuredRow;
use crate::integrate;
use crate::model::Model;
use crate::readout::{predicted_boundaries, same_time};

use super::problem::{FitProblem, Genotype};

/// Cost of a missing or extra boundary, % of the axis.
pub const PENALTY_PCT: f64 = 50.0;
/// σ when a table gives none, % of the axis.
pub const DEFAULT_SD_PCT: f64 = 1.0;

/// One term of the objective.
#[derive(Debug, Clone, PartialEq)]
pub struct Residual {
    /// Genotype name.
    pub genotype: String,
    /// Gene.
    pub gene: String,
    /// rising or falling.
    pub direction: String,
    /// Time, min.
    pub time_min: f64,
    /// Measured position, % (None for an extra simulated boundary).
    pub measured_pct: Option<f64>,
    /// Simulated position, % (None for a missing boundary).
    pub simulated_pct: Option<f64>,
    /// σ, %.
    pub sigma_pct: f64,
    /// (simulated − measured)/σ, or the penalty.
    pub value: f64,
}

/// σ of one measured row, % (see the module doc).
pub fn sigma(row: &MeasuredRow, floor: f64) -> f64 {
    match (crate::compare::floored_sd(row, floor), row.n) {
        (Some(sd), Some(n)) if sd > 0.0 && n > 0 => sd / (n as f64).sqrt(),
        (Some(sd), _) if sd > 0.0 => sd,
        _ => DEFAULT_SD_PCT,
    }
}

/// Residuals of one genotype for a model with the free parameters set.
fn genotype_residuals(model: &Model, g: &Genotype, floor: f64) -> Result<Vec<Residual>, integrate::StepError> {
    let model = match &g.mutant {
        Some(m) => model.with_mutant(m),
        None => model.clone(),
    };
    let until = model.clock.until_min;
    let time_of = |r: &MeasuredRow| r.at_min.unwrap_or(until);
    let mut times: Vec<f64> = g.rows.iter().map(time_of).collect();
    times.sort_by(f64::total_cmp);
    times.dedup();
    let simulated = predicted_boundaries(&model, &times)?;
    let mut out = Vec::new();
    // Groups of the same gene, direction and time, matched in order along the axis.
    let mut keys: Vec<(String, String, f64)> =
        g.rows.iter().map(|r| (r.gene.clone(), r.direction.clone(), time_of(r))).collect();
    keys.sort_by(|a, b| (&a.0, &a.1).cmp(&(&b.0, &b.1)).then(a.2.total_cmp(&b.2)));
    keys.dedup();
    for (gene, direction, t) in keys {
        let mut measured: Vec<&MeasuredRow> =
            g.rows.iter().filter(|r| r.gene == gene && r.direction == direction && same_time(time_of(r), t)).collect();
        measured.sort_by(|a, b| a.position_pct.total_cmp(&b.position_pct));
        let mut sim: Vec<f64> = simulated
            .iter()
            .filter(|b| b.gene == gene && b.direction == direction && same_time(b.time_min, t))
            .map(|b| b.position_pct)
            .collect();
        sim.sort_by(f64::total_cmp);
        let base = |m: Option<&MeasuredRow>, s: Option<f64>, sigma_pct: f64, value: f64| Residual {
            genotype: g.name.clone(),
            gene: gene.clone(),
            direction: direction.clone(),
            time_min: t,
            measured_pct: m.map(|m| m.position_pct),
            simulated_pct: s,
            sigma_pct,
            value,
        };
        for (m, x, sigma_pct, value) in pair(&measured, &sim, floor) {
            out.push(base(m, x, sigma_pct, value));
        }
    }
    Ok(out)
}

/// Pairs the measured boundaries of one gene, direction and time (sorted
/// along the axis) with the simulated ones `sim`: each measured boundary
/// with the nearest unused simulated one, residual (x_sim − x_meas)/σ; a
/// measured boundary left without a partner costs [`PENALTY_PCT`]/σ, and so
/// does a simulated one left over (σ the smallest of the group's). Returns
/// (measured, simulated, σ, residual) for each.
pub fn pair<'a>(
    measured: &[&'a MeasuredRow],
    sim: &[f64],
    floor: f64,
) -> Vec<(Option<&'a MeasuredRow>, Option<f64>, f64, f64)> {
    let mut out = Vec::new();
    let mut used = vec![false; sim.len()];
    for m in measured {
        let s = sigma(m, floor);
        let nearest = (0..sim.len())
            .filter(|&k| !used[k])
            .min_by(|&a, &b| (sim[a] - m.position_pct).abs().total_cmp(&(sim[b] - m.position_pct).abs()));
        match nearest {
            Some(k) => {
                used[k] = true;
                out.push((Some(*m), Some(sim[k]), s, (sim[k] - m.position_pct) / s));
            }
            None => out.push((Some(*m), None, s, PENALTY_PCT / s)),
        }
    }
    let s = measured.iter().map(|m| sigma(m, floor)).fold(f64::INFINITY, f64::min);
    for (k, x) in sim.iter().enumerate() {
        if !used[k] {
            out.push((None, Some(*x), s, PENALTY_PCT / s));
        }
    }
    out
}

/// Every residual at parameter values `values` (in the order of the free
/// parameters); None if a simulation fails (the optimiser treats that as +∞).
pub fn residuals(problem: &FitProblem, values: &[f64]) -> Option<Vec<Residual>> {
    let model = problem.model_at(values);
    let mut all = Vec::new();
    for g in &problem.genotypes {
        all.extend(genotype_residuals(&model, g, problem.sd_floor_pct).ok()?);
    }
    Some(all)
}

/// Σ r² at `values`; +∞ if a simulation fails.
pub fn objective(problem: &FitProblem, values: &[f64]) -> f64 {
    residuals(problem, values).map_or(f64::INFINITY, |r| r.iter().map(|r| r.value * r.value).sum())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The penalties as documented: two measured boundaries against one
    /// simulated one leave the farther measurement without a partner (50/σ);
    /// one measured against two simulated leaves the farther simulated one
    /// over (50/σ, σ of the group). Hand-computed (common practice, no source).
    #[test]
    fn missing_and_extra_boundaries_are_penalised() {
        let row = |x: f64| MeasuredRow { position_pct: x, sd_pct: Some(2.0), n: Some(4), ..Default::default() };
        let (a, b) = (row(30.0), row(60.0));
        let got = pair(&[&a, &b], &[31.0], 0.5);
        assert_eq!(got.len(), 2);
        assert_eq!((got[0].1, got[0].2, got[0].3), (Some(31.0), 1.0, 1.0));
        assert_eq!((got[1].1, got[1].3), (None, PENALTY_PCT));
        let got = pair(&[&b], &[58.0, 20.0], 0.5);
        assert_eq!(got.len(), 2);
        assert_eq!((got[0].1, got[0].3), (Some(58.0), -2.0));
        assert!(got[1].0.is_none() && got[1].1 == Some(20.0) && got[1].3 == PENALTY_PCT);
    }

    /// σ is the standard error sd/√n of the floored sd: an sd below the
    /// floor (or the row's resolution) is raised first; no sd gives 1 %.
    #[test]
    fn sigma_uses_the_floored_sd() {
        let row = |sd: Option<f64>, n: Option<u32>, res: Option<f64>| MeasuredRow {
            sd_pct: sd,
            n,
            resolution_pct: res,
            ..Default::default()
        };
        assert!((sigma(&row(Some(0.0023), Some(4), None), 0.5) - 0.25).abs() < 1e-12);
        assert!((sigma(&row(Some(0.0), Some(1), Some(0.8)), 0.5) - 0.8).abs() < 1e-12);
        assert!((sigma(&row(Some(2.0), Some(4), None), 0.5) - 1.0).abs() < 1e-12);
        assert_eq!(sigma(&row(None, Some(4), None), 0.5), DEFAULT_SD_PCT);
    }
}
