//! Readouts made for sheets: each gene's pattern over the whole sheet, read
//! at the gene's boundary level θ (as along a row: by default half of the
//! largest level anywhere on the sheet at that snapshot).
//!
//! - **Contours** ([`contours`]): the curves where the level crosses θ, as
//!   polylines, each with its length, its mean position, its spread along
//!   the axis (the sd of x over the contour: zero for a boundary straight
//!   across the axis) and its distance from a straight line (rms, zero for
//!   any straight boundary, tilted or not).
//! - **Domains** ([`regions`]): connected regions above and below θ, with
//!   area, centre, elongation and shape (spot, stripe or the surrounding field).
//! - **Dominant wavelength** ([`spectrum`]): from the radially averaged power
//!   spectrum.
//! - **Pattern class**, by these rules, applied in order:
//!   1. `uniform`: every nucleus on one side of θ, or the range of levels is
//!      under 5 % of the largest |level| (common practice, no source);
//!   2. `domains`: the dominant wavelength is more than half the longer side
//!      of the sheet: fewer than two repeats, so a few domains (a disc, a
//!      half, a single spot) rather than a repeating pattern;
//!   3. `spots`: of the area on the minority side of θ (high or low, whichever
//!      covers less of the sheet), at least 60 % lies in spots;
//!   4. `stripes`: the stripes share one orientation: the orientation order
//!      of the level's gradient, |⟨(∂ₓc + i∂ᵧc)²⟩| / ⟨|∇c|²⟩ over the sheet,
//!      is at least 0.5 (1 for parallel stripes, near 0 for spots or a maze);
//!   5. `labyrinth`: otherwise — elongated domains turning every way (stripes
//!      broken into patches of different orientation count here too).
//!
//!   Counts: `spots` = spots on the minority side; `stripes` = stripes of
//!   high level (expressed stripes) that are not the surrounding field.

mod contours;
mod regions;
mod spectrum;

pub use contours::{Polyline, contours};
pub use regions::{Region, SPOT_ELONGATION, regions};
pub use spectrum::{Spectrum, spectrum};

use serde::{Deserialize, Serialize};

use super::Level;
use crate::integrate::{ReadBackError, Recording};

/// Smallest range of levels, as a share of the largest |level|, for a
/// pattern that is not uniform (common practice, no source).
pub const UNIFORM_RANGE: f64 = 0.05;
/// Smallest share of the minority side's area in spots for a spot pattern.
pub const SPOT_SHARE: f64 = 0.6;
/// Smallest orientation order for stripes rather than a labyrinth.
pub const STRIPE_ORDER: f64 = 0.5;

/// One gene's levels on a sheet, nucleus (i, j) at index j·nx + i and at
/// ((i + ½)h, (j + ½)h) µm.
#[derive(Debug, Clone, Copy)]
pub struct SheetField<'a> {
    /// Levels, a.u., x fastest.
    pub values: &'a [f64],
    /// Nuclei along the axis.
    pub nx: usize,
    /// Nuclei across.
    pub ny: usize,
    /// Spacing h, µm.
    pub spacing_um: f64,
    /// True when the sheet is periodic (a torus), false when sealed.
    pub periodic: bool,
}

impl SheetField<'_> {
    /// Level of nucleus (i, j).
    pub fn at(&self, i: usize, j: usize) -> f64 {
        self.values[j * self.nx + i]
    }

    /// Width (along the axis) and height of the sheet, µm.
    pub fn size_um(&self) -> (f64, f64) {
        (self.nx as f64 * self.spacing_um, self.ny as f64 * self.spacing_um)
    }
}

