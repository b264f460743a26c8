//! Pictures of the phase-space analysis: the basin kymograph and the
//! attractors along the axis. Titles say what was frozen and when.

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::colour::{Background, mix};
use super::kymograph::space_time;
use super::{PREDICTION_LABEL, Style, time_text, title};
use crate::integrate::Recording;
use crate::phase::{BasinAnalysis, Landscape};

/// Colour of an attractor label: the mixed colours of the genes that are on
/// in it; grey for "low", near-white for "cycle", dark red for "unresolved".
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
            mix(&on, std::iter::repeat(1.0), Background::Dark)
        }
    }
}

fn label_legend(c: &mut Canvas, labels: &[String], rec: &Recording, style: &Style, right: f32, y: f32) {
    let size = 13.0;
    let widths: Vec<f32> = labels.iter().map(|l| 17.0 + Canvas::text_width(size, l) + 12.0).collect();
    let mut pen = right - widths.iter().sum::<f32>();
    for (l, w) in labels.iter().zip(widths) {
        c.rect(pen, y - 11.0, 12.0, 12.0, label_color(l, rec, style));
        c.text(pen + 16.0, y, size, style.background.ink(), Align::Left, l);
        pen += w;
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
    let (mut c, ax) =
        space_time(&a.times, &titled, &super::kymograph::along_label(rec), "time (min)", 0.0, |x_frac, k| {
            let ix = ((x_frac * nx as f64) as usize).min(nx - 1);
            label_color(&a.basins[k][row0 + ix].label, rec, style)
        });
    let commit = a.commitment();
    let pts: Vec<(f32, f32)> = (0..nx)
        .map(|ix| {
            let x = 100.0 * rec.grid.x_um(ix) / rec.grid.length_um();
            (ax.px(x), ax.py(commit[row0 + ix].time_min))
        })
        .collect();
    c.polyline(&pts, 1.5, style.background.ink(), 220, Some([2.0, 3.0]));
    let right = c.width() as f32 - 24.0;
    label_legend(&mut c, &a.labels, rec, style, right, 50.0);
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
pub fn landscape_picture(rec: &Recording, l: &Landscape, gene: usize, style: &Style) -> Canvas {
    let bg = style.background;
    let width = style.width.max(320);
    let (left, top, right, bottom) = (64.0, 70.0, 24.0, 64.0);
    let plot_h = 320.0;
    let mut c = style.canvas(width, (top + plot_h + bottom) as u32);
    let ymax = l
        .branches
        .iter()
        .flat_map(|b| b.points.iter().map(|p| p.x[gene]))
        .chain(l.per_nucleus.iter().flatten().map(|p| p.x[gene]))
        .fold(0.0, f64::max);
    let a = Axes::along_axis(left, top, right, width, plot_h, (0.0, if ymax > 0.0 { 1.08 * ymax } else { 1.0 }), false);
    let color = style.colors[gene];
    for b in &l.branches {
        // Runs of equal stability, drawn as one line each.
        let mut start = 0;
        for k in 1..=b.points.len() {
            if k == b.points.len() || b.points[k].kind.is_stable() != b.points[start].kind.is_stable() {
                let end = k.min(b.points.len() - 1);
                let pts: Vec<(f32, f32)> = b.points[start..=end].iter().map(|p| (a.px(p.s), a.py(p.x[gene]))).collect();
                if b.points[start].kind.is_stable() {
                    c.polyline(&pts, 2.5, color, 255, None);
                } else {
                    c.polyline(&pts, 1.5, bg.ink(), 200, Some([5.0, 4.0]));
                }
                start = k;
            }
        }
    }
    for (k, ps) in l.per_nucleus.iter().enumerate() {
        for p in ps {
            let (x, y) = (a.px(l.nucleus_pct[k]), a.py(p.x[gene]));
            if p.kind.is_stable() {
                c.ellipse(x, y, 1.6, 1.6, 0.0, color, Some(bg.ink()));
            } else {
                c.ellipse(x, y, 1.6, 1.6, 0.8, bg.muted(), None);
            }
        }
    }
    for f in l.branches.iter().flat_map(|b| &b.folds) {
        let (x, y) = (a.px(f.s), a.py(f.x[gene]));
        c.ellipse(x, y, 6.0, 6.0, 1.5, bg.ink(), None);
        c.text(x + 8.0, y - 8.0, 12.0, bg.ink(), Align::Left, &format!("fold {:.1}%", f.s));
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
    let note = "solid: stable branch   dashed: unstable   dots: each nucleus's fixed points   rings: folds";
    c.text(left, c.height() as f32 - 10.0, 12.0, bg.muted(), Align::Left, note);
    c
}
