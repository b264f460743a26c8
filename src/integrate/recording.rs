//! Snapshots of a run: kept in memory, or streamed to a scratch file as they
//! are taken when the recording would be large (a 1024² sheet of 4 genes is
//! 32 MiB per snapshot), so a long run's memory does not grow with its
//! snapshots.

use std::borrow::Cow;
use std::fs::File;
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::Path;
use std::sync::Mutex;

use ndarray::Array2;

use crate::model::{Grid, Model};

/// The recorded history of a run: the state at each snapshot time.
#[derive(Debug)]
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
    store: Store,
    /// Per gene, the level below which the gene counts as not expressed
    /// (no boundaries or domains are read), a.u.: [`EXPRESSION_FLOOR`] × its
    /// capacity p/d; 0 where there is no capacity (no decay).
    pub floor: Vec<f64>,
    /// Per gene, the level that defines its boundaries and domains (half of
    /// its maximum unless the model says otherwise).
    pub levels: Vec<crate::readout::Level>,
}

#[derive(Debug)]
enum Store {
    Memory(Vec<Array2<f64>>),
    Disk(Spill),
}

/// Snapshots in an unnamed scratch file (removed by the system when it is
/// closed, even if the process is killed), little-endian f64 one after the
/// other; the last one is also kept in memory.
#[derive(Debug)]
struct Spill {
    file: Mutex<File>,
    shape: (usize, usize),
    count: usize,
    last: Option<Array2<f64>>,
    bytes: Vec<u8>,
}

impl Spill {
    fn read(&self, s: usize) -> std::io::Result<Array2<f64>> {
        let (g, n) = self.shape;
        let mut bytes = vec![0u8; g * n * 8];
        let mut file = self.file.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
        file.seek(SeekFrom::Start((s * g * n * 8) as u64))?;
        file.read_exact(&mut bytes)?;
        file.seek(SeekFrom::End(0))?;
        let values = bytes.chunks_exact(8).map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes"))).collect();
        Ok(Array2::from_shape_vec((g, n), values).expect("shape of the spill"))
    }

    fn push(&mut self, state: &Array2<f64>) -> std::io::Result<()> {
        const CHUNK: usize = 1 << 16;
        let file = self.file.get_mut().unwrap_or_else(std::sync::PoisonError::into_inner);
        let values = state.as_slice().expect("standard layout");
        for chunk in values.chunks(CHUNK) {
            self.bytes.clear();
            self.bytes.extend(chunk.iter().flat_map(|v| v.to_le_bytes()));
            file.write_all(&self.bytes)?;
        }
        match &mut self.last {
            Some(last) => last.assign(state),
            None => self.last = Some(state.clone()),
        }
        self.count += 1;
        Ok(())
    }
}

/// Raises each gene's running maximum `top` (starting at 0) to the largest
/// level in `state` [gene, nucleus].
pub fn raise_to_maxima(top: &mut [f64], state: &Array2<f64>) {
    for (m, row) in top.iter_mut().zip(state.outer_iter()) {
        *m = row.iter().copied().fold(*m, f64::max);
    }
}

/// A streamed snapshot could not be read back from its scratch file.
#[derive(Debug, thiserror::Error)]
#[error(
    "cannot read snapshot {snapshot} back from the streamed recording's scratch file ({source}); the disk \
     holding it may be full or failing: give the run an output folder on another disk with -o, or set TMPDIR"
)]
pub struct ReadBackError {
    /// Snapshot index.
    pub snapshot: usize,
    /// The read error.
    #[source]
    pub source: std::io::Error,
}

/// Fraction of a gene's capacity p/d (its steady level at full production)
/// below which it counts as not expressed (common practice, no source). A
/// knocked-out gene keeps its wild type's capacity here.
pub const EXPRESSION_FLOOR: f64 = 0.05;

impl Recording {
    /// An empty recording for a model's genes and grid.
    pub fn for_model(model: &Model) -> Recording {
        Recording::with_states(
            model.grid,
            model.genes.iter().map(|g| g.name.clone()).collect(),
            model.genes.iter().map(|g| g.color).collect(),
            Vec::with_capacity(model.snapshot_count()),
            Vec::with_capacity(model.snapshot_count()),
            model
                .genes
                .iter()
                .map(|g| {
                    let p = if g.production > 0.0 { g.production } else { g.knocked_out_production.unwrap_or(0.0) };
                    if g.decay > 0.0 { EXPRESSION_FLOOR * p / g.decay } else { 0.0 }
                })
                .collect(),
        )
        .with_levels(model.genes.iter().map(|g| g.boundary).collect())
    }

