//! Reading stained-embryo images into per-channel intensity planes in [0, 1].

use std::path::{Path, PathBuf};

use super::MeasureError;

/// Intensity planes of one image, row-major, each value in [0, 1].
#[derive(Debug, Clone, PartialEq)]
pub struct Planes {
    /// Width, px.
    pub width: usize,
    /// Height, px.
    pub height: usize,
    /// One plane per colour channel (alpha dropped).
    pub planes: Vec<Vec<f64>>,
    /// Bits per channel in the file (8 or 16; 32 for float files).
    pub bits: u8,
    /// The file.
    pub path: PathBuf,
}

impl Planes {
    /// The one plane of a file given for one channel: its only plane, the
    /// first when all are equal (grey saved as colour), or the only one that
    /// is not all zero (a pseudo-coloured export).
    ///
    /// # Errors
    /// [`MeasureError::ManyPlanes`] when several planes differ.
    pub fn single_plane(&self) -> Result<&[f64], MeasureError> {
        if self.planes.len() == 1 || self.planes.iter().all(|p| p == &self.planes[0]) {
            return Ok(&self.planes[0]);
        }
        let lit: Vec<&Vec<f64>> = self.planes.iter().filter(|p| p.iter().any(|v| *v != 0.0)).collect();
        match lit.as_slice() {
            [one] => Ok(one),
            _ => Err(MeasureError::ManyPlanes { path: self.path.clone(), count: self.planes.len() }),
        }
    }

    /// Value of channel `c` at column `x`, row `y`.
    pub fn at(&self, c: usize, x: usize, y: usize) -> f64 {
        self.planes[c][y * self.width + x]
    }
}

/// Largest picture read, px (40 megapixels: measuring one takes about 4 GiB
/// of working memory).
pub const MAX_PIXELS: u64 = 40_000_000;

/// Reads a PNG or TIFF (8- or 16-bit, grey, grey+alpha, RGB or RGBA).
///
/// # Errors
/// [`MeasureError`] if the file cannot be read or decoded, or is empty.
pub fn load(path: &Path) -> Result<Planes, MeasureError> {
    let bad = |e: &dyn std::fmt::Display| MeasureError::Image { path: path.to_path_buf(), reason: e.to_string() };
    let reader = || image::ImageReader::open(path).map_err(|e| bad(&e))?.with_guessed_format().map_err(|e| bad(&e));
    // The header's size is checked before anything is decoded: a small file
    // can claim a picture that would not fit in memory.
    let (w, h) = reader()?.into_dimensions().map_err(|e| bad(&e))?;
    if w as u64 * h as u64 > MAX_PIXELS {
        return Err(MeasureError::TooLarge { path: path.to_path_buf(), width: w as usize, height: h as usize });
    }
    let img = reader()?.decode().map_err(|e| bad(&e))?;
    let (width, height) = (img.width() as usize, img.height() as usize);
    if width == 0 || height == 0 {
        return Err(MeasureError::Empty { path: path.to_path_buf() });
    }
    let color = img.color();
    let channels = color.channel_count() as usize - usize::from(color.has_alpha());
    let bits = (color.bits_per_pixel() / color.channel_count() as u16) as u8;
    let rgba = img.into_rgba32f();
    let mut planes = vec![vec![0.0; width * height]; channels];
    for (i, p) in rgba.pixels().enumerate() {
        for (c, plane) in planes.iter_mut().enumerate() {
            plane[i] = p.0[c] as f64;
        }
    }
    Ok(Planes { width, height, planes, bits, path: path.to_path_buf() })
}

/// Reads a mask image the size `want` (width, height): a pixel is embryo when
/// any of its colour channels is non-zero.
///
/// # Errors
/// [`MeasureError`] if the file cannot be read or has another size.
pub fn load_mask(path: &Path, want: (usize, usize)) -> Result<Vec<bool>, MeasureError> {
    let m = load(path)?;
    if (m.width, m.height) != want {
        return Err(MeasureError::SizeMismatch { path: path.to_path_buf(), got: (m.width, m.height), want });
    }
    Ok((0..m.width * m.height).map(|i| m.planes.iter().any(|p| p[i] > 0.0)).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn planes(p: Vec<Vec<f64>>) -> Planes {
        Planes { width: 2, height: 1, planes: p, bits: 8, path: "x.png".into() }
    }

    /// A channel file's plane: the only one, the first of equal ones, the
    /// only lit one of a pseudo-coloured export; refused when planes differ.
    #[test]
    fn a_channel_file_gives_one_plane_or_says_why_not() {
        assert_eq!(planes(vec![vec![0.1, 0.2]]).single_plane().unwrap(), &[0.1, 0.2]);
        assert_eq!(planes(vec![vec![0.1, 0.2]; 3]).single_plane().unwrap(), &[0.1, 0.2]);
        let green = planes(vec![vec![0.0, 0.0], vec![0.3, 0.4], vec![0.0, 0.0]]);
        assert_eq!(green.single_plane().unwrap(), &[0.3, 0.4]);
        let rgb = planes(vec![vec![0.1, 0.0], vec![0.3, 0.4], vec![0.0, 0.0]]);
        assert!(rgb.single_plane().unwrap_err().to_string().contains("FILE:PLANE=gene"));
    }
}
