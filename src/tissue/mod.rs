//! The tissue: grid geometry, gradient inputs and implicit diffusion solves.

mod cosine;
mod diffusion;
mod edges;
mod gradient;
mod held_ends;
mod row_solve;
mod sheet_solve;

pub use diffusion::{Diffusion, Rhs, SpectralSolver};
pub use edges::{edge_source, inflow, laplacian};
pub use row_solve::TriFactor;

pub use gradient::{amplitude_at, distance_at, distance_um, unit_shape, value_at};

use ndarray::Array2;

use crate::model::{Grid, Model};

/// Geometry plus the static part of every gradient, ready for the integrator.
///
/// The input rows a rate law sees, per nucleus: each gradient, then the
/// nucleus's position x (µm along the axis), the time t (min), and — when the
/// circuit uses contact signalling — the mean level of each gene over the
/// nucleus's neighbours (in gene order).
#[derive(Debug, Clone)]
pub struct Tissue {
    /// Grid.
    pub grid: Grid,
    /// `shape[[m, i]]` = baseline + (peak − baseline)·s(d_i): gradient m at nucleus i
    /// with amplitude 1, a.u.
    shape: Array2<f64>,
    /// Genes whose neighbour means are inputs (all genes, or none).
    neighbour_genes: usize,
    /// On a growing row, how its positions stretch with time.
    stretch: Option<Stretch>,
    /// The gradients: amplitude time courses, and the shapes, peaks and
    /// baselines of those whose values are recomputed at each time.
    gradients: Vec<crate::model::Gradient>,
}

/// True when a gradient's shape changes with time (measured profiles at several times).
fn timed(g: &crate::model::Gradient) -> bool {
    matches!(g.shape, crate::model::Shape::TableInTime { .. })
}

/// A growing row's stretch: positions and distances at time t are those of
/// the grid times e^{g(t − t₀)}, and gradient values are read there.
#[derive(Debug, Clone)]
struct Stretch {
    /// g, 1/min.
    rate_per_min: f64,
    /// t₀, min: when the grid had its stated spacing.
    since_min: f64,
    /// Distance of each nucleus from each gradient's source at t₀, µm [gradient, nucleus].
    distance: Array2<f64>,
}

impl Tissue {
    /// Builds the tissue of a model: evaluates every gradient on the grid.
    pub fn new(model: &Model) -> Tissue {
        let grid = model.grid;
        let mut shape = Array2::zeros((model.gradients.len(), grid.len()));
        for (m, g) in model.gradients.iter().enumerate() {
            for iy in 0..grid.ny {
                for ix in 0..grid.nx {
                    let d = distance_um(&grid, g.from, ix, iy);
                    shape[[m, iy * grid.nx + ix]] = g.baseline + (g.peak - g.baseline) * unit_shape(&g.shape, d, 0.0);
                }
            }
        }
        let stretch = model.growth.as_ref().filter(|g| g.rate_per_min > 0.0).map(|g| Stretch {
            rate_per_min: g.rate_per_min,
            since_min: 0.0,
            distance: Array2::from_shape_fn((model.gradients.len(), grid.len()), |(m, i)| {
                distance_um(&grid, model.gradients[m].from, i % grid.nx, i / grid.nx)
            }),
        });
        Tissue {
            grid,
            shape,
            neighbour_genes: if model.circuit.neighbours { model.genes.len() } else { 0 },
            stretch,
            gradients: model.gradients.clone(),
        }
    }

    /// On a growing row, states that the grid has its stated spacing at
    /// `t_min` (positions stretch by e^{g(t − t_min)} from then on).
    pub fn stretched_from(mut self, t_min: f64) -> Tissue {
        if let Some(s) = &mut self.stretch {
            s.since_min = t_min;
        }
        self
    }

    /// How much longer the row is at `t_min` than its grid says: e^{g(t − t₀)}
    /// on a growing row, else 1.
    pub fn stretch_at(&self, t_min: f64) -> f64 {
        self.stretch.as_ref().map_or(1.0, |s| (s.rate_per_min * (t_min - s.since_min)).exp())
    }

    /// Number of gradients.
    pub fn n_gradients(&self) -> usize {
        self.shape.nrows()
    }

    /// Number of input rows: gradients, x, t, and neighbour means if used.
    pub fn n_inputs(&self) -> usize {
        self.shape.nrows() + 2 + self.neighbour_genes
    }

    /// True when the circuit reads neighbour means.
    pub fn uses_neighbours(&self) -> bool {
        self.neighbour_genes > 0
    }

    /// True when any gradient's amplitude changes with time.
    pub fn time_varying(&self) -> bool {
        self.stretch.is_some() || self.gradients.iter().any(|g| timed(g) || g.amplitude.len() > 1)
    }

