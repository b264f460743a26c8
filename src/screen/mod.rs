//! Mutant screens and parameter sensitivity: predict where boundaries move.
//!
//! Each mutant is simulated on one thread, keeping only its final state (no
//! histories), and mutants run in parallel; results do not depend on the
//! thread count. Everything here is a model prediction.

mod sensitivity;

pub use sensitivity::{SENSITIVITY_STEP, SensitivityRow, sensitivity};

use rayon::prelude::*;
use serde::Serialize;

use crate::integrate::{self, Recording, StepError};
use crate::model::{Edit, GradientParam, Model, Mutant, Param};
use crate::readout::{Boundary, boundaries_at};

/// Boundaries of a model's final state, simulated on one thread with only the
/// last snapshot kept.
///
/// # Errors
/// [`StepError`] if the run fails.
pub fn final_boundaries(model: &Model) -> Result<Vec<Boundary>, StepError> {
    boundaries_at_times(model, &[model.clock.until_min])
}

/// Boundaries at the given snapshot times (min), simulated on one thread
/// keeping only those snapshots; times that are not snapshot times give none.
///
/// # Errors
/// [`StepError`] if the run fails.
pub fn boundaries_at_times(model: &Model, times: &[f64]) -> Result<Vec<Boundary>, StepError> {
    let tissue = crate::tissue::Tissue::new(model);
    let kinetics = crate::kinetics::build(model);
    let mut rec = Recording::for_model(model);
    integrate::integrate(model, kinetics.as_ref(), &tissue, false, |t, state| {
        if times.iter().any(|&w| same_time(w, t)) {
            // An in-memory recording: pushing cannot fail.
            let _ = rec.push(t, state);
        }
    })?;
    Ok((0..rec.times.len()).map(|s| boundaries_at(&rec, s)).collect::<Result<Vec<_>, _>>()?.concat())
}

/// Two times that name the same snapshot (relative 1e-9).
pub fn same_time(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(1.0)
}

/// How one boundary moved in a mutant.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Shift {
    /// Mutant name.
    pub mutant: String,
    /// Gene.
    pub gene: String,
    /// "rising" or "falling".
    pub direction: String,
    /// Wild-type position, µm (None when gained).
    pub wild_type_um: Option<f64>,
    /// Wild-type position, % of axis length.
    pub wild_type_pct: Option<f64>,
    /// Mutant position, µm (None when lost).
    pub mutant_um: Option<f64>,
    /// Mutant position, % of axis length.
    pub mutant_pct: Option<f64>,
    /// Mutant − wild type, µm.
    pub shift_um: Option<f64>,
    /// Mutant − wild type, % of axis length.
    pub shift_pct: Option<f64>,
    /// "moved" (matched), "lost", "gained", or "failed: …".
    pub status: String,
}

