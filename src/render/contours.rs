//! A sheet's boundary contours drawn over its pattern: the pattern picture
//! of the snapshot, each shown gene's contours through its boundary level as
//! lines in a lighter (on dark) or darker (on light) shade of its colour, and
//! a line per gene with its pattern class and dominant wavelength.

use super::canvas::{Align, Canvas};
use super::colour::blend;
use super::{PatternLayout, Style, pattern};
use crate::integrate::{ReadBackError, Recording};
use crate::readout::sheet::SheetReadout;

/// Draws snapshot `s` of a sheet with the contours of `read` (the readout of
/// that snapshot); `max[g]` maps gene g's level to full colour.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn contours_picture(
    rec: &Recording,
    s: usize,
    style: &Style,
    max: &[f64],
    read: &SheetReadout,
) -> Result<Canvas, ReadBackError> {
    let (mut c, layout) = pattern(rec, s, style, max)?;
    let PatternLayout::Sheet { left, top, cell, .. } = layout else {
        return Ok(c);
    };
    let bg = style.background;
    let (nx, ny) = (rec.grid.nx as f32, rec.grid.ny as f32);
    let h = rec.grid.spacing_um as f32;
    let (w_px, h_px) = (cell * nx, cell * ny);
    // µm → px, y upwards as in the pattern.
    let (wx, wy) = (f64::from(nx * h), f64::from(ny * h));
    let to_px = |p: &[f64; 2]| (left + p[0] as f32 / h * cell, top + h_px - p[1] as f32 / h * cell);
    let mut notes = Vec::new();
    for &g in &style.genes {
        let gene = &rec.genes[g];
        let line = blend(bg.ink(), style.colors[g], 0.55);
        for contour in read.contours.iter().filter(|k| &k.gene == gene) {
            // A periodic sheet's contour is unwrapped: draw it in pieces
            // folded back into the sheet, broken where it crosses a seam.
            let mut piece: Vec<(f32, f32)> = Vec::new();
            let mut last: Option<(f32, f32)> = None;
            for p in &contour.points {
                let folded = [p[0].rem_euclid(wx), p[1].rem_euclid(wy)];
                let q = to_px(&folded);
                if let Some(l) = last
                    && ((q.0 - l.0).abs() > w_px / 2.0 || (q.1 - l.1).abs() > h_px / 2.0)
                {
                    c.polyline(&piece, 1.6, line, 255, None);
                    piece.clear();
                }
                piece.push(q);
                last = Some(q);
            }
            c.polyline(&piece, 1.6, line, 255, None);
        }
        if let Some(p) = read.patterns.iter().find(|p| &p.gene == gene) {
            // The wavelength of a repeating pattern only.
            let wavelength = p.wavelength_um.map(|l| format!(", wavelength {l:.1} µm"));
            let count = match p.class.as_str() {
                "spots" => format!(", {} spots{}", p.spots, wavelength.unwrap_or_default()),
                "stripes" | "labyrinth" => format!(", {} stripes{}", p.stripes, wavelength.unwrap_or_default()),
                _ if p.contours == 1 => ", 1 contour".into(),
                _ => format!(", {} contours", p.contours),
            };
            notes.push((format!("{gene}: {}{count}", p.class), line));
        }
    }
    let y0 = top + h_px + 30.0;
    let x = left + w_px + 12.0;
    let right_room = c.width() as f32 - x;
    for (k, (text, colour)) in notes.iter().enumerate() {
        let size = 12.0;
        if Canvas::text_width(size, text) <= right_room {
            c.text(x, y0 - h_px + 14.0 + 18.0 * k as f32, size, *colour, Align::Left, text);
        } else {
            c.text(left + w_px, y0 + 18.0 * k as f32 - 4.0, size, *colour, Align::Right, text);
        }
    }
    Ok(c)
}
