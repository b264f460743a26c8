//! The tables of a growing row ([`crate::growth`]): `growth_frames.csv`
//! (the row at each snapshot: nuclei, spacing, length and each gene's total
//! amount), `growth_events.csv` (mitosis windows, divisions, refinements) and
//! `growth_profiles.csv` (tidy: one row per snapshot, nucleus and gene, with
//! the nucleus's position in µm and % of the length at that time).

use std::path::Path;

use serde::Serialize;

use super::{Cells, ExportError, TableWriter, header_of, shortest, write_atomic, write_rows};
use crate::growth::GrowthRun;

/// The fixed columns of `growth_frames.csv`; one `amount_<gene>` column
/// per gene follows (Σ u·h, a.u.·µm).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct FrameRow {
    /// Snapshot time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Divisions so far.
    pub cycle: usize,
    /// 1 inside a mitosis window (production paused), else 0.
    pub mitosis: u8,
    /// Nuclei in the row.
    pub nuclei: usize,
    /// Distance between neighbouring nuclei, µm.
    #[serde(serialize_with = "shortest")]
    pub spacing_um: f64,
    /// Length of the row, µm.
    #[serde(serialize_with = "shortest")]
    pub length_um: f64,
}

/// A row of `growth_events.csv`.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct EventRow<'a> {
    /// Time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// `mitosis_start`, `division` or `refinement`.
    pub event: &'a str,
    /// Nuclei before.
    pub nuclei_before: usize,
    /// Nuclei after.
    pub nuclei_after: usize,
    /// Length of the row, µm.
    #[serde(serialize_with = "shortest")]
    pub length_um: f64,
}

/// A row of `growth_profiles.csv`.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct GrowthProfileRow<'a> {
    /// Snapshot time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Divisions so far.
    pub cycle: usize,
    /// Nucleus index at that time.
    pub nucleus: usize,
    /// Position, µm from the left end at that time.
    #[serde(serialize_with = "shortest")]
    pub x_um: f64,
    /// Position, % of the length at that time.
    #[serde(serialize_with = "shortest")]
    pub x_pct: f64,
    /// Gene name.
    pub gene: &'a str,
    /// Level, a.u.
    #[serde(serialize_with = "shortest")]
    pub level: f64,
}

/// Writes the three tables of a growing row into `dir`.
///
/// # Errors
/// [`ExportError`] if a file cannot be written.
pub fn write_growth_tables(run: &GrowthRun, genes: &[String], dir: &Path) -> Result<(), ExportError> {
    write_atomic(&dir.join(GROWTH_TABLES[0]), |w| {
        let mut header = header_of::<FrameRow>()?;
        header.extend(genes.iter().map(|g| format!("amount_{g}")));
        let mut table = TableWriter::new(w, &header)?;
        for (s, f) in run.frames.iter().enumerate() {
            let row = FrameRow {
                time_min: f.time_min,
                cycle: f.cycle,
                mitosis: u8::from(f.mitosis),
                nuclei: f.grid.nx,
                spacing_um: f.grid.spacing_um,
                length_um: f.grid.length_um(),
            };
            table.row(&(row, Cells(&run.amounts(s))))?;
        }
        table.finish()
    })?;
    let events: Vec<EventRow> = run
        .events
        .iter()
        .map(|e| EventRow {
            time_min: e.time_min,
            event: e.kind.word(),
            nuclei_before: e.nuclei.0,
            nuclei_after: e.nuclei.1,
            length_um: e.length_um,
        })
        .collect();
    write_rows(&events, &dir.join(GROWTH_TABLES[1]))?;
    write_atomic(&dir.join(GROWTH_TABLES[2]), |w| {
        let mut table = TableWriter::of::<GrowthProfileRow>(w)?;
        for f in &run.frames {
            let length = f.grid.length_um();
            for i in 0..f.grid.nx {
                let x_um = f.grid.x_um(i);
                for (g, gene) in genes.iter().enumerate() {
                    table.row(&GrowthProfileRow {
                        time_min: f.time_min,
                        cycle: f.cycle,
                        nucleus: i,
                        x_um,
                        x_pct: 100.0 * x_um / length,
                        gene,
                        level: f.state[[g, i]],
                    })?;
                }
            }
        }
        table.finish()
    })
}

/// The tables' file names: frames, events, profiles.
pub const GROWTH_TABLES: [&str; 3] = ["growth_frames.csv", "growth_events.csv", "growth_profiles.csv"];
