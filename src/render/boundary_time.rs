//! Boundary position over time: each boundary's track (% of the axis
//! length) against time, in its gene's colour, drawn as on the kymograph
//! (expressed genes only; broad stretches dotted).

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::kymograph::draw_tracks;
use super::{Style, legend, title_and_label};
use crate::integrate::{ReadBackError, Recording};
use crate::readout::Boundary;

/// Draws the boundary positions of the shown genes against time; also
/// returns the plot area (x: time, min; y: % of the axis length, upwards).
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn boundary_positions(
    rec: &Recording,
    boundaries: &[Boundary],
    style: &Style,
) -> Result<(Canvas, Axes), ReadBackError> {
    boundary_positions_noted(rec, boundaries, style, None)
}

/// [`boundary_positions`] with one more line of explanation at the foot.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn boundary_positions_noted(
    rec: &Recording,
    boundaries: &[Boundary],
    style: &Style,
    extra: Option<&str>,
) -> Result<(Canvas, Axes), ReadBackError> {
    let snaps = style.snapshots(rec);
    let (t0, t1) = match (snaps.first(), snaps.last()) {
        (Some(&a), Some(&b)) => (rec.times[a], rec.times[b]),
        _ => (0.0, 1.0),
    };
    let segments = super::tracks::tracks(rec, boundaries, style)?;
    let bg = style.background;
    let width = style.width.max(320);
    let (left, top, right, bottom) = (64.0, 64.0, 24.0, if extra.is_some() { 94.0 } else { 76.0 });
    let plot_h = 300.0;
    let mut c = style.canvas(width, (top + plot_h + bottom) as u32);
    let a = Axes {
        left,
        top,
        width: width as f32 - left - right,
        height: plot_h,
        x: (t0, if t1 > t0 { t1 } else { t0 + 1.0 }),
        y: (0.0, 100.0),
        y_down: false,
    };
    for y in [25.0, 50.0, 75.0] {
        c.polyline(&[(a.left, a.py(y)), (a.left + a.width, a.py(y))], 1.0, bg.muted(), 110, Some([2.0, 5.0]));
    }
    draw_tracks(&mut c, &segments, style, |(t, x)| (a.px(t), a.py(x)));
    let y_label = if rec.grid.is_sheet() {
        "boundary position along x (% width), central rows"
    } else {
        "boundary position (% length)"
    };
    axes::draw(&mut c, &a, "time (min)", y_label, bg);
    title_and_label(&mut c, left, width as f32 - right, 26.0, bg, &style.title);
    legend(&mut c, rec, style, width as f32 - right, 50.0, true, None);
    let note = if segments.is_empty() {
        "no boundary of a shown gene while it is expressed".to_string()
    } else {
        format!(
            "drawn once a gene reaches {:.0} % of its highest level; dotted: broader than {:.0} % of the axis",
            100.0 * super::tracks::EXPRESSED,
            100.0 * super::tracks::BROAD
        )
    };
    c.text(width as f32 - right, top + plot_h + 62.0, 12.0, bg.muted(), Align::Right, &note);
    if let Some(extra) = extra {
        c.text(width as f32 - right, top + plot_h + 80.0, 12.0, bg.muted(), Align::Right, extra);
    }
    Ok((c, a))
}
