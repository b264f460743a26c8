//! Tables of `anlage sweep`: one row per point (`sweep.csv`) and one per
//! final boundary of every point (`sweep_boundaries.csv`), the swept
//! parameters as columns named as written. Numbers in Rust's shortest
//! round-trip form ([`super::shortest`]).

use std::io::Write;
use std::path::Path;

use serde::Serialize;

use super::{Cells, ExportError, TableWriter, header_of, shortest, shortest_opt, write_atomic};
use crate::sweep::Sweep;

#[derive(Serialize, Default)]
struct PointCells<'a> {
    class: &'a str,
    boundaries: usize,
    failure: &'a str,
}

#[derive(Serialize, Default)]
struct WavelengthCells<'a> {
    pattern_gene: &'a str,
    #[serde(serialize_with = "shortest_opt")]
    wavelength_um: Option<f64>,
}

#[derive(Serialize, Default)]
struct BoundaryCells<'a> {
    gene: &'a str,
    direction: &'a str,
    #[serde(serialize_with = "shortest")]
    position_um: f64,
    #[serde(serialize_with = "shortest")]
    position_pct: f64,
}

/// `sweep.csv` into `w`: `point`, one column per swept parameter, `class`,
/// `boundaries` (how many), `failure` (why a run failed, else empty), and
/// `domains_<gene>` per gene (domains at the end); on a sheet also
/// `pattern_gene` and `wavelength_um`, the gene that gave a repeating class
/// and its dominant wavelength (empty otherwise).
///
/// # Errors
/// The writer's.
pub fn write_sweep_to(s: &Sweep, w: &mut dyn Write) -> std::io::Result<()> {
    let mut header: Vec<String> = vec!["point".into()];
    header.extend(s.axes.iter().map(|a| a.name.clone()));
    header.extend(header_of::<PointCells>()?);
    header.extend(s.genes.iter().map(|g| format!("domains_{g}")));
    if s.sheet {
        header.extend(header_of::<WavelengthCells>()?);
    }
    let mut out = TableWriter::new(w, &header)?;
    for (k, p) in s.points.iter().enumerate() {
        let counts: Vec<f64> =
            s.genes.iter().map(|g| p.domains.iter().filter(|d| &d.gene == g).count() as f64).collect();
        let cells = PointCells {
            class: p.class.name(),
            boundaries: p.boundaries.len(),
            failure: p.failure.as_deref().unwrap_or(""),
        };
        if s.sheet {
            let wavelength = WavelengthCells {
                pattern_gene: p.wavelength.as_ref().map_or("", |w| w.gene.as_str()),
                wavelength_um: p.wavelength.as_ref().map(|w| w.wavelength_um),
            };
            out.row((k, Cells(&p.values), cells, Cells(&counts), wavelength))?;
        } else {
            out.row((k, Cells(&p.values), cells, Cells(&counts)))?;
        }
    }
    out.finish()
}

/// `sweep_boundaries.csv` into `w`: `point`, one column per swept
/// parameter, `gene, direction, position_um, position_pct`.
///
/// # Errors
/// The writer's.
pub fn write_sweep_boundaries_to(s: &Sweep, w: &mut dyn Write) -> std::io::Result<()> {
    let mut header: Vec<String> = vec!["point".into()];
    header.extend(s.axes.iter().map(|a| a.name.clone()));
    header.extend(header_of::<BoundaryCells>()?);
    let mut out = TableWriter::new(w, &header)?;
    for (k, p) in s.points.iter().enumerate() {
        for b in &p.boundaries {
            let cells = BoundaryCells {
                gene: &b.gene,
                direction: b.direction,
                position_um: b.position_um,
                position_pct: b.position_pct,
            };
            out.row((k, Cells(&p.values), cells))?;
        }
    }
    out.finish()
}

/// Both tables of a sweep into `dir`.
///
/// # Errors
/// [`ExportError`] if a file cannot be written.
pub fn write_sweep(s: &Sweep, dir: &Path) -> Result<(), ExportError> {
    write_atomic(&dir.join("sweep.csv"), |w| write_sweep_to(s, w))?;
    write_atomic(&dir.join("sweep_boundaries.csv"), |w| write_sweep_boundaries_to(s, w))
}
