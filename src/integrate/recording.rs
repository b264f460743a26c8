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
    /// Per gene, the level below which the gene counts as not expressed
    /// (no boundaries or domains are read), a.u.: [`EXPRESSION_FLOOR`] × its
    /// capacity p/d; 0 where there is no capacity (no decay).
    pub floor: Vec<f64>,
}

/// Fraction of a gene's capacity p/d (its steady level at full production)
/// below which it counts as not expressed (common practice, no source).
pub const EXPRESSION_FLOOR: f64 = 0.05;

impl Recording {
    /// An empty recording for a model's genes and grid.
    pub fn for_model(model: &Model) -> Recording {
        Recording {
            grid: model.grid,
            genes: model.genes.iter().map(|g| g.name.clone()).collect(),
            colors: model.genes.iter().map(|g| g.color).collect(),
            times: Vec::with_capacity(model.snapshot_count()),
            states: Vec::with_capacity(model.snapshot_count()),
            floor: model
                .genes
                .iter()
                .map(|g| if g.decay > 0.0 { EXPRESSION_FLOOR * g.production / g.decay } else { 0.0 })
                .collect(),
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
        self.states.last().expect("a recording holds at least t = 0")
    }

    /// Rows of a sheet read for the axis profile: a central strip a tenth of
    /// the sheet's height (at least one row), like the strip along the midline
    /// in which stained embryos are read (common practice, no source).
    pub fn midline_rows(&self) -> std::ops::Range<usize> {
        let ny = self.grid.ny;
        let band = (ny / 10).max(1);
        let start = (ny - band) / 2;
        start..start + band
    }

    /// Profile of gene `g` along the axis at snapshot `s`, one value per column:
    /// the row itself, or on a sheet the mean over the [`Self::midline_rows`].
    pub fn axis_profile(&self, s: usize, g: usize) -> Vec<f64> {
        let row = self.states[s].row(g);
        let nx = self.grid.nx;
        let rows = self.midline_rows();
        let n = rows.len() as f64;
        (0..nx).map(|ix| rows.clone().map(|iy| row[iy * nx + ix]).sum::<f64>() / n).collect()
    }
}
