//! Fit pictures: the objective trace and the fitted against the measured
//! boundaries of every genotype.

use super::Style;
use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use crate::fit::FitResult;

/// Best objective (log10) against objective evaluations.
pub fn fit_trace(r: &FitResult, title: &str, style: &Style) -> Canvas {
    let bg = style.background;
    let (w, h) = (720u32, 440u32);
    let mut c = style.canvas(w, h);
    c.text(20.0, 28.0, 16.0, bg.ink(), Align::Left, &format!("{title}: fit progress"));
    let pts: Vec<(f64, f64)> =
        r.search.trace.iter().filter(|(_, v)| v.is_finite()).map(|(n, v)| (*n as f64, v.max(1e-12).log10())).collect();
    let last = pts.last().map_or(1.0, |p| p.0.max(1.0));
    let (lo, hi) = pts.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| (a.min(p.1), b.max(p.1)));
    let (lo, hi) = if lo.is_finite() { (lo.floor(), hi.ceil().max(lo.floor() + 1.0)) } else { (0.0, 1.0) };
    let a = Axes {
        left: 80.0,
        top: 70.0,
        width: w as f32 - 110.0,
        height: h as f32 - 150.0,
        x: (0.0, last),
        y: (lo, hi),
        y_down: false,
    };
    axes::draw(&mut c, &a, "objective evaluations", "log10 best objective (sum of squared residuals)", bg);
    let line: Vec<(f32, f32)> = pts.iter().map(|(x, y)| (a.px(*x), a.py(*y))).collect();
    c.polyline(&line, 2.0, [230, 159, 0], 255, None);
    c.text(
        w as f32 - 20.0,
        h as f32 - 14.0,
        12.0,
        bg.muted(),
        Align::Right,
        &format!(
            "final objective {:.4}, {} residuals, {} evaluations",
            r.objective,
            r.residuals.len(),
            r.search.evaluations
        ),
    );
    c
}

/// One row per genotype: measured boundaries (open rings in the ink colour,
/// neutral, with ±σ bars and the gene's name above) and the fitted model's
/// (dots in the gene's colour, below), along the axis in %; the key names
/// every gene that appears.
pub fn fit_boundaries(
    r: &FitResult,
    genotypes: &[String],
    genes: &[(String, [u8; 3])],
    title: &str,
    style: &Style,
) -> Canvas {
    let bg = style.background;
    let ink = bg.ink();
    let row_h = 56.0f32;
    let (w, top) = (720u32, 80.0f32);
    let h = (top + row_h * genotypes.len().max(1) as f32 + 110.0) as u32;
    let mut c = style.canvas(w, h);
    c.text(20.0, 28.0, 16.0, ink, Align::Left, &format!("{title}: fitted vs measured boundaries"));
    c.text(
        20.0,
        48.0,
        12.0,
        bg.muted(),
        Align::Left,
        "ring: measured ± σ (gene named above)   dot: fitted model, a model prediction   ×: missing or extra",
    );
    let a = Axes::along_axis(
        150.0,
        top,
        30.0,
        w,
        row_h * genotypes.len().max(1) as f32,
        (0.0, genotypes.len().max(1) as f64),
        true,
    );
    axes::draw_x(&mut c, &a, "position along the axis, % (head at 0)", bg);
    let bad_c = [213, 94, 0];
    let colour = |gene: &str| {
        let k = genes.iter().position(|(n, _)| n == gene);
        k.and_then(|k| style.colors.get(k).copied().or(Some(genes[k].1))).unwrap_or(ink)
    };
    for (k, g) in genotypes.iter().enumerate() {
        let y = a.top + row_h * (k as f32 + 0.5) + 4.0;
        c.text(a.left - 10.0, y + 4.0, 13.0, ink, Align::Right, g);
        c.line(a.left, y, a.left + a.width, y, 1.0, bg.muted());
        // Gene names above the measured rings, raised a line where they would touch.
        let mut placed: Vec<(f32, f32, f32)> = Vec::new();
        for res in r.residuals.iter().filter(|x| &x.genotype == g) {
            let gc = colour(&res.gene);
            let at = res.measured_pct.or(res.simulated_pct);
            if let Some(m) = at {
                let half = Canvas::text_width(10.0, &res.gene) / 2.0 + 2.0;
                let x = a.px(m);
                let mut ly = y - 17.0;
                while placed.iter().any(|&(px, pw, py)| py == ly && (px - x).abs() < pw + half) {
                    ly -= 11.0;
                }
                placed.push((x, half, ly));
                c.text(x, ly, 10.0, bg.muted(), Align::Centre, &res.gene);
            }
            match (res.measured_pct, res.simulated_pct) {
                (Some(m), s) => {
                    let (x0, x1) = (a.px((m - res.sigma_pct).max(0.0)), a.px((m + res.sigma_pct).min(100.0)));
                    c.line(x0, y - 7.0, x1, y - 7.0, 1.5, ink);
                    c.ellipse(a.px(m), y - 7.0, 5.0, 5.0, 1.5, ink, Some(bg.rgb()));
                    match s {
                        Some(s) => c.ellipse(a.px(s), y + 8.0, 4.5, 4.5, 1.0, gc, Some(gc)),
                        None => c.text(a.px(m), y + 13.0, 14.0, bad_c, Align::Centre, "×"),
                    }
                }
                (None, Some(s)) => {
                    c.ellipse(a.px(s), y + 8.0, 4.5, 4.5, 1.0, gc, Some(gc));
                    c.text(a.px(s), y - 2.0, 14.0, bad_c, Align::Centre, "×");
                }
                (None, None) => {}
            }
        }
    }
    // Key: the marks, then the genes that appear.
    let y = h as f32 - 18.0;
    let mut x = 150.0f32;
    c.ellipse(x + 5.0, y - 4.0, 5.0, 5.0, 1.5, ink, Some(bg.rgb()));
    c.text(x + 15.0, y, 12.0, ink, Align::Left, "measured");
    x += 30.0 + Canvas::text_width(12.0, "measured");
    for (name, _) in genes.iter().filter(|(n, _)| r.residuals.iter().any(|x| &x.gene == n)) {
        let gc = colour(name);
        c.ellipse(x + 5.0, y - 4.0, 4.5, 4.5, 1.0, gc, Some(gc));
        let label = format!("{name}, fitted");
        c.text(x + 15.0, y, 12.0, ink, Align::Left, &label);
        x += 30.0 + Canvas::text_width(12.0, &label);
    }
    c
}

