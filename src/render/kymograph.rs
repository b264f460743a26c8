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
    trace_boundaries(&mut c, &a, rec, boundaries, style, length);
    let right = c.width() as f32 - 24.0;
    legend(&mut c, rec, style, right, 50.0, true);

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

/// Links each boundary to the nearest boundary of the same gene and direction
/// at the previous snapshot (if within a tenth of the axis) and draws the segment.
fn trace_boundaries(c: &mut Canvas, a: &Axes, rec: &Recording, boundaries: &[Boundary], style: &Style, length: f64) {
    let ink = style.background.ink();
    for &g in &style.genes {
        for dir in ["rising", "falling"] {
            let mut by_time: Vec<(f64, Vec<f64>)> = Vec::new();
            for b in boundaries.iter().filter(|b| {
                b.gene == rec.genes[g] && b.direction == dir && b.time_min >= a.y.0 - 1e-9 && b.time_min <= a.y.1 + 1e-9
            }) {
                match by_time.last_mut() {
                    Some((t, xs)) if *t == b.time_min => xs.push(b.position_um),
                    _ => by_time.push((b.time_min, vec![b.position_um])),
                }
            }
            for pair in by_time.windows(2) {
                let ((t_prev, prev), (t, now)) = (&pair[0], &pair[1]);
                for x in now {
                    let nearest = prev.iter().copied().min_by(|p, q| (p - x).abs().total_cmp(&(q - x).abs()));
                    if let Some(p) = nearest.filter(|p| (p - x).abs() < 0.1 * length) {
                        let pct = |u: f64| 100.0 * u / length;
                        c.polyline(&[(a.px(pct(p)), a.py(*t_prev)), (a.px(pct(*x)), a.py(*t))], 1.5, ink, 230, None);
                    }
                }
            }
        }
    }
}
