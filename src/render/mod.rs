//! Pictures from a [`Recording`]: kymograph, the pattern (an embryo-shaped
//! view of a row, or the sheet itself), expression profiles, and a GIF
//! animation. Every picture is labelled as a model prediction.
//!
//! Renderers see only the recording and its boundaries, never the model file.

mod animate;
mod axes;
mod bifurcation;
mod boundary_bands;
mod boundary_time;
mod canvas;
pub mod colour;
mod contours;
mod figure;
mod fit;
mod fold_curves;
mod growth;
mod kymograph;
mod measure;
mod options;
mod pattern;
mod phase;
mod portrait;
mod profiles;
mod replicates;
mod screen;
mod screen_time;
mod sweep;
mod tracks;

pub use animate::{GifMade, MIN_FRAMES, write_gif, write_grid_gif, write_pair_gif};
pub use bifurcation::bifurcation_picture;
pub use boundary_bands::boundary_bands;
pub use boundary_time::boundary_positions;
pub use canvas::{Align, Canvas, escape};
pub use colour::Background;
pub use contours::contours_picture;
pub use figure::{figure, on_levels};
pub use fit::{fit_boundaries, fit_profiles, fit_trace};
pub use fold_curves::{FoldPlane, fold_curves_picture};
pub use growth::{DISPLAY_NUCLEI, growth_pictures};
pub use kymograph::{KymoLayout, draw_tracks, kymograph, space_time};
pub use measure::{check_picture, comparison_overlay};
pub use screen::{sensitivity_map, shift_chart};
pub use screen_time::{MOST_PANELS, MutantRun, shifts_over_time};
pub use sweep::{class_color, sweep_picture};
pub use tracks::{BROAD, EXPRESSED, Segment, tracks};

pub use options::{StyleError, StyleOptions};

pub use pattern::{PatternLayout, pattern};
pub use phase::{basin_kymograph, label_color, landscape_picture};
pub use portrait::{PortraitData, portrait, write_cloud_gif};

pub use profiles::{chosen_snapshots, profiles};
pub use replicates::replicates_picture;

use crate::integrate::{ReadBackError, Recording};

/// How pictures look.
#[derive(Debug, Clone, PartialEq)]
pub struct Style {
    /// Title drawn at the top.
    pub title: String,
    /// Background (and so how gene colours combine).
    pub background: Background,
    /// Genes shown (indices into the recording), in legend order.
    pub genes: Vec<usize>,
    /// Colour of each gene of the recording.
    pub colors: Vec<[u8; 3]>,
    /// Picture width, layout units: the pixels at scale 1 (see [`Canvas`]).
    pub width: u32,
    /// The width every picture is drawn at, px, whatever width its layout
    /// takes (text, lines and marks scale with it); `None`: its layout width.
    pub pixel_width: Option<u32>,
    /// Also write every picture as SVG beside its PNG.
    pub svg: bool,
    /// Animation frames per second.
    pub fps: u32,
    /// Animations show every this many snapshots (and always the last).
    pub frame_every: usize,
    /// Animations larger than this give up frames, then colours, bytes.
    pub gif_max_bytes: Option<u64>,
    /// Snapshots shown: those with time in this range, min.
    pub time_range: (f64, f64),
    /// Draw the one shown gene as a heat map with the perceptually uniform
    /// [`colour::sequential`] map instead of its own colour.
    pub heatmap: bool,
}

impl Style {
    /// Every gene, its own colour, dark background, 720 px, 10 frames/s, all times.
    pub fn for_recording(rec: &Recording) -> Style {
        Style { genes: (0..rec.genes.len()).collect(), colors: rec.colors.clone(), ..Style::plain() }
    }

    /// No genes, dark background, 720 px at scale 1, 10 frames/s, all times.
    pub fn plain() -> Style {
        Style {
            title: String::new(),
            background: Background::Dark,
            genes: Vec::new(),
            colors: Vec::new(),
            width: 720,
            pixel_width: None,
            svg: false,
            fps: 10,
            frame_every: 1,
            gif_max_bytes: None,
            time_range: (f64::NEG_INFINITY, f64::INFINITY),
            heatmap: false,
        }
    }

    /// The frames of an animation among `n` snapshots (indices 0..n): every
    /// [`Self::frame_every`]-th, and always the last.
    pub fn frames(&self, n: usize) -> Vec<usize> {
        let every = self.frame_every.max(1);
        let mut out: Vec<usize> = (0..n).step_by(every).collect();
        if n > 0 && out.last() != Some(&(n - 1)) {
            out.push(n - 1);
        }
        out
    }

