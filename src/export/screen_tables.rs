//! Tables of mutant screens and sensitivities (model predictions).

use std::io::Write;
use std::path::Path;

use super::{ExportError, TableWriter, write_atomic};
use crate::screen::{Screen, SensitivityRow, Shift};

/// `shifts.csv`: one [`Shift`] per boundary of every mutant.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_shifts(s: &Screen, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| write_shifts_to(s, w))
}

/// The table of [`write_shifts`], into `w` (e.g. standard output).
///
/// # Errors
/// The writer's.
pub fn write_shifts_to(s: &Screen, w: impl Write) -> std::io::Result<()> {
    let mut table = TableWriter::of::<Shift>(w)?;
    for shift in s.shifts.iter().flatten() {
        table.row(shift)?;
    }
    table.finish()
}

/// `sensitivity.csv`: one [`SensitivityRow`] per boundary and parameter.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_sensitivity(rows: &[SensitivityRow], path: &Path) -> Result<(), ExportError> {
    super::write_rows(rows, path)
}
