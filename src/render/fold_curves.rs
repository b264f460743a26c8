//! Fold curves in two parameters: the plane of the two parameters shaded by
//! how many stable states the isolated nucleus has there (found point by
//! point), the fold curves drawn over it in ink, cusps ringed and labelled.

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::colour::blend;
use super::{Style, title_and_label};
use crate::phase::FoldCurve;

/// What a fold-curve picture shows.
pub struct FoldPlane<'a> {
    /// The curves.
    pub curves: &'a [FoldCurve],
    /// Stable states at the centres of an nx × ny grid, rows from the lowest q.
    pub counts: &'a [u8],
    /// Grid size.
    pub grid: (usize, usize),
    /// First parameter: name and range.
    pub p: (&'a str, (f64, f64)),
    /// Second parameter: name and range.
    pub q: (&'a str, (f64, f64)),
    /// Heading.
    pub heading: &'a str,
}

/// Draws the plane.
pub fn fold_curves_picture(f: &FoldPlane, style: &Style) -> Canvas {
    let bg = style.background;
    let width = style.width.max(320);
    let (left, right, top, plot_h) = (64.0, 24.0, 76.0, 320.0);
    let key = [
        "shade: stable states found point by point: grey 0, plain 1, tint 2, deeper 3+",
        "lines: fold curves   ring: cusp   (isolated nucleus)",
    ];
    let bottom = 64.0 + 16.0 * key.len() as f32;
    let mut c = style.canvas(width, (top + plot_h + bottom) as u32);
    let a = Axes { left, top, width: width as f32 - left - right, height: plot_h, x: f.p.1, y: f.q.1, y_down: false };
    let (nx, ny) = f.grid;
    let shades =
        [blend(bg.muted(), bg.rgb(), 0.35), bg.rgb(), blend(bg.ink(), bg.rgb(), 0.12), blend(bg.ink(), bg.rgb(), 0.28)];
    c.raster(a.left, a.top, a.width, a.height, |u, v| {
        let i = ((u * nx as f64) as usize).min(nx - 1);
        let j = (((1.0 - v) * ny as f64) as usize).min(ny - 1);
        let n = f.counts.get(j * nx + i).copied().unwrap_or(1) as usize;
        Some(shades[n.min(3)])
    });
    let ink = bg.ink();
    for curve in f.curves {
        let pts: Vec<(f32, f32)> = curve.points.iter().map(|p| (a.px(p.p), a.py(p.q))).collect();
        c.polyline(&pts, 2.5, ink, 255, None);
    }
    for curve in f.curves {
        for cusp in &curve.cusps {
            let (px, py) = (a.px(cusp.p), a.py(cusp.q));
            c.ellipse(px, py, 6.0, 6.0, 1.5, ink, Some(bg.rgb()));
            // The label goes on the side the two branches leave the cusp from.
            let (dx, dy) = away_from(curve, cusp, &a);
            let label = format!("cusp ({:.4}, {:.4})", cusp.p, cusp.q);
            let w = Canvas::text_width(12.0, &label);
            let right = if dx > 0.0 { px - 10.0 >= a.left + w } else { px + 10.0 + w > a.left + a.width };
            let below = dy <= 0.0 && py + 18.0 <= a.top + a.height - 4.0;
            let y = if below { py + 18.0 } else { py - 9.0 };
            if right {
                c.text(px - 10.0, y, 12.0, ink, Align::Right, &label);
            } else {
                c.text(px + 10.0, y, 12.0, ink, Align::Left, &label);
            }
        }
    }
    let q_label = if f.q.0 == "position_pct" { "position (% of axis length)" } else { f.q.0 };
    axes::draw(&mut c, &a, f.p.0, q_label, bg);
    title_and_label(&mut c, left, width as f32 - right, 24.0, bg, f.heading);
    let h = c.height() as f32;
    for (k, line) in key.iter().enumerate() {
        c.text(left, h - 14.0 - 16.0 * (key.len() - 1 - k) as f32, 12.0, bg.muted(), Align::Left, line);
    }
    c
}

/// The mean direction (px) from `cusp` to the curve's points a little way
/// either side of it.
fn away_from(curve: &FoldCurve, cusp: &crate::phase::FoldCurvePoint, a: &Axes) -> (f32, f32) {
    let (px, py) = (a.px(cusp.p), a.py(cusp.q));
    let near = curve
        .points
        .iter()
        .enumerate()
        .min_by(|x, y| {
            let d = |p: &crate::phase::FoldCurvePoint| (a.px(p.p) - px).powi(2) + (a.py(p.q) - py).powi(2);
            d(x.1).total_cmp(&d(y.1))
        })
        .map_or(0, |(k, _)| k);
    let (mut dx, mut dy) = (0.0, 0.0);
    for k in [near.saturating_sub(3), (near + 3).min(curve.points.len().saturating_sub(1))] {
        if let Some(p) = curve.points.get(k) {
            dx += a.px(p.p) - px;
            dy += a.py(p.q) - py;
        }
    }
    (dx, dy)
}
