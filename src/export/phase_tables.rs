//! Tables of the phase-space analysis. Every row says what was frozen
//! (`frozen_inputs`) and when (`frozen_at_min`): these describe the isolated
//! nucleus, not the coupled tissue.

use std::path::Path;

use super::{ExportError, write_atomic};
use crate::integrate::Recording;
use crate::phase::{BasinAnalysis, Fate, Landscape};

fn x_cols(rec: &Recording, i: usize) -> (f64, f64) {
    let ix = i % rec.grid.nx;
    let x = rec.grid.x_um(ix);
    (x, 100.0 * x / rec.grid.length_um())
}

/// `attractors.csv`: every fixed point of every nucleus at every snapshot:
/// `frozen_at_min, frozen_inputs, nucleus, x_um, x_pct, point, type, label, <gene>..., eig1_re, eig1_im, ...`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_attractors(rec: &Recording, a: &BasinAnalysis, path: &Path) -> Result<(), ExportError> {
    let g = rec.genes.len();
    write_atomic(path, |w| {
        write!(w, "frozen_at_min,frozen_inputs,nucleus,x_um,x_pct,point,type,label")?;
        for name in &rec.genes {
            write!(w, ",{name}")?;
        }
        for k in 1..=g {
            write!(w, ",eig{k}_re,eig{k}_im")?;
        }
        writeln!(w)?;
        for (s, row) in a.basins.iter().enumerate() {
            for (i, b) in row.iter().enumerate() {
                let (x, pct) = x_cols(rec, i);
                for (k, p) in b.points.iter().enumerate() {
                    let label = if p.kind.is_stable() {
                        crate::phase::basins::point_label(p, &rec.genes, &a.on_level)
                    } else {
                        String::new()
                    };
                    write!(w, "{},{},{i},{x},{pct},{k},{},{label}", a.times[s], a.frozen, p.kind.name())?;
                    for v in &p.x {
                        write!(w, ",{v}")?;
                    }
                    for e in &p.eigenvalues {
                        write!(w, ",{},{}", e.re, e.im)?;
                    }
                    writeln!(w)?;
                }
            }
        }
        Ok(())
    })
}

/// `basins.csv`: `frozen_at_min, frozen_inputs, nucleus, x_um, x_pct, attractor, fate, distance, period_min`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_basins(rec: &Recording, a: &BasinAnalysis, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "frozen_at_min,frozen_inputs,nucleus,x_um,x_pct,attractor,fate,distance,period_min")?;
        for (s, row) in a.basins.iter().enumerate() {
            for (i, b) in row.iter().enumerate() {
                let (x, pct) = x_cols(rec, i);
                let (fate, period) = match b.fate {
                    Fate::Point(_) => ("point", String::new()),
                    Fate::Cycle { period_min, .. } => ("cycle", period_min.to_string()),
                    Fate::Unresolved => ("unresolved", String::new()),
                };
                let d = if b.distance.is_finite() { b.distance.to_string() } else { String::new() };
                writeln!(w, "{},{},{i},{x},{pct},{},{fate},{d},{period}", a.times[s], a.frozen, b.label)?;
            }
        }
        Ok(())
    })
}

/// `commitment.csv`: `nucleus, x_um, x_pct, attractor, commitment_min, frozen_inputs`:
/// the time after which the nucleus's attractor no longer changes.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_commitment(rec: &Recording, a: &BasinAnalysis, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        writeln!(w, "nucleus,x_um,x_pct,attractor,commitment_min,frozen_inputs")?;
        for c in a.commitment() {
            let (x, pct) = x_cols(rec, c.nucleus);
            writeln!(w, "{},{x},{pct},{},{},{}", c.nucleus, c.label, c.time_min, a.frozen)?;
        }
        Ok(())
    })
}

/// `landscape.csv`: `frozen_at_min, branch, x_pct, type, <gene>...`, one row per
/// continuation point, and folds with type `fold`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_landscape(genes: &[String], l: &Landscape, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        write!(w, "frozen_at_min,branch,x_pct,type")?;
        for g in genes {
            write!(w, ",{g}")?;
        }
        writeln!(w)?;
        for (k, b) in l.branches.iter().enumerate() {
            let rows =
                b.points.iter().map(|p| (p.s, p.kind.name(), &p.x)).chain(b.folds.iter().map(|f| (f.s, "fold", &f.x)));
            for (s, kind, x) in rows {
                write!(w, "{},{k},{s},{kind}", l.t_min)?;
                for v in x {
                    write!(w, ",{v}")?;
                }
                writeln!(w)?;
            }
        }
        Ok(())
    })
}
