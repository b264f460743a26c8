//! Tables of a bifurcation diagram (isolated nucleus, inputs frozen): the
//! branches point by point, and the special points. Each row names the
//! parameter and where and when the nucleus's inputs were frozen.

use std::io::Write;

use serde::{Deserialize, Serialize};

use super::table_writer::{Cells, TableWriter, header_of, shortest, shortest_opt};
use crate::phase::Diagram;

/// How every row begins: the parameter and where the nucleus sits.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct DiagramAt<'a> {
    /// The parameter continued, as the model names it.
    pub parameter: &'a str,
    /// Position of the nucleus, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub x_pct: f64,
    /// Time its inputs were frozen at, min.
    #[serde(serialize_with = "shortest")]
    pub frozen_at_min: f64,
}

/// A point of a branch: the rest of a row of `bifurcation_branches.csv`,
/// before one level column per gene (a.u.).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct BranchRow<'a> {
    /// Branch number, from 0.
    pub branch: usize,
    /// The branch it was switched from at a branch point; empty for branches
    /// through fixed points found at sampled values.
    pub switched_from: Option<usize>,
    /// Parameter value.
    #[serde(serialize_with = "shortest")]
    pub value: f64,
    /// Stability type (`stable node`, `saddle`, …).
    #[serde(rename = "type")]
    pub kind: &'a str,
}

/// A special point: the rest of a row of `bifurcation_points.csv`, before
/// one level column per gene (a.u.).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct SpecialRow<'a> {
    /// `fold`, `branch point` or `Hopf`.
    pub point: &'a str,
    /// The first branch it was met on.
    pub branch: usize,
    /// Parameter value.
    #[serde(serialize_with = "shortest")]
    pub value: f64,
    /// Period of the oscillation at onset (Hopf points), min.
    #[serde(serialize_with = "shortest_opt")]
    pub period_min: Option<f64>,
}

fn at(d: &Diagram) -> DiagramAt<'_> {
    DiagramAt { parameter: &d.parameter, x_pct: d.request.x_pct, frozen_at_min: d.request.t_min }
}

/// `bifurcation_branches.csv`: every point of every branch.
///
/// # Errors
/// The writer's.
pub fn write_branches_to(d: &Diagram, genes: &[String], w: impl Write) -> std::io::Result<()> {
    let mut header = header_of::<(DiagramAt, BranchRow)>()?;
    header.extend(genes.iter().cloned());
    let mut table = TableWriter::new(w, &header)?;
    for (k, b) in d.branches.iter().enumerate() {
        for p in &b.points {
            let row = BranchRow { branch: k, switched_from: d.switched_from[k], value: p.s, kind: p.kind.name() };
            table.row((at(d), row, Cells(&p.x)))?;
        }
    }
    table.finish()
}

/// `bifurcation_points.csv`: every fold, branch point and Hopf point, once each.
///
/// # Errors
/// The writer's.
pub fn write_special_points_to(d: &Diagram, genes: &[String], w: impl Write) -> std::io::Result<()> {
    let mut header = header_of::<(DiagramAt, SpecialRow)>()?;
    header.extend(genes.iter().cloned());
    let mut table = TableWriter::new(w, &header)?;
    for p in d.special_points() {
        let row = SpecialRow { point: p.kind.name(), branch: p.branch, value: p.s, period_min: p.period_min };
        table.row((at(d), row, Cells(&p.x)))?;
    }
    table.finish()
}

/// A point of a fold curve or a cusp: the rest of a row of
/// `fold_curves.csv` or `fold_cusps.csv`, before one level column per gene (a.u.).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct FoldRow<'a> {
    /// Curve number, from 0.
    pub curve: usize,
    /// First parameter, as the model names it.
    pub parameter: &'a str,
    /// Its value.
    #[serde(serialize_with = "shortest")]
    pub value: f64,
    /// Second parameter (`position_pct` for the position along the axis).
    pub second: &'a str,
    /// Its value.
    #[serde(serialize_with = "shortest")]
    pub second_value: f64,
}

/// `fold_curves.csv` (every point of every fold curve) or, with `cusps`,
/// `fold_cusps.csv`.
///
/// # Errors
/// The writer's.
pub fn write_fold_curves_to(
    curves: &[crate::phase::FoldCurve],
    (first, second): (&str, &str),
    genes: &[String],
    cusps: bool,
    w: impl Write,
) -> std::io::Result<()> {
    let mut header = header_of::<FoldRow>()?;
    header.extend(genes.iter().cloned());
    let mut table = TableWriter::new(w, &header)?;
    for (k, c) in curves.iter().enumerate() {
        for p in if cusps { &c.cusps } else { &c.points } {
            let row = FoldRow { curve: k, parameter: first, value: p.p, second, second_value: p.q };
            table.row((row, Cells(&p.x)))?;
        }
    }
    table.finish()
}
