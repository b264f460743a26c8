//! The tables of a sheet's readouts ([`crate::readout::sheet`]):
//! `sheet_patterns.csv` (each gene's pattern class, wavelength and counts at
//! every snapshot), and at the last snapshot `contours.csv` (one row per
//! contour), `contour_points.csv` (the contours' points) and
//! `sheet_domains.csv` (one row per connected domain).

use std::path::Path;

use serde::Serialize;

use super::{ExportError, shortest, shortest_opt, write_rows};
use crate::readout::sheet::{Contour, SheetDomain, SheetPattern};

/// A row of `sheet_patterns.csv` (see [`SheetPattern`]).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct SheetPatternRow<'a> {
    /// Snapshot time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Gene name.
    pub gene: &'a str,
    /// `uniform`, `domains`, `spots`, `stripes`, `labyrinth` or `not expressed`.
    pub class: &'a str,
    /// Boundary level θ, a.u. (empty for a gene not expressed).
    #[serde(serialize_with = "shortest_opt")]
    pub level: Option<f64>,
    /// Dominant wavelength, µm (empty on a uniform sheet).
    #[serde(serialize_with = "shortest_opt")]
    pub wavelength_um: Option<f64>,
    /// Spots on the side of θ that covers less of the sheet.
    pub spots: usize,
    /// That side: `high` (spots of expression) or `low` (holes).
    pub spots_are: &'a str,
    /// Share of that side's area in spots, 0–1 (spots from 0.6).
    #[serde(serialize_with = "shortest")]
    pub spot_share: f64,
    /// Stripes of high level.
    pub stripes: usize,
    /// Connected domains at or above θ.
    pub high_domains: usize,
    /// Share of the sheet at or above θ, %.
    #[serde(serialize_with = "shortest")]
    pub high_area_pct: f64,
    /// Contours through θ.
    pub contours: usize,
    /// Their total length, µm.
    #[serde(serialize_with = "shortest")]
    pub contour_length_um: f64,
    /// Orientation order of the level's gradient, 0–1.
    #[serde(serialize_with = "shortest")]
    pub orientation_order: f64,
}

/// A row of `contours.csv` (see [`Contour`]).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct ContourRow<'a> {
    /// Snapshot time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Gene name.
    pub gene: &'a str,
    /// Number of the contour within the gene, from 1.
    pub contour: usize,
    /// True for a closed contour.
    pub closed: bool,
    /// Length, µm.
    #[serde(serialize_with = "shortest")]
    pub length_um: f64,
    /// Mean position along the axis, µm.
    #[serde(serialize_with = "shortest")]
    pub mean_x_um: f64,
    /// Mean position along the axis, % of its length.
    #[serde(serialize_with = "shortest")]
    pub mean_x_pct: f64,
    /// Mean position across, µm.
    #[serde(serialize_with = "shortest")]
    pub mean_y_um: f64,
    /// Spread along the axis (sd of x over the contour), µm.
    #[serde(serialize_with = "shortest")]
    pub x_sd_um: f64,
    /// Distance from the best straight line, rms, µm.
    #[serde(serialize_with = "shortest")]
    pub line_rms_um: f64,
}

/// A row of `contour_points.csv`: one point of one contour.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct ContourPointRow<'a> {
    /// Snapshot time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Gene name.
    pub gene: &'a str,
    /// The contour's number (as in `contours.csv`).
    pub contour: usize,
    /// The point's number along the contour, from 1.
    pub point: usize,
    /// Position along the axis, µm.
    #[serde(serialize_with = "shortest")]
    pub x_um: f64,
    /// Position across, µm.
    #[serde(serialize_with = "shortest")]
    pub y_um: f64,
}

/// A row of `sheet_domains.csv` (see [`SheetDomain`]).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct SheetDomainRow<'a> {
    /// Snapshot time, min.
    #[serde(serialize_with = "shortest")]
    pub time_min: f64,
    /// Gene name.
    pub gene: &'a str,
    /// Side of θ: `high` or `low`.
    pub side: &'a str,
    /// `spot`, `stripe` or `field`.
    pub shape: &'a str,
    /// Area, µm².
    #[serde(serialize_with = "shortest")]
    pub area_um2: f64,
    /// Area, % of the sheet.
    #[serde(serialize_with = "shortest")]
    pub area_pct: f64,
    /// Centre along the axis, µm.
    #[serde(serialize_with = "shortest")]
    pub centre_x_um: f64,
    /// Centre across, µm.
    #[serde(serialize_with = "shortest")]
    pub centre_y_um: f64,
    /// Elongation √(λ₁/λ₂) of the domain's moments.
    #[serde(serialize_with = "shortest")]
    pub elongation: f64,
    /// True when the domain reaches across the sheet (or around a periodic one).
    pub spans: bool,
}

/// `sheet_patterns.csv`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_sheet_patterns(rows: &[SheetPattern], path: &Path) -> Result<(), ExportError> {
    let rows: Vec<SheetPatternRow> = rows
        .iter()
        .map(|p| SheetPatternRow {
            time_min: p.time_min,
            gene: &p.gene,
            class: &p.class,
            level: p.level,
            wavelength_um: p.wavelength_um,
            spots: p.spots,
            spots_are: &p.spots_are,
            spot_share: p.spot_share,
            stripes: p.stripes,
            high_domains: p.high_domains,
            high_area_pct: p.high_area_pct,
            contours: p.contours,
            contour_length_um: p.contour_length_um,
            orientation_order: p.orientation_order,
        })
        .collect();
    write_rows(&rows, path)
}

/// `contours.csv` and `contour_points.csv`.
///
/// # Errors
/// [`ExportError`] if a file cannot be written.
pub fn write_contours(contours: &[Contour], table: &Path, points: &Path) -> Result<(), ExportError> {
    let rows: Vec<ContourRow> = contours
        .iter()
        .map(|c| ContourRow {
            time_min: c.time_min,
            gene: &c.gene,
            contour: c.contour,
            closed: c.closed,
            length_um: c.length_um,
            mean_x_um: c.mean_x_um,
            mean_x_pct: c.mean_x_pct,
            mean_y_um: c.mean_y_um,
            x_sd_um: c.x_sd_um,
            line_rms_um: c.line_rms_um,
        })
        .collect();
    write_rows(&rows, table)?;
    let rows: Vec<ContourPointRow> = contours
        .iter()
        .flat_map(|c| {
            c.points.iter().enumerate().map(move |(k, p)| ContourPointRow {
                time_min: c.time_min,
                gene: &c.gene,
                contour: c.contour,
                point: k + 1,
                x_um: p[0],
                y_um: p[1],
            })
        })
        .collect();
    write_rows(&rows, points)
}

/// `sheet_domains.csv`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_sheet_domains(domains: &[SheetDomain], path: &Path) -> Result<(), ExportError> {
    let rows: Vec<SheetDomainRow> = domains
        .iter()
        .map(|d| SheetDomainRow {
            time_min: d.time_min,
            gene: &d.gene,
            side: d.side,
            shape: d.shape,
            area_um2: d.area_um2,
            area_pct: d.area_pct,
            centre_x_um: d.centre_x_um,
            centre_y_um: d.centre_y_um,
            elongation: d.elongation,
            spans: d.spans,
        })
        .collect();
    write_rows(&rows, path)
}