/// What the readouts find in one field at one level.
#[derive(Debug, Clone)]
pub struct FieldReadout {
    /// Pattern class: `uniform`, `domains`, `spots`, `stripes` or `labyrinth`.
    pub class: super::Word,
    /// Contours through θ.
    pub contours: Vec<Polyline>,
    /// Connected regions above and below θ.
    pub regions: Vec<Region>,
    /// Dominant wavelength, µm (None on a uniform sheet).
    pub wavelength_um: Option<f64>,
    /// Orientation order of the gradient, 0–1.
    pub orientation_order: f64,
    /// Share of the sheet at or above θ, %.
    pub high_area_pct: f64,
    /// True when the high side is the minority (covers at most half the sheet).
    pub minority_high: bool,
    /// Spots on the minority side.
    pub spots: usize,
    /// Share of the minority side's area in spots, 0–1.
    pub spot_share: f64,
    /// Stripes of high level.
    pub stripes: usize,
}

/// Reads `field` at the level `theta`.
pub fn read_field(field: &SheetField, theta: f64) -> FieldReadout {
    let n = field.values.len();
    let high = field.values.iter().filter(|v| **v >= theta).count();
    let high_area_pct = 100.0 * high as f64 / n as f64;
    let minority_high = 2 * high <= n;
    let (lo, hi) = field.values.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| (a.min(*v), b.max(*v)));
    let scale = lo.abs().max(hi.abs());
    let flat = !(hi - lo >= UNIFORM_RANGE * scale) || scale == 0.0;
    if high == 0 || high == n || flat {
        return FieldReadout {
            class: "uniform",
            contours: Vec::new(),
            regions: Vec::new(),
            wavelength_um: None,
            orientation_order: 0.0,
            high_area_pct,
            minority_high,
            spots: 0,
            spot_share: 0.0,
            stripes: 0,
        };
    }
    let contours = contours(field, theta);
    let regions = regions(field, theta);
    let wavelength_um = spectrum(field).dominant_wavelength_um();
    let orientation_order = orientation_order(field);
    let spots = regions.iter().filter(|r| r.high == minority_high && r.shape == "spot").count();
    let stripes = regions.iter().filter(|r| r.high && r.shape == "stripe").count();
    let minority_area: f64 = regions.iter().filter(|r| r.high == minority_high).map(|r| r.area_um2).sum();
    let spot_area: f64 =
        regions.iter().filter(|r| r.high == minority_high && r.shape == "spot").map(|r| r.area_um2).sum();
    let (wx, wy) = field.size_um();
    let spot_share = if minority_area > 0.0 { spot_area / minority_area } else { 0.0 };
    let class = match wavelength_um {
        None => "uniform",
        Some(l) if l > wx.max(wy) / 2.0 => "domains",
        _ if spot_share >= SPOT_SHARE => "spots",
        _ if orientation_order >= STRIPE_ORDER => "stripes",
        _ => "labyrinth",
    };
    FieldReadout {
        class,
        contours,
        regions,
        wavelength_um,
        orientation_order,
        high_area_pct,
        minority_high,
        spots,
        spot_share,
        stripes,
    }
}

/// Orientation order of the level's gradient, |⟨(∂ₓc + i∂ᵧc)²⟩| / ⟨|∇c|²⟩
/// (the coherence of the structure tensor summed over the sheet), with
/// centred differences between nuclei inside the sheet (and across the
/// seams of a periodic one).
pub fn orientation_order(field: &SheetField) -> f64 {
    let (nx, ny) = (field.nx, field.ny);
    let (mut jxx, mut jyy, mut jxy) = (0.0, 0.0, 0.0);
    let (ri, rj) = if field.periodic { (0..nx, 0..ny) } else { (1..nx.saturating_sub(1), 1..ny.saturating_sub(1)) };
    for j in rj {
        for i in ri.clone() {
            let gx = field.at((i + 1) % nx, j) - field.at((i + nx - 1) % nx, j);
            let gy = field.at(i, (j + 1) % ny) - field.at(i, (j + ny - 1) % ny);
            jxx += gx * gx;
            jyy += gy * gy;
            jxy += gx * gy;
        }
    }
    let total = jxx + jyy;
    if total <= 0.0 { 0.0 } else { ((jxx - jyy).powi(2) + 4.0 * jxy * jxy).sqrt() / total }
}