    /// For every gene without a capacity (a rate expression, or no decay),
    /// whose floor is 0: the floor becomes [`EXPRESSION_FLOOR`] of the
    /// largest level it reaches over the recording, so that a gene that has
    /// all but vanished reports no boundaries (before, a gene at 0.07 % of
    /// its peak still did).
    ///
    /// # Errors
    /// [`ReadBackError`] if a streamed snapshot cannot be read back.
    pub fn floor_from_run(&mut self) -> Result<(), ReadBackError> {
        if self.floor.iter().all(|f| *f > 0.0) || self.is_empty() {
            return Ok(());
        }
        let top = self.max_levels(0..self.len())?;
        self.floor_from_levels(&top);
        Ok(())
    }

    /// [`Self::floor_from_run`] with each gene's largest level over the run
    /// given (a.u.): for callers that keep only some of the run's snapshots.
    pub fn floor_from_levels(&mut self, top: &[f64]) {
        for (f, &t) in self.floor.iter_mut().zip(top) {
            if *f == 0.0 && t > 0.0 {
                *f = EXPRESSION_FLOOR * t;
            }
        }
    }

    /// The same recording with these boundary levels (one per gene).
    pub fn with_levels(mut self, levels: Vec<crate::readout::Level>) -> Recording {
        self.levels = levels;
        self
    }

    /// A recording of given states (one per time), held in memory.
    pub fn with_states(
        grid: Grid,
        genes: Vec<String>,
        colors: Vec<[u8; 3]>,
        times: Vec<f64>,
        states: Vec<Array2<f64>>,
        floor: Vec<f64>,
    ) -> Recording {
        let levels = vec![crate::readout::Level::HALF_MAX; genes.len()];
        Recording { grid, genes, colors, times, store: Store::Memory(states), floor, levels }
    }

    /// Streams the snapshots to come to an unnamed scratch file in `dir`
    /// instead of memory.
    ///
    /// # Errors
    /// If the scratch file cannot be made.
    ///
    /// # Panics
    /// If snapshots were already recorded.
    pub fn stream_to(&mut self, dir: &Path) -> std::io::Result<()> {
        assert_eq!(self.len(), 0, "streaming starts before the first snapshot");
        let file = tempfile::tempfile_in(dir)?;
        let shape = (self.genes.len(), self.grid.len());
        self.store = Store::Disk(Spill { file: Mutex::new(file), shape, count: 0, last: None, bytes: Vec::new() });
        Ok(())
    }

    /// True if the snapshots are on disk.
    pub fn is_streamed(&self) -> bool {
        matches!(self.store, Store::Disk(_))
    }

    /// Adds a snapshot.
    ///
    /// # Errors
    /// If a streamed snapshot cannot be written.
    pub fn push(&mut self, t_min: f64, state: &Array2<f64>) -> std::io::Result<()> {
        match &mut self.store {
            Store::Memory(states) => states.push(state.clone()),
            Store::Disk(spill) => spill.push(state)?,
        }
        self.times.push(t_min);
        Ok(())
    }

    /// Number of snapshots held.
    pub fn len(&self) -> usize {
        match &self.store {
            Store::Memory(states) => states.len(),
            Store::Disk(spill) => spill.count,
        }
    }

