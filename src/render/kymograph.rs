//! Kymograph: position along the axis across, time down, genes mixed as
//! channels, boundaries traced as thin lines.

use super::axes::{self, Axes};
use super::canvas::Canvas;
use super::tracks::Segment;
use super::{Style, gene_maxima, legend, level_at, title_and_label};
use crate::integrate::{ReadBackError, Recording};
use crate::readout::Boundary;

/// Where things are on a kymograph, for callers that annotate or check it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KymoLayout {
    /// Plot area: x in % of axis length, y in min (downwards).
    pub axes: Axes,
}

/// Draws the kymograph of the shown snapshots, tracing `boundaries`.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
///
/// # Panics
/// If the style selects no snapshot.
pub fn kymograph(
    rec: &Recording,
    boundaries: &[Boundary],
    style: &Style,
) -> Result<(Canvas, KymoLayout), ReadBackError> {
    kymograph_noted(rec, boundaries, style, None)
}

/// [`kymograph`] with one line of explanation at the foot.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn kymograph_noted(
    rec: &Recording,
    boundaries: &[Boundary],
    style: &Style,
    note: Option<&str>,
) -> Result<(Canvas, KymoLayout), ReadBackError> {
    let snaps = style.snapshots(rec);
    let max = gene_maxima(rec, &snaps)?;
    let colors = style.shown_colors();
    let profiles: Vec<Vec<Vec<f64>>> =
        snaps.iter().map(|&s| rec.axis_profiles(s, style.genes.iter().copied())).collect::<Result<_, _>>()?;
    let length = rec.grid.length_um();
    let times: Vec<f64> = snaps.iter().map(|&s| rec.times[s]).collect();
    let footer = if note.is_some() { 18.0 } else { 0.0 };
    let (mut c, a) = space_time(&times, style, &along_label(rec), "time (min)", footer, |x_frac, k| {
        let x_um = x_frac * length;
        style.paint(
            &colors,
            style.genes.iter().zip(&profiles[k]).map(|(&g, p)| level_at(p, rec.grid.spacing_um, x_um) / max[g]),
        )
    });
    let segments = super::tracks::tracks(rec, boundaries, style)?;
    draw_tracks(&mut c, &segments, style, |(t, x)| (a.px(x), a.py(t)));
    let right = c.width() as f32 - 24.0;
    legend(&mut c, rec, style, right, 50.0, true, Some(&max));
    if let Some(note) = note {
        let y = c.height() as f32 - 8.0;
        c.text(right, y, 12.0, style.background.muted(), super::canvas::Align::Right, note);
    }

    Ok((c, KymoLayout { axes: a }))
}

/// A space × time picture: position along the axis (% length, `x_label`) across, the
/// given snapshot `times` down; `paint(x_fraction, k)` colours the pixel at
/// that fraction of the axis and snapshot k. Draws axes, the title and the
/// prediction label; the caller adds the legend (top right, baseline y = 50).
/// The canvas has `footer` px beneath the axis label for a key.
///
/// # Panics
/// If `times` is empty.
pub fn space_time(
    times: &[f64],
    style: &Style,
    x_label: &str,
    y_label: &str,
    footer: f32,
    paint: impl Fn(f64, usize) -> [u8; 3] + Sync,
) -> (Canvas, Axes) {
    assert!(!times.is_empty(), "no snapshot in the time range");
    let (t0, t1) = (times[0], times[times.len() - 1]);
    let bg = style.background;
    let plot_h = (times.len() as f32 * 6.0).clamp(240.0, 480.0);
    let (left, top, right, bottom) = (64.0, 64.0, 24.0, 58.0 + footer);
    let width = style.width.max(320);
    let height = (top + plot_h + bottom) as u32;
    let mut c = style.canvas(width, height);
    let a = Axes::along_axis(left, top, right, width, plot_h, (t0, if t1 > t0 { t1 } else { t0 + 1.0 }), true);
    c.raster(a.left, a.top, a.width, a.height, |u, v| Some(paint(u, nearest(times, a.y.0 + v * (a.y.1 - a.y.0)))));
    axes::draw(&mut c, &a, x_label, y_label, bg);
    title_and_label(&mut c, left, width as f32 - right, 26.0, bg, &style.title);
    (c, a)
}

/// The label of the axis along the tissue: on a sheet, levels are the mean
/// over the central rows ([`Recording::midline_rows`]), as every readout of
/// a sheet reads them.
pub fn along_label(rec: &Recording) -> String {
    if !rec.grid.is_sheet() {
        return "position along the axis (% length)".into();
    }
    let rows = rec.midline_rows();
    let h = rec.grid.spacing_um;
    format!("position along x (% width), mean of rows y = {:.0}–{:.0} µm", rows.start as f64 * h, rows.end as f64 * h)
}

fn nearest(times: &[f64], t: f64) -> usize {
    let k = times.partition_point(|x| *x < t);
    if k == 0 {
        0
    } else if k >= times.len() || t - times[k - 1] <= times[k] - t {
        k - 1
    } else {
        k
    }
}

/// More tracks than this at a time, on average, and they are drawn thin,
/// without halos (common practice, no source).
pub const BUSY: usize = 8;

/// Draws boundary tracks, mapping (time, % length) to pixels with `at`: in
/// each gene's colour over a halo of the background (in the ink colour on a
/// heat map), thin and dotted where broad ([`super::tracks::BROAD`]); the
/// first gene's line is wider than the others', drawn over it, so that
/// coinciding boundaries of two genes show both colours. Halos go under
/// every line. With more than [`BUSY`] tracks at a time, thin lines only.
pub fn draw_tracks(c: &mut Canvas, segments: &[Segment], style: &Style, at: impl Fn((f64, f64)) -> (f32, f32)) {
    let (ink, halo) = (style.background.ink(), style.background.rgb());
    let colour = |s: &Segment| if style.heatmap { ink } else { style.colors[s.gene] };
    // Many tracks at once (travelling waves, many stripes): thin lines
    // without halos, which would otherwise hide the pattern.
    let mut times: Vec<u64> = segments.iter().map(|s| s.from.0.to_bits()).collect();
    times.sort_unstable();
    times.dedup();
    if segments.len() > BUSY * times.len().max(1) {
        for s in segments {
            c.polyline(&[at(s.from), at(s.to)], 1.0, colour(s), if s.broad { 90 } else { 170 }, None);
        }
        return;
    }
    for s in segments.iter().filter(|s| !s.broad) {
        c.polyline(&[at(s.from), at(s.to)], 4.5, halo, 255, None);
    }
    for s in segments {
        let line = [at(s.from), at(s.to)];
        match (s.broad, s.rank == 0) {
            (true, _) => c.polyline(&line, 1.4, colour(s), 190, Some([1.5, 3.5])),
            (false, true) => c.polyline(&line, 2.4, colour(s), 255, None),
            (false, false) => c.polyline(&line, 1.2, colour(s), 255, None),
        }
    }
}
