//! The tissue: grid geometry, gradient inputs and implicit diffusion solves.

mod diffusion;
mod gradient;

pub use diffusion::{Diffusion, SpectralSolver, TriFactor, laplacian};

pub use gradient::{amplitude_at, distance_at, distance_um, unit_shape, value_at};

use ndarray::Array2;

use crate::model::{Grid, Model};

/// Geometry plus the static part of every gradient, ready for the integrator.
#[derive(Debug, Clone)]
pub struct Tissue {
    /// Grid.
    pub grid: Grid,
    /// `shape[[m, i]]` = baseline + (peak − baseline)·s(d_i): gradient m at nucleus i
    /// with amplitude 1, a.u.
    shape: Array2<f64>,
    /// Amplitude time course of each gradient, `(t_min, factor)`.
    amplitude: Vec<Vec<(f64, f64)>>,
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
                    shape[[m, iy * grid.nx + ix]] = g.baseline + (g.peak - g.baseline) * unit_shape(g.shape, d);
                }
            }
        }
        Tissue { grid, shape, amplitude: model.gradients.iter().map(|g| g.amplitude.clone()).collect() }
    }

    /// Number of gradients.
    pub fn n_inputs(&self) -> usize {
        self.shape.nrows()
    }

    /// True when any gradient's amplitude changes with time.
    pub fn time_varying(&self) -> bool {
        self.amplitude.iter().any(|a| a.len() > 1)
    }

    /// Writes every gradient's value at time `t_min` into `out` ([gradient, nucleus]).
    ///
    /// # Panics
    /// If `out` does not have the shape [gradients, nuclei].
    pub fn fill_inputs(&self, t_min: f64, out: &mut Array2<f64>) {
        assert_eq!(out.dim(), self.shape.dim(), "input buffer shape");
        for (m, (mut row, shape)) in out.outer_iter_mut().zip(self.shape.outer_iter()).enumerate() {
            let a = amplitude_at(&self.amplitude[m], t_min);
            row.zip_mut_with(&shape, |o, s| *o = a * s);
        }
    }

    /// Gradient values at time `t_min`, [gradient, nucleus].
    pub fn inputs_at(&self, t_min: f64) -> Array2<f64> {
        let mut out = Array2::zeros(self.shape.dim());
        self.fill_inputs(t_min, &mut out);
        out
    }
}
