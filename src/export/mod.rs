//! Writers: tables (CSV), the recorded history (NPY) and the run summary (JSON).
//!
//! Every file is written under a temporary name in the same folder and
//! renamed into place when complete, so a reader never sees half a file.

mod bifurcation_tables;
mod compare_tables;
mod fit_tables;
mod growth_tables;
mod phase_tables;
mod replicate_tables;
mod screen_tables;
mod sheet_tables;
mod sweep_tables;
mod table_writer;
mod tables;

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

pub use bifurcation_tables::{write_branches_to, write_fold_curves_to, write_special_points_to};
pub use compare_tables::{write_comparison, write_comparison_to, write_measured, write_measured_profiles};
pub use fit_tables::{
    CombinationRow, CorrelationRow, FitRow, ProfilePointRow, ResidualRow, StartRow, TraceRow, write_combinations,
    write_correlation, write_fit, write_profiles as write_fit_profiles, write_residuals, write_starts, write_trace,
};
pub use growth_tables::{GROWTH_TABLES, write_growth_tables};
pub use phase_tables::{
    BasinRow, CommitmentRow, FixedPointRow, FrozenNucleus, LandscapeRow, write_attractors, write_basins,
    write_commitment, write_landscape,
};
pub use replicate_tables::{
    embryo_header, embryo_rows, write_attribution, write_decoding, write_precision, write_shifts_over_embryos,
    write_step_check, write_widths,
};
pub use screen_tables::{write_sensitivity, write_shifts, write_shifts_to};
pub use sheet_tables::{write_contours, write_sheet_domains, write_sheet_patterns};
pub use sweep_tables::{write_sweep, write_sweep_boundaries_to, write_sweep_to};
pub use table_writer::{Cells, TableWriter, header_of, shortest, shortest_opt, write_rows, write_rows_to};
pub use tables::{
    AxisPoint, BoundaryRow, DomainRow, GeneLevel, SheetPoint, write_boundaries, write_domains, write_profiles,
    write_profiles_long, write_sheet,
};

/// An output file that could not be written.
#[derive(Debug, thiserror::Error)]
pub enum ExportError {
    /// File-system trouble.
    #[error("cannot write {}", path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// Cause.
        source: std::io::Error,
    },
    /// The content could not be produced.
    #[error("cannot write {}: {message}", path.display())]
    Content {
        /// The file.
        path: PathBuf,
        /// What went wrong.
        message: String,
    },
    /// A streamed snapshot could not be read back.
    #[error(transparent)]
    ReadBack(#[from] crate::integrate::ReadBackError),
}

/// Writes `path` atomically: `body` writes into a temporary file beside it,
/// which is flushed and renamed over `path`; on failure it is removed. A
/// killed process leaves either the old file or the new one, never half of
/// one. The data reach the disk when the set is complete
/// ([`crate::run_folder::write_manifest`] syncs once), not file by file.
///
/// # Errors
/// [`ExportError::Io`] for any file-system failure.
pub fn write_atomic(path: &Path, body: impl FnOnce(&mut dyn Write) -> std::io::Result<()>) -> Result<(), ExportError> {
    write_renamed(path, body, false)
}

/// [`write_atomic`], and the file is synced to disk before it is renamed
/// (for checkpoints, which must survive a crash of the machine).
///
/// # Errors
/// [`ExportError::Io`] for any file-system failure.
pub fn write_atomic_durable(
    path: &Path,
    body: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
) -> Result<(), ExportError> {
    write_renamed(path, body, true)
}

