//! Attractors along the axis: fixed points of the isolated nucleus as the
//! position (and so the gradient inputs) varies continuously, traced by
//! pseudo-arclength continuation in the position, with the folds where
//! attractors appear or vanish; and the per-nucleus fixed points beside them.

use super::continuation::{Branch, trace_through};
use super::fixed::{FixedPoint, find_fixed_points};
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
    /// Inputs at position `s` (% of axis length): the gradients, x and t, and
    /// zero for any neighbour means (contact terms are not followed along the axis).
    pub fn inputs(&self, s: f64) -> Vec<f64> {
        let x = s / 100.0 * self.grid.length_um();
        point_inputs(self.gradients, &self.grid, (x, self.grid.height_um() / 2.0), self.t_min, self.neighbour_genes)
    }
}

/// The inputs a rate law sees at the point (x, y) µm at `t_min`: the
/// gradients, x and t, and zero for `neighbour_genes` neighbour means.
pub fn point_inputs(
    gradients: &[Gradient],
    grid: &Grid,
    (x, y): (f64, f64),
    t_min: f64,
    neighbour_genes: usize,
) -> Vec<f64> {
    let mut m: Vec<f64> = gradients.iter().map(|g| value_at(g, grid, x, y, t_min)).collect();
    m.extend([x, t_min]);
    m.extend(std::iter::repeat_n(0.0, neighbour_genes));
    m
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
    let grid = model.grid_at(t_min);
    let fam = PositionFamily {
        kinetics: kinetics.as_ref(),
        gradients: &model.gradients,
        grid,
        t_min,
        genes: model.genes.len(),
        neighbour_genes: if model.circuit.neighbours { model.genes.len() } else { 0 },
    };
    let tol = super::fixed::newton_tolerance(model);
    let starts = super::fixed::model_starts(model, hi, 30);
    let nonnegative = super::fixed::nonnegative(model);
    let nucleus_pct: Vec<f64> = (0..grid.nx).map(|ix| 100.0 * grid.x_um(ix) / grid.length_um()).collect();
    let per_nucleus: Vec<Vec<FixedPoint>> = nucleus_pct
        .iter()
        .map(|&s| {
            let sys = Frozen { kinetics: kinetics.as_ref(), inputs: fam.inputs(s), influx: vec![0.0; fam.genes] };
            find_fixed_points(&sys, &starts, tol, nonnegative)
        })
        .collect();
    let range = (nucleus_pct[0], nucleus_pct[grid.nx - 1]);
    let scale = hi.iter().copied().fold(1e-12, f64::max);
    let seeds: Vec<(f64, Vec<Vec<f64>>)> = nucleus_pct
        .iter()
        .zip(&per_nucleus)
        .map(|(&s, points)| (s, points.iter().map(|p| p.x.clone()).collect()))
        .collect();
    let branches = trace_through(&fam, &seeds, range, 0.5, scale);
    Landscape { t_min, nucleus_pct, per_nucleus, branches }
}