    /// A canvas of this style's background laid out `width × height`,
    /// drawn [`Self::pixel_width`] px wide.
    pub fn canvas(&self, width: u32, height: u32) -> Canvas {
        let scale = self.pixel_width.map_or(1.0, |p| p as f32 / width.max(1) as f32);
        let canvas = Canvas::scaled(width, height, self.background.rgb(), scale);
        if self.svg { canvas } else { canvas.without_svg() }
    }

    /// Indices of the snapshots inside the time range.
    pub fn snapshots(&self, rec: &Recording) -> Vec<usize> {
        (0..rec.times.len())
            .filter(|&s| rec.times[s] >= self.time_range.0 - 1e-9 && rec.times[s] <= self.time_range.1 + 1e-9)
            .collect()
    }

    /// Colours of the shown genes.
    pub fn shown_colors(&self) -> Vec<[u8; 3]> {
        self.genes.iter().map(|&g| self.colors[g]).collect()
    }

    /// Colour of a pixel whose shown genes are at relative levels `levels` (0–1).
    pub fn paint(&self, colors: &[[u8; 3]], mut levels: impl Iterator<Item = f64>) -> [u8; 3] {
        if self.heatmap {
            colour::sequential(levels.next().unwrap_or(0.0))
        } else {
            colour::mix(colors, levels, self.background)
        }
    }
}

/// Largest level of each gene over the shown snapshots (1 where a gene is blank),
/// the scale that maps a level to colour intensity.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn gene_maxima(rec: &Recording, snapshots: &[usize]) -> Result<Vec<f64>, ReadBackError> {
    Ok(rec.max_levels(snapshots.iter().copied())?.into_iter().map(|m| if m > 0.0 { m } else { 1.0 }).collect())
}

/// Level of gene `g` at axis position `x_um` at snapshot `s`, linear between
/// nucleus centres (constant beyond the first and last), from a column profile.
pub fn level_at(profile: &[f64], spacing_um: f64, x_um: f64) -> f64 {
    let f = x_um / spacing_um - 0.5;
    if f <= 0.0 {
        return profile[0];
    }
    let i = f.floor() as usize;
    if i + 1 >= profile.len() {
        return profile[profile.len() - 1];
    }
    let w = f - i as f64;
    profile[i] * (1.0 - w) + profile[i + 1] * w
}

/// Text used on every picture that could pass for data.
pub const PREDICTION_LABEL: &str = "model prediction";

/// Title size, px, and the smallest a long title is shrunk to.
const TITLE_SIZE: (f32, f32) = (16.0, 12.0);

/// Draws a picture's title from `x` at baseline `y`, within `max_w` px: at
/// 16 px, shrunk (to 12 px at least) if it would not fit, and cut short with
/// "…" if even that does not fit, so it never runs into what sits to its right.
pub fn title(canvas: &mut Canvas, x: f32, y: f32, max_w: f32, ink: [u8; 3], text: &str) {
    let (size, shown) = fit_title(text, max_w);
    canvas.text(x, y, size, ink, Align::Left, &shown);
}

/// The size and text [`title`] draws.
fn fit_title(text: &str, max_w: f32) -> (f32, String) {
    let (mut size, least) = TITLE_SIZE;
    while size > least && Canvas::text_width(size, text) > max_w {
        size -= 0.25;
    }
    let mut shown = text.to_string();
    let mut keep = text.chars().count();
    while Canvas::text_width(size, &shown) > max_w && keep > 0 {
        keep -= 1;
        shown = format!("{}…", text.chars().take(keep).collect::<String>().trim_end());
    }
    (size, shown)
}

/// [`title`] from `left`, and the [`PREDICTION_LABEL`] right-aligned at
/// `right_edge` on the same baseline; the title keeps clear of the label.
pub fn title_and_label(canvas: &mut Canvas, left: f32, right_edge: f32, y: f32, bg: Background, text: &str) {
    const GAP: f32 = 12.0;
    let label_w = Canvas::text_width(12.0, PREDICTION_LABEL);
    title(canvas, left, y, right_edge - label_w - GAP - left, bg.ink(), text);
    canvas.text(right_edge, y, 12.0, bg.muted(), Align::Right, PREDICTION_LABEL);
}

/// A "nice" length for a scale bar of about a fifth of `length_um`: 1, 2 or 5 × 10^k µm.
pub fn scale_bar_um(length_um: f64) -> f64 {
    let target = length_um / 5.0;
    let p = 10f64.powf(target.log10().floor());
    [1.0, 2.0, 5.0, 10.0].iter().map(|m| m * p).filter(|v| *v <= target * 1.5).fold(p, f64::max)
}

