//! A finished run's folder, read back: the recording from `states.npy` and
//! `summary.json`, so pictures can be redrawn without simulating again.

use std::fs::File;
use std::path::{Path, PathBuf};

use ndarray::{Array2, ArrayD, Axis, IxDyn};
use ndarray_npy::ReadNpyExt;

use super::{MODEL_COPY, STATES, SUMMARY, Summary};
use crate::integrate::Recording;
use crate::model::{Edges, Grid};

/// A run folder that cannot be read back.
#[derive(Debug, thiserror::Error)]
pub enum RunFolderError {
    /// A file is missing or unreadable.
    #[error("cannot read {}; is this a folder written by `anlage run`?", path.display())]
    Read {
        /// File.
        path: PathBuf,
        /// Cause.
        source: std::io::Error,
    },
    /// The folder's output set is not complete (no manifest, or files missing or changed).
    #[error("{}: the run's outputs are not complete: {why}; run the model again to rewrite the folder", dir.display())]
    Incomplete {
        /// The folder.
        dir: PathBuf,
        /// What is missing or changed.
        why: String,
    },
    /// The folder holds a growing row's run, which has no `states.npy`.
    #[error(
        "{}: this folder holds a growing row's run, whose snapshots have different grids; this verb reads runs of \
         fixed rows and sheets. The growing row's tables (growth_*.csv, boundaries.csv) and pictures are in the folder",
        dir.display()
    )]
    Growing {
        /// The folder.
        dir: PathBuf,
    },
    /// A file is there but not as `anlage run` writes it.
    #[error("{}: {problem}; run the model again to rewrite the folder", path.display())]
    Malformed {
        /// File.
        path: PathBuf,
        /// What is wrong.
        problem: String,
    },
}

/// A run read back from its folder.
#[derive(Debug)]
pub struct SavedRun {
    /// What `summary.json` says.
    pub summary: Summary,
    /// The recording.
    pub recording: Recording,
}

/// Reads `summary.json` and `states.npy` from `dir`, after checking its
/// manifest: every file there with its size, and these two and `model.toml`
/// with their SHA-256.
///
/// # Errors
/// [`RunFolderError`] naming the file that is missing, changed or malformed.
pub fn load(dir: &Path) -> Result<SavedRun, RunFolderError> {
    let summary_path = dir.join(SUMMARY);
    if !dir.is_dir() {
        return Err(RunFolderError::Read {
            path: dir.to_path_buf(),
            source: std::io::Error::new(std::io::ErrorKind::NotFound, "no such folder"),
        });
    }
    if dir.join(crate::export::GROWTH_TABLES[1]).is_file() && !dir.join(STATES).exists() {
        return Err(RunFolderError::Growing { dir: dir.to_path_buf() });
    }
    if let Some(why) = super::incomplete(dir, &[SUMMARY, STATES, MODEL_COPY]) {
        return Err(RunFolderError::Incomplete { dir: dir.to_path_buf(), why });
    }
    let text = crate::files::read_text(&summary_path, crate::files::MAX_TABLE_BYTES)
        .map_err(|source| RunFolderError::Read { path: summary_path.clone(), source })?;
    let bad = |path: &Path, problem: String| RunFolderError::Malformed { path: path.to_path_buf(), problem };
    let s: Summary = serde_json::from_str(&text).map_err(|e| bad(&summary_path, e.to_string()))?;
    let edges = match s.grid.edges.as_str() {
        "sealed" => Edges::Sealed,
        "periodic" => Edges::Periodic,
        other => return Err(bad(&summary_path, format!("unknown edges `{other}`"))),
    };
    if s.grid.nx == 0 || s.grid.ny == 0 || !(s.grid.spacing_um > 0.0) {
        return Err(bad(&summary_path, "grid has no nuclei or no spacing".into()));
    }
    let grid = Grid { nx: s.grid.nx, ny: s.grid.ny, spacing_um: s.grid.spacing_um, edges };
    let colors = s
        .colors
        .iter()
        .map(|c| crate::model::parse_color(c).ok_or_else(|| bad(&summary_path, format!("colour `{c}` is not #rrggbb"))))
        .collect::<Result<Vec<_>, _>>()?;
    if colors.len() != s.genes.len() || s.expression_floor.len() != s.genes.len() {
        return Err(bad(&summary_path, "one colour and one expression floor per gene expected".into()));
    }
    let levels = if s.boundary_levels.is_empty() {
        vec![crate::model::Level::HALF_MAX; s.genes.len()]
    } else {
        s.boundary_levels.clone()
    };
    if levels.len() != s.genes.len() {
        return Err(bad(&summary_path, "one boundary level per gene expected".into()));
    }
    let npy_path = dir.join(STATES);
    let file = File::open(&npy_path).map_err(|source| RunFolderError::Read { path: npy_path.clone(), source })?;
    let all = ArrayD::<f64>::read_npy(file).map_err(|e| bad(&npy_path, e.to_string()))?;
    let (snaps, genes, nuclei) = (s.snapshot_times_min.len(), s.genes.len(), grid.len());
    let want: Vec<usize> =
        if grid.is_sheet() { vec![snaps, genes, grid.ny, grid.nx] } else { vec![snaps, genes, nuclei] };
    if all.shape() != want.as_slice() {
        return Err(bad(&npy_path, format!("shape {:?} does not match summary.json ({want:?})", all.shape())));
    }
    let all = all.into_shape_with_order(IxDyn(&[snaps, genes, nuclei])).map_err(|e| bad(&npy_path, e.to_string()))?;
    let states: Vec<Array2<f64>> = all
        .axis_iter(Axis(0))
        .map(|a| a.into_dimensionality::<ndarray::Ix2>().map(|v| v.to_owned()))
        .collect::<Result<_, _>>()
        .map_err(|e| bad(&npy_path, e.to_string()))?;
    let recording = Recording::with_states(
        grid,
        s.genes.clone(),
        colors,
        s.snapshot_times_min.clone(),
        states,
        s.expression_floor.clone(),
    )
    .with_levels(levels);
    Ok(SavedRun { summary: s, recording })
}
