//! Pictures for measurements: the check picture of a measured image and the
//! overlay of measured boundaries on simulated profiles.

use super::Style;
use super::canvas::{Align, Canvas};
use super::profiles::profiles_with_axes;
use crate::compare::Comparison;
use crate::integrate::{ReadBackError, Recording};
use crate::measure::{Measurement, Planes};

/// The image (first three planes as red, green, blue, each stretched to its
/// range) with the embryo's outline, its axis from head (H) to tail, the strip
/// that was read and each boundary as a tick across the axis, labelled.
pub fn check_picture(p: &Planes, m: &Measurement, genes: &[(String, [u8; 3])]) -> Canvas {
    // Shown about 720 px wide: small images enlarged (at most 3×), large ones reduced.
    let scale = (720.0 / p.width as f64).min(3.0);
    let (w, h) = ((p.width as f64 * scale).round() as u32, (p.height as f64 * scale).round() as u32);
    let mut c = Canvas::new(w, h + 40, [0, 0, 0]);
    let ranges: Vec<(f64, f64)> = p
        .planes
        .iter()
        .map(|pl| pl.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, hi), v| (l.min(*v), hi.max(*v))))
        .collect();
    for y in 0..h {
        for x in 0..w {
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
            let edge = m.mask[i]
                && (sx == 0
                    || sy == 0
                    || !m.mask[i - 1]
                    || !m.mask[i - p.width]
                    || sx + 1 == p.width
                    || !m.mask[i + 1]);
            c.put(x, y, if edge { [255, 255, 255] } else { rgb });
        }
    }
    let s = scale as f32;
    let [(hx, hy), (tx, ty)] = m.head_tail;
    let (hx, hy, tx, ty) = (hx as f32 * s, hy as f32 * s, tx as f32 * s, ty as f32 * s);
    let len = (tx - hx).hypot(ty - hy).max(1.0);
    let (ux, uy) = ((tx - hx) / len, (ty - hy) / len);
    let (nx, ny) = (-uy, ux);
    let half = m.strip_px as f32 * s / 2.0;
    c.line(hx, hy, tx, ty, 1.5, [255, 255, 255]);
    for side in [-1.0f32, 1.0] {
        c.polyline(
            &[(hx + side * half * nx, hy + side * half * ny), (tx + side * half * nx, ty + side * half * ny)],
            1.0,
            [200, 200, 200],
            200,
            Some([4.0, 4.0]),
        );
    }
    c.text(hx - 14.0 * ux, hy - 14.0 * uy + 5.0, 14.0, [255, 255, 255], Align::Centre, "H");
    for (k, b) in m.boundaries.iter().enumerate() {
        let color = genes.iter().find(|(g, _)| g == &b.gene).map_or([255, 255, 255], |(_, c)| *c);
        let f = b.position_pct as f32 / 100.0;
        let (x, y) = (hx + f * (tx - hx), hy + f * (ty - hy));
        let tick = half + 10.0;
        c.line(x - tick * nx, y - tick * ny, x + tick * nx, y + tick * ny, 2.5, color);
        let off = tick + 12.0 + 12.0 * (k % 2) as f32;
        let (lx, ly) = (x + off * nx, y + off * ny + 4.0);
        let label = format!("{} {:.1}%", b.gene, b.position_pct);
        // On a dark backing: the stain under the label can be any colour.
        let lw = Canvas::text_width(12.0, &label);
        c.rect(lx - lw / 2.0 - 3.0, ly - 11.0, lw + 6.0, 15.0, [0, 0, 0]);
        c.text(lx, ly, 12.0, color, Align::Centre, &label);
    }
    let name = p.path.file_name().map_or_else(String::new, |n| n.to_string_lossy().into_owned());
    let note = format!("{name}: outline, axis from head (H), strip read ({} px), boundaries", m.strip_px);
    c.text(8.0, h as f32 + 26.0, 12.0, [200, 200, 200], Align::Left, &note);
    c
}

/// Simulated profiles at snapshot `s` with each measured boundary of that
/// time as a band of ±1 sd (a line where no sd is given), in the gene's colour.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn comparison_overlay(rec: &Recording, s: usize, cmp: &Comparison, style: &Style) -> Result<Canvas, ReadBackError> {
    let mut st = style.clone();
    st.time_range = (rec.times[s], rec.times[s]);
    let sim: Vec<crate::readout::Boundary> = crate::readout::boundaries_at(rec, s)?;
    let (mut c, a) = profiles_with_axes(rec, &sim, &st)?;
    for r in cmp.rows.iter().filter(|r| r.time_min == rec.times[s]) {
        let Some(m) = r.measured_pct else { continue };
        let color = rec.genes.iter().position(|g| g == &r.gene).map_or(style.background.ink(), |g| style.colors[g]);
        let (top, bottom) = (a.top, a.top + a.height);
        match r.sd_pct.filter(|sd| *sd > 0.0) {
            Some(sd) => {
                let (x0, x1) = (a.px(m - sd), a.px(m + sd));
                c.polyline(&[((x0 + x1) / 2.0, top), ((x0 + x1) / 2.0, bottom)], (x1 - x0).max(2.0), color, 70, None);
            }
            None => c.polyline(&[(a.px(m), top), (a.px(m), bottom)], 2.0, color, 150, None),
        }
    }
    let note = "bands: measured boundaries ±1 sd (lines: no sd given); curves and dotted lines: simulated";
    c.rect(0.0, c.height() as f32 - 26.0, c.width() as f32, 26.0, style.background.rgb());
    c.text(64.0, c.height() as f32 - 10.0, 12.0, style.background.muted(), Align::Left, note);
    Ok(c)
}