    /// Times (min, increasing) at which an input's course in time has a
    /// kink: the points of every gradient's amplitude time course and the
    /// times of measured profiles. Error-controlled steps land on them and
    /// start afresh there.
    pub fn breakpoints(&self) -> Vec<f64> {
        let mut out: Vec<f64> = self.gradients.iter().flat_map(|g| &g.amplitude).map(|p| p.0).collect();
        for g in &self.gradients {
            if let crate::model::Shape::TableInTime { frames } = &g.shape {
                out.extend(frames.iter().map(|f| f.0));
            }
        }
        out.retain(|t| t.is_finite());
        out.sort_by(f64::total_cmp);
        out.dedup();
        out
    }

    /// Writes the gradients, x and t at time `t_min` into `out` ([input, nucleus]);
    /// neighbour rows are left as they are.
    ///
    /// # Panics
    /// If `out` does not have [`Self::n_inputs`] rows of every nucleus.
    pub fn fill_inputs(&self, t_min: f64, out: &mut Array2<f64>) {
        assert_eq!(out.dim(), (self.n_inputs(), self.grid.len()), "input buffer shape");
        let k = self.shape.nrows();
        let e = self.stretch_at(t_min);
        let nx = self.grid.nx;
        for (m, (mut row, shape)) in out.outer_iter_mut().zip(self.shape.outer_iter()).enumerate() {
            let g = &self.gradients[m];
            let a = amplitude_at(&g.amplitude, t_min);
            let value = |d: f64| a * (g.baseline + (g.peak - g.baseline) * unit_shape(&g.shape, d, t_min));
            match &self.stretch {
                None if !timed(g) => row.zip_mut_with(&shape, |o, s| *o = a * s),
                None => {
                    for (i, o) in row.iter_mut().enumerate() {
                        *o = value(distance_um(&self.grid, g.from, i % nx, i / nx));
                    }
                }
                Some(s) => row.zip_mut_with(&s.distance.row(m), |o, d| *o = value(d * e)),
            }
        }
        for (i, v) in out.row_mut(k).iter_mut().enumerate() {
            *v = e * self.grid.x_um(i % nx);
        }
        self.fill_time(t_min, out);
    }

    /// Writes only the time row.
    pub fn fill_time(&self, t_min: f64, out: &mut Array2<f64>) {
        out.row_mut(self.shape.nrows() + 1).fill(t_min);
    }

    /// Writes each gene's mean over each nucleus's neighbours (the existing ones
    /// on sealed edges, wrapped on periodic ones; 2 in a row, 4 on a sheet)
    /// into the neighbour rows, if the circuit uses them.
    pub fn fill_neighbours(&self, u: &Array2<f64>, out: &mut Array2<f64>) {
        if self.neighbour_genes == 0 {
            return;
        }
        let base = self.shape.nrows() + 2;
        let (nx, ny) = (self.grid.nx, self.grid.ny);
        let periodic = self.grid.edges == crate::model::Edges::Periodic;
        let step = |i: usize, n: usize, forward: bool| -> Option<usize> {
            match (forward, i) {
                (true, i) if i + 1 < n => Some(i + 1),
                (false, i) if i > 0 => Some(i - 1),
                _ if periodic && n > 1 => Some(if forward { 0 } else { n - 1 }),
                _ => None,
            }
        };
        for g in 0..self.neighbour_genes {
            let src = u.row(g);
            let mut dst = out.row_mut(base + g);
            for iy in 0..ny {
                for ix in 0..nx {
                    let mut sum = 0.0;
                    let mut count = 0;
                    for x in [step(ix, nx, false), step(ix, nx, true)].into_iter().flatten() {
                        sum += src[iy * nx + x];
                        count += 1;
                    }
                    if ny > 1 {
                        for y in [step(iy, ny, false), step(iy, ny, true)].into_iter().flatten() {
                            sum += src[y * nx + ix];
                            count += 1;
                        }
                    }
                    dst[iy * nx + ix] = if count > 0 { sum / count as f64 } else { 0.0 };
                }
            }
        }
    }

    /// All inputs at time `t_min`, [input, nucleus]; neighbour rows zero
    /// (see [`Self::inputs_with_state`]).
    pub fn inputs_at(&self, t_min: f64) -> Array2<f64> {
        let mut out = Array2::zeros((self.n_inputs(), self.grid.len()));
        self.fill_inputs(t_min, &mut out);
        out
    }

    /// All inputs at time `t_min` with the neighbour means of state `u`.
    pub fn inputs_with_state(&self, t_min: f64, u: &Array2<f64>) -> Array2<f64> {
        let mut out = self.inputs_at(t_min);
        self.fill_neighbours(u, &mut out);
        out
    }
}
