//! Pairing the boundaries of two runs (or of a run and a measurement):
//! which boundary became which, and how far it moved.

use serde::Serialize;

use super::Boundary;

/// Two times that name the same snapshot (relative 1e-9).
pub fn same_time(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(1.0)
}

/// How one boundary moved in a mutant.
#[derive(Debug, Clone, PartialEq, Serialize, Default)]
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
    /// What happened: "moved", "lost" or "gained" from [`match_boundaries`];
    /// a screen puts its outcome in words here (see `crate::screen::outcome`).
    pub status: String,
    /// Why a mutant failed (status "failed").
    pub reason: Option<String>,
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