/// The gene key, right- or left-aligned at `x`, baseline `y`. Given the
/// levels that full colour stands for (`maxima`, by gene), each name says its
/// range ("amber 0–1.2"), and a heat map gets a colour bar numbered from 0 to
/// its gene's maximum; without them (a line plot, whose axis gives levels),
/// names only.
pub fn legend(
    canvas: &mut Canvas,
    rec: &Recording,
    style: &Style,
    x: f32,
    y: f32,
    align_right: bool,
    maxima: Option<&[f64]>,
) {
    let size = 14.0;
    let ink = style.background.ink();
    if let (true, Some(max)) = (style.heatmap, maxima) {
        let g = style.genes[0];
        let name = format!("{}: 0", rec.genes[g]);
        let top = level_text(max[g]);
        let (bar_w, gap) = (120.0, 6.0);
        let total = Canvas::text_width(size, &name) + gap + bar_w + gap + Canvas::text_width(size, &top);
        let left = if align_right { x - total } else { x };
        canvas.text(left, y, size, ink, Align::Left, &name);
        let bar_left = left + Canvas::text_width(size, &name) + gap;
        for k in 0..bar_w as u32 {
            canvas.rect(bar_left + k as f32, y - 11.0, 1.0, 12.0, colour::sequential(k as f64 / (bar_w - 1.0) as f64));
        }
        canvas.text(bar_left + bar_w + gap, y, size, ink, Align::Left, &top);
        return;
    }
    let items: Vec<(String, [u8; 3])> = style
        .genes
        .iter()
        .map(|&g| {
            let name = match maxima {
                Some(max) => format!("{} 0–{}", rec.genes[g], level_text(max[g])),
                None => rec.genes[g].clone(),
            };
            (name, style.colors[g])
        })
        .collect();
    let widths: Vec<f32> = items.iter().map(|(n, _)| 18.0 + Canvas::text_width(size, n) + 14.0).collect();
    let total: f32 = widths.iter().sum();
    let mut pen = if align_right { x - total } else { x };
    for ((name, c), w) in items.iter().zip(widths) {
        canvas.rect(pen, y - 11.0, 12.0, 12.0, *c);
        canvas.text(pen + 17.0, y, size, ink, Align::Left, name);
        pen += w;
    }
}

/// A level for a key: three significant figures, plainly written between
/// 0.01 and 10⁴, in e-notation outside.
pub fn level_text(v: f64) -> String {
    if v != 0.0 && !(0.01..1e4).contains(&v.abs()) {
        return format!("{v:.2e}");
    }
    let digits = (2 - v.abs().max(1e-300).log10().floor() as i32).clamp(0, 4) as usize;
    let text = format!("{v:.digits$}");
    if text.contains('.') { text.trim_end_matches('0').trim_end_matches('.').to_string() } else { text }
}

/// Formats a time for labels: whole minutes without decimals.
pub fn time_text(t: f64) -> String {
    if (t - t.round()).abs() < 1e-9 { format!("{}", t.round()) } else { format!("{t:.1}") }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn titles_shrink_then_shorten_to_fit() {
        let text = "Salt and pepper: lateral inhibition between neighbouring cells";
        let full = Canvas::text_width(16.0, text);
        assert_eq!(fit_title(text, full + 1.0), (16.0, text.to_string()));
        let (size, shown) = fit_title(text, full * 0.9);
        assert!((12.0..16.0).contains(&size) && shown == text, "{size} {shown}");
        assert!(Canvas::text_width(size, &shown) <= full * 0.9);
        let (size, shown) = fit_title(text, full * 0.5);
        assert_eq!(size, 12.0);
        assert!(shown.ends_with('…') && shown.len() < text.len(), "{shown}");
        assert!(Canvas::text_width(size, &shown) <= full * 0.5);
        assert!(
            Canvas::text_width(size, &shown) > full * 0.5 - Canvas::text_width(12.0, "MM…"),
            "cut no shorter than needed"
        );
    }

    #[test]
    fn scale_bar_is_nice() {
        assert_eq!(scale_bar_um(500.0), 100.0);
        assert_eq!(scale_bar_um(400.0), 100.0);
        assert_eq!(scale_bar_um(60.0), 10.0);
        assert_eq!(scale_bar_um(2000.0), 500.0);
    }

    #[test]
    fn level_interpolates_between_centres() {
        let p = [0.0, 10.0, 20.0];
        assert_eq!(level_at(&p, 2.0, 1.0), 0.0);
        assert_eq!(level_at(&p, 2.0, 2.0), 5.0);
        assert_eq!(level_at(&p, 2.0, 6.0), 20.0);
    }
}
