//! Pictures of a growing row ([`crate::growth`]): the kymograph and the
//! boundary positions against time, both along % of the length at each
//! time, with each division marked by a dashed line and each mitosis window
//! shaded.

use super::Style;
use super::axes::Axes;
use super::boundary_time::boundary_positions_noted;
use super::canvas::{Align, Canvas};
use super::kymograph::kymograph_noted;
use crate::growth::{EventKind, GrowthRun};
use crate::integrate::{ReadBackError, Recording};
use crate::readout::Boundary;

/// Nuclei of the grid that the pictures resample every snapshot onto.
pub const DISPLAY_NUCLEI: usize = 400;

/// The boundaries as the display recording (100 "µm" long: % of the
/// length at each time) places them.
fn in_display_units(boundaries: &[Boundary], run: &GrowthRun) -> Vec<Boundary> {
    boundaries
        .iter()
        .map(|b| {
            let length = run.frames.iter().find(|f| f.time_min == b.time_min).map_or(100.0, |f| f.grid.length_um());
            Boundary { position_um: b.position_pct, width_um: 100.0 * b.width_um / length, ..b.clone() }
        })
        .collect()
}

/// Marks divisions (dashed lines, labelled with the nuclei after) and
/// mitosis windows (a bar beside the plot area) at their times, on the plot
/// area `a` whose time axis is across (`time_across`) or down.
fn mark_events(c: &mut Canvas, a: &Axes, run: &GrowthRun, style: &Style, time_across: bool) {
    let muted = style.background.muted();
    let ink = style.background.ink();
    let (lo, hi) = if time_across { a.x } else { a.y };
    let shown = |t: f64| t >= lo.min(hi) - 1e-9 && t <= lo.max(hi) + 1e-9;
    let clamp = |t: f64| t.clamp(lo.min(hi), lo.max(hi));
    let mut window_start = None;
    let refined = run.events.iter().any(|e| e.kind == EventKind::Refinement);
    let mut cycle = 0;
    for e in &run.events {
        let line = if time_across {
            [(a.px(e.time_min), a.top), (a.px(e.time_min), a.top + a.height)]
        } else {
            [(a.left, a.py(e.time_min)), (a.left + a.width, a.py(e.time_min))]
        };
        match e.kind {
            EventKind::MitosisStart => window_start = Some(e.time_min),
            EventKind::Division => {
                if let Some(t0) = window_start.take().filter(|&t0| shown(t0) || shown(e.time_min)) {
                    // A bar beside the plot area, along the window (the part in the time range).
                    let (t0, t1) = (clamp(t0), clamp(e.time_min));
                    let bar = if time_across {
                        [(a.px(t0), a.top - 5.0), (a.px(t1), a.top - 5.0)]
                    } else {
                        [(a.left - 5.0, a.py(t0)), (a.left - 5.0, a.py(t1))]
                    };
                    c.polyline(&bar, 6.0, muted, 230, None);
                }
                cycle += 1;
                if shown(e.time_min) {
                    c.polyline(&line, 1.2, ink, 200, Some([4.0, 3.0]));
                    // After a refinement, grid points are not nuclei.
                    let text = if refined {
                        format!("division {cycle}")
                    } else {
                        format!("division {cycle}: {} nuclei", e.nuclei.1)
                    };
                    label(c, a, e.time_min, time_across, ink, &text);
                }
            }
            EventKind::Refinement if shown(e.time_min) => {
                c.polyline(&line, 1.0, muted, 200, Some([1.5, 3.5]));
                label(c, a, e.time_min, time_across, muted, &format!("grid refined: {} points", e.nuclei.1));
            }
            EventKind::Refinement => {}
        }
    }
}

/// Writes an event's label beside its line.
fn label(c: &mut Canvas, a: &Axes, t: f64, time_across: bool, ink: [u8; 3], text: &str) {
    if time_across {
        c.text(a.px(t) + 3.0, a.top + 12.0, 11.0, ink, Align::Left, text);
    } else {
        c.text(a.left + a.width - 4.0, a.py(t) - 3.0, 11.0, ink, Align::Right, text);
    }
}

/// The kymograph and the boundary-position picture of a growing row, from
/// its display recording ([`GrowthRun::display_recording`]) and its
/// boundaries (µm and % at each time).
///
/// # Errors
/// [`ReadBackError`] never in practice (the recording is in memory).
pub fn growth_pictures(
    run: &GrowthRun,
    display: &Recording,
    boundaries: &[Boundary],
    style: &Style,
) -> Result<(Canvas, Canvas), ReadBackError> {
    let shown = in_display_units(boundaries, run);
    let (first, last) = (&run.frames[0], &run.frames[run.frames.len() - 1]);
    let note = format!(
        "% of the length at each time ({:.0} µm at {} min, {:.0} µm at {} min); dashed: divisions; \
         grey bars: mitosis (production paused)",
        first.grid.length_um(),
        first.time_min,
        last.grid.length_um(),
        last.time_min
    );
    let (mut kymo, layout) = kymograph_noted(display, &shown, style, Some(&note))?;
    mark_events(&mut kymo, &layout.axes, run, style, false);
    let (mut track, a) = boundary_positions_noted(display, &shown, style, Some(&note))?;
    mark_events(&mut track, &a, run, style, true);
    Ok((kymo, track))
}
