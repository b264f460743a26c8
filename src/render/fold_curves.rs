//! Fold curves in two parameters: the plane of the two parameters shaded by
//! how many stable states the isolated nucleus has there (found point by
//! point), the fold curves drawn over it in ink, cusps ringed and labelled.

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
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

/// Mixes `share` of `a` into `b`.
fn mix(a: [u8; 3], b: [u8; 3], share: f64) -> [u8; 3] {
    std::array::from_fn(|k| (share * a[k] as f64 + (1.0 - share) * b[k] as f64).round() as u8)
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
        [mix(bg.muted(), bg.rgb(), 0.35), bg.rgb(), mix(bg.ink(), bg.rgb(), 0.12), mix(bg.ink(), bg.rgb(), 0.28)];
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
    for cusp in f.curves.iter().flat_map(|c| c.cusps.iter()) {
        let (px, py) = (a.px(cusp.p), a.py(cusp.q));
        c.ellipse(px, py, 6.0, 6.0, 1.5, ink, Some(bg.rgb()));
        let label = format!("cusp ({:.4}, {:.4})", cusp.p, cusp.q);
        if px + 10.0 + Canvas::text_width(12.0, &label) > a.left + a.width {
            c.text(px - 10.0, py + 18.0, 12.0, ink, Align::Right, &label);
        } else {
            c.text(px + 10.0, py + 18.0, 12.0, ink, Align::Left, &label);
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
