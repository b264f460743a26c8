//! Measuring boundaries in stained-embryo images.
//!
//! 1. **Background and signal** ([`background`]): whether the stain is bright
//!    on dark (fluorescence) or dark on light (bright-field; given, or detected
//!    and reported); a quadratic background surface and its noise, estimated
//!    away from the embryos; each plane's stain signal above it (intensity, or
//!    optical density for absorbing stains).
//! 2. **Outline** ([`outline`]): from a mask image, from an outline plane (a
//!    nuclear counterstain), or from every plane together; smoothed, detected
//!    at 5 background sd and grown to half of the dimmest tissue, so that
//!    faint unstained tissue counts as embryo. Every region is an embryo
//!    candidate: those cut by the image edge are skipped, and outlines that do
//!    not look like an embryo (area, elongation, ellipse fit) are refused,
//!    each with its reason.
//! 3. **Axis and poles**: principal axes of the outline; each pole where the
//!    outline signal falls to half its local level.
//! 4. **Reading** ([`read`]): which end is the head (given, or guessed with a
//!    confidence); each gene sampled along the axis in a strip around the
//!    midline, normalised, and its half-level crossings in % of the length
//!    from the head.

pub mod background;
pub mod batch;
pub mod checks;
pub mod frame;
pub mod geometry;
pub mod image;
pub mod outline;
pub mod profile;
pub mod read;
pub mod synth;

use std::path::PathBuf;

use rayon::prelude::*;
use serde::Serialize;

pub use background::Contrast;
pub use geometry::{Embryo, Shape};
pub use image::{Planes, load, load_mask};
pub use read::{GeneReading, HeadCall, HeadRule, POLE_FRACTION, STRIP_FRACTION, Side};

use background::{SMOOTH_PX, background_border, contrast_counts, decide_contrast, median_and_sd, signal, smooth, thin};

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
    /// Too many pixels to measure.
    #[error(
        "{}: is {width}×{height} px, more than the {} megapixels measure reads; crop or bin the image first",
        path.display(),
        image::MAX_PIXELS / 1_000_000
    )]
    TooLarge {
        /// File.
        path: PathBuf,
        /// Width, px.
        width: usize,
        /// Height, px.
        height: usize,
    },
    /// No pixels.
    #[error("{}: the image is empty", path.display())]
    Empty {
        /// File.
        path: PathBuf,
    },
    /// No embryo that could be measured.
    #[error("{}: no embryo measured: {why}", path.display())]
    NoEmbryo {
        /// File.
        path: PathBuf,
        /// What failed, for each candidate.
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
    /// Channel or mask files of different sizes.
    #[error("{}: is {got:?} px but the image is {want:?} px; give files of one size", path.display())]
    SizeMismatch {
        /// File.
        path: PathBuf,
        /// Its size.
        got: (usize, usize),
        /// Expected.
        want: (usize, usize),
    },
    /// A file given for one channel holds several different planes.
    #[error(
        "{}: has {count} colour planes that differ, so which one is the channel is unclear; give a single-plane (grey) file, or pick a plane with FILE:PLANE=gene (planes numbered from 0)",
        path.display()
    )]
    ManyPlanes {
        /// File.
        path: PathBuf,
        /// Planes in it.
        count: usize,
    },
    /// The stain's contrast could not be told.
    #[error(
        "{}: cannot tell whether the stain is bright on a dark background or dark on a light one ({bright} px clearly brighter than the background, {dark} px clearly darker); give --stain bright or --stain dark",
        path.display()
    )]
    Contrast {
        /// File.
        path: PathBuf,
        /// Pixels clearly brighter.
        bright: usize,
        /// Pixels clearly darker.
        dark: usize,
    },
    /// The head-high gene is not read.
    #[error("--head-high names `{gene}`, which is not among the channels read ({known}); name one of them")]
    HeadGene {
        /// The gene named.
        gene: String,
        /// The channels' genes.
        known: String,
    },
    /// Some images of a batch could not be measured.
    #[error("{failed} of {total} images could not be measured (listed above); the table holds the others")]
    Batch {
        /// Images that failed.
        failed: usize,
        /// Images tried.
        total: usize,
    },
}

/// A channel to read: a plane of the image, named by a gene.
#[derive(Debug, Clone, PartialEq)]
pub struct Channel {
    /// Gene name.
    pub gene: String,
    /// Plane index (into all planes given, in file order).
    pub plane: usize,
}

