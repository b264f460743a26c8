//! Measured-boundary tables and comparisons.

use std::path::Path;

use super::{ExportError, opt, write_atomic};
use crate::compare::{Comparison, MeasuredRow};

/// A measured-boundary table: `sample, time, gene, direction, position_pct, sd_pct, n`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_measured(rows: &[MeasuredRow], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "sample,time,gene,direction,position_pct,sd_pct,n")?;
        for r in rows {
            writeln!(
                w,
                "{},{},{},{},{},{},{}",
                r.sample,
                opt(r.time_min),
                r.gene,
                r.direction,
                r.position_pct,
                opt(r.sd_pct),
                opt(r.n)
            )?;
        }
        Ok(())
    })
}

/// `comparison.csv`: `sample, time_min, gene, direction, measured_pct, sd_pct,
/// simulated_pct, difference_pct, z, status`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_comparison(c: &Comparison, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "sample,time_min,gene,direction,measured_pct,sd_pct,simulated_pct,difference_pct,z,status")?;
        for r in &c.rows {
            writeln!(
                w,
                "{},{},{},{},{},{},{},{},{},{}",
                r.sample,
                r.time_min,
                r.gene,
                r.direction,
                opt(r.measured_pct),
                opt(r.sd_pct),
                opt(r.simulated_pct),
                opt(r.difference_pct),
                opt(r.z),
                r.status
            )?;
        }
        Ok(())
    })
}