/// Pairs mutant boundaries with wild-type ones of the same gene and direction,
/// nearest first (greedy on distance); the rest are lost or gained.
pub fn match_boundaries(mutant: &str, wt: &[Boundary], mt: &[Boundary]) -> Vec<Shift> {
    let mut pairs: Vec<(f64, usize, usize)> = Vec::new();
    for (i, a) in wt.iter().enumerate() {
        for (j, b) in mt.iter().enumerate() {
            if a.gene == b.gene && a.direction == b.direction {
                pairs.push(((a.position_um - b.position_um).abs(), i, j));
            }
        }
    }
    pairs.sort_by(|p, q| p.0.total_cmp(&q.0).then(p.1.cmp(&q.1)).then(p.2.cmp(&q.2)));
    let (mut used_w, mut used_m) = (vec![false; wt.len()], vec![false; mt.len()]);
    let mut matched: Vec<(usize, usize)> = Vec::new();
    for (_, i, j) in pairs {
        if !used_w[i] && !used_m[j] {
            used_w[i] = true;
            used_m[j] = true;
            matched.push((i, j));
        }
    }
    let row = |w: Option<&Boundary>, m: Option<&Boundary>, status: &str| {
        let any = w.or(m).expect("one side");
        Shift {
            mutant: mutant.to_string(),
            gene: any.gene.clone(),
            direction: any.direction.to_string(),
            wild_type_um: w.map(|b| b.position_um),
            wild_type_pct: w.map(|b| b.position_pct),
            mutant_um: m.map(|b| b.position_um),
            mutant_pct: m.map(|b| b.position_pct),
            shift_um: w.zip(m).map(|(a, b)| b.position_um - a.position_um),
            shift_pct: w.zip(m).map(|(a, b)| b.position_pct - a.position_pct),
            status: status.to_string(),
        }
    };
    let mut out: Vec<Shift> = Vec::new();
    for (i, w) in wt.iter().enumerate() {
        match matched.iter().find(|(a, _)| *a == i) {
            Some(&(_, j)) => out.push(row(Some(w), Some(&mt[j]), "moved")),
            None => out.push(row(Some(w), None, "lost")),
        }
    }
    for (j, m) in mt.iter().enumerate() {
        if !used_m[j] {
            out.push(row(None, Some(m), "gained"));
        }
    }
    out
}

/// The result of a screen.
#[derive(Debug, Clone)]
pub struct Screen {
    /// Wild-type final boundaries.
    pub wild_type: Vec<Boundary>,
    /// Per mutant, in order: its shifts.
    pub shifts: Vec<Vec<Shift>>,
    /// Mutant names, in order.
    pub mutants: Vec<String>,
}

/// Runs the wild type and every mutant (in parallel over mutants when
/// `parallel`), and matches each mutant's final boundaries to the wild type's.
///
/// # Errors
/// [`StepError`] if the wild type itself fails; a failing mutant is reported in its rows.
pub fn run_screen(model: &Model, mutants: &[Mutant], parallel: bool) -> Result<Screen, StepError> {
    let wild_type = final_boundaries(model)?;
    let one = |m: &Mutant| -> Vec<Shift> {
        match final_boundaries(&model.with_mutant(m)) {
            Ok(b) => match_boundaries(&m.name, &wild_type, &b),
            Err(e) => vec![Shift {
                mutant: m.name.clone(),
                gene: String::new(),
                direction: String::new(),
                wild_type_um: None,
                wild_type_pct: None,
                mutant_um: None,
                mutant_pct: None,
                shift_um: None,
                shift_pct: None,
                status: format!("failed: {e}"),
            }],
        }
    };
    let shifts: Vec<Vec<Shift>> =
        if parallel { mutants.par_iter().map(one).collect() } else { mutants.iter().map(one).collect() };
    Ok(Screen { wild_type, shifts, mutants: mutants.iter().map(|m| m.name.clone()).collect() })
}

/// Generated mutant families: every single knock-out (`ko:gene`), every link
/// removal (`del:from->to`), and a dosage series of each gradient's peak
/// (`gradient.peak x0.25` … `x4`).
pub fn families(model: &Model, knockouts: bool, link_removals: bool, dosage: bool) -> Vec<Mutant> {
    let mut out = Vec::new();
    if knockouts {
        for (g, gene) in model.genes.iter().enumerate() {
            out.push(Mutant { name: format!("ko:{}", gene.name), edits: vec![Edit::KnockOut(g)] });
        }
    }
    if link_removals {
        for k in 0..model.circuit.links.len() {
            out.push(Mutant { name: format!("del:{}", model.link_name(k)), edits: vec![Edit::RemoveLink(k)] });
        }
    }
    if dosage {
        for (k, g) in model.gradients.iter().enumerate() {
            for f in [0.25, 0.5, 2.0, 4.0] {
                out.push(Mutant {
                    name: format!("{}.peak x{f}", g.name),
                    edits: vec![Edit::Scale(Param::Gradient(k, GradientParam::Peak), f)],
                });
            }
        }
    }
    out
}