/// One gene's pattern on the whole sheet at one snapshot (a row of
/// `sheet_patterns.csv`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SheetPattern {
    /// Snapshot time, min.
    pub time_min: f64,
    /// Gene name.
    pub gene: String,
    /// Pattern class (see the module's rules).
    pub class: String,
    /// Boundary level θ, a.u. (None for a gene not expressed).
    pub level: Option<f64>,
    /// Dominant wavelength, µm.
    pub wavelength_um: Option<f64>,
    /// Spots on the minority side.
    pub spots: usize,
    /// Which side the spots are: `high` (spots of expression) or `low` (holes).
    pub spots_are: String,
    /// Share of that side's area in spots, 0–1 (spots from 0.6).
    pub spot_share: f64,
    /// Stripes of high level.
    pub stripes: usize,
    /// Connected domains above θ.
    pub high_domains: usize,
    /// Share of the sheet at or above θ, %.
    pub high_area_pct: f64,
    /// Contours through θ.
    pub contours: usize,
    /// Their total length, µm.
    pub contour_length_um: f64,
    /// Orientation order of the gradient, 0–1.
    pub orientation_order: f64,
}

/// One contour of one gene (a row of `contours.csv`; its points go to
/// `contour_points.csv`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Contour {
    /// Snapshot time, min.
    pub time_min: f64,
    /// Gene name.
    pub gene: String,
    /// Number of the contour within the gene, from 1.
    pub contour: usize,
    /// True for a closed contour.
    pub closed: bool,
    /// Length, µm.
    pub length_um: f64,
    /// Mean position along the axis, µm (arc-length weighted).
    pub mean_x_um: f64,
    /// Mean position along the axis, % of the axis length.
    pub mean_x_pct: f64,
    /// Mean position across, µm.
    pub mean_y_um: f64,
    /// Spread along the axis: sd of x over the contour, µm (0 for a
    /// boundary straight across the axis).
    pub x_sd_um: f64,
    /// Distance from the best straight line (total least squares), rms, µm
    /// (0 for any straight boundary).
    pub line_rms_um: f64,
    /// The points, µm.
    #[serde(skip)]
    pub points: Vec<[f64; 2]>,
}

/// One connected domain of one gene (a row of `sheet_domains.csv`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SheetDomain {
    /// Snapshot time, min.
    pub time_min: f64,
    /// Gene name.
    pub gene: String,
    /// Side of θ: `high` or `low`.
    pub side: &'static str,
    /// `spot`, `stripe` or `field`.
    pub shape: &'static str,
    /// Area, µm².
    pub area_um2: f64,
    /// Area, % of the sheet.
    pub area_pct: f64,
    /// Centre along the axis, µm.
    pub centre_x_um: f64,
    /// Centre across, µm.
    pub centre_y_um: f64,
    /// Elongation √(λ₁/λ₂).
    pub elongation: f64,
    /// True when the domain reaches across the sheet (or around a periodic one).
    pub spans: bool,
}

/// Everything read from a sheet at one snapshot.
#[derive(Debug, Clone, Default)]
pub struct SheetReadout {
    /// One per gene.
    pub patterns: Vec<SheetPattern>,
    /// Every contour of every gene.
    pub contours: Vec<Contour>,
    /// Every domain of every gene.
    pub domains: Vec<SheetDomain>,
}

/// Reads every gene of snapshot `s` of a sheet.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn sheet_at(rec: &Recording, s: usize) -> Result<SheetReadout, ReadBackError> {
    Ok(sheet_of(rec, s, &*rec.state(s)?))
}

/// Reads every gene of the last snapshot of a sheet (held in memory, so
/// nothing can fail).
pub fn final_sheet(rec: &Recording) -> SheetReadout {
    sheet_of(rec, rec.len() - 1, rec.final_state())
}

