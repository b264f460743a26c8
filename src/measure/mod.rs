//! Measuring boundaries in stained-embryo images: find the embryo (summed
//! channels above the background of the image border, largest region, holes
//! filled), its long
//! axis (principal axes) and length, sample each channel along the axis in a
//! strip around the midline, subtract the background (median outside the
//! embryo), normalise, and read half-maximum crossings with sub-pixel
//! interpolation, in % of embryo length from the head end.

pub mod embryo;
pub mod image;
pub mod profile;
pub mod synth;

use std::path::PathBuf;

use serde::Serialize;

pub use embryo::Embryo;
pub use image::{Planes, load};

/// Strip width as a fraction of the embryo's height (common practice, no source).
pub const STRIP_FRACTION: f64 = 0.2;

/// Fraction of the length at each pole where no boundary is read, because the
/// embryo's edge dims every channel there (common practice, no source).
pub const POLE_FRACTION: f64 = 0.03;

/// An image or table that cannot be measured.
#[derive(Debug, thiserror::Error)]
pub enum MeasureError {
    /// Not a readable image.
    #[error("{}: cannot read the image ({reason}); give a PNG or TIFF, 8- or 16-bit", path.display())]
    Image {
        /// File.
        path: PathBuf,
        /// Decoder's reason.
        reason: String,
    },
    /// No pixels.
    #[error("{}: the image is empty", path.display())]
    Empty {
        /// File.
        path: PathBuf,
    },
    /// No embryo-like region.
    #[error("{}: no embryo found ({why}); check that the embryo is brighter than the background and fully inside the image", path.display())]
    NoEmbryo {
        /// File.
        path: PathBuf,
        /// What failed.
        why: String,
    },
    /// A channel index past the image's channels.
    #[error("{}: channel {index} does not exist: the image has {count} channel(s), numbered from 0", path.display())]
    NoChannel {
        /// File.
        path: PathBuf,
        /// Asked for.
        index: usize,
        /// Present.
        count: usize,
    },
    /// Channel files of different sizes.
    #[error("{}: is {got:?} px but the first channel file is {want:?} px; give channel files of one size", path.display())]
    SizeMismatch {
        /// File.
        path: PathBuf,
        /// Its size.
        got: (usize, usize),
        /// Expected.
        want: (usize, usize),
    },
}

/// Which end of the embryo is the head (0 %).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Head {
    /// The end with the smaller image x.
    Left,
    /// The end with the larger image x.
    Right,
    /// The end where the first channel is brighter (a heuristic for a head-high gene).
    Auto,
}

/// A channel to read: a plane of the image, named by a gene.
#[derive(Debug, Clone, PartialEq)]
pub struct Channel {
    /// Gene name.
    pub gene: String,
    /// Plane index (into all planes given, in file order).
    pub plane: usize,
}

/// One measured boundary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeasuredBoundary {
    /// Gene.
    pub gene: String,
    /// "rising" or "falling", going from head to tail.
    pub direction: &'static str,
    /// Position, % of embryo length from the head end.
    pub position_pct: f64,
}

/// Everything measured in one image.
#[derive(Debug, Clone)]
pub struct Measurement {
    /// The embryo found.
    pub embryo: Embryo,
    /// Length between the refined poles, px.
    pub length_px: f64,
    /// Head and tail ends (column, row).
    pub head_tail: [(f64, f64); 2],
    /// Strip width, px.
    pub strip_px: usize,
    /// The embryo's pixels.
    pub mask: Vec<bool>,
    /// Normalised profile per channel, head to tail (0 … 1).
    pub profiles: Vec<Vec<f64>>,
    /// Boundaries found.
    pub boundaries: Vec<MeasuredBoundary>,
}

