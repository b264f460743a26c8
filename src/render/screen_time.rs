//! Boundaries over time in a screen: the wild type against each mutant,
//! one small panel per mutant, the wild type's tracks in grey beneath the
//! mutant's in its genes' colours.

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::kymograph::draw_tracks;
use super::tracks::tracks;
use super::{Style, legend, title_and_label};
use crate::integrate::{ReadBackError, Recording};
use crate::readout::Boundary;

/// The most mutants one picture holds.
pub const MOST_PANELS: usize = 24;

/// A mutant's run, or why it has none.
pub type MutantRun = (String, Result<(Recording, Vec<Boundary>), String>);

/// Draws the panels: time (min) across, boundary position (% length) up;
/// every mutant against the wild type `wt` (its recording and boundaries
/// over time). At most [`MOST_PANELS`] mutants.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn shifts_over_time(
    wt: (&Recording, &[Boundary]),
    mutants: &[MutantRun],
    style: &Style,
) -> Result<Canvas, ReadBackError> {
    let bg = style.background;
    let width = style.width.max(560) as f32;
    let (left, right, gap) = (56.0, 24.0, 40.0);
    let (top, panel_h, row_gap, bottom) = (98.0, 150.0, 52.0, 44.0);
    let columns = 2;
    let rows = mutants.len().div_ceil(columns).max(1);
    let panel_w = (width - left - right - gap * (columns - 1) as f32) / columns as f32;
    let height = top + rows as f32 * (panel_h + row_gap) + bottom;
    let mut c = style.canvas(width as u32, height as u32);
    let (rec, wt_bounds) = wt;
    let t1 = *rec.times.last().unwrap_or(&1.0);
    let wt_segments = tracks(rec, wt_bounds, style)?;
    let grey = bg.muted();
    for (k, (name, run)) in mutants.iter().enumerate() {
        let (col, row) = (k % columns, k / columns);
        let a = Axes {
            left: left + col as f32 * (panel_w + gap),
            top: top + row as f32 * (panel_h + row_gap),
            width: panel_w,
            height: panel_h,
            x: (rec.times[0], if t1 > rec.times[0] { t1 } else { rec.times[0] + 1.0 }),
            y: (0.0, 100.0),
            y_down: false,
        };
        let at = |(t, x): (f64, f64)| (a.px(t), a.py(x));
        for s in &wt_segments {
            c.polyline(&[at(s.from), at(s.to)], 3.0, grey, 200, None);
        }
        match run {
            Ok((mrec, mb)) => draw_tracks(&mut c, &tracks(mrec, mb, style)?, style, at),
            Err(why) => c.text(a.left + 8.0, a.top + a.height / 2.0, 12.0, bg.ink(), Align::Left, why),
        }
        let x_label = if row + 1 == rows || k + columns >= mutants.len() { "time (min)" } else { "" };
        axes::draw(&mut c, &a, x_label, "", bg);
        c.text(a.left, a.top - 6.0, 13.0, bg.ink(), Align::Left, name);
    }
    title_and_label(&mut c, left, width - right, 26.0, bg, &style.title);
    c.text(
        left,
        50.0,
        12.0,
        bg.muted(),
        Align::Left,
        "boundary position (% length) over time; grey: wild type, colours: the mutant",
    );
    legend(&mut c, rec, style, width - right, 70.0, true, None);
    Ok(c)
}
