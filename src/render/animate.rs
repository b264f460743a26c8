//! GIF animation of the pattern over the shown snapshots: frames drawn and
//! quantised in parallel, written in order; loops forever.

use std::io::Write;

use rayon::prelude::*;

use super::{Canvas, Style, gene_maxima, pattern};
use crate::integrate::Recording;

/// A side-by-side animation: the wild type's pattern above the mutant's, frame
/// by frame over the snapshots they share (same clock, so the same times),
/// each scaled by its own gene maxima; returns what was written.
///
/// # Errors
/// An I/O error if the GIF cannot be encoded or written.
pub fn write_pair_gif(
    wt: &Recording,
    mt: &Recording,
    wt_style: &Style,
    mt_style: &Style,
    out: &mut dyn Write,
) -> std::io::Result<GifMade> {
    write_grid_gif(&[(wt, wt_style), (mt, mt_style)], 1, false, out)
}

/// An animation of several runs of one clock in a grid of `columns`
/// panels, filled row by row (each panel the pattern picture of its run
/// with its style; every panel must have the same size, as runs of one
/// model with one width do), frame by frame over the snapshots they share.
/// With `shared_scale`, every panel is scaled by the gene maxima over all
/// runs (so that a weaker embryo looks weaker); otherwise each by its own.
/// Returns what was written.
///
/// # Errors
/// An I/O error if the GIF cannot be encoded or written.
pub fn write_grid_gif(
    panels: &[(&Recording, &Style)],
    columns: usize,
    shared_scale: bool,
    out: &mut dyn Write,
) -> std::io::Result<GifMade> {
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
    let max_bytes = panels.first().and_then(|(_, st)| st.gif_max_bytes);
    // Frames are pixels only: no SVG is kept of them.
    let panels: Vec<(&Recording, Style)> =
        panels.iter().map(|(r, st)| (*r, Style { svg: false, ..(*st).clone() })).collect();
    let frames: Vec<(u32, u32, Vec<u8>)> = shown
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
            Ok((w, h, rgba))
        })
        .collect::<std::io::Result<_>>()?;
    Drawn::new(frames, delay)?.write(max_bytes, out)
}

/// The last frame of every animation stays this long, in hundredths of a
/// second, before the loop starts again, so that the final pattern can be
/// read in a talk (common practice, no source).
pub const LAST_FRAME_HOLD_CS: u16 = 200;

/// The fewest frames an animation is cut to when it must fit a size; below
/// it the colours are reduced instead (common practice, no source).
pub const MIN_FRAMES: usize = 10;

/// What an animation became: its frames and colours, and its size.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GifMade {
    /// Frames written.
    pub frames: usize,
    /// Of the frames drawn, every this many was kept, and the last (1: all).
    pub every: usize,
    /// Colours per frame (256: as many as a GIF holds).
    pub colours: usize,
    /// Size, bytes.
    pub bytes: usize,
    /// The size asked for, bytes, if any.
    pub max_bytes: Option<u64>,
}

impl GifMade {
    /// Whether frames or colours were given up to meet the size asked for.
    pub fn reduced(&self) -> bool {
        self.every > 1 || self.colours < 256
    }

    /// Whether the size asked for was met.
    pub fn fits(&self) -> bool {
        self.max_bytes.is_none_or(|m| self.bytes as u64 <= m)
    }

    /// A sentence on how `name` was made to fit, if anything was done.
    pub fn describe(&self, name: &str) -> Option<String> {
        let mb = |b: f64| if b < 1e6 { format!("{:.0} kB", b / 1e3) } else { format!("{:.2} MB", b / 1e6) };
        let max = self.max_bytes? as f64;
        if self.fits() && !self.reduced() {
            return None;
        }
        let how = format!(
            "{} frames (every {} of those drawn, and the last), {} colours",
            self.frames, self.every, self.colours
        );
        Some(if self.fits() {
            format!("{name}: {how}, to stay within {}: {}", mb(max), mb(self.bytes as f64))
        } else {
            format!(
                "{name}: could NOT be brought within {}: {} even at {how}; give a smaller --width or a larger \
                 --gif-max-mb",
                mb(max),
                mb(self.bytes as f64)
            )
        })
    }
}

/// The frames of an animation as drawn (RGBA), before encoding.
pub(super) struct Drawn {
    size: (u16, u16),
    frames: Vec<Vec<u8>>,
    delay: u16,
}