/// Where the embryo's outline comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum Outline {
    /// Every plane together (each in units of its own background noise).
    AllPlanes,
    /// One plane, e.g. a nuclear counterstain that fills the whole embryo.
    Plane(usize),
    /// A mask image supplied by the user (non-zero pixels are embryo).
    Mask(Vec<bool>),
}

/// How to measure an image.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasureOptions {
    /// Genes to read.
    pub channels: Vec<Channel>,
    /// Which end is the head.
    pub head: HeadRule,
    /// The stain's contrast (None: detected).
    pub contrast: Option<Contrast>,
    /// Where the outline comes from.
    pub outline: Outline,
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

/// One embryo measured.
#[derive(Debug, Clone)]
pub struct EmbryoMeasurement {
    /// Number in the image (1-based, top to bottom, then left to right).
    pub number: usize,
    /// Geometry of the outline.
    pub embryo: Embryo,
    /// How embryo-like the outline is.
    pub shape: Shape,
    /// Length between the poles, px.
    pub length_px: f64,
    /// Head and tail poles (column, row).
    pub head_tail: [(f64, f64); 2],
    /// Strip width, px.
    pub strip_px: usize,
    /// Which end was taken as the head, and how.
    pub head: HeadCall,
    /// Each channel read, in the order given.
    pub genes: Vec<GeneReading>,
    /// Every boundary found, by gene in channel order.
    pub boundaries: Vec<MeasuredBoundary>,
    /// Warnings about the outline, in words.
    pub notes: Vec<String>,
}

impl EmbryoMeasurement {
    /// One pixel in % of the length: the measurement's resolution.
    pub fn resolution_pct(&self) -> f64 {
        100.0 / self.length_px
    }
    /// What a reader should be warned about, in words (empty when nothing).
    pub fn flags(&self) -> Vec<String> {
        let mut out = self.notes.clone();
        if self.head.weak {
            out.push(format!(
                "weak head guess (confidence {:.2}); give --head or check the picture",
                self.head.confidence.unwrap_or(0.0)
            ));
        } else if self.head.assumed {
            out.push(
                "head end assumed from the first channel; state --head-high GENE or --head SIDE to make it certain"
                    .into(),
            );
        }
        for g in self.genes.iter().filter(|g| !g.patterned) {
            out.push(format!("{}: no pattern (its stain barely varies along the axis)", g.gene));
        }
        out
    }
}

/// A candidate region that was not measured.
#[derive(Debug, Clone, PartialEq)]
pub struct Skipped {
    /// Number in the image.
    pub number: usize,
    /// Centroid (column, row).
    pub centre: (f64, f64),
    /// Why, in words.
    pub reason: String,
    /// True when cut by the image edge (a note), false when refused.
    pub cut: bool,
}

/// Everything measured in one image.
#[derive(Debug, Clone)]
pub struct ImageMeasurement {
    /// How the stain shows.
    pub contrast: Contrast,
    /// How that was decided, in words.
    pub contrast_how: String,
    /// Where the outline came from, in words.
    pub outline_how: String,
    /// Embryos measured.
    pub embryos: Vec<EmbryoMeasurement>,
    /// Candidates not measured.
    pub skipped: Vec<Skipped>,
    /// Per pixel: 0 outside, else the number of the candidate it belongs to.
    pub labels: Vec<u32>,
    /// Regions too small to be embryos, ignored.
    pub specks: usize,
}

/// Largest-scale residual of the background taken as even: smoothed over
/// 10 px, the background's left-over should shrink to about 2/10 of its
/// 2-px noise (white noise, variance ∝ 1/σ²); above [`UNEVEN`] it holds
/// structure the fitted surface misses (uneven lighting, a glow, a bubble).
pub const UNEVEN: f64 = 0.4;

/// The ratio of [`UNEVEN`] when it is exceeded, from pixels more than 35 px
/// away from anything `o` detects (so the embryos' own light does not
/// count); None when even, or when too few such pixels remain to tell.
fn uneven_background(raw: &[f64], width: usize, o: &[f64], noise: f64, pad: Option<&[bool]>) -> Option<f64> {
    let clear: Vec<bool> =
        o.iter().enumerate().map(|(i, v)| *v <= outline::DETECT_SD * noise && !pad.is_some_and(|p| p[i])).collect();
    let distance = outline::distance_to_outside(&clear, width);
    let far: Vec<usize> = (0..raw.len()).filter(|&i| distance[i] > 35.0).collect();
    if far.len() < 2000 {
        return None;
    }
    let broad = smooth(raw, width, 10.0);
    let on: Vec<f64> = far.iter().map(|&i| broad[i]).collect();
    let near: Vec<f64> = far.iter().map(|&i| o[i]).collect();
    let ratio = median_and_sd(&on).1 / median_and_sd(&near).1.max(1e-12);
    (ratio > UNEVEN).then_some(ratio)
}