/// Measures the boundaries of `channels` in `planes`.
///
/// # Errors
/// [`MeasureError`] when a channel is missing or no embryo is found.
pub fn measure(planes: &Planes, channels: &[Channel], head: Head) -> Result<Measurement, MeasureError> {
    let (w, h) = (planes.width, planes.height);
    for c in channels {
        if c.plane >= planes.planes.len() {
            return Err(MeasureError::NoChannel {
                path: planes.path.clone(),
                index: c.plane,
                count: planes.planes.len(),
            });
        }
    }
    let no = |why: &str| MeasureError::NoEmbryo { path: planes.path.clone(), why: why.into() };
    let total: Vec<f64> = (0..w * h).map(|i| planes.planes.iter().map(|p| p[i]).sum()).collect();
    let (raw, residual) = embryo::foreground(&total, w);
    let region = embryo::fill_holes(&embryo::largest_region(&raw, w), w);
    let e = embryo::principal_axes(&region, w).ok_or_else(|| no("the image has no contrast"))?;
    if e.area < 50 || e.area * 10 > 9 * w * h {
        return Err(no(&format!("the largest bright region has {} of {} pixels", e.area, w * h)));
    }
    let touches =
        region.iter().enumerate().any(|(i, m)| *m && (i % w == 0 || i / w == 0 || i % w == w - 1 || i / w == h - 1));
    if touches {
        return Err(no("the bright region touches the image border"));
    }
    let strip_px = ((STRIP_FRACTION * e.height()).round() as usize).max(1);
    let [a, b] = embryo::refine_poles(&residual, w, &e, strip_px);
    let length_px = (b.0 - a.0).hypot(b.1 - a.1);
    let sample = |plane: &[f64], from: (f64, f64), to: (f64, f64)| {
        profile::profile_line(plane, w, h, (from.1, from.0), (to.1, to.0), strip_px)
    };
    let head_first = match head {
        Head::Left => a.0 <= b.0,
        Head::Right => a.0 > b.0,
        Head::Auto => {
            let p = sample(&planes.planes[channels.first().map_or(0, |c| c.plane)], a, b);
            let k = (p.len() / 5).max(1);
            p[..k].iter().sum::<f64>() >= p[p.len() - k..].iter().sum::<f64>()
        }
    };
    let (from, to) = if head_first { (a, b) } else { (b, a) };
    let mut profiles = Vec::new();
    let mut boundaries = Vec::new();
    for c in channels {
        let p = normalise(&smooth(&sample(&planes.planes[c.plane], from, to)));
        let n = p.len();
        let step = 100.0 / (n - 1) as f64;
        // The poles are not read: there the embryo's edge dims every channel.
        let (k0, k1) = (
            (POLE_FRACTION * (n - 1) as f64).ceil() as usize,
            ((1.0 - POLE_FRACTION) * (n - 1) as f64).floor() as usize,
        );
        for x in crate::readout::profile_boundaries(&p[k0..=k1], step, false) {
            boundaries.push(MeasuredBoundary {
                gene: c.gene.clone(),
                direction: if x.rising { "rising" } else { "falling" },
                position_pct: x.position_um - 0.5 * step + k0 as f64 * step,
            });
        }
        profiles.push(p);
    }
    Ok(Measurement { embryo: e, length_px, head_tail: [from, to], strip_px, mask: region, profiles, boundaries })
}

/// 5-point moving mean (shorter at the ends): symmetric, so it moves no crossing.
fn smooth(p: &[f64]) -> Vec<f64> {
    (0..p.len())
        .map(|i| {
            let (lo, hi) = (i.saturating_sub(2), (i + 3).min(p.len()));
            p[lo..hi].iter().sum::<f64>() / (hi - lo) as f64
        })
        .collect()
}

/// Background-subtracted and normalised to [0, 1]: the background is the
/// embryo's own baseline (2nd percentile of the profile), the top its 98th
/// percentile, robust to noise (common practice, no source).
fn normalise(p: &[f64]) -> Vec<f64> {
    let mut sorted = p.to_vec();
    sorted.sort_by(f64::total_cmp);
    let q = |f: f64| sorted[((sorted.len() - 1) as f64 * f).round() as usize];
    let (lo, hi) = (q(0.02), q(0.98));
    // Less than 5 % of full scale between baseline and top: no pattern to read.
    if !(hi - lo > 0.05) {
        return vec![0.0; p.len()];
    }
    p.iter().map(|v| ((v - lo) / (hi - lo)).clamp(0.0, 1.0)).collect()
}
