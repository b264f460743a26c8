//! `sweep.png`: a phase diagram of a sweep. Two axes: the parameter plane,
//! each grid cell coloured by its pattern class, with contours of one
//! boundary's position (% length), or on a sheet of the dominant wavelength
//! (µm). One axis: the class along the parameter above, every boundary's
//! position (on a sheet, the wavelength) against the parameter below. Log axes
//! are drawn in log₁₀. More than two axes: the first two, at the middle
//! value of the others.

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::{Style, title_and_label};
use crate::sweep::{PatternClass, Sweep};

/// The colour of a class (our own choice: muted, told apart by lightness
/// as well as hue, none a gene colour).
pub fn class_color(c: PatternClass) -> [u8; 3] {
    match c {
        PatternClass::NoBoundary => [64, 64, 72],
        PatternClass::Boundary => [70, 120, 170],
        PatternClass::Stripe => [205, 160, 70],
        PatternClass::SeveralStripes => [180, 80, 90],
        PatternClass::Changing => [140, 110, 190],
        PatternClass::Failed => [235, 235, 235],
        PatternClass::Domains => [90, 160, 150],
        PatternClass::Spots => [225, 120, 60],
        PatternClass::ParallelStripes => [200, 190, 90],
        PatternClass::Labyrinth => [150, 70, 140],
    }
}

/// Axis coordinate of a value: log₁₀ on a log axis.
fn coord(log: bool, v: f64) -> f64 {
    if log { v.log10() } else { v }
}

/// The points shown: for each cell (i along axis 0, j along axis 1, or j = 0
/// with one axis) its point index; other axes at their middle value.
fn shown(s: &Sweep) -> Vec<(usize, usize, usize)> {
    let mids: Vec<usize> = s.axes.iter().map(|a| a.values.len() / 2).collect();
    (0..s.points.len())
        .filter_map(|k| {
            let idx = s.indices(k);
            idx.iter()
                .enumerate()
                .skip(2)
                .all(|(a, &i)| i == mids[a])
                .then(|| (idx[0], idx.get(1).copied().unwrap_or(0), k))
        })
        .collect()
}

/// The boundary whose position is contoured: the first boundary of the
/// middle point (gene and direction), or of any point if it has none.
fn contoured(s: &Sweep) -> Option<(String, &'static str)> {
    let mid = s.points.get(s.points.len() / 2).into_iter().chain(s.points.iter());
    mid.flat_map(|p| p.boundaries.first()).next().map(|b| (b.gene.clone(), b.direction))
}

