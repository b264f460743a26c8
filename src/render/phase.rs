//! Pictures of the phase-space analysis: the basin kymograph and the
//! attractors along the axis. Titles say what was frozen and when.

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::colour::{Background, mix};
use super::kymograph::space_time;
use super::{PREDICTION_LABEL, Style, time_text, title};
use crate::integrate::Recording;
use crate::phase::{BasinAnalysis, Landscape};

/// Colour of an attractor label: a single gene's own colour; for several
/// genes on together the mean of their colours (not their additive mix,
/// which tends to white and would pass for "cycle"); grey for "low",
/// near-white for "cycle", dark red for "unresolved".
pub fn label_color(label: &str, rec: &Recording, style: &Style) -> [u8; 3] {
    match label {
        "low" => [105, 105, 105],
        "cycle" => [235, 235, 235],
        "unresolved" => [140, 30, 30],
        _ => {
            let on: Vec<[u8; 3]> = label
                .split('+')
                .filter_map(|g| rec.genes.iter().position(|n| n == g))
                .map(|g| style.colors[g])
                .collect();
            if on.is_empty() {
                return mix(&on, std::iter::repeat(1.0), Background::Dark);
            }
            combined_colour(&on)
        }
    }
}

/// The colour of an attractor with several genes on: the mean of their
/// colours.
fn combined_colour(on: &[[u8; 3]]) -> [u8; 3] {
    [0, 1, 2].map(|k| (on.iter().map(|c| c[k] as f32).sum::<f32>() / on.len().max(1) as f32).round() as u8)
}

/// Height of the attractor key of `labels` laid out in rows within `width` px.
fn label_rows(labels: &[String], width: f32) -> Vec<Vec<(String, f32)>> {
    let size = 13.0;
    let mut rows: Vec<Vec<(String, f32)>> = vec![Vec::new()];
    let mut used = 0.0;
    for l in labels {
        let w = 17.0 + Canvas::text_width(size, l) + 14.0;
        if used + w > width && !rows.last().is_some_and(Vec::is_empty) {
            rows.push(Vec::new());
            used = 0.0;
        }
        rows.last_mut().expect("a row").push((l.clone(), w));
        used += w;
    }
    rows
}

/// The attractor key, in rows from `(left, y)`, each swatch outlined so a
/// pale one shows on a light background.
fn label_legend(c: &mut Canvas, rows: &[Vec<(String, f32)>], rec: &Recording, style: &Style, left: f32, y: f32) {
    for (r, row) in rows.iter().enumerate() {
        let mut pen = left;
        let y = y + 18.0 * r as f32;
        for (l, w) in row {
            c.rect(pen, y - 11.0, 12.0, 12.0, label_color(l, rec, style));
            c.polyline(
                &[(pen, y - 11.0), (pen + 12.0, y - 11.0), (pen + 12.0, y + 1.0), (pen, y + 1.0), (pen, y - 11.0)],
                1.0,
                style.background.muted(),
                255,
                None,
            );
            c.text(pen + 17.0, y, 13.0, style.background.ink(), Align::Left, l);
            pen += w;
        }
    }
}

/// Nucleus (along the axis; the midline row of a sheet) × time, coloured by
/// the attractor each nucleus's isolated dynamics head to; commitment times
/// marked as a dotted line.
pub fn basin_kymograph(rec: &Recording, a: &BasinAnalysis, style: &Style) -> Canvas {
    let nx = rec.grid.nx;
    let row0 = rec.midline_rows().start * nx;
    let mut titled = style.clone();
    titled.title = format!("Basins: isolated nucleus, {} frozen at each time", a.frozen);
    // The key goes below the plot, in as many rows as it needs.
    let rows = label_rows(&a.labels, style.width.max(320) as f32 - 64.0 - 24.0);
    let footer = 34.0 + 18.0 * rows.len() as f32;
    let (mut c, ax) =
        space_time(&a.times, &titled, &super::kymograph::along_label(rec), "time (min)", footer, |x_frac, k| {
            let ix = ((x_frac * nx as f64) as usize).min(nx - 1);
            label_color(&a.basins[k][row0 + ix].label, rec, style)
        });
    let commit = a.commitment();
    // A commitment at the first time would lie on the frame: kept 2 px inside.
    let pts: Vec<(f32, f32)> = (0..nx)
        .map(|ix| {
            let x = 100.0 * rec.grid.x_um(ix) / rec.grid.length_um();
            (ax.px(x), ax.py(commit[row0 + ix].time_min).max(ax.top + 2.0))
        })
        .collect();
    c.polyline(&pts, 3.5, style.background.rgb(), 160, None);
    c.polyline(&pts, 1.5, style.background.ink(), 255, Some([2.0, 3.0]));
    let key_y = ax.top + ax.height + 62.0;
    label_legend(&mut c, &rows, rec, style, ax.left, key_y);
    c.text(
        64.0,
        42.0,
        12.0,
        style.background.muted(),
        Align::Left,
        "dotted: commitment time (attractor fixed from then on)",
    );
    c
}

