//! Drawing a phase portrait: flow arrows, nullclines in the genes' colours,
//! fixed points (stable filled, unstable open, saddles as open squares),
//! separatrices, the recorded trajectory (solid, dots at snapshots) and the
//! isolated trajectory (dashed).

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::{Style, time_text, title_and_label};
use crate::integrate::Recording;
use crate::phase::Kind;
pub use crate::phase::PortraitData;

/// The leading part of a curve that stays inside the plot, in pixels.
fn inside(a: &Axes, d: &PortraitData, curve: &[Vec<f64>]) -> Vec<(f32, f32)> {
    curve
        .iter()
        .take_while(|p| {
            (d.bounds[0].0..=d.bounds[0].1).contains(&p[0]) && (d.bounds[1].0..=d.bounds[1].1).contains(&p[1])
        })
        .map(|p| (a.px(p[0]), a.py(p[1])))
        .collect()
}

/// Draws a portrait; the picture is square-ish, `style.width` wide.
pub fn portrait(rec: &Recording, d: &PortraitData, style: &Style) -> Canvas {
    portrait_with_axes(rec, d, style, true).0
}

/// The "cloud": one frame per snapshot, every nucleus (the midline row of a
/// sheet) a dot at its levels of the two genes, coloured by its position
/// along the axis (head dark blue → tail yellow), over the portrait of `d`'s
/// nucleus. Frames drawn and quantised in parallel; the GIF loops.
///
/// # Errors
/// An I/O error if the GIF cannot be written.
pub fn write_cloud_gif(
    rec: &Recording,
    d: &PortraitData,
    style: &Style,
    out: &mut dyn std::io::Write,
) -> std::io::Result<super::animate::GifMade> {
    use rayon::prelude::*;
    // Frames are pixels only: no SVG is kept of them.
    let (base, a) = portrait_with_axes(rec, d, &Style { svg: false, ..style.clone() }, false);
    let nx = rec.grid.nx;
    let row0 = rec.midline_rows().start * nx;
    let [ga, gb] = d.genes;
    let delay = (100.0 / style.fps.max(1) as f64).round().max(2.0) as u16;
    let frames: Vec<(u32, u32, Vec<u8>)> = (0..rec.times.len())
        .into_par_iter()
        .map(|s| {
            let mut c = base.clone();
            let state = rec.state(s).map_err(std::io::Error::other)?;
            for ix in 0..nx {
                let i = row0 + ix;
                let (x, y) = (a.px(state[[ga, i]]), a.py(state[[gb, i]]));
                let color = super::colour::sequential(ix as f64 / (nx.max(2) - 1) as f64);
                c.ellipse(x, y, 3.5, 3.5, 1.0, style.background.rgb(), Some(color));
            }
            let w = c.width() as f32;
            c.rect(w - 230.0, 52.0, 200.0, 24.0, style.background.rgb());
            c.text(
                w - 30.0,
                70.0,
                16.0,
                style.background.ink(),
                Align::Right,
                &format!("all nuclei, t = {} min", time_text(rec.times[s])),
            );
            Ok((c.pixel_width(), c.pixel_height(), c.rgba().to_vec()))
        })
        .collect::<std::io::Result<_>>()?;
    super::animate::Drawn::new(frames, delay)?.write(style.gif_max_bytes, out)
}

