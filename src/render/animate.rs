//! GIF animation of the pattern over the shown snapshots: frames drawn and
//! quantised in parallel, written in order; loops forever.

use std::io::Write;

use rayon::prelude::*;

use super::{Canvas, Style, gene_maxima, pattern};
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
    write_grid_gif(&[(wt, wt_style), (mt, mt_style)], 1, false, out)
}

/// An animation of several runs of one clock in a grid of `columns`
/// panels, filled row by row (each panel the pattern picture of its run
/// with its style; every panel must have the same size, as runs of one
/// model with one width do), frame by frame over the snapshots they share.
/// With `shared_scale`, every panel is scaled by the gene maxima over all
/// runs (so that a weaker embryo looks weaker); otherwise each by its own.
/// Returns the number of frames.
///
/// # Errors
/// An I/O error if the GIF cannot be encoded or written.
pub fn write_grid_gif(
    panels: &[(&Recording, &Style)],
    columns: usize,
    shared_scale: bool,
    out: &mut dyn Write,
) -> std::io::Result<usize> {
    let io = std::io::Error::other;
    let n = panels.iter().map(|(r, _)| r.times.len()).min().unwrap_or(0);
    let all: Vec<usize> = (0..n).collect();
    let mut maxima: Vec<Vec<f64>> =
        panels.iter().map(|(r, _)| gene_maxima(r, &all).map_err(io)).collect::<std::io::Result<_>>()?;
    if shared_scale && let Some(first) = maxima.first().cloned() {
        let joint: Vec<f64> =
            (0..first.len()).map(|g| maxima.iter().map(|m| m[g]).fold(f64::NEG_INFINITY, f64::max)).collect();
        maxima.iter_mut().for_each(|m| m.clone_from(&joint));
    }
    let columns = columns.clamp(1, panels.len().max(1));
    let rows = panels.len().div_ceil(columns);
    let delay = panels.first().map_or(10, |(_, st)| (100.0 / st.fps.max(1) as f64).round().max(2.0) as u16);
    let shown = panels.first().map_or_else(|| (0..n).collect(), |(_, st)| st.frames(n));
    let frames: Vec<gif::Frame<'static>> = shown
        .into_par_iter()
        .map(|s| {
            let pictures: Vec<Canvas> = panels
                .iter()
                .zip(&maxima)
                .map(|((rec, st), max)| pattern(rec, s, st, max).map(|(c, _)| c).map_err(io))
                .collect::<std::io::Result<_>>()?;
            let (pw, ph) = (pictures[0].pixel_width(), pictures[0].pixel_height());
            if pictures.iter().any(|p| (p.pixel_width(), p.pixel_height()) != (pw, ph)) {
                return Err(std::io::Error::other("the panels of a grid animation differ in size"));
            }
            let (w, h) = (pw * columns as u32, ph * rows as u32);
            let bg = pictures[0].rgba()[..4].to_vec();
            let mut rgba: Vec<u8> = bg.iter().copied().cycle().take((4 * w * h) as usize).collect();
            for (k, p) in pictures.iter().enumerate() {
                let (x0, y0) = ((k % columns) as u32 * pw, (k / columns) as u32 * ph);
                for y in 0..ph {
                    let src = &p.rgba()[(4 * y * pw) as usize..(4 * (y + 1) * pw) as usize];
                    let at = (4 * ((y0 + y) * w + x0)) as usize;
                    rgba[at..at + src.len()].copy_from_slice(src);
                }
            }
            let mut f = gif::Frame::from_rgba_speed(w as u16, h as u16, &mut rgba, 10);
            f.delay = delay;
            Ok(f)
        })
        .collect::<std::io::Result<_>>()?;
    write_frames(frames, out)
}

/// The last frame of every animation stays this long, in hundredths of a
/// second, before the loop starts again, so that the final pattern can be
/// read in a talk (common practice, no source).
pub const LAST_FRAME_HOLD_CS: u16 = 200;

pub(super) fn write_frames(mut frames: Vec<gif::Frame<'static>>, out: &mut dyn Write) -> std::io::Result<usize> {
    if let Some(last) = frames.last_mut() {
        last.delay = last.delay.max(LAST_FRAME_HOLD_CS);
    }
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
    let shown: Vec<usize> = style.frames(snaps.len()).into_iter().map(|k| snaps[k]).collect();
    let frames: Vec<gif::Frame<'static>> = shown
        .par_iter()
        .map(|&s| {
            let (canvas, _) = pattern(rec, s, style, &max).map_err(std::io::Error::other)?;
            let mut rgba = canvas.rgba().to_vec();
            let mut f =
                gif::Frame::from_rgba_speed(canvas.pixel_width() as u16, canvas.pixel_height() as u16, &mut rgba, 10);
            f.delay = delay;
            Ok(f)
        })
        .collect::<std::io::Result<_>>()?;
    write_frames(frames, out)
}
