//! Measured-boundary tables, measured profiles and comparisons, written by
//! the csv crate from typed rows (headers from the field names, quoting
//! where a cell needs it).

use std::path::Path;

use serde::Serialize;

use super::{ExportError, write_atomic};
use crate::compare::{Comparison, MeasuredRow};
use crate::measure::batch::ProfileRow;

/// Writes `rows` as CSV with a header made from the row type's field names.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_rows<T: Serialize>(rows: &[T], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        let mut out = csv::Writer::from_writer(w);
        for r in rows {
            out.serialize(r).map_err(std::io::Error::other)?;
        }
        out.flush()
    })
}

/// A measured-boundary table (columns: see [`crate::compare::table`]).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_measured(rows: &[MeasuredRow], path: &Path) -> Result<(), ExportError> {
    write_rows(rows, path)
}

/// Measured profiles, one row per sample, embryo, gene and position:
/// `sample, embryo, gene, position_pct, level, signal`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_measured_profiles(rows: &[ProfileRow], path: &Path) -> Result<(), ExportError> {
    write_rows(rows, path)
}

/// `comparison.csv`: `sample, time_min, gene, direction, measured_pct, sd_pct,
/// sd_used_pct, simulated_pct, difference_pct, z, status`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_comparison(c: &Comparison, path: &Path) -> Result<(), ExportError> {
    write_rows(&c.rows, path)
}