    /// True if no snapshot is held.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The state at snapshot `s`, [gene, nucleus] (read back from disk when streamed).
    ///
    /// # Errors
    /// [`ReadBackError`] if a streamed snapshot cannot be read back from the
    /// scratch file this process holds open (a full or failing disk).
    ///
    /// # Panics
    /// If `s` is out of range.
    pub fn state(&self, s: usize) -> Result<Cow<'_, Array2<f64>>, ReadBackError> {
        Ok(match &self.store {
            Store::Memory(states) => Cow::Borrowed(&states[s]),
            Store::Disk(spill) => {
                assert!(s < spill.count, "snapshot {s} of {}", spill.count);
                match &spill.last {
                    Some(last) if s + 1 == spill.count => Cow::Borrowed(last),
                    _ => Cow::Owned(spill.read(s).map_err(|source| ReadBackError { snapshot: s, source })?),
                }
            }
        })
    }

    /// Largest level of each gene over the given snapshots (0 for none), a.u.:
    /// one read of each snapshot, however many genes.
    ///
    /// # Errors
    /// [`ReadBackError`], see [`Self::state`].
    pub fn max_levels(&self, snapshots: impl IntoIterator<Item = usize>) -> Result<Vec<f64>, ReadBackError> {
        let mut top = vec![0.0f64; self.genes.len()];
        for s in snapshots {
            raise_to_maxima(&mut top, &*self.state(s)?);
        }
        Ok(top)
    }

    /// Every state in time order, one at a time (see [`Self::state`]).
    pub fn states(&self) -> impl Iterator<Item = Result<Cow<'_, Array2<f64>>, ReadBackError>> + '_ {
        (0..self.len()).map(|s| self.state(s))
    }

    /// The last snapshot.
    ///
    /// # Panics
    /// If nothing was recorded.
    pub fn final_state(&self) -> &Array2<f64> {
        match &self.store {
            Store::Memory(states) => states.last(),
            Store::Disk(spill) => spill.last.as_ref(),
        }
        .expect("a recording holds at least t = 0")
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

    /// Profiles along the axis at snapshot `s` of the given genes (in that
    /// order), one value per column: the row itself, or on a sheet the mean
    /// over the [`Self::midline_rows`]. The snapshot is read once.
    ///
    /// # Errors
    /// [`ReadBackError`], see [`Self::state`].
    pub fn axis_profiles(
        &self,
        s: usize,
        genes: impl IntoIterator<Item = usize>,
    ) -> Result<Vec<Vec<f64>>, ReadBackError> {
        let state = self.state(s)?;
        Ok(self.profiles_of(&state, genes))
    }

    /// [`Self::axis_profiles`] of a state of this recording's shape.
    pub fn profiles_of(&self, state: &Array2<f64>, genes: impl IntoIterator<Item = usize>) -> Vec<Vec<f64>> {
        let nx = self.grid.nx;
        let rows = self.midline_rows();
        let n = rows.len() as f64;
        genes
            .into_iter()
            .map(|g| {
                let row = state.row(g);
                (0..nx).map(|ix| rows.clone().map(|iy| row[iy * nx + ix]).sum::<f64>() / n).collect()
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::Edges;

    /// A streamed snapshot that cannot be read back is an error that says
    /// which snapshot and what to do, not a panic; readouts pass it on, and
    /// the last snapshot (kept in memory) still reads.
    #[test]
    fn unreadable_snapshots_are_errors() {
        let grid = Grid { nx: 4, ny: 1, spacing_um: 1.0, edges: Edges::Sealed };
        let mut rec = Recording::with_states(grid, vec!["g".into()], vec![[0, 0, 0]], vec![], vec![], vec![0.0]);
        let path = std::env::temp_dir().join(format!("anlage-unreadable-{}", std::process::id()));
        // Opened for writing only, so every read back fails.
        let file = File::create(&path).unwrap();
        std::fs::remove_file(&path).unwrap();
        rec.store =
            Store::Disk(Spill { file: Mutex::new(file), shape: (1, 4), count: 0, last: None, bytes: Vec::new() });
        for (t, v) in [(0.0, 0.0), (1.0, 1.0), (2.0, 2.0)] {
            rec.push(t, &Array2::from_shape_vec((1, 4), vec![v, v, 3.0 * v, 0.0]).unwrap()).unwrap();
        }
        let e = rec.state(1).unwrap_err();
        assert_eq!(e.snapshot, 1);
        let message = e.to_string();
        assert!(message.contains("snapshot 1") && message.contains("TMPDIR"), "{message}");
        assert!(rec.max_levels(0..3).is_err());
        assert!(crate::readout::find_boundaries(&rec).is_err());
        assert_eq!(rec.state(2).unwrap()[[0, 2]], 6.0);
        assert_eq!(crate::readout::final_boundaries(&rec).len(), 2, "a rise to the peak and a fall after it");
    }
}
