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

/// How one boundary moved in a mutant: a row of `shifts.csv` (numbers in
/// the csv crate's form, `5.0`; an empty cell for None).
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize, Default)]
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
    /// What happened: see [`Outcome`] (as its words); "moved", "lost" and
    /// "gained" straight from [`match_boundaries`].
    pub status: String,
    /// Why a mutant failed (status "failed").
    pub reason: Option<String>,
}

/// A boundary whose shift is smaller than this, % of the axis length, is
/// "unchanged": it rounds to 0.00 % in the tables (common practice, no source).
pub const UNCHANGED_PCT: f64 = 0.005;

/// What a mutant did to one boundary, in words for the tables.
pub mod outcome {
    /// Matched, moved by at least [`super::UNCHANGED_PCT`].
    pub const MOVED: &str = "moved";
    /// Matched, moved by less than [`super::UNCHANGED_PCT`].
    pub const UNCHANGED: &str = "unchanged";
    /// The gene is below its expression floor everywhere.
    pub const GENE_LOST: &str = "gene lost everywhere";
    /// The gene is above its boundary level everywhere.
    pub const GENE_FILLS: &str = "gene expanded to fill";
    /// The gene is expressed, but below its (absolute) boundary level everywhere.
    pub const GENE_BELOW: &str = "gene below its level everywhere";
    /// The gene keeps a pattern, but not this boundary.
    pub const BOUNDARY_LOST: &str = "boundary lost";
    /// A boundary the wild type does not have.
    pub const NEW: &str = "new boundary";
    /// The mutant's run failed (see the reason).
    pub const FAILED: &str = "failed";
}

/// How a gene ends up in a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GeneState {
    /// Below its expression floor everywhere.
    NotExpressed,
    /// At or above its boundary level everywhere.
    Everywhere,
    /// Expressed, but below its boundary level everywhere (an absolute
    /// level that the profile never reaches).
    Below,
    /// Crosses its level somewhere.
    Patterned,
}

/// Boundaries and per-gene states of a model's final state (one thread,
/// only the last snapshot kept).
///
/// # Errors
/// [`StepError`] if the run fails.
pub fn final_outcome(model: &Model) -> Result<(Vec<Boundary>, Vec<GeneState>), StepError> {
    let tissue = crate::tissue::Tissue::new(model);
    let kinetics = crate::kinetics::build(model);
    let mut rec = Recording::for_model(model);
    let until = model.clock.until_min;
    integrate::integrate(model, kinetics.as_ref(), &tissue, false, |t, state| {
        if same_time(until, t) {
            let _ = rec.push(t, state);
        }
    })?;
    let last = rec.times.len() - 1;
    let profiles = rec.axis_profiles(last, 0..rec.genes.len())?;
    let states = profiles
        .iter()
        .enumerate()
        .map(|(g, p)| {
            let max = p.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let min = p.iter().copied().fold(f64::INFINITY, f64::min);
            match rec.levels[g].threshold(max) {
                _ if max < rec.floor[g] => GeneState::NotExpressed,
                None => GeneState::NotExpressed,
                Some(theta) if min >= theta => GeneState::Everywhere,
                Some(theta) if max < theta => GeneState::Below,
                Some(_) => GeneState::Patterned,
            }
        })
        .collect();
    Ok((boundaries_at(&rec, last)?, states))
}

/// Renames the raw statuses of [`match_boundaries`] by what happened:
/// unchanged or moved; for a lost boundary, whether its gene vanished, filled
/// the tissue or only lost that boundary; gained as new.
pub fn describe_outcomes(shifts: &mut [Shift], genes: &[String], states: &[GeneState]) {
    for sh in shifts {
        let state = genes.iter().position(|g| g == &sh.gene).and_then(|g| states.get(g)).copied();
        sh.status = match (sh.status.as_str(), state) {
            ("moved", _) if sh.shift_pct.is_some_and(|d| d.abs() < UNCHANGED_PCT) => outcome::UNCHANGED,
            ("moved", _) => outcome::MOVED,
            ("lost", Some(GeneState::NotExpressed)) => outcome::GENE_LOST,
            ("lost", Some(GeneState::Everywhere)) => outcome::GENE_FILLS,
            ("lost", Some(GeneState::Below)) => outcome::GENE_BELOW,
            ("lost", _) => outcome::BOUNDARY_LOST,
            ("gained", _) => outcome::NEW,
            (other, _) => other,
        }
        .to_string();
    }
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
            reason: None,
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
    let genes: Vec<String> = model.genes.iter().map(|g| g.name.clone()).collect();
    let one = |m: &Mutant| -> Vec<Shift> {
        match final_outcome(&model.with_mutant(m)) {
            Ok((b, states)) => {
                let mut shifts = match_boundaries(&m.name, &wild_type, &b);
                describe_outcomes(&mut shifts, &genes, &states);
                shifts
            }
            Err(e) => vec![Shift {
                mutant: m.name.clone(),
                status: outcome::FAILED.into(),
                reason: Some(e.to_string()),
                ..Shift::default()
            }],
        }
    };
    let shifts: Vec<Vec<Shift>> =
        if parallel { mutants.par_iter().map(one).collect() } else { mutants.iter().map(one).collect() };
    Ok(Screen { wild_type, shifts, mutants: mutants.iter().map(|m| m.name.clone()).collect() })
}

/// Generated mutant families: every single knock-out (`ko:gene`), every link
/// removal (`del:from->to`), and dosage: each gene's production halved and
/// doubled (`gene.production x0.5`, `x2`: heterozygote and overexpression)
/// and each gradient's peak from ×0.25 to ×4 (`gradient.peak x0.25` … `x4`).
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
        for (g, gene) in model.genes.iter().enumerate() {
            let p = Param::Gene(g, crate::model::GeneParam::Production);
            if model.no_effect(p).is_some() {
                continue;
            }
            for f in [0.5, 2.0] {
                out.push(Mutant { name: format!("{}.production x{f}", gene.name), edits: vec![Edit::Scale(p, f)] });
            }
        }
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
