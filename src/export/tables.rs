//! CSV tables. Numbers are written in Rust's shortest round-trip form, so the
//! same run gives the same bytes.

use std::path::Path;

use super::{ExportError, write_atomic};
use crate::integrate::Recording;
use crate::readout::{Boundary, Domain};

/// `profiles.csv`: `time_min, nucleus, x_um, x_pct, <gene>...` for a row; for
/// a sheet the same with `column` for `nucleus`, each value the mean over the
/// central strip of rows ([`Recording::midline_rows`]).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_profiles(rec: &Recording, path: &Path) -> Result<(), ExportError> {
    let grid = rec.grid;
    write_atomic(path, |w| {
        let index = if grid.is_sheet() { "column" } else { "nucleus" };
        write!(w, "time_min,{index},x_um,x_pct")?;
        for g in &rec.genes {
            write!(w, ",{g}")?;
        }
        writeln!(w)?;
        for (s, t) in rec.times.iter().enumerate() {
            let profiles = rec.axis_profiles(s, 0..rec.genes.len()).map_err(std::io::Error::other)?;
            for ix in 0..grid.nx {
                let x = grid.x_um(ix);
                write!(w, "{t},{ix},{x},{}", 100.0 * x / grid.length_um())?;
                for p in &profiles {
                    write!(w, ",{}", p[ix])?;
                }
                writeln!(w)?;
            }
        }
        Ok(())
    })
}

/// `profiles_long.csv`: the same values as [`write_profiles`] in tidy (long)
/// form, one row per time, position and gene: `time_min, nucleus, x_um,
/// x_pct, gene, level` (`column` for `nucleus` on a sheet), for programs that
/// plot from long tables without reshaping.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_profiles_long(rec: &Recording, path: &Path) -> Result<(), ExportError> {
    let grid = rec.grid;
    write_atomic(path, |w| {
        let index = if grid.is_sheet() { "column" } else { "nucleus" };
        writeln!(w, "time_min,{index},x_um,x_pct,gene,level")?;
        for (s, t) in rec.times.iter().enumerate() {
            let profiles = rec.axis_profiles(s, 0..rec.genes.len()).map_err(std::io::Error::other)?;
            for ix in 0..grid.nx {
                let x = grid.x_um(ix);
                let pct = 100.0 * x / grid.length_um();
                for (g, p) in rec.genes.iter().zip(&profiles) {
                    writeln!(w, "{t},{ix},{x},{pct},{g},{}", p[ix])?;
                }
            }
        }
        Ok(())
    })
}

/// `final_sheet.csv` (sheets): `ix, iy, x_um, y_um, <gene>...` at the last snapshot.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_sheet(rec: &Recording, path: &Path) -> Result<(), ExportError> {
    let grid = rec.grid;
    let state = rec.final_state();
    write_atomic(path, |w| {
        write!(w, "ix,iy,x_um,y_um")?;
        for g in &rec.genes {
            write!(w, ",{g}")?;
        }
        writeln!(w)?;
        for iy in 0..grid.ny {
            for ix in 0..grid.nx {
                write!(w, "{ix},{iy},{},{}", grid.x_um(ix), grid.y_um(iy))?;
                for g in 0..rec.genes.len() {
                    write!(w, ",{}", state[[g, iy * grid.nx + ix]])?;
                }
                writeln!(w)?;
            }
        }
        Ok(())
    })
}

/// `boundaries.csv`: `time_min, gene, direction, position_um, position_pct, steepness_per_um, width_um`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_boundaries(rows: &[Boundary], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "time_min,gene,direction,position_um,position_pct,steepness_per_um,width_um")?;
        for b in rows {
            writeln!(
                w,
                "{},{},{},{},{},{},{}",
                b.time_min, b.gene, b.direction, b.position_um, b.position_pct, b.steepness_per_um, b.width_um
            )?;
        }
        Ok(())
    })
}

/// `domains.csv`: `time_min, gene, start_um, start_pct, end_um, end_pct, width_um, width_pct`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_domains(rows: &[Domain], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "time_min,gene,start_um,start_pct,end_um,end_pct,width_um,width_pct")?;
        for d in rows {
            writeln!(
                w,
                "{},{},{},{},{},{},{},{}",
                d.time_min, d.gene, d.start_um, d.start_pct, d.end_um, d.end_pct, d.width_um, d.width_pct
            )?;
        }
        Ok(())
    })
}
