//! Expression against position (% length) at a few times, boundaries marked.

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::{Style, legend, level_at, time_text, title_and_label};
use crate::integrate::{ReadBackError, Recording};
use crate::readout::Boundary;

/// Up to four shown snapshots, evenly spread, always including the last.
pub fn chosen_snapshots(shown: &[usize]) -> Vec<usize> {
    let n = shown.len();
    if n <= 4 {
        return shown.to_vec();
    }
    let mut picks: Vec<usize> = (0..4).map(|k| shown[k * (n - 1) / 3]).collect();
    picks.dedup();
    picks
}

fn boundary_label(b: &Boundary) -> String {
    format!("{:.1}%", b.position_pct)
}

/// Draws the profiles; `final_boundaries` are marked at the last chosen time.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn profiles(rec: &Recording, final_boundaries: &[Boundary], style: &Style) -> Result<Canvas, ReadBackError> {
    Ok(profiles_with_axes(rec, final_boundaries, style, &|_, _| {})?.0)
}

/// As [`profiles`], with `underlay` drawn on the plot before the curves
/// (beneath them), also returning the plot axes.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn profiles_with_axes(
    rec: &Recording,
    final_boundaries: &[Boundary],
    style: &Style,
    underlay: &dyn Fn(&mut Canvas, &Axes),
) -> Result<(Canvas, Axes), ReadBackError> {
    let bg = style.background;
    let width = style.width.max(320);
    let (left, right, bottom) = (64.0, 24.0, 70.0);
    let plot_h = 300.0;
    let shown: Vec<(&Boundary, usize)> = final_boundaries
        .iter()
        .filter_map(|b| style.genes.iter().find(|&&g| rec.genes[g] == b.gene).map(|&g| (b, g)))
        .collect();
    // Boundary labels: a row above the plot, another row wherever two would
    // overlap; the rows sit between the legend line and the plot, so the
    // plot moves down when more rows are needed.
    let along = Axes::along_axis(left, 0.0, right, width, plot_h, (0.0, 1.0), false);
    let mut placed: Vec<(f32, f32, usize)> = Vec::new();
    for (b, _) in &shown {
        let x = along.px(b.position_pct);
        let half = Canvas::text_width(11.0, &boundary_label(b)) / 2.0 + 3.0;
        let row = (0..)
            .find(|r| !placed.iter().any(|(l, rr, pr)| pr == r && x - half < *rr && x + half > *l))
            .expect("some row is free");
        placed.push((x - half, x + half, row));
    }
    let rows = placed.iter().map(|p| p.2 + 1).max().unwrap_or(0);
    const LEGEND_LINE: f32 = 46.0;
    let top = (LEGEND_LINE + 8.0 + 12.0 * rows as f32).max(70.0);
    let mut c = style.canvas(width, (top + plot_h + bottom) as u32);
    let picks = chosen_snapshots(&style.snapshots(rec));
    let top_levels = rec.max_levels(picks.iter().copied())?;
    let ymax = style.genes.iter().map(|&g| top_levels[g]).fold(0.0f64, f64::max);
    let ymax = if ymax > 0.0 { ymax * 1.05 } else { 1.0 };
    let a = Axes::along_axis(left, top, right, width, plot_h, (0.0, ymax), false);
    let length = rec.grid.length_um();
    let samples = (a.width as usize).max(2);
    underlay(&mut c, &a);
    for (k, &s) in picks.iter().enumerate() {
        // Earlier times fainter: opacity from 25 % to 100 %.
        let alpha = if picks.len() == 1 { 255 } else { (64.0 + 191.0 * k as f64 / (picks.len() - 1) as f64) as u8 };
        let dash = (k + 1 < picks.len()).then_some([6.0, 4.0]);
        for (&g, p) in style.genes.iter().zip(rec.axis_profiles(s, style.genes.iter().copied())?) {
            let pts: Vec<(f32, f32)> = (0..=samples)
                .map(|i| {
                    let pct = 100.0 * i as f64 / samples as f64;
                    (a.px(pct), a.py(level_at(&p, rec.grid.spacing_um, pct / 100.0 * length)))
                })
                .collect();
            c.polyline(&pts, 2.0, style.colors[g], alpha, dash);
        }
    }
    for ((b, g), (_, _, row)) in shown.iter().zip(&placed) {
        let x = a.px(b.position_pct);
        c.polyline(&[(x, a.top + a.height), (x, a.top)], 1.0, style.colors[*g], 160, Some([2.0, 3.0]));
        c.text(x, a.top - 4.0 - 12.0 * *row as f32, 11.0, style.colors[*g], Align::Centre, &boundary_label(b));
    }
    // The y-axis title on the legend's line, clear of the label rows.
    axes::draw(&mut c, &a, "position along the axis (% length)", "", bg);
    c.text(left - 8.0, LEGEND_LINE, 14.0, bg.ink(), Align::Left, "level (a.u.)");
    title_and_label(&mut c, left, width as f32 - right, 24.0, bg, &style.title);
    let times: Vec<String> = picks.iter().map(|&s| time_text(rec.times[s])).collect();
    let note =
        format!("t = {} min (dashed, fainter = earlier); dotted lines: boundaries at the last time", times.join(", "));
    c.text(left, c.height() as f32 - 12.0, 12.0, bg.muted(), Align::Left, &note);
    legend(&mut c, rec, style, width as f32 - right, LEGEND_LINE, true, None);
    Ok((c, a))
}
