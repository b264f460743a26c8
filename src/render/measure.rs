//! Pictures for measurements: the check picture of a measured image and the
//! overlay of measured boundaries on simulated profiles.

use super::Style;
use super::canvas::{Align, Canvas};
use super::profiles::profiles_with_axes;
use crate::compare::Comparison;
use crate::integrate::{ReadBackError, Recording};
use crate::measure::{Contrast, EmbryoMeasurement, ImageMeasurement, Planes};

/// The image (first three planes as red, green, blue, each stretched to its
/// range) with every candidate's outline and number: measured embryos in
/// white with their axis from head (H) to tail, the strip that was read and
/// each boundary as a tick across the axis, labelled; embryos cut by the
/// edge in grey, refused outlines dashed; below, how the stain and outline
/// were found, the head of each embryo and every reason for a skip.
pub fn check_picture(p: &Planes, m: &ImageMeasurement, genes: &[(String, [u8; 3])]) -> Canvas {
    // Shown about 720 px wide: small images enlarged (at most 3×), large ones reduced.
    let scale = (720.0 / p.width as f64).min(3.0);
    let (w, h) = ((p.width as f64 * scale).round() as u32, (p.height as f64 * scale).round() as u32);
    let mut notes = vec![format!(
        "{}: stain {} ({}); outline from {}",
        p.path.file_name().map_or_else(String::new, |n| n.to_string_lossy().into_owned()),
        m.contrast.describe(),
        if m.contrast_how == "given" { "given" } else { "detected" },
        m.outline_how
    )];
    for e in &m.embryos {
        let confidence = e.head.confidence.map_or_else(String::new, |c| format!(", confidence {c:.2}"));
        let weak = if e.head.weak {
            " WEAK: check the head"
        } else if e.head.assumed {
            " (assumed)"
        } else {
            ""
        };
        notes.push(format!("{}: head (H) {}{confidence}{weak}", e.number, e.head.how));
    }
    for s in &m.skipped {
        notes.push(format!("{}: {}", s.number, s.reason));
    }
    let footer = 14 + 17 * notes.len() as u32;
    // A check picture is only ever a PNG.
    let mut c = Canvas::new(w, h + footer, [0, 0, 0]).without_svg();
    let ranges: Vec<(f64, f64)> = p
        .planes
        .iter()
        .map(|pl| pl.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, hi), v| (l.min(*v), hi.max(*v))))
        .collect();
    let skipped = |k: u32| m.skipped.iter().find(|s| s.number as u32 == k);
    // Lines in white over a dark (fluorescent) image, black over a light one.
    let ink = if m.contrast == Contrast::Dark { [0, 0, 0] } else { [255, 255, 255] };
    c.raster(0.0, 0.0, w as f32, h as f32, |u, v| {
        let (x, y) = ((u * w as f64) as u32, (v * h as f64) as u32);
        let (sx, sy) = (((x as f64 + 0.5) / scale) as usize, ((y as f64 + 0.5) / scale) as usize);
        let (sx, sy) = (sx.min(p.width - 1), sy.min(p.height - 1));
        let mut rgb = [0u8; 3];
        for (k, v) in rgb.iter_mut().enumerate().take(p.planes.len()) {
            let (lo, hi) = ranges[k];
            *v = if hi > lo { ((p.at(k, sx, sy) - lo) / (hi - lo) * 255.0).round() as u8 } else { 0 };
        }
        if p.planes.len() == 1 {
            rgb = [rgb[0]; 3];
        }
        let i = sy * p.width + sx;
        let k = m.labels[i];
        let other = |j: usize| m.labels[j] != k;
        let edge = k != 0
            && (sx == 0
                || sy == 0
                || sx + 1 == p.width
                || sy + 1 == p.height
                || other(i - 1)
                || other(i - p.width)
                || other(i + 1)
                || other(i + p.width));
        Some(match (edge, skipped(k)) {
            (false, _) => rgb,
            (true, None) => ink,
            (true, Some(s)) if s.cut => [150, 150, 150],
            // Refused: dashed white and black.
            (true, Some(_)) => {
                if (x / 6 + y / 6) % 2 == 0 {
                    [255, 255, 255]
                } else {
                    [0, 0, 0]
                }
            }
        })
    });
    let s = scale as f32;
    for e in &m.embryos {
        draw_embryo(&mut c, e, s, genes, ink);
    }
    for sk in &m.skipped {
        let (x, y) = (sk.centre.0 as f32 * s, sk.centre.1 as f32 * s);
        let label = format!("{}: {}", sk.number, if sk.cut { "cut by edge" } else { "refused" });
        let lw = Canvas::text_width(13.0, &label);
        c.rect(x - lw / 2.0 - 3.0, y - 12.0, lw + 6.0, 17.0, [0, 0, 0]);
        c.text(x, y, 13.0, [255, 255, 255], Align::Centre, &label);
    }
    for (k, note) in notes.iter().enumerate() {
        c.text(8.0, h as f32 + 20.0 + 17.0 * k as f32, 12.0, [200, 200, 200], Align::Left, note);
    }
    c
}

