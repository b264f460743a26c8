//! Kymograph: position along the axis across, time down, genes mixed as
//! channels, boundaries traced as thin lines.

use super::axes::{self, Axes};
use super::canvas::Canvas;
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
    let snaps = style.snapshots(rec);
    let max = gene_maxima(rec, &snaps)?;
    let colors = style.shown_colors();
    let profiles: Vec<Vec<Vec<f64>>> =
        snaps.iter().map(|&s| rec.axis_profiles(s, style.genes.iter().copied())).collect::<Result<_, _>>()?;
    let length = rec.grid.length_um();
    let times: Vec<f64> = snaps.iter().map(|&s| rec.times[s]).collect();
    let (mut c, a) = space_time(&times, style, "time (min)", 0.0, |x_frac, k| {
        let x_um = x_frac * length;
        style.paint(
            &colors,
            style.genes.iter().zip(&profiles[k]).map(|(&g, p)| level_at(p, rec.grid.spacing_um, x_um) / max[g]),
        )
    });
    // A gene is expressed at snapshot k once its highest level there reaches
    // EXPRESSED of its highest over the shown snapshots.
    let expressed = |j: usize, k: usize| {
        let top = profiles[k][j].iter().copied().fold(0.0, f64::max);
        top >= EXPRESSED * max[style.genes[j]]
    };
    trace_boundaries(&mut c, &a, rec, boundaries, style, length, &times, &expressed);
    let right = c.width() as f32 - 24.0;
    legend(&mut c, rec, style, right, 50.0, true, Some(&max));

    Ok((c, KymoLayout { axes: a }))
}

/// A space × time picture: position along the axis (% length) across, the
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
    let mut c = Canvas::new(width, height, bg.rgb());
    let a = Axes::along_axis(left, top, right, width, plot_h, (t0, if t1 > t0 { t1 } else { t0 + 1.0 }), true);
    let (pw, ph) = (a.width.round() as u32, a.height.round() as u32);
    for row in 0..ph {
        let t = a.y.0 + (row as f64 + 0.5) / ph as f64 * (a.y.1 - a.y.0);
        let k = nearest(times, t);
        for col in 0..pw {
            c.put(left as u32 + col, top as u32 + row, paint((col as f64 + 0.5) / pw as f64, k));
        }
    }
    axes::draw(&mut c, &a, "position along the axis (% length)", y_label, bg);
    title_and_label(&mut c, left, width as f32 - right, 26.0, bg, &style.title);
    (c, a)
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

/// A boundary is traced on the kymograph only where its gene's highest level
/// is at least this fraction of the gene's highest over the shown times: the
/// crossings of a gene that is barely on are those of a nearly flat profile,
/// and wander (common practice, no source).
pub const EXPRESSED: f64 = 0.25;

/// A boundary wider than this fraction of the axis (its width: the gene's
/// maximum over the slope at the crossing) is a shallow gradient more than an
/// edge, and is traced thin and dotted (common practice, no source).
pub const BROAD: f64 = 0.25;

/// Links each boundary to the nearest boundary of the same gene and direction
/// at the previous snapshot (if within a tenth of the axis) and draws the
/// segment in the gene's colour over a halo of the background (in the ink
/// colour on a heat map; thin and dotted where either end is [`BROAD`];
/// dashed for every gene after the first, so that coinciding boundaries of
/// two genes show both colours),
/// where the gene is expressed at both ends:
/// `expressed(j, k)` for shown gene j at snapshot k of `times`.
#[allow(clippy::too_many_arguments)]
fn trace_boundaries(
    c: &mut Canvas,
    a: &Axes,
    rec: &Recording,
    boundaries: &[Boundary],
    style: &Style,
    length: f64,
    times: &[f64],
    expressed: &dyn Fn(usize, usize) -> bool,
) {
    let (ink, halo) = (style.background.ink(), style.background.rgb());
    // (segment, colour, broad, first gene): halos are drawn under every line,
    // and genes after the first dashed, so coinciding boundaries show both.
    let mut segments: Vec<([(f32, f32); 2], [u8; 3], bool, bool)> = Vec::new();
    let on = |j: usize, t: f64| times.iter().position(|&s| (s - t).abs() <= 1e-9 * t.abs().max(1.0)).is_some_and(|k| expressed(j, k));
    for (j, &g) in style.genes.iter().enumerate() {
        let colour = if style.heatmap { ink } else { style.colors[g] };
        for dir in ["rising", "falling"] {
            // (time, [(µm, broad)]).
            let mut by_time: Vec<(f64, Vec<(f64, bool)>)> = Vec::new();
            for b in boundaries.iter().filter(|b| {
                b.gene == rec.genes[g] && b.direction == dir && b.time_min >= a.y.0 - 1e-9 && b.time_min <= a.y.1 + 1e-9
            }) {
                let x = (b.position_um, b.width_um > BROAD * length);
                match by_time.last_mut() {
                    Some((t, xs)) if *t == b.time_min => xs.push(x),
                    _ => by_time.push((b.time_min, vec![x])),
                }
            }
            for pair in by_time.windows(2) {
                let ((t_prev, prev), (t, now)) = (&pair[0], &pair[1]);
                if !(on(j, *t_prev) && on(j, *t)) {
                    continue;
                }
                for &(x, broad) in now {
                    let nearest = prev.iter().copied().min_by(|p, q| (p.0 - x).abs().total_cmp(&(q.0 - x).abs()));
                    if let Some((p, was_broad)) = nearest.filter(|p| (p.0 - x).abs() < 0.1 * length) {
                        let pct = |u: f64| 100.0 * u / length;
                        let segment = [(a.px(pct(p)), a.py(*t_prev)), (a.px(pct(x)), a.py(*t))];
                        segments.push((segment, colour, broad || was_broad, j == 0));
                    }
                }
            }
        }
    }
    for (segment, _, broad, _) in &segments {
        if !broad {
            c.polyline(segment, 4.0, halo, 255, None);
        }
    }
    for (segment, colour, broad, first) in &segments {
        match (broad, first) {
            (true, _) => c.polyline(segment, 1.2, *colour, 200, Some([3.0, 3.0])),
            (false, true) => c.polyline(segment, 1.8, *colour, 255, None),
            (false, false) => c.polyline(segment, 1.8, *colour, 255, Some([4.0, 4.0])),
        }
    }
}