/// Draws the picture.
pub fn sweep_picture(s: &Sweep, style: &Style) -> Canvas {
    let bg = style.background;
    let width = style.width.max(420);
    let (left, right, top, plot_h, bottom) = (78.0, 24.0, 96.0, 360.0, 70.0);
    let mut c = style.canvas(width, (top + plot_h + bottom) as u32);
    let a0 = &s.axes[0];
    let label = |a: &crate::sweep::Axis| if a.log { format!("log10 {}", a.name) } else { a.name.clone() };
    let span = |a: &crate::sweep::Axis| {
        let (lo, hi) = (coord(a.log, a.values[0]), coord(a.log, *a.values.last().unwrap_or(&a.values[0])));
        let half = 0.5 * (hi - lo) / (a.values.len() - 1).max(1) as f64;
        (lo.min(hi) - half.abs(), lo.max(hi) + half.abs())
    };
    let cells = shown(s);
    // On a sheet the lines and the lower panel show the dominant wavelength
    // (midline boundaries mean little there); on a row, one boundary's position.
    let target = if s.sheet { None } else { contoured(s) };
    let wavelength = |k: usize| s.points[k].wavelength.as_ref().map_or(f64::NAN, |w| w.wavelength_um);
    let position = |k: usize| -> f64 {
        if s.sheet {
            return wavelength(k);
        }
        let Some((g, d)) = &target else { return f64::NAN };
        s.points[k].boundaries.iter().find(|b| &b.gene == g && b.direction == *d).map_or(f64::NAN, |b| b.position_pct)
    };
    let unit = if s.sheet { " µm" } else { "%" };
    if s.axes.len() >= 2 {
        let a1 = &s.axes[1];
        let mut ax = Axes::along_axis(left, top, right, width, plot_h, span(a1), false);
        ax.x = span(a0);
        let (n0, n1) = (a0.values.len(), a1.values.len());
        let cw = ax.width / n0 as f32;
        let ch = ax.height / n1 as f32;
        let mut grid = vec![f64::NAN; n0 * n1];
        for &(i, j, k) in &cells {
            let x = ax.px(coord(a0.log, a0.values[i])) - cw / 2.0;
            let y = ax.py(coord(a1.log, a1.values[j])) - ch / 2.0;
            c.rect(x, y, cw + 0.5, ch + 0.5, class_color(s.points[k].class));
            grid[i * n1 + j] = position(k);
        }
        // Contours by marching squares on the cell centres, at round levels.
        let (lo, hi) = grid
            .iter()
            .filter(|v| v.is_finite())
            .fold((f64::INFINITY, f64::NEG_INFINITY), |m, v| (m.0.min(*v), m.1.max(*v)));
        if lo < hi {
            for level in axes::nice_ticks(lo, hi, 6) {
                let mut segments: Vec<[(f32, f32); 2]> = Vec::new();
                for i in 0..n0.saturating_sub(1) {
                    for j in 0..n1.saturating_sub(1) {
                        let v = [
                            grid[i * n1 + j],
                            grid[(i + 1) * n1 + j],
                            grid[(i + 1) * n1 + j + 1],
                            grid[i * n1 + j + 1],
                        ];
                        if v.iter().any(|x| !x.is_finite()) {
                            continue;
                        }
                        let corner = |q: usize| -> (f32, f32) {
                            let (ii, jj) = [(i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1)][q];
                            (ax.px(coord(a0.log, a0.values[ii])), ax.py(coord(a1.log, a1.values[jj])))
                        };
                        let mut hits = Vec::new();
                        for e in 0..4 {
                            let (p, q) = (e, (e + 1) % 4);
                            if (v[p] - level) * (v[q] - level) < 0.0 {
                                let f = ((level - v[p]) / (v[q] - v[p])) as f32;
                                let (a, b) = (corner(p), corner(q));
                                hits.push((a.0 + f * (b.0 - a.0), a.1 + f * (b.1 - a.1)));
                            }
                        }
                        for pair in hits.chunks_exact(2) {
                            c.polyline(&[pair[0], pair[1]], 1.5, bg.ink(), 230, None);
                            segments.push([pair[0], pair[1]]);
                        }
                    }
                }
                // The label at the middle piece of the line.
                if let Some(seg) = segments.get(segments.len() / 2) {
                    let t = format!("{level}{unit}");
                    c.text(seg[0].0 + 3.0, seg[0].1 - 3.0, 11.0, bg.ink(), Align::Left, &t);
                }
            }
        }
        axes::draw(&mut c, &ax, &label(a0), &label(a1), bg);
    } else {
        // One axis: a class strip, then positions (or wavelengths) against the parameter.
        let strip = 26.0;
        let top_value = if s.sheet {
            let most = cells.iter().map(|&(_, _, k)| wavelength(k)).filter(|v| v.is_finite()).fold(0.0, f64::max);
            if most > 0.0 { 1.1 * most } else { 1.0 }
        } else {
            100.0
        };
        let mut ax =
            Axes::along_axis(left, top + strip + 28.0, right, width, plot_h - strip - 28.0, (0.0, top_value), false);
        ax.x = span(a0);
        let cw = ax.width / a0.values.len() as f32;
        let dot = |c: &mut Canvas, i: usize, gene: &str, y: f64| {
            let g = s.genes.iter().position(|n| n == gene).unwrap_or(0);
            let col = style.colors.get(g).copied().unwrap_or(bg.ink());
            c.ellipse(ax.px(coord(a0.log, a0.values[i])), ax.py(y), 2.5, 2.5, 1.0, col, Some(col));
        };
        for &(i, _, k) in &cells {
            let x = ax.px(coord(a0.log, a0.values[i])) - cw / 2.0;
            c.rect(x, top, cw + 0.5, strip, class_color(s.points[k].class));
            if s.sheet {
                if let Some(w) = &s.points[k].wavelength {
                    dot(&mut c, i, &w.gene, w.wavelength_um);
                }
            } else {
                for b in &s.points[k].boundaries {
                    dot(&mut c, i, &b.gene, b.position_pct);
                }
            }
        }
        let y_label = if s.sheet { "dominant wavelength (µm)" } else { "boundary position (% length)" };
        axes::draw(&mut c, &ax, &label(a0), y_label, bg);
    }
    // The key: every class present, in order.
    let present: Vec<PatternClass> =
        PatternClass::ALL.into_iter().filter(|k| cells.iter().any(|&(_, _, p)| s.points[p].class == *k)).collect();
    let mut pen = left;
    for k in present {
        c.rect(pen, 50.0, 12.0, 12.0, class_color(k));
        c.text(pen + 16.0, 61.0, 13.0, bg.ink(), Align::Left, k.name());
        pen += 16.0 + Canvas::text_width(13.0, k.name()) + 18.0;
    }
    let mut note = String::new();
    if s.sheet {
        note = "repeating patterns: dominant wavelength (µm) of the gene that gave the class".into();
    } else if s.axes.len() >= 2
        && let Some((g, d)) = &target
    {
        note = format!("lines: {g} {d} boundary at the % of length marked");
    }
    if s.axes.len() > 2 {
        note.push_str("; other parameters at their middle values");
    }
    c.text(left, c.height() as f32 - 12.0, 12.0, bg.muted(), Align::Left, &note);
    title_and_label(&mut c, left, width as f32 - right, 26.0, bg, &style.title);
    c
}
