//! Snapshots of a run, kept in memory.

use ndarray::Array2;

use crate::model::{Grid, Model};

/// The recorded history of a run: the state at each snapshot time.
#[derive(Debug, Clone)]
pub struct Recording {
    /// Grid the states live on.
    pub grid: Grid,
    /// Gene names (the gene axis of each state).
    pub genes: Vec<String>,
    /// Gene display colours.
    pub colors: Vec<[u8; 3]>,
    /// Snapshot times, min.
    pub times: Vec<f64>,
    /// State at each snapshot, [gene, nucleus], a.u.
    pub states: Vec<Array2<f64>>,
}

impl Recording {
    /// An empty recording for a model's genes and grid.
    pub fn for_model(model: &Model) -> Recording {
        Recording {
            grid: model.grid,
            genes: model.genes.iter().map(|g| g.name.clone()).collect(),
            colors: model.genes.iter().map(|g| g.color).collect(),
            times: Vec::with_capacity(model.snapshot_count()),
            states: Vec::with_capacity(model.snapshot_count()),
        }
    }

    /// Adds a snapshot.
    pub fn push(&mut self, t_min: f64, state: &Array2<f64>) {
        self.times.push(t_min);
        self.states.push(state.clone());
    }

    /// The last snapshot.
    ///
    /// # Panics
    /// If nothing was recorded.
    pub fn final_state(&self) -> &Array2<f64> {
        self.states
            .last()
            .expect("a recording holds at least t = 0")
    }

    /// Profile of gene `g` along the axis at snapshot `s`, one value per column:
    /// the row itself, or on a sheet the mean over each column (across y).
    pub fn axis_profile(&self, s: usize, g: usize) -> Vec<f64> {
        let row = self.states[s].row(g);
        let (nx, ny) = (self.grid.nx, self.grid.ny);
        (0..nx)
            .map(|ix| (0..ny).map(|iy| row[iy * nx + ix]).sum::<f64>() / ny as f64)
            .collect()
    }
}
