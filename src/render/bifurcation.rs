//! The bifurcation diagram: every branch of fixed points of the isolated
//! nucleus against the continued parameter, stable solid in the gene's
//! colour, unstable dashed; folds ringed, branch points in a square, Hopf
//! points in a diamond with the period at onset; a key below.

use super::axes::{self, Axes, nice_ticks};
use super::canvas::{Align, Canvas};
use super::{Style, time_text, title_and_label};
use crate::phase::{Diagram, Special};

/// Draws `d` for gene `gene` (index into `names`).
pub fn bifurcation_picture(d: &Diagram, names: &[String], gene: usize, style: &Style) -> Canvas {
    let bg = style.background;
    let width = style.width.max(320);
    let (left, right, top, plot_h) = (64.0, 24.0, 76.0, 320.0);
    let key =
        ["solid: stable   dashed: unstable", "ring: fold   square: branch point   diamond: Hopf (period at onset)"];
    let bottom = 64.0 + 16.0 * key.len() as f32;
    let mut c = style.canvas(width, (top + plot_h + bottom) as u32);
    let levels = d.branches.iter().flat_map(|b| b.points.iter().map(|p| p.x[gene]));
    let (lo, hi) = levels.fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| (l.min(v), h.max(v)));
    let (lo, hi) = if lo.is_finite() { (lo.min(0.0), hi.max(lo + 1e-9)) } else { (0.0, 1.0) };
    let pad = 0.08 * (hi - lo);
    let y = (if lo < 0.0 { lo - pad } else { 0.0 }, hi + pad);
    let x = (d.request.from, d.request.to);
    let a = Axes { left, top, width: width as f32 - left - right, height: plot_h, x, y, y_down: false };
    let colour = style.colors.get(gene).copied().unwrap_or(bg.ink());
    for b in &d.branches {
        let mut start = 0;
        for k in 1..=b.points.len() {
            if k == b.points.len() || b.points[k].kind.is_stable() != b.points[start].kind.is_stable() {
                let end = k.min(b.points.len() - 1);
                let pts: Vec<(f32, f32)> = b.points[start..=end].iter().map(|p| (a.px(p.s), a.py(p.x[gene]))).collect();
                if b.points[start].kind.is_stable() {
                    c.polyline(&pts, 5.0, bg.rgb(), 255, None);
                    c.polyline(&pts, 2.5, colour, 255, None);
                } else {
                    c.polyline(&pts, 1.5, bg.ink(), 220, Some([5.0, 4.0]));
                }
                start = k;
            }
        }
    }
    let digits = decimals(x);
    for p in d.special_points() {
        let (px, py) = (a.px(p.s), a.py(p.x[gene]));
        let ink = bg.ink();
        let label = match p.kind {
            Special::Fold => {
                c.ellipse(px, py, 6.0, 6.0, 1.5, ink, None);
                format!("fold {:.*}", digits, p.s)
            }
            Special::BranchPoint => {
                let r = 5.5;
                c.polyline(
                    &[(px - r, py - r), (px + r, py - r), (px + r, py + r), (px - r, py + r), (px - r, py - r)],
                    1.5,
                    ink,
                    255,
                    None,
                );
                format!("branch point {:.*}", digits, p.s)
            }
            Special::Hopf => {
                let r = 7.0;
                c.polyline(
                    &[(px, py - r), (px + r, py), (px, py + r), (px - r, py), (px, py - r)],
                    1.5,
                    ink,
                    255,
                    None,
                );
                format!("Hopf {:.*}, period {} min", digits, p.s, short(p.period_min.unwrap_or(f64::NAN)))
            }
        };
        if px + 10.0 + Canvas::text_width(12.0, &label) > a.left + a.width {
            c.text(px - 10.0, py - 9.0, 12.0, ink, Align::Right, &label);
        } else {
            c.text(px + 10.0, py - 9.0, 12.0, ink, Align::Left, &label);
        }
    }
    axes::draw(&mut c, &a, &d.parameter, &format!("{} at fixed points (a.u.)", names[gene]), bg);
    let heading = format!(
        "Bifurcation diagram in {} (isolated nucleus at {} %, t = {} min)",
        d.parameter,
        short(d.request.x_pct),
        time_text(d.request.t_min)
    );
    title_and_label(&mut c, left, width as f32 - right, 24.0, bg, &heading);
    let h = c.height() as f32;
    for (k, line) in key.iter().enumerate() {
        c.text(left, h - 14.0 - 16.0 * (key.len() - 1 - k) as f32, 12.0, bg.muted(), Align::Left, line);
    }
    c
}

/// Decimals that tell apart values a tick step apart, and a few more.
fn decimals(x: (f64, f64)) -> usize {
    let ticks = nice_ticks(x.0, x.1, 5);
    let step = if ticks.len() > 1 { ticks[1] - ticks[0] } else { (x.1 - x.0).abs().max(1e-12) };
    ((-step.log10()).ceil().max(0.0) as usize + 2).min(8)
}

/// A number in at most 4 significant digits, without trailing zeros.
fn short(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let d = (3 - v.abs().log10().floor() as i32).max(0) as usize;
    let s = format!("{v:.d$}");
    if s.contains('.') { s.trim_end_matches('0').trim_end_matches('.').to_string() } else { s }
}