/// Fixed points of the isolated nucleus against position, for gene `gene`:
/// continued branches (stable solid, unstable dashed), folds ringed and
/// labelled, and each nucleus's own fixed points as dots.
///
/// Stable branches take the colour of the attractor they are (as in the
/// basin picture, named with `on_level`); unstable ones are dashed in the
/// muted ink; the nuclei's own fixed points are small marks drawn first,
/// beneath the branches, so they never hide a line's dashes.
pub fn landscape_picture(rec: &Recording, l: &Landscape, gene: usize, on_level: &[f64], style: &Style) -> Canvas {
    let bg = style.background;
    let width = style.width.max(320);
    let (left, right) = (64.0, 24.0);
    // The key to the lines, on one line where it fits, else on two.
    let (first, second) = (
        "solid: stable branch, coloured by attractor   dashed: unstable",
        "dots: each nucleus's fixed points   rings: folds",
    );
    let one = format!("{first}   {second}");
    let two_lines = Canvas::text_width(12.0, &one) > width as f32 - left - right;
    let bottom = if two_lines { 80.0 } else { 64.0 };
    // The attractors the stable branches are, for the key above the plot.
    let mut shown: Vec<String> = Vec::new();
    for p in l.branches.iter().flat_map(|b| &b.points).filter(|p| p.kind.is_stable()) {
        let label = crate::phase::basins::state_label(&p.x, &rec.genes, on_level);
        if !shown.contains(&label) {
            shown.push(label);
        }
    }
    let rows = label_rows(&shown, width as f32 - left - right);
    let top = 76.0 + 18.0 * rows.len() as f32;
    let plot_h = 320.0;
    let mut c = style.canvas(width, (top + plot_h + bottom) as u32);
    let ymax = l
        .branches
        .iter()
        .flat_map(|b| b.points.iter().map(|p| p.x[gene]))
        .chain(l.per_nucleus.iter().flatten().map(|p| p.x[gene]))
        .fold(0.0, f64::max);
    let a = Axes::along_axis(left, top, right, width, plot_h, (0.0, if ymax > 0.0 { 1.08 * ymax } else { 1.0 }), false);
    let colour_of = |x: &[f64]| label_color(&crate::phase::basins::state_label(x, &rec.genes, on_level), rec, style);
    for (k, ps) in l.per_nucleus.iter().enumerate() {
        for p in ps {
            let (x, y) = (a.px(l.nucleus_pct[k]), a.py(p.x[gene]));
            if p.kind.is_stable() {
                c.ellipse(x, y, 1.3, 1.3, 0.0, bg.muted(), Some(bg.muted()));
            } else {
                c.ellipse(x, y, 1.3, 1.3, 0.6, bg.muted(), None);
            }
        }
    }
    for b in &l.branches {
        // Runs of equal stability and attractor, drawn as one line each.
        let name = |p: &crate::phase::BranchPoint| {
            if p.kind.is_stable() {
                crate::phase::basins::state_label(&p.x, &rec.genes, on_level)
            } else {
                String::new()
            }
        };
        let mut start = 0;
        for k in 1..=b.points.len() {
            if k == b.points.len() || name(&b.points[k]) != name(&b.points[start]) {
                let end = k.min(b.points.len() - 1);
                let pts: Vec<(f32, f32)> = b.points[start..=end].iter().map(|p| (a.px(p.s), a.py(p.x[gene]))).collect();
                let first = &b.points[start];
                if first.kind.is_stable() {
                    c.polyline(&pts, 5.0, bg.rgb(), 255, None);
                    c.polyline(&pts, 2.5, colour_of(&first.x), 255, None);
                } else {
                    c.polyline(&pts, 1.5, bg.ink(), 220, Some([5.0, 4.0]));
                }
                start = k;
            }
        }
    }
    // The same fold met from two branches (or two sheet rows) is ringed and
    // labelled once; a label that would run past the plot goes to the left.
    let mut ringed: Vec<(f32, f32)> = Vec::new();
    for f in l.branches.iter().flat_map(|b| &b.folds) {
        let (x, y) = (a.px(f.s), a.py(f.x[gene]));
        if ringed.iter().any(|&(px, py)| (px - x).abs() < 4.0 && (py - y).abs() < 4.0) {
            continue;
        }
        ringed.push((x, y));
        c.ellipse(x, y, 6.0, 6.0, 1.5, bg.ink(), None);
        let label = format!("fold {:.1}%", f.s);
        if x + 8.0 + Canvas::text_width(12.0, &label) > a.left + a.width {
            c.text(x - 8.0, y - 8.0, 12.0, bg.ink(), Align::Right, &label);
        } else {
            c.text(x + 8.0, y - 8.0, 12.0, bg.ink(), Align::Left, &label);
        }
    }
    axes::draw(
        &mut c,
        &a,
        "position along the axis (% length)",
        &format!("{} at fixed points (a.u.)", rec.genes[gene]),
        bg,
    );
    let heading = format!("Attractors along the axis: isolated nucleus, gradients at t = {} min", time_text(l.t_min));
    title(&mut c, left, 24.0, width as f32 - right - left, bg.ink(), &heading);
    c.text(width as f32 - right, 44.0, 12.0, bg.muted(), Align::Right, PREDICTION_LABEL);
    // The key to the lines, on one line where it fits, else on two.
    let (first, second) = (
        "solid: stable branch, coloured by attractor   dashed: unstable",
        "dots: each nucleus's fixed points   rings: folds",
    );
    let h = c.height() as f32;
    let one = format!("{first}   {second}");
    if Canvas::text_width(12.0, &one) <= width as f32 - left - right {
        c.text(left, h - 10.0, 12.0, bg.muted(), Align::Left, &one);
    } else {
        c.text(left, h - 24.0, 12.0, bg.muted(), Align::Left, first);
        c.text(left, h - 9.0, 12.0, bg.muted(), Align::Left, second);
    }
    label_legend(&mut c, &rows, rec, style, left, 62.0);
    c
}