impl Drawn {
    /// Frames of one size, each shown `delay` hundredths of a second.
    pub(super) fn new(frames: Vec<(u32, u32, Vec<u8>)>, delay: u16) -> std::io::Result<Drawn> {
        let size = frames.first().map_or((1, 1), |f| (f.0, f.1));
        if size.0 > u16::MAX as u32 || size.1 > u16::MAX as u32 || frames.iter().any(|f| (f.0, f.1) != size) {
            return Err(std::io::Error::other("animation frames differ in size or are too large for a GIF"));
        }
        Ok(Drawn { size: (size.0 as u16, size.1 as u16), frames: frames.into_iter().map(|f| f.2).collect(), delay })
    }

    /// The GIF of frames `keep` with `colours` colours each (quantised in parallel).
    fn encode(&self, keep: &[usize], colours: usize) -> std::io::Result<Vec<u8>> {
        let (w, h) = self.size;
        let mut frames: Vec<gif::Frame<'static>> = keep
            .par_iter()
            .map(|&k| {
                let mut rgba = self.frames[k].clone();
                let mut f = if colours >= 256 {
                    gif::Frame::from_rgba_speed(w, h, &mut rgba, 10)
                } else {
                    let quant = color_quant::NeuQuant::new(10, colours, &rgba);
                    let pixels: Vec<u8> = rgba.chunks_exact(4).map(|p| quant.index_of(p) as u8).collect();
                    gif::Frame::from_palette_pixels(w, h, pixels, quant.color_map_rgb(), None)
                };
                f.delay = self.delay;
                f
            })
            .collect();
        if let Some(last) = frames.last_mut() {
            last.delay = last.delay.max(LAST_FRAME_HOLD_CS);
        }
        let mut out = Vec::new();
        {
            let mut enc = gif::Encoder::new(&mut out, w, h, &[]).map_err(std::io::Error::other)?;
            enc.set_repeat(gif::Repeat::Infinite).map_err(std::io::Error::other)?;
            for f in &frames {
                enc.write_frame(f).map_err(std::io::Error::other)?;
            }
        }
        Ok(out)
    }

    /// Encodes every frame, or, when that is larger than `max_bytes`, fewer:
    /// every k-th and the last, k chosen from the size (which is about in
    /// proportion to the frames), down to [`MIN_FRAMES`]; then halves the
    /// colours down to 16. Writes the first that fits, or the smallest.
    pub(super) fn write(&self, max_bytes: Option<u64>, out: &mut dyn Write) -> std::io::Result<GifMade> {
        let n = self.frames.len();
        let most_every = (n / MIN_FRAMES).max(1);
        let (mut every, mut colours) = (1usize, 256usize);
        loop {
            let keep = every_and_last(n, every);
            let bytes = self.encode(&keep, colours)?;
            let made = GifMade { frames: keep.len(), every, colours, bytes: bytes.len(), max_bytes };
            let over = max_bytes.map(|m| bytes.len() as f64 / m as f64).filter(|r| *r > 1.0);
            match over {
                Some(ratio) if every < most_every => {
                    every = ((every as f64 * ratio * 1.05).ceil() as usize).clamp(every + 1, most_every);
                }
                Some(_) if colours > 16 => colours /= 2,
                _ => {
                    out.write_all(&bytes)?;
                    return Ok(made);
                }
            }
        }
    }
}

/// Indices 0, k, 2k, … below `n`, and always `n − 1`.
fn every_and_last(n: usize, k: usize) -> Vec<usize> {
    let mut keep: Vec<usize> = (0..n).step_by(k.max(1)).collect();
    if n > 0 && keep.last() != Some(&(n - 1)) {
        keep.push(n - 1);
    }
    keep
}

/// Writes the animation; returns what was written.
///
/// # Errors
/// An I/O error if the GIF cannot be encoded or written.
pub fn write_gif(rec: &Recording, style: &Style, out: &mut dyn Write) -> std::io::Result<GifMade> {
    let snaps = style.snapshots(rec);
    let max = gene_maxima(rec, &snaps).map_err(std::io::Error::other)?;
    let delay = (100.0 / style.fps.max(1) as f64).round().max(2.0) as u16;
    let shown: Vec<usize> = style.frames(snaps.len()).into_iter().map(|k| snaps[k]).collect();
    // Frames are pixels only: no SVG is kept of them.
    let frame_style = Style { svg: false, ..style.clone() };
    let frames: Vec<(u32, u32, Vec<u8>)> = shown
        .par_iter()
        .map(|&s| {
            let (canvas, _) = pattern(rec, s, &frame_style, &max).map_err(std::io::Error::other)?;
            Ok((canvas.pixel_width(), canvas.pixel_height(), canvas.rgba().to_vec()))
        })
        .collect::<std::io::Result<_>>()?;
    Drawn::new(frames, delay)?.write(style.gif_max_bytes, out)
}
