//! The pattern at one snapshot: a row drawn as an embryo-shaped outline (an
//! ellipse along the axis) painted by expression along the axis, like a
//! stained embryo seen from the side; a sheet drawn as the sheet of nuclei.
//! With the time, a scale bar, a legend and the "model prediction" label.

use super::canvas::{Align, Canvas};
use super::{PREDICTION_LABEL, Style, legend, level_at, scale_bar_um, time_text, title};
use crate::integrate::{ReadBackError, Recording};

/// Where things are on a pattern picture.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PatternLayout {
    /// A row: the ellipse's centre and radii, px.
    Embryo {
        /// Centre x.
        cx: f32,
        /// Centre y.
        cy: f32,
        /// Half-length along the axis.
        rx: f32,
        /// Half-height.
        ry: f32,
        /// Scale bar: left end x, right end x, y, and its length in µm.
        bar: (f32, f32, f32, f64),
    },
    /// A sheet: top-left corner and the side of one nucleus, px.
    Sheet {
        /// Left edge.
        left: f32,
        /// Top edge.
        top: f32,
        /// Pixels per nucleus (below 1 for a sheet wider than the picture).
        cell: f32,
        /// Scale bar: left end x, right end x, y, and its length in µm.
        bar: (f32, f32, f32, f64),
    },
}

/// Draws snapshot `s`; `max[g]` maps gene g's level to full colour.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn pattern(
    rec: &Recording,
    s: usize,
    style: &Style,
    max: &[f64],
) -> Result<(Canvas, PatternLayout), ReadBackError> {
    let bg = style.background;
    let width = style.width.max(320);
    let colors = style.shown_colors();
    let length = rec.grid.length_um();
    let margin = 40.0;
    let (mut c, layout) = if rec.grid.is_sheet() {
        let (nx, ny) = (rec.grid.nx as u32, rec.grid.ny as u32);
        // Whole pixels per nucleus while the sheet fits; a larger sheet is
        // sampled, each pixel showing the nucleus under its centre.
        let (avail_w, avail_h) = (width as f32 - 2.0 * margin, (width * 3 / 5) as f32);
        let cell = (avail_w as u32 / nx).min(avail_h as u32 / ny);
        let (sw, sh) = if cell >= 1 {
            (cell * nx, cell * ny)
        } else {
            let scale = (avail_w / nx as f32).min(avail_h / ny as f32);
            (((nx as f32 * scale) as u32).max(1), ((ny as f32 * scale) as u32).max(1))
        };
        let height = 70 + sh + 80;
        let mut c = style.canvas(width, height);
        let (left, top) = ((width - sw) / 2, 70);
        let state = &rec.state(s)?;
        c.raster(left as f32, top as f32, sw as f32, sh as f32, |u, v| {
            let ix = ((u * nx as f64) as u32).min(nx - 1);
            let iy = (((1.0 - v) * ny as f64) as u32).min(ny - 1);
            let i = (iy * nx + ix) as usize;
            Some(style.paint(&colors, style.genes.iter().map(|&g| state[[g, i]] / max[g])))
        });
        let (l, t) = (left as f32, top as f32);
        c.polyline(
            &[(l, t), (l + sw as f32, t), (l + sw as f32, t + sh as f32), (l, t + sh as f32), (l, t)],
            1.0,
            bg.muted(),
            255,
            None,
        );
        let bar_um = scale_bar_um(length);
        let bar = (l, l + (bar_um / length) as f32 * sw as f32, t + sh as f32 + 30.0, bar_um);
        (c, PatternLayout::Sheet { left: l, top: t, cell: sw as f32 / nx as f32, bar })
    } else {
        let rx = (width as f32 - 2.0 * margin) / 2.0;
        let ry = (rx * 0.36).round();
        let (cx, cy) = (width as f32 / 2.0, 70.0 + ry);
        let height = (cy + ry + 90.0) as u32;
        let mut c = style.canvas(width, height);
        let profiles = rec.axis_profiles(s, style.genes.iter().copied())?;
        c.raster(cx - rx, cy - ry, 2.0 * rx, 2.0 * ry, |u, v| {
            let (dx, dy) = (2.0 * u - 1.0, 2.0 * v - 1.0);
            if dx * dx + dy * dy > 1.0 {
                return None;
            }
            let x_um = u * length;
            let levels =
                style.genes.iter().zip(&profiles).map(|(&g, p)| level_at(p, rec.grid.spacing_um, x_um) / max[g]);
            Some(style.paint(&colors, levels))
        });
        c.ellipse(cx, cy, rx, ry, 2.0, bg.muted(), None);
        for pct in [0.0f32, 50.0, 100.0] {
            let x = cx - rx + pct / 100.0 * 2.0 * rx;
            c.line(x, cy + ry + 6.0, x, cy + ry + 12.0, 1.0, bg.muted());
            c.text(x, cy + ry + 26.0, 12.0, bg.muted(), Align::Centre, &format!("{pct}%"));
        }
        let bar_um = scale_bar_um(length);
        let bar = (cx - rx, cx - rx + (bar_um / length) as f32 * 2.0 * rx, cy + ry + 52.0, bar_um);
        (c, PatternLayout::Embryo { cx, cy, rx, ry, bar })
    };
    let bar = match layout {
        PatternLayout::Embryo { bar, .. } | PatternLayout::Sheet { bar, .. } => bar,
    };
    let ink = bg.ink();
    c.rect(bar.0, bar.2 - 2.0, bar.1 - bar.0, 4.0, ink);
    c.text((bar.0 + bar.1) / 2.0, bar.2 + 20.0, 13.0, ink, Align::Centre, &format!("{} µm", bar.3));
    let clock = format!("t = {} min", time_text(rec.times[s]));
    let clock_w = Canvas::text_width(18.0, &clock);
    title(&mut c, margin, 28.0, width as f32 - 2.0 * margin - clock_w - 10.0, ink, &style.title);
    c.text(width as f32 - margin, 28.0, 18.0, ink, Align::Right, &clock);
    c.text(width as f32 - margin, 48.0, 12.0, bg.muted(), Align::Right, PREDICTION_LABEL);
    let h = c.height() as f32;
    legend(&mut c, rec, style, width as f32 - margin, h - 18.0, true, Some(max));
    Ok((c, layout))
}
