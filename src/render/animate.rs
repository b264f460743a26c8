//! GIF animation of the pattern over the shown snapshots: frames drawn and
//! quantised in parallel, written in order; loops forever.

use std::io::Write;

use rayon::prelude::*;

use super::{Style, gene_maxima, pattern};
use crate::integrate::Recording;

/// A side-by-side animation: the wild type's pattern above the mutant's, frame
/// by frame over the snapshots they share (same clock, so the same times),
/// each scaled by its own gene maxima; returns the number of frames.
///
/// # Errors
/// An I/O error if the GIF cannot be encoded or written.
pub fn write_pair_gif(
    wt: &Recording,
    mt: &Recording,
    wt_style: &Style,
    mt_style: &Style,
    out: &mut dyn Write,
) -> std::io::Result<usize> {
    let n = wt.times.len().min(mt.times.len());
    let all: Vec<usize> = (0..n).collect();
    let io = std::io::Error::other;
    let (max_w, max_m) = (gene_maxima(wt, &all).map_err(io)?, gene_maxima(mt, &all).map_err(io)?);
    let delay = (100.0 / wt_style.fps.max(1) as f64).round().max(2.0) as u16;
    let frames: Vec<gif::Frame<'static>> = (0..n)
        .into_par_iter()
        .map(|s| {
            let (a, _) = pattern(wt, s, wt_style, &max_w).map_err(io)?;
            let (b, _) = pattern(mt, s, mt_style, &max_m).map_err(io)?;
            let (w, h) = (a.width(), a.height() + b.height());
            let mut rgba = Vec::with_capacity((4 * w * h) as usize);
            rgba.extend_from_slice(a.rgba());
            rgba.extend_from_slice(b.rgba());
            let mut f = gif::Frame::from_rgba_speed(w as u16, h as u16, &mut rgba, 10);
            f.delay = delay;
            Ok(f)
        })
        .collect::<std::io::Result<_>>()?;
    write_frames(frames, out)
}

pub(super) fn write_frames(frames: Vec<gif::Frame<'static>>, out: &mut dyn Write) -> std::io::Result<usize> {
    let (w, h) = frames.first().map_or((1, 1), |f| (f.width, f.height));
    let mut enc = gif::Encoder::new(out, w, h, &[]).map_err(std::io::Error::other)?;
    enc.set_repeat(gif::Repeat::Infinite).map_err(std::io::Error::other)?;
    for f in &frames {
        enc.write_frame(f).map_err(std::io::Error::other)?;
    }
    Ok(frames.len())
}

/// Writes the animation; returns the number of frames.
///
/// # Errors
/// An I/O error if the GIF cannot be encoded or written.
pub fn write_gif(rec: &Recording, style: &Style, out: &mut dyn Write) -> std::io::Result<usize> {
    let snaps = style.snapshots(rec);
    let max = gene_maxima(rec, &snaps).map_err(std::io::Error::other)?;
    let delay = (100.0 / style.fps.max(1) as f64).round().max(2.0) as u16;
    let frames: Vec<gif::Frame<'static>> = snaps
        .par_iter()
        .map(|&s| {
            let (canvas, _) = pattern(rec, s, style, &max).map_err(std::io::Error::other)?;
            let mut rgba = canvas.rgba().to_vec();
            let mut f = gif::Frame::from_rgba_speed(canvas.width() as u16, canvas.height() as u16, &mut rgba, 10);
            f.delay = delay;
            Ok(f)
        })
        .collect::<std::io::Result<_>>()?;
    write_frames(frames, out)
}
