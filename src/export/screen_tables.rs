//! Tables of mutant screens and sensitivities (model predictions).

use std::path::Path;

use super::{ExportError, opt, write_atomic};
use crate::screen::{Screen, SensitivityRow};

/// `shifts.csv`: `mutant, gene, direction, wild_type_um, wild_type_pct,
/// mutant_um, mutant_pct, shift_um, shift_pct, status, reason` (status: see
/// [`crate::screen::outcome`]; reason: why a mutant failed).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_shifts(s: &Screen, path: &Path) -> Result<(), ExportError> {
    let rows: Vec<crate::screen::Shift> = s.shifts.iter().flatten().cloned().collect();
    super::write_rows(&rows, path)
}

/// `sensitivity.csv`: `parameter, value, gene, direction, position_pct,
/// d_um_per_ln, d_pct_per_ln, step_ln`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_sensitivity(rows: &[SensitivityRow], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "parameter,value,gene,direction,position_pct,d_um_per_ln,d_pct_per_ln,step_ln")?;
        for r in rows {
            writeln!(
                w,
                "{},{},{},{},{},{},{},{}",
                r.parameter,
                r.value,
                r.gene,
                r.direction,
                r.position_pct,
                opt(r.d_um_per_ln),
                opt(r.d_pct_per_ln),
                r.step_ln
            )?;
        }
        Ok(())
    })
}
