//! Crosses: double (and triple) mutants made from single ones, and their
//! epistasis on each boundary: how far the combined mutant's shift departs
//! from the sum of the single shifts. A model prediction.

use serde::Serialize;

use super::Screen;
use crate::model::{Edit, Mutant};
use crate::readout::Shift;

/// A cross: a mutant made of single ones.
#[derive(Debug, Clone, PartialEq)]
pub struct Cross {
    /// The combined mutant.
    pub mutant: Mutant,
    /// The singles' names.
    pub parts: Vec<String>,
}

/// Why the changes of a cross contradict each other (a gene knocked out and
/// clamped, clamped at two levels, a gradient's source moved to two sides),
/// or None. One mutant with such changes is refused when it is read; a
/// cross of them would silently let the last one win.
pub fn conflict(edits: &[Edit], model: &crate::model::Model) -> Option<String> {
    for (i, a) in edits.iter().enumerate() {
        for b in &edits[..i] {
            let why = match (a, b) {
                (Edit::KnockOut(g), Edit::Clamp(h, _)) | (Edit::Clamp(h, _), Edit::KnockOut(g)) if g == h => {
                    Some(format!("`{}` is knocked out and clamped", model.genes[*g].name))
                }
                (Edit::Clamp(g, x), Edit::Clamp(h, y)) if g == h && x != y => {
                    Some(format!("`{}` is clamped at {x} and at {y}", model.genes[*g].name))
                }
                (Edit::Source(k, x), Edit::Source(j, y)) if k == j && x != y => {
                    Some(format!("the source of `{}` moves to two places", model.gradients[*k].name))
                }
                _ => None,
            };
            if why.is_some() {
                return why;
            }
        }
    }
    None
}

/// Every combination of `size` (2 or 3) of `singles`, in order: each
/// combination's changes are the singles' changes applied together (as
/// changes of one mutant compose), its name the singles' names joined by
/// " + ". Combinations whose changes contradict each other ([`conflict`])
/// are left out and returned apart, each with the reason.
pub fn crosses(singles: &[Mutant], size: usize, model: &crate::model::Model) -> (Vec<Cross>, Vec<(String, String)>) {
    let n = singles.len();
    let mut out = Vec::new();
    let mut left_out = Vec::new();
    let mut pick = |idx: &[usize]| {
        let parts: Vec<String> = idx.iter().map(|&i| singles[i].name.clone()).collect();
        let edits: Vec<Edit> = idx.iter().flat_map(|&i| singles[i].edits.iter().cloned()).collect();
        if let Some(why) = conflict(&edits, model) {
            left_out.push((parts.join(" + "), why));
            return;
        }
        out.push(Cross { mutant: Mutant { name: parts.join(" + "), edits }, parts });
    };
    for a in 0..n {
        for b in a + 1..n {
            if size == 2 {
                pick(&[a, b]);
            } else {
                for c in b + 1..n {
                    pick(&[a, b, c]);
                }
            }
        }
    }
    (out, left_out)
}

/// One boundary of the wild type in one cross.
#[derive(Debug, Clone, PartialEq, Serialize, Default)]
pub struct Epistasis {
    /// The cross ("a + b").
    pub cross: String,
    /// Gene.
    pub gene: String,
    /// Direction.
    pub direction: String,
    /// Wild-type position, % length.
    pub wild_type_pct: Option<f64>,
    /// Sum of the single mutants' shifts, % length.
    pub additive_pct: Option<f64>,
    /// The cross's shift, % length.
    pub cross_pct: Option<f64>,
    /// Cross − sum, % length: 0 for mutants whose effects add.
    pub epistasis_pct: Option<f64>,
    /// The same in µm.
    pub epistasis_um: Option<f64>,
    /// "ok", or which of the mutants lost the boundary or failed.
    pub status: String,
}

/// The shift of the wild-type boundary (gene, direction, position) in the
/// rows of one mutant, when it moved (or stayed).
fn shift_of<'a>(rows: &'a [Shift], like: &Shift) -> Option<&'a Shift> {
    rows.iter().find(|r| {
        r.gene == like.gene
            && r.direction == like.direction
            && r.wild_type_pct == like.wild_type_pct
            && r.shift_pct.is_some()
    })
}

/// The epistasis of every cross in `screen` (screened with its singles, in
/// the same run) on every wild-type boundary: cross
/// shift − Σ single shifts, where the cross and every single keep the
/// boundary.
pub fn epistasis(screen: &Screen, crosses: &[Cross]) -> Vec<Epistasis> {
    let rows_of = |name: &str| screen.mutants.iter().position(|m| m == name).map(|k| screen.shifts[k].as_slice());
    let mut out = Vec::new();
    for cross in crosses {
        let Some(rows) = rows_of(&cross.mutant.name) else { continue };
        let parts: Vec<&str> = cross.parts.iter().map(String::as_str).collect();
        if let Some(failed) = rows.iter().find(|r| r.status == super::outcome::FAILED) {
            out.push(Epistasis {
                cross: cross.mutant.name.clone(),
                status: format!("the cross failed: {}", failed.reason.as_deref().unwrap_or("")),
                ..Epistasis::default()
            });
            continue;
        }
        for wt in rows.iter().filter(|r| r.wild_type_pct.is_some()) {
            let mut e = Epistasis {
                cross: cross.mutant.name.clone(),
                gene: wt.gene.clone(),
                direction: wt.direction.clone(),
                wild_type_pct: wt.wild_type_pct,
                cross_pct: wt.shift_pct,
                ..Epistasis::default()
            };
            let singles: Vec<Option<&Shift>> =
                parts.iter().map(|p| rows_of(p).and_then(|rows| shift_of(rows, wt))).collect();
            let missing: Vec<&str> = parts.iter().zip(&singles).filter(|(_, s)| s.is_none()).map(|(p, _)| *p).collect();
            if !missing.is_empty() {
                e.status = format!("lost in {}", missing.join(", "));
            } else if wt.shift_pct.is_none() {
                e.status = format!("lost in the cross only ({})", wt.status);
            } else {
                let sum_pct: f64 = singles.iter().flatten().filter_map(|s| s.shift_pct).sum();
                let sum_um: f64 = singles.iter().flatten().filter_map(|s| s.shift_um).sum();
                e.additive_pct = Some(sum_pct);
                e.epistasis_pct = wt.shift_pct.map(|c| c - sum_pct);
                e.epistasis_um = wt.shift_um.map(|c| c - sum_um);
                e.status = "ok".into();
            }
            out.push(e);
        }
    }
    out
}