/// One panel per profiled parameter: objective above the best against the
/// parameter's value, with the 95 % line (3.84) dashed.
pub fn fit_profiles(r: &FitResult, names: &[String], title: &str, style: &Style) -> Canvas {
    let bg = style.background;
    let panel = 230.0f32;
    let w = 720u32;
    let h = (60.0 + panel * r.profiles.len().max(1) as f32) as u32;
    let mut c = style.canvas(w, h);
    c.text(20.0, 28.0, 16.0, bg.ink(), Align::Left, &format!("{title}: profile likelihoods"));
    for (k, p) in r.profiles.iter().enumerate() {
        let pts: Vec<(f64, f64)> = p.points.iter().map(|(v, f)| (*v, (f - r.objective).max(0.0))).collect();
        let (x0, x1) = pts.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| (a.min(p.0), b.max(p.0)));
        let top = pts.iter().map(|p| p.1).filter(|v| v.is_finite()).fold(5.0f64, f64::max);
        let a = Axes {
            left: 80.0,
            top: 70.0 + panel * k as f32,
            width: w as f32 - 110.0,
            height: panel - 90.0,
            x: (x0, if x1 > x0 { x1 } else { x0 + 1.0 }),
            y: (0.0, top * 1.05),
            y_down: false,
        };
        axes::draw(&mut c, &a, &names[p.param], "objective above the best", bg);
        let y95 = a.py(3.84);
        c.polyline(&[(a.left, y95), (a.left + a.width, y95)], 1.0, bg.muted(), 255, Some([6.0, 4.0]));
        c.text(a.left + a.width - 4.0, y95 - 4.0, 11.0, bg.muted(), Align::Right, "95 % (3.84)");
        let line: Vec<(f32, f32)> = pts.iter().filter(|p| p.1.is_finite()).map(|(x, y)| (a.px(*x), a.py(*y))).collect();
        c.polyline(&line, 2.0, [230, 159, 0], 255, None);
        for (x, y) in &line {
            c.ellipse(*x, *y, 3.0, 3.0, 1.0, [230, 159, 0], Some([230, 159, 0]));
        }
    }
    c
}