/// Reads every gene of `state`, snapshot `s`.
fn sheet_of(rec: &Recording, s: usize, state: &ndarray::Array2<f64>) -> SheetReadout {
    let grid = &rec.grid;
    let time = rec.times[s];
    let mut out = SheetReadout::default();
    let (w, area) = (grid.length_um(), grid.len() as f64 * grid.spacing_um * grid.spacing_um);
    for (g, gene) in rec.genes.iter().enumerate() {
        let row = state.row(g);
        let values = row.as_slice().expect("states are stored gene by gene");
        let field = SheetField {
            values,
            nx: grid.nx,
            ny: grid.ny,
            spacing_um: grid.spacing_um,
            periodic: grid.edges == crate::model::Edges::Periodic,
        };
        let max = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let floor = rec.floor.get(g).copied().unwrap_or(0.0);
        let theta = rec.levels.get(g).copied().unwrap_or(Level::HALF_MAX).threshold(max).filter(|_| max >= floor);
        let Some(theta) = theta else {
            out.patterns.push(blank(time, gene));
            continue;
        };
        let r = read_field(&field, theta);
        out.patterns.push(SheetPattern {
            time_min: time,
            gene: gene.clone(),
            class: r.class.into(),
            level: Some(theta),
            wavelength_um: r.wavelength_um,
            spots: r.spots,
            spots_are: if r.minority_high { "high" } else { "low" }.into(),
            spot_share: r.spot_share,
            stripes: r.stripes,
            high_domains: r.regions.iter().filter(|d| d.high).count(),
            high_area_pct: r.high_area_pct,
            contours: r.contours.len(),
            contour_length_um: r.contours.iter().map(Polyline::length_um).sum(),
            orientation_order: r.orientation_order,
        });
        for (k, c) in r.contours.into_iter().enumerate() {
            let (mean, cov) = c.moments();
            let (wx, wy) = field.size_um();
            let half_trace = (cov[0] + cov[1]) / 2.0;
            let smallest = half_trace - (((cov[0] - cov[1]) / 2.0).powi(2) + cov[2] * cov[2]).sqrt();
            let mean_x = mean[0].rem_euclid(wx);
            out.contours.push(Contour {
                time_min: time,
                gene: gene.clone(),
                contour: k + 1,
                closed: c.closed,
                length_um: c.length_um(),
                mean_x_um: mean_x,
                mean_x_pct: 100.0 * mean_x / w,
                mean_y_um: mean[1].rem_euclid(wy),
                x_sd_um: cov[0].sqrt(),
                line_rms_um: smallest.max(0.0).sqrt(),
                points: c.points,
            });
        }
        for d in r.regions {
            out.domains.push(SheetDomain {
                time_min: time,
                gene: gene.clone(),
                side: if d.high { "high" } else { "low" },
                shape: d.shape,
                area_um2: d.area_um2,
                area_pct: 100.0 * d.area_um2 / area,
                centre_x_um: d.centre_um[0],
                centre_y_um: d.centre_um[1],
                elongation: d.elongation,
                spans: d.spans,
            });
        }
    }
    out
}

/// The pattern row of a gene that is not expressed.
fn blank(time_min: f64, gene: &str) -> SheetPattern {
    SheetPattern {
        time_min,
        gene: gene.to_string(),
        class: "not expressed".into(),
        level: None,
        wavelength_um: None,
        spots: 0,
        spots_are: String::new(),
        spot_share: 0.0,
        stripes: 0,
        high_domains: 0,
        high_area_pct: 0.0,
        contours: 0,
        contour_length_um: 0.0,
        orientation_order: 0.0,
    }
}

/// Every gene's pattern at every snapshot of a sheet, in time order; the
/// last snapshot's are taken from `last` (its [`final_sheet`], read once).
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn sheet_patterns(rec: &Recording, last: &SheetReadout) -> Result<Vec<SheetPattern>, ReadBackError> {
    let mut out = Vec::new();
    for s in 0..rec.len() - 1 {
        out.extend(sheet_at(rec, s)?.patterns);
    }
    out.extend(last.patterns.iter().cloned());
    Ok(out)
}
