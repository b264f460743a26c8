//! The tables of a run. Numbers are written in Rust's shortest round-trip
//! form ([`shortest`]), so the same run gives the same bytes.

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::table_writer::{Cells, TableWriter, header_of, renamed, shortest};
use super::{ExportError, write_atomic};
use crate::integrate::Recording;
use crate::model::Grid;
use crate::readout::{Boundary, Domain};

/// The place and time of a row of `profiles.csv` (then one level per gene,
/// a.u., headed by the gene's name) and of `profiles_long.csv` (then a
/// [`GeneLevel`]). On a sheet the `nucleus` column is headed `column`: the
/// levels are means over the central strip of rows
/// ([`Recording::midline_rows`]).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct AxisPoint {
    /// Snapshot time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Nucleus (row) or column (sheet) along the axis, from 0.
    pub nucleus: usize,
    /// Position of its centre, µm from the left edge.
    #[serde(serialize_with = "shortest")]
    pub x_um: f64,
    /// The same, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub x_pct: f64,
}

impl AxisPoint {
    fn new(grid: &Grid, time_min: f64, ix: usize) -> AxisPoint {
        let x_um = grid.x_um(ix);
        AxisPoint { time_min, nucleus: ix, x_um, x_pct: 100.0 * x_um / grid.length_um() }
    }
}

/// One gene's level at an [`AxisPoint`]: the rest of a row of `profiles_long.csv`.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct GeneLevel<'a> {
    /// Gene name.
    pub gene: &'a str,
    /// Level, a.u.
    #[serde(serialize_with = "shortest")]
    pub level: f64,
}

/// A nucleus of a sheet: a row of `final_sheet.csv` before its gene columns
/// (one level per gene, a.u., at the last snapshot).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct SheetPoint {
    /// Column along the axis, from 0.
    pub ix: usize,
    /// Row across the axis, from 0.
    pub iy: usize,
    /// Position of its centre along the axis, µm.
    #[serde(serialize_with = "shortest")]
    pub x_um: f64,
    /// Position of its centre across the axis, µm.
    #[serde(serialize_with = "shortest")]
    pub y_um: f64,
}

/// A row of `boundaries.csv` (see [`Boundary`]).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct BoundaryRow<'a> {
    /// Snapshot time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Gene name.
    pub gene: &'a str,
    /// `rising` (low → high along the axis) or `falling`.
    pub direction: &'a str,
    /// Position, µm from the left edge.
    #[serde(serialize_with = "shortest")]
    pub position_um: f64,
    /// Position, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub position_pct: f64,
    /// |slope| at the crossing as a fraction of the gene's maximum, 1/µm.
    #[serde(serialize_with = "shortest")]
    pub steepness_per_um: f64,
    /// Boundary width (maximum / |slope|), µm.
    #[serde(serialize_with = "shortest")]
    pub width_um: f64,
}

impl<'a> From<&'a Boundary> for BoundaryRow<'a> {
    fn from(b: &'a Boundary) -> Self {
        BoundaryRow {
            time_min: b.time_min,
            gene: &b.gene,
            direction: b.direction,
            position_um: b.position_um,
            position_pct: b.position_pct,
            steepness_per_um: b.steepness_per_um,
            width_um: b.width_um,
        }
    }
}

/// A row of `domains.csv` (see [`Domain`]).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct DomainRow<'a> {
    /// Snapshot time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Gene name.
    pub gene: &'a str,
    /// Start, µm.
    #[serde(serialize_with = "shortest")]
    pub start_um: f64,
    /// Start, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub start_pct: f64,
    /// End, µm (less than the start when a periodic domain wraps around).
    #[serde(serialize_with = "shortest")]
    pub end_um: f64,
    /// End, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub end_pct: f64,
    /// Width, µm.
    #[serde(serialize_with = "shortest")]
    pub width_um: f64,
    /// Width, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub width_pct: f64,
}

impl<'a> From<&'a Domain> for DomainRow<'a> {
    fn from(d: &'a Domain) -> Self {
        DomainRow {
            time_min: d.time_min,
            gene: &d.gene,
            start_um: d.start_um,
            start_pct: d.start_pct,
            end_um: d.end_um,
            end_pct: d.end_pct,
            width_um: d.width_um,
            width_pct: d.width_pct,
        }
    }
}

/// The header of a table of rows `T` along the axis of `grid`.
fn axis_header<T: Serialize + Default>(grid: &Grid) -> std::io::Result<Vec<String>> {
    let names = header_of::<T>()?;
    Ok(if grid.is_sheet() { renamed(names, "nucleus", "column") } else { names })
}

/// `profiles.csv`: an [`AxisPoint`] and each gene's level, a.u., at every
/// snapshot and position.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_profiles(rec: &Recording, path: &Path) -> Result<(), ExportError> {
    let grid = rec.grid;
    write_atomic(path, |w| {
        let header = [axis_header::<AxisPoint>(&grid)?, rec.genes.clone()].concat();
        let mut table = TableWriter::new(w, &header)?;
        let mut levels = vec![0.0; rec.genes.len()];
        for (s, &t) in rec.times.iter().enumerate() {
            let profiles = rec.axis_profiles(s, 0..rec.genes.len()).map_err(std::io::Error::other)?;
            for ix in 0..grid.nx {
                for (level, p) in levels.iter_mut().zip(&profiles) {
                    *level = p[ix];
                }
                table.row((AxisPoint::new(&grid, t, ix), Cells(&levels)))?;
            }
        }
        table.finish()
    })
}

