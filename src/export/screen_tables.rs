//! Tables of mutant screens and sensitivities (model predictions).

use std::path::Path;

use super::ExportError;
use crate::screen::{Screen, SensitivityRow};

/// `shifts.csv`: `mutant, gene, direction, wild_type_um, wild_type_pct,
/// mutant_um, mutant_pct, shift_um, shift_pct, status, reason` (status: see
/// [`crate::screen::outcome`]; reason: why a mutant failed).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_shifts(s: &Screen, path: &Path) -> Result<(), ExportError> {
    let rows: Vec<crate::readout::Shift> = s.shifts.iter().flatten().cloned().collect();
    super::write_rows(&rows, path)
}

/// `sensitivity.csv`: `parameter, value, gene, direction, position_pct, kind,
/// d_um_per_ln, d_pct_per_ln, step_ln, jumps_at` (kind: smooth, pinned,
/// unresolved or lost; see [`crate::screen::sensitivity`]).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_sensitivity(rows: &[SensitivityRow], path: &Path) -> Result<(), ExportError> {
    super::write_rows(rows, path)
}