impl ImageMeasurement {
    /// An error when no embryo was measured, naming each candidate's reason.
    pub fn none_measured(&self, path: &std::path::Path) -> Option<MeasureError> {
        self.embryos.is_empty().then(|| MeasureError::NoEmbryo {
            path: path.to_path_buf(),
            why: self
                .skipped
                .iter()
                .map(|s| format!("candidate {}: {}", s.number, s.reason))
                .collect::<Vec<_>>()
                .join("; "),
        })
    }
}

/// Background pixels used for fits: at most this many (evenly strided).
const FIT_PIXELS: usize = 200_000;
/// Background pixels keep this far from anything detected, px.
const BACKGROUND_CLEARANCE_PX: f64 = 10.0;

/// Measures the boundaries of `opts.channels` in `planes`. Every candidate
/// found is either measured or listed in [`ImageMeasurement::skipped`] with
/// its reason; [`ImageMeasurement::none_measured`] turns an image where none
/// was measured into an error.
///
/// # Errors
/// [`MeasureError`] when a channel is missing, the contrast cannot be told,
/// or nothing stands out from the background.
pub fn measure(planes: &Planes, opts: &MeasureOptions) -> Result<ImageMeasurement, MeasureError> {
    let (w, h) = (planes.width, planes.height);
    let path = &planes.path;
    let count = planes.planes.len();
    let plane_of = |index: usize| {
        (index < count).then_some(index).ok_or(MeasureError::NoChannel { path: path.clone(), index, count })
    };
    for c in &opts.channels {
        plane_of(c.plane)?;
    }
    if let Outline::Plane(k) = opts.outline {
        plane_of(k)?;
    }
    if let Outline::Mask(m) = &opts.outline
        && m.len() != w * h
    {
        return Err(MeasureError::SizeMismatch { path: path.clone(), got: (m.len(), 1), want: (w, h) });
    }
    let no = |why: String| MeasureError::NoEmbryo { path: path.clone(), why };
    if w < 16 || h < 16 || opts.channels.is_empty() {
        return Err(no(format!("the image is only {w}×{h} px")));
    }
    let head_gene = match &opts.head {
        HeadRule::Guess { gene: Some(g) } => {
            Some(opts.channels.iter().find(|c| &c.gene == g).ok_or_else(|| MeasureError::HeadGene {
                gene: g.clone(),
                known: opts.channels.iter().map(|c| c.gene.as_str()).collect::<Vec<_>>().join(", "),
            })?)
        }
        HeadRule::Guess { gene: None } => opts.channels.first(),
        HeadRule::Given(_) => None,
    };
    // Padding around a rotated or shifted frame is not background.
    let pad = frame::padding(&planes.planes, w);
    let filled = pad.as_ref().map(|p| frame::fill(&planes.planes, w, p));
    let image: &[Vec<f64>] = filled.as_deref().unwrap_or(&planes.planes);
    let in_frame = |set: Vec<usize>| -> Vec<usize> {
        match &pad {
            Some(p) => set.into_iter().filter(|&i| !p[i]).collect(),
            None => set,
        }
    };
    // The border's background, from the mean of the planes.
    let mean: Vec<f64> = (0..w * h).map(|i| image.iter().map(|p| p[i]).sum::<f64>() / count as f64).collect();
    let band = (w.min(h) / 40).max(3);
    let edge = match &pad {
        // Inside a padded frame, the band along the frame's own edge.
        Some(p) => {
            let inside: Vec<bool> = p.iter().map(|x| !x).collect();
            let depth = outline::distance_to_outside(&inside, w);
            let along_frame = (0..w * h).filter(|&i| !p[i] && depth[i] <= band as f64).collect();
            background::background_of_band(&mean, w, along_frame)
        }
        None => background_border(&mean, w, band),
    };
    let mut set = thin(edge, FIT_PIXELS);
    let (contrast, contrast_how) = match opts.contrast {
        Some(c) => (c, "given".to_string()),
        None => {
            let (bright, dark) = contrast_counts(image, w, &set, pad.as_deref());
            if bright.max(dark) < outline::MIN_AREA_PX {
                return Err(no("nothing stands out from the background".into()));
            }
            let c = decide_contrast(bright, dark).ok_or(MeasureError::Contrast { path: path.clone(), bright, dark })?;
            (c, format!("detected: {bright} px clearly brighter than the background, {dark} px clearly darker"))
        }
    };
    // Half a grey level of the file: the quantisation floor.
    let step = if planes.bits >= 32 { 1e-6 } else { 1.0 / ((1u64 << planes.bits) - 1) as f64 };
    let quantisation_sd = step / 12f64.sqrt();
    let mut signals: Vec<(Vec<f64>, f64)> = Vec::new();
    let mut o = Vec::new();
    let mut uneven = None;
    let mut seg = outline::Segmentation { regions: Vec::new(), edges: Vec::new(), detected: Vec::new(), specks: 0 };
    // Three rounds: the border's quadratic, then quartics fitted away from
    // what the round before detected.
    for round in 0..3 {
        let degree = if round == 0 { background::BORDER_DEGREE } else { background::FULL_DEGREE };
        signals = image
            .par_iter()
            .map(|p| {
                let (s, sd) = signal(p, w, &set, contrast, 0.5 * step, degree);
                (s, sd.max(quantisation_sd))
            })
            .collect();
        let weighted = |k: usize| signals[k].0.iter().map(|v| v / signals[k].1).collect::<Vec<f64>>();
        let raw: Vec<f64> = match &opts.outline {
            Outline::Mask(m) => m.iter().map(|v| f64::from(u8::from(*v))).collect(),
            Outline::Plane(k) => weighted(*k),
            Outline::AllPlanes => {
                let mut sum = vec![0.0; w * h];
                for k in 0..count {
                    sum.iter_mut().zip(weighted(k)).for_each(|(s, v)| *s += v);
                }
                sum
            }
        };
        o = smooth(&raw, w, if matches!(opts.outline, Outline::Mask(_)) { 1.0 } else { SMOOTH_PX });
        seg = match &opts.outline {
            Outline::Mask(m) => {
                let l = outline::label(m, w);
                let specks = l.regions.iter().filter(|r| r.len() < outline::MIN_AREA_PX).count();
                let regions: Vec<_> = l.regions.into_iter().filter(|r| r.len() >= outline::MIN_AREA_PX).collect();
                let edges = vec![0.5; regions.len()];
                outline::Segmentation { regions, edges, detected: m.clone(), specks }
            }
            _ => {
                let on_set: Vec<f64> = set.iter().map(|&i| o[i]).collect();
                let top = o.iter().fold(0.0f64, |a, v| a.max(v.abs()));
                let noise = median_and_sd(&on_set).1.max(1e-3 * top).max(1e-12);
                if round == 2 {
                    uneven = uneven_background(&raw, w, &o, noise, pad.as_deref());
                }
                outline::segment(&o, w, noise)
            }
        };
        // The next round fits the background away from everything detected.
        let clear: Vec<bool> = seg.detected.iter().map(|d| !d).collect();
        let distance = outline::distance_to_outside(&clear, w);
        let away: Vec<usize> = (0..w * h).filter(|&i| distance[i] > BACKGROUND_CLEARANCE_PX).collect();
        let away = in_frame(away);
        if away.len() >= set.len().min(2000) {
            set = thin(away, FIT_PIXELS);
        }
    }
    if matches!(contrast, Contrast::Dark)
        && let Some(why) = checks::clipped_background(image, &set, step)
    {
        return Err(no(why));
    }
    if let Some(ratio) = uneven {
        return Err(no(format!(
            "the background is uneven on a scale its fitted surface does not follow (smoothed over 10 px, what is \
             left of it is {ratio:.2} of the 2-px noise; an evenly lit image gives about 0.25): correct the illumination \
             (flat-field) or outline the embryos with --mask"
        )));
    }
    let outline_how = match &opts.outline {
        Outline::AllPlanes => "all planes".to_string(),
        Outline::Plane(k) => format!("plane {k}"),
        Outline::Mask(_) => "mask".to_string(),
    };
    // Number the candidates top to bottom (in quarters of the height), then left to right.
    let mut candidates: Vec<(Embryo, &Vec<usize>, f64)> = seg
        .regions
        .iter()
        .zip(&seg.edges)
        .filter_map(|(r, edge)| geometry::principal_axes(r, w).map(|e| (e, r, *edge)))
        .collect();
    candidates.sort_by(|(a, _, _), (b, _, _)| {
        let band = |e: &Embryo| (4.0 * e.cy / h as f64).floor();
        band(a).total_cmp(&band(b)).then(a.cx.total_cmp(&b.cx))
    });
    let mut labels = vec![0u32; w * h];
    let mut embryos = Vec::new();
    let mut skipped = Vec::new();
    for (k, (e, pixels, edge)) in candidates.iter().enumerate() {
        let number = k + 1;
        for &i in pixels.iter() {
            labels[i] = number as u32;
        }
        let skip = |reason: String, cut: bool| Skipped { number, centre: (e.cx, e.cy), reason, cut };
        let touches = pixels.iter().any(|&i| {
            i % w == 0
                || i / w == 0
                || i % w == w - 1
                || i / w == h - 1
                || pad.as_ref().is_some_and(|p| frame::touches(p, w, i))
        });
        if touches {
            skipped.push(skip("cut by the image edge: not measured".into(), true));
            continue;
        }
        let shape = geometry::shape(pixels, e, w, h);
        if let Some(why) = geometry::implausible(&shape, e) {
            skipped.push(skip(format!("refused: {why}"), false));
            continue;
        }
        // Something attached: near a pole it changes the length (refused);
        // on a side it barely moves the axis (flagged).
        let mut notes = Vec::new();
        let (depth, at) = geometry::deepest_dent(pixels, w, h);
        if depth > geometry::DENT_PX.max(geometry::DENT_FRACTION * e.height()) {
            let along = ((at.0 - e.cx) * e.axis.0 + (at.1 - e.cy) * e.axis.1) / e.length();
            if along.abs() > 0.3 {
                skipped.push(skip(
                    format!(
                        "refused: its outline has a dent {depth:.0} px deep near its end, at ({:.0}, {:.0}) px: something is \
                         attached there (a cell, debris, another embryo) and would lengthen it; outline it alone with --mask",
                        at.0, at.1
                    ),
                    false,
                ));
                continue;
            }
            notes.push(format!(
                "its outline has a dent {depth:.0} px deep on its side at ({:.0}, {:.0}) px: something is attached; check the picture",
                at.0, at.1
            ));
        }
        let [a, b] = match geometry::place_poles(&o, w, e, *edge) {
            Ok(p) => p,
            Err(end) => {
                skipped.push(skip(
                    format!("refused: its end near ({:.0}, {:.0}) px has no clear edge", end.0, end.1),
                    false,
                ));
                continue;
            }
        };
        let strip_px = ((STRIP_FRACTION * e.height()).round() as usize).max(1);
        let sample = |plane: usize, from: (f64, f64), to: (f64, f64)| {
            profile::profile_line(&signals[plane].0, w, h, (from.1, from.0), (to.1, to.0), strip_px)
        };
        let guess = head_gene.map(|c| read::read_gene(&c.gene, sample(c.plane, a, b)));
        let decided = read::decide_head(
            &opts.head,
            a,
            b,
            guess.as_ref().map(|g| (g.gene.as_str(), g.level.as_slice(), g.patterned)),
        );
        let (a_first, head) = match decided {
            Ok(d) => d,
            Err(why) => {
                skipped.push(skip(format!("refused: {why}"), false));
                continue;
            }
        };
        let (from, to) = if a_first { (a, b) } else { (b, a) };
        let genes: Vec<GeneReading> =
            opts.channels.iter().map(|c| read::read_gene(&c.gene, sample(c.plane, from, to))).collect();
        let boundaries = genes.iter().flat_map(|g| g.boundaries.iter().cloned()).collect();
        notes.extend(checks::saturated(image, pixels, &opts.channels, contrast, step));
        match &opts.outline {
            Outline::Mask(_) => notes.extend(checks::beyond_mask(&signals, w, pixels, (e.cx, e.cy))),
            Outline::AllPlanes => notes.extend(checks::maybe_the_stain(&genes)),
            Outline::Plane(_) => {}
        }
        embryos.push(EmbryoMeasurement {
            number,
            embryo: *e,
            shape,
            length_px: (to.0 - from.0).hypot(to.1 - from.1),
            head_tail: [from, to],
            strip_px,
            head,
            genes,
            boundaries,
            notes,
        });
    }
    if embryos.is_empty() && skipped.is_empty() {
        return Err(no(format!(
            "nothing stands out from the background as {}; check the image and --stain",
            if contrast == Contrast::Bright { "brighter" } else { "darker" }
        )));
    }
    Ok(ImageMeasurement { contrast, contrast_how, outline_how, embryos, skipped, labels, specks: seg.specks })
}