/// `profiles_long.csv`: the same values as [`write_profiles`] in tidy (long)
/// form, one row per time, position and gene (an [`AxisPoint`] and a
/// [`GeneLevel`]), for programs that plot from long tables without reshaping.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_profiles_long(rec: &Recording, path: &Path) -> Result<(), ExportError> {
    let grid = rec.grid;
    write_atomic(path, |w| {
        let mut table = TableWriter::new(w, &axis_header::<(AxisPoint, GeneLevel)>(&grid)?)?;
        for (s, &t) in rec.times.iter().enumerate() {
            let profiles = rec.axis_profiles(s, 0..rec.genes.len()).map_err(std::io::Error::other)?;
            for ix in 0..grid.nx {
                let at = AxisPoint::new(&grid, t, ix);
                for (gene, p) in rec.genes.iter().zip(&profiles) {
                    table.row((at, GeneLevel { gene, level: p[ix] }))?;
                }
            }
        }
        table.finish()
    })
}

/// `final_sheet.csv` (sheets): a [`SheetPoint`] and each gene's level, a.u.,
/// at the last snapshot, for every nucleus.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_sheet(rec: &Recording, path: &Path) -> Result<(), ExportError> {
    let grid = rec.grid;
    let state = rec.final_state();
    write_atomic(path, |w| {
        let header = [header_of::<SheetPoint>()?, rec.genes.clone()].concat();
        let mut table = TableWriter::new(w, &header)?;
        let mut levels = vec![0.0; rec.genes.len()];
        for iy in 0..grid.ny {
            for ix in 0..grid.nx {
                for (g, level) in levels.iter_mut().enumerate() {
                    *level = state[[g, iy * grid.nx + ix]];
                }
                let at = SheetPoint { ix, iy, x_um: grid.x_um(ix), y_um: grid.y_um(iy) };
                table.row((at, Cells(&levels)))?;
            }
        }
        table.finish()
    })
}

/// `boundaries.csv`: one [`BoundaryRow`] per boundary.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_boundaries(rows: &[Boundary], path: &Path) -> Result<(), ExportError> {
    let rows: Vec<BoundaryRow> = rows.iter().map(BoundaryRow::from).collect();
    super::write_rows(&rows, path)
}

/// `domains.csv`: one [`DomainRow`] per domain.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_domains(rows: &[Domain], path: &Path) -> Result<(), ExportError> {
    let rows: Vec<DomainRow> = rows.iter().map(DomainRow::from).collect();
    super::write_rows(&rows, path)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every row type of a run's tables reads back as written, a gene name
    /// with a comma and a quote included, and numbers keep Rust's `{}` form.
    #[test]
    fn run_rows_round_trip_through_a_csv_reader() {
        let gene = "am,b\"er";
        let boundary = BoundaryRow {
            time_min: 5.0,
            gene,
            direction: "rising",
            position_um: 1e-7,
            position_pct: 12.5,
            steepness_per_um: 0.1 + 0.2,
            width_um: 3.0,
        };
        let domain = DomainRow { time_min: 4.0, gene, start_pct: 50.0, end_um: -1.5, ..Default::default() };
        let long = (AxisPoint { time_min: 2.0, nucleus: 3, x_um: 17.5, x_pct: 3.5 }, GeneLevel { gene, level: 0.25 });
        let mut out = Vec::new();
        super::super::write_rows_to(&[boundary], &mut out).unwrap();
        let text = String::from_utf8(out.clone()).unwrap();
        assert_eq!(text.lines().nth(1), Some("5,\"am,b\"\"er\",rising,0.0000001,12.5,0.30000000000000004,3"));
        let records = read_back(&out);
        assert_eq!(records[0].deserialize::<BoundaryRow>(None).unwrap(), boundary);
        out.clear();
        super::super::write_rows_to(&[domain], &mut out).unwrap();
        assert_eq!(read_back(&out)[0].deserialize::<DomainRow>(None).unwrap(), domain);
        out.clear();
        let mut t = TableWriter::new(&mut out, &header_of::<(AxisPoint, GeneLevel)>().unwrap()).unwrap();
        t.row(long).unwrap();
        t.finish().unwrap();
        assert_eq!(read_back(&out)[0].deserialize::<(AxisPoint, GeneLevel)>(None).unwrap(), long);
        out.clear();
        let sheet = SheetPoint { ix: 1, iy: 2, x_um: 7.5, y_um: 12.5 };
        let mut t =
            TableWriter::new(&mut out, &[header_of::<SheetPoint>().unwrap(), vec![gene.into()]].concat()).unwrap();
        t.row((sheet, Cells(&[0.5]))).unwrap();
        t.finish().unwrap();
        let mut reader = csv::Reader::from_reader(out.as_slice());
        assert_eq!(reader.headers().unwrap().iter().collect::<Vec<_>>(), ["ix", "iy", "x_um", "y_um", gene]);
        assert_eq!(read_back(&out)[0].deserialize::<(SheetPoint, Vec<f64>)>(None).unwrap(), (sheet, vec![0.5]));
    }

    fn read_back(bytes: &[u8]) -> Vec<csv::StringRecord> {
        csv::Reader::from_reader(bytes).records().collect::<Result<_, _>>().unwrap()
    }

    /// A sheet's profiles are indexed by `column`, a row's by `nucleus`.
    #[test]
    fn sheets_head_the_position_column() {
        let row = Grid { nx: 10, ny: 1, spacing_um: 5.0, edges: crate::model::Edges::Sealed };
        let sheet = Grid { ny: 3, ..row };
        assert_eq!(axis_header::<AxisPoint>(&row).unwrap()[1], "nucleus");
        assert_eq!(
            axis_header::<(AxisPoint, GeneLevel)>(&sheet).unwrap(),
            ["time_min", "column", "x_um", "x_pct", "gene", "level"]
        );
    }
}