/// Axis, strip, head mark, number and boundary ticks of one measured embryo.
fn draw_embryo(c: &mut Canvas, e: &EmbryoMeasurement, s: f32, genes: &[(String, [u8; 3])], ink: [u8; 3]) {
    let [(hx, hy), (tx, ty)] = e.head_tail;
    let (hx, hy, tx, ty) = (hx as f32 * s, hy as f32 * s, tx as f32 * s, ty as f32 * s);
    let len = (tx - hx).hypot(ty - hy).max(1.0);
    let (ux, uy) = ((tx - hx) / len, (ty - hy) / len);
    let (nx, ny) = (-uy, ux);
    let half = e.strip_px as f32 * s / 2.0;
    c.line(hx, hy, tx, ty, 1.5, ink);
    for side in [-1.0f32, 1.0] {
        c.polyline(
            &[(hx + side * half * nx, hy + side * half * ny), (tx + side * half * nx, ty + side * half * ny)],
            1.0,
            [200, 200, 200],
            200,
            Some([4.0, 4.0]),
        );
    }
    let head = if e.head.weak || e.head.assumed { "H?" } else { "H" };
    let (lx, ly) = (hx - 18.0 * ux, hy - 18.0 * uy + 6.0);
    let hw = Canvas::text_width(14.0, head);
    c.rect(lx - hw / 2.0 - 3.0, ly - 13.0, hw + 6.0, 18.0, [0, 0, 0]);
    c.text(lx, ly, 14.0, [255, 255, 255], Align::Centre, head);
    let (mx, my) = (tx + 18.0 * ux, ty + 18.0 * uy + 6.0);
    let number = e.number.to_string();
    let nw = Canvas::text_width(16.0, &number);
    c.rect(mx - nw / 2.0 - 4.0, my - 15.0, nw + 8.0, 20.0, [0, 0, 0]);
    c.text(mx, my, 16.0, [255, 255, 255], Align::Centre, &number);
    for (k, b) in e.boundaries.iter().enumerate() {
        let color = genes.iter().find(|(g, _)| g == &b.gene).map_or([255, 255, 255], |(_, c)| *c);
        let f = b.position_pct as f32 / 100.0;
        let (x, y) = (hx + f * (tx - hx), hy + f * (ty - hy));
        let tick = half + 10.0;
        c.line(x - tick * nx, y - tick * ny, x + tick * nx, y + tick * ny, 2.5, color);
        // Labels alternate sides of the axis, so neighbours do not overlap.
        let off = (tick + 14.0) * if k % 2 == 0 { 1.0 } else { -1.0 };
        let (lx, ly) = (x + off * nx, y + off * ny + 4.0);
        let label = format!("{} {:.1}%", b.gene, b.position_pct);
        // On a dark backing: the stain under the label can be any colour.
        let lw = Canvas::text_width(12.0, &label);
        c.rect(lx - lw / 2.0 - 3.0, ly - 11.0, lw + 6.0, 15.0, [0, 0, 0]);
        c.text(lx, ly, 12.0, color, Align::Centre, &label);
    }
}

/// Simulated profiles at snapshot `s` over the measured boundaries of that
/// time: each a band of ±1 sd as used for z (the floored sd) with its mean
/// as a solid line, in a lane of its own (the plot's height shared among
/// them, in order along the axis, so that overlapping bands stay apart),
/// tinted with its gene's colour and drawn beneath the simulated curves; a
/// measured boundary without sd is its line alone.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn comparison_overlay(rec: &Recording, s: usize, cmp: &Comparison, style: &Style) -> Result<Canvas, ReadBackError> {
    let mut st = style.clone();
    st.time_range = (rec.times[s], rec.times[s]);
    let sim: Vec<crate::readout::Boundary> = crate::readout::boundaries_at(rec, s)?;
    let bg = style.background;
    let mut measured: Vec<(f64, f64, [u8; 3])> = cmp
        .rows
        .iter()
        .filter(|r| r.time_min == rec.times[s])
        .filter_map(|r| {
            let m = r.measured_pct?;
            let color = rec.genes.iter().position(|g| g == &r.gene).map_or(bg.ink(), |g| style.colors[g]);
            Some((m, r.sd_used_pct.filter(|sd| *sd > 0.0).unwrap_or(0.0), color))
        })
        .collect();
    measured.sort_by(|x, y| x.0.total_cmp(&y.0));
    let tint = |c: [u8; 3]| {
        let b = bg.rgb();
        [0, 1, 2].map(|k| (0.4 * c[k] as f32 + 0.6 * b[k] as f32).round() as u8)
    };
    let underlay = |c: &mut Canvas, a: &super::axes::Axes| {
        let lane = a.height / measured.len().max(1) as f32;
        for (k, &(m, sd, color)) in measured.iter().enumerate() {
            let (top, bottom) = (a.top + lane * k as f32, a.top + lane * (k + 1) as f32);
            if sd > 0.0 {
                let (x0, x1) = (a.px((m - sd).max(a.x.0)), a.px((m + sd).min(a.x.1)));
                c.rect(x0, top, (x1 - x0).max(1.0), bottom - top, tint(color));
            }
            c.line(a.px(m), top, a.px(m), bottom, 2.0, color);
        }
    };
    let (mut c, _) = profiles_with_axes(rec, &sim, &st, &underlay)?;
    let note = "measured: lanes of mean (line) ± 1 sd used for z (band, floored); simulated: curves, dotted lines";
    c.rect(0.0, c.height() as f32 - 26.0, c.width() as f32, 26.0, style.background.rgb());
    c.text(64.0, c.height() as f32 - 10.0, 12.0, style.background.muted(), Align::Left, note);
    Ok(c)
}
