//! Attractors along the axis: fixed points of the isolated nucleus as the
//! position (and so the gradient inputs) varies continuously, traced by
//! pseudo-arclength continuation in the position, with the folds where
//! attractors appear or vanish; and the per-nucleus fixed points beside them.

use super::continuation::{Branch, continue_branch};
use super::fixed::{FixedPoint, box_starts, find_fixed_points};
use super::system::{Family, Frozen};
use crate::kinetics::Kinetics;
use crate::model::{Gradient, Grid, Model};
use crate::tissue::value_at;

/// The isolated nucleus as a family in the position s (% of axis length, along
/// the midline of a sheet), with the gradients at time `t_min`.
pub struct PositionFamily<'a> {
    /// Rate law.
    pub kinetics: &'a dyn Kinetics,
    /// Gradients.
    pub gradients: &'a [Gradient],
    /// Grid (for the source geometry).
    pub grid: Grid,
    /// Time the inputs are frozen at, min.
    pub t_min: f64,
    /// Number of genes.
    pub genes: usize,
    /// Neighbour-mean input rows the rate law expects (0 or the number of genes).
    pub neighbour_genes: usize,
}

impl PositionFamily<'_> {
    /// Gradient values at position `s` (% of axis length).
    /// Inputs at position `s` (% of axis length): the gradients, x and t, and
    /// zero for any neighbour means (contact terms are not followed along the axis).
    pub fn inputs(&self, s: f64) -> Vec<f64> {
        let x = s / 100.0 * self.grid.length_um();
        let y = self.grid.height_um() / 2.0;
        let mut m: Vec<f64> = self.gradients.iter().map(|g| value_at(g, &self.grid, x, y, self.t_min)).collect();
        m.extend([x, self.t_min]);
        m.extend(std::iter::repeat_n(0.0, self.neighbour_genes));
        m
    }
}

impl Family for PositionFamily<'_> {
    fn dim(&self) -> usize {
        self.genes
    }
    fn rates(&self, u: &[f64], s: f64, out: &mut [f64]) {
        self.kinetics.rates_one(u, &self.inputs(s), out);
    }
    fn jacobian(&self, u: &[f64], s: f64, jac: &mut [f64]) {
        self.kinetics.jacobian(u, &self.inputs(s), jac);
    }
}

/// Attractors along the axis at one time.
#[derive(Debug, Clone)]
pub struct Landscape {
    /// Time the inputs are frozen at, min.
    pub t_min: f64,
    /// Positions of the nuclei, % of axis length.
    pub nucleus_pct: Vec<f64>,
    /// Fixed points of each nucleus (Newton from many starts).
    pub per_nucleus: Vec<Vec<FixedPoint>>,
    /// Branches traced by continuation in the position.
    pub branches: Vec<Branch>,
}

/// Traces the landscape of a model with its gradients at time `t_min`;
/// `hi` bounds the box of Newton starts per gene (a.u.).
pub fn landscape(model: &Model, t_min: f64, hi: &[f64]) -> Landscape {
    let kinetics = crate::kinetics::build(model);
    let grid = model.grid;
    let fam = PositionFamily {
        kinetics: kinetics.as_ref(),
        gradients: &model.gradients,
        grid,
        t_min,
        genes: model.genes.len(),
        neighbour_genes: if model.circuit.neighbours { model.genes.len() } else { 0 },
    };
    let tol = 1e-10 * model.genes.iter().map(|g| g.production).fold(1.0, f64::max);
    let starts = box_starts(hi, 30);
    let nucleus_pct: Vec<f64> = (0..grid.nx).map(|ix| 100.0 * grid.x_um(ix) / grid.length_um()).collect();
    let per_nucleus: Vec<Vec<FixedPoint>> = nucleus_pct
        .iter()
        .map(|&s| {
            let sys = Frozen { kinetics: kinetics.as_ref(), inputs: fam.inputs(s), influx: vec![0.0; fam.genes] };
            find_fixed_points(&sys, &starts, tol, true)
        })
        .collect();
    let range = (nucleus_pct[0], nucleus_pct[grid.nx - 1]);
    let scale = hi.iter().copied().fold(1e-12, f64::max);
    let mut branches: Vec<Branch> = Vec::new();
    let on_a_branch = |branches: &[Branch], s: f64, x: &[f64]| {
        branches.iter().any(|b| {
            b.points.windows(2).any(|w| {
                let (a, c) = (&w[0], &w[1]);
                let (lo, hi) = (a.s.min(c.s), a.s.max(c.s));
                s >= lo - 1e-9
                    && s <= hi + 1e-9
                    && x.iter().enumerate().all(|(g, v)| {
                        let f = if c.s != a.s { (s - a.s) / (c.s - a.s) } else { 0.0 };
                        (a.x[g] + f * (c.x[g] - a.x[g]) - v).abs() <= 1e-3 * scale
                    })
            })
        })
    };
    for (k, points) in per_nucleus.iter().enumerate() {
        for p in points {
            if on_a_branch(&branches, nucleus_pct[k], &p.x) {
                continue;
            }
            let mut both = Branch::default();
            for dir in [-1.0, 1.0] {
                let mut b = continue_branch(&fam, &p.x, nucleus_pct[k], range, 0.5, dir, 20_000);
                if dir < 0.0 {
                    b.points.reverse();
                    both = b;
                } else {
                    both.points.extend(b.points.into_iter().skip(1));
                    both.folds.extend(b.folds);
                }
            }
            branches.push(both);
        }
    }
    Landscape { t_min, nucleus_pct, per_nucleus, branches }
}