/// Draws the portrait and returns its plot axes; `trajectories` draws the
/// chosen nucleus's recorded and isolated trajectories.
fn portrait_with_axes(rec: &Recording, d: &PortraitData, style: &Style, trajectories: bool) -> (Canvas, Axes) {
    let bg = style.background;
    let width = style.width.max(420);
    let (left, top, right, bottom) = (70.0, 84.0, 30.0, 110.0);
    let side = width as f32 - left - right;
    let mut c = style.canvas(width, (top + side + bottom) as u32);
    let a = Axes { left, top, width: side, height: side, x: d.bounds[0], y: d.bounds[1], y_down: false };
    let [ga, gb] = d.genes;
    // Flow field: unit arrows in pixel space, a little shorter than the grid step.
    let step = side / 20.0;
    for (p, f) in &d.field {
        let (x, y) = (a.px(p[0]), a.py(p[1]));
        let (dx, dy) =
            ((f[0] / (d.bounds[0].1 - d.bounds[0].0)) as f32, -(f[1] / (d.bounds[1].1 - d.bounds[1].0)) as f32);
        let n = dx.hypot(dy);
        if n == 0.0 || !n.is_finite() {
            continue;
        }
        let (ux, uy) = (dx / n * 0.38 * step, dy / n * 0.38 * step);
        let tip = (x + ux, y + uy);
        c.polyline(&[(x - ux, y - uy), tip], 1.0, bg.muted(), 200, None);
        let (bx, by) = (-ux * 0.45, -uy * 0.45);
        c.polyline(
            &[(tip.0 + bx - by * 0.6, tip.1 + by + bx * 0.6), tip, (tip.0 + bx + by * 0.6, tip.1 + by - bx * 0.6)],
            1.0,
            bg.muted(),
            200,
            None,
        );
    }
    for (k, segs) in d.nullclines.iter().enumerate() {
        let color = style.colors[d.genes[k]];
        for s in segs {
            c.polyline(&[(a.px(s[0].0), a.py(s[0].1)), (a.px(s[1].0), a.py(s[1].1))], 2.0, color, 255, None);
        }
    }
    for sep in &d.separatrices {
        c.polyline(&inside(&a, d, sep), 2.0, bg.ink(), 150, Some([8.0, 4.0]));
    }
    if trajectories {
        c.polyline(&inside(&a, d, &d.isolated), 1.8, bg.ink(), 255, Some([3.0, 3.0]));
        let rec_pts: Vec<(f32, f32)> = d.recorded.iter().map(|(_, p)| (a.px(p[0]), a.py(p[1]))).collect();
        c.polyline(&rec_pts, 2.0, bg.ink(), 255, None);
        for p in &rec_pts {
            c.ellipse(p.0, p.1, 2.0, 2.0, 0.0, bg.ink(), Some(bg.ink()));
        }
    }
    for p in &d.points {
        let (x, y) = (a.px(p.x[0]), a.py(p.x[1]));
        match p.kind {
            Kind::StableNode | Kind::StableFocus => c.ellipse(x, y, 6.0, 6.0, 2.0, bg.ink(), Some(bg.ink())),
            Kind::Saddle => c.polyline(
                &[(x - 6.0, y - 6.0), (x + 6.0, y - 6.0), (x + 6.0, y + 6.0), (x - 6.0, y + 6.0), (x - 6.0, y - 6.0)],
                2.0,
                bg.ink(),
                255,
                None,
            ),
            _ => c.ellipse(x, y, 6.0, 6.0, 2.0, bg.ink(), Some(bg.rgb())),
        }
    }
    axes::draw(&mut c, &a, &format!("{} (a.u.)", rec.genes[ga]), &format!("{} (a.u.)", rec.genes[gb]), bg);
    let x_um = rec.grid.x_um(d.nucleus % rec.grid.nx);
    let heading = format!("Phase portrait, nucleus {} (x = {:.0} µm)", d.nucleus, x_um);
    title_and_label(&mut c, left, width as f32 - right, 26.0, bg, &heading);
    let mut sub = format!("isolated nucleus: gradients frozen at t = {} min", time_text(d.t_min));
    if !d.slice.is_empty() {
        let held: Vec<String> = d.slice.iter().map(|(g, v)| format!("{g} = {v:.3}")).collect();
        sub.push_str(&format!("; slice at {}", held.join(", ")));
    }
    c.text(left, 46.0, 13.0, bg.muted(), Align::Left, &sub);
    let y0 = top + side + 52.0;
    let muted = bg.muted();
    let lines = if trajectories {
        [
            "solid line, dots: trajectory as it happened (coupled, one dot per snapshot)",
            "dotted: isolated trajectory from the frozen time; long dashes: separatrix",
        ]
    } else {
        [
            "dots: every nucleus as it happened (coupled), coloured head (dark) to tail (light)",
            "long dashes: separatrix of the chosen nucleus at the frozen time",
        ]
    };
    c.text(left, y0, 12.0, muted, Align::Left, lines[0]);
    c.text(left, y0 + 16.0, 12.0, muted, Align::Left, lines[1]);
    c.text(left, y0 + 32.0, 12.0, muted, Align::Left, "filled: stable; open circle: unstable; open square: saddle");
    // The nullcline key: which line is which gene's.
    let mut pen = left;
    for &g in &d.genes {
        let label = format!("{} nullcline (d{}/dt = 0)", rec.genes[g], rec.genes[g]);
        c.line(pen, y0 + 44.0, pen + 22.0, y0 + 44.0, 2.5, style.colors[g]);
        c.text(pen + 28.0, y0 + 48.0, 12.0, bg.ink(), Align::Left, &label);
        pen += 28.0 + Canvas::text_width(12.0, &label) + 24.0;
    }
    (c, a)
}