fn write_renamed(
    path: &Path,
    body: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
    durable: bool,
) -> Result<(), ExportError> {
    let io = |source| ExportError::Io { path: path.to_path_buf(), source };
    let name = path.file_name().map_or_else(|| "out".into(), |n| n.to_string_lossy().into_owned());
    let tmp = path.with_file_name(temp_name(&name, std::process::id()));
    let result = (|| {
        let file = File::create(&tmp)?;
        let mut w = BufWriter::new(file);
        body(&mut w)?;
        let file = w.into_inner().map_err(|e| e.into_error())?;
        if durable {
            file.sync_all()?;
        }
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result.map_err(io)
}

/// Removes temporary files [`write_atomic`] left in `dir` when a process
/// was killed mid-write (`.NAME.tmpPID` of a process no longer running;
/// on systems without `/proc`, none is removed). Errors are ignored: a
/// leftover is untidy, not wrong.
pub fn remove_stale_temps(dir: &Path) {
    if !Path::new("/proc/self").exists() {
        return;
    }
    let Ok(entries) = std::fs::read_dir(dir) else { return };
    for entry in entries.flatten() {
        let Some(pid) = temp_owner(&entry.file_name().to_string_lossy()) else { continue };
        if pid != std::process::id() && !Path::new(&format!("/proc/{pid}")).exists() {
            let _ = std::fs::remove_file(entry.path());
        }
    }
}

/// The temporary name [`write_atomic`] gives file `name` in process `pid`.
fn temp_name(name: &str, pid: u32) -> String {
    format!(".{name}.tmp{pid}")
}

/// The process whose temporary this is, if `file` is a [`temp_name`].
fn temp_owner(file: &str) -> Option<u32> {
    file.strip_prefix('.')?.rsplit_once(".tmp")?.1.parse().ok()
}

/// Writes the whole recording as a NumPy array of f64: `[snapshot, gene, nucleus]`
/// for a row, `[snapshot, gene, y, x]` for a sheet.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_states_npy(rec: &crate::integrate::Recording, path: &Path) -> Result<(), ExportError> {
    let (g, n) = (rec.genes.len(), rec.grid.len());
    let shape = if rec.grid.is_sheet() {
        format!("({}, {g}, {}, {})", rec.len(), rec.grid.ny, rec.grid.nx)
    } else {
        format!("({}, {g}, {n})", rec.len())
    };
    // Streamed snapshot by snapshot (no copy of the whole recording): NPY
    // format 1.0 (NumPy Enhancement Proposal 1): magic, version, a
    // little-endian u16 header length, then a Python dict literal padded with
    // spaces and a newline so that the data start on a multiple of 64 bytes.
    let mut header = format!("{{'descr': '<f8', 'fortran_order': False, 'shape': {shape}, }}");
    let unpadded = 10 + header.len() + 1;
    header.push_str(&" ".repeat(unpadded.next_multiple_of(64) - unpadded));
    header.push('\n');
    write_atomic(path, |w| {
        w.write_all(b"\x93NUMPY\x01\x00")?;
        w.write_all(&u16::try_from(header.len()).map_err(std::io::Error::other)?.to_le_bytes())?;
        w.write_all(header.as_bytes())?;
        for state in rec.states() {
            let state = state.map_err(std::io::Error::other)?;
            for v in state.iter() {
                w.write_all(&v.to_le_bytes())?;
            }
        }
        Ok(())
    })
}

/// Writes a serialisable value as pretty JSON with a final newline.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_json<T: serde::Serialize>(value: &T, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        serde_json::to_writer_pretty(&mut *w, value).map_err(std::io::Error::other)?;
        w.write_all(b"\n")
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Only a dead process's `.NAME.tmpPID` goes; this process's own
    /// temporaries and anything not of that form stay.
    #[test]
    fn stale_temporaries_of_dead_processes_are_removed() {
        let dir = std::env::temp_dir().join(format!("anlage-stale-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let own = format!(".summary.json.tmp{}", std::process::id());
        let names = [".checkpoint.bin.tmp4294967295", own.as_str(), "table.tmp7", ".hidden", ".a.tmpx"];
        for n in names {
            std::fs::write(dir.join(n), b"x").unwrap();
        }
        remove_stale_temps(&dir);
        let dead_gone = !dir.join(names[0]).exists() || !Path::new("/proc/self").exists();
        assert!(dead_gone, "a dead process's temporary stays");
        for n in &names[1..] {
            assert!(dir.join(n).exists(), "{n} was removed");
        }
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
