//! GIF animation of the pattern over the shown snapshots: frames drawn and
//! quantised in parallel, written in order; loops forever.

use std::io::Write;

use rayon::prelude::*;

use super::{Style, gene_maxima, pattern};
use crate::integrate::Recording;

/// Writes the animation; returns the number of frames.
///
/// # Errors
/// An I/O error if the GIF cannot be encoded or written.
pub fn write_gif(rec: &Recording, style: &Style, out: &mut dyn Write) -> std::io::Result<usize> {
    let snaps = style.snapshots(rec);
    let max = gene_maxima(rec, &snaps);
    let delay = (100.0 / style.fps.max(1) as f64).round().max(2.0) as u16;
    let frames: Vec<gif::Frame<'static>> = snaps
        .par_iter()
        .map(|&s| {
            let (canvas, _) = pattern(rec, s, style, &max);
            let mut rgba = canvas.rgba().to_vec();
            let mut f = gif::Frame::from_rgba_speed(canvas.width() as u16, canvas.height() as u16, &mut rgba, 10);
            f.delay = delay;
            f
        })
        .collect();
    let (w, h) = frames.first().map_or((1, 1), |f| (f.width, f.height));
    let mut enc = gif::Encoder::new(out, w, h, &[]).map_err(std::io::Error::other)?;
    enc.set_repeat(gif::Repeat::Infinite).map_err(std::io::Error::other)?;
    for f in &frames {
        enc.write_frame(f).map_err(std::io::Error::other)?;
    }
    Ok(frames.len())
}