#[cfg(test)]
mod tests {
    use super::*;

    /// WCAG 2.1 contrast ratio (W3C 2018, "relative luminance" and
    /// "contrast ratio" definitions).
    fn contrast(a: [u8; 3], b: [u8; 3]) -> f64 {
        let lum = |c: [u8; 3]| {
            let lin = |v: u8| {
                let v = v as f64 / 255.0;
                if v <= 0.04045 { v / 12.92 } else { ((v + 0.055) / 1.055).powf(2.4) }
            };
            0.2126 * lin(c[0]) + 0.7152 * lin(c[1]) + 0.0722 * lin(c[2])
        };
        let (x, y) = (lum(a), lum(b));
        (x.max(y) + 0.05) / (x.min(y) + 0.05)
    }

    /// Every pair and triple of the default gene colours, combined, keeps a
    /// 3:1 contrast with the dark background (WCAG 2.1 success criterion
    /// 1.4.11, non-text contrast) and stays apart from "cycle"'s near-white
    /// (1.44 at the least, measured; the additive mix used before came within
    /// 1.02 of it, which is how "gorse+moor" passed for a cycle).
    #[test]
    fn combined_attractors_are_neither_white_nor_lost_in_the_background() {
        let p = crate::model::PALETTE;
        let cycle = [235, 235, 235];
        let mut worst: (f64, f64) = (f64::INFINITY, f64::INFINITY);
        for i in 0..p.len() {
            for j in i + 1..p.len() {
                let mut sets = vec![vec![p[i], p[j]]];
                sets.extend((j + 1..p.len()).map(|k| vec![p[i], p[j], p[k]]));
                for on in sets {
                    let c = combined_colour(&on);
                    worst.0 = worst.0.min(contrast(c, [0, 0, 0]));
                    worst.1 = worst.1.min(contrast(c, cycle));
                }
            }
        }
        assert!(worst.0 >= 3.0, "against the background: {:.2}", worst.0);
        assert!(worst.1 >= 1.4, "against cycle: {:.2}", worst.1);
        let additive = mix(&[p[0], p[4]], std::iter::repeat(1.0), Background::Dark);
        assert!(contrast(additive, cycle) < 1.4, "the old mix would fail this test");
    }
}
