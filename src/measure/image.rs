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
    /// Value of channel `c` at column `x`, row `y`.
    pub fn at(&self, c: usize, x: usize, y: usize) -> f64 {
        self.planes[c][y * self.width + x]
    }
}

/// Reads a PNG or TIFF (8- or 16-bit, grey, grey+alpha, RGB or RGBA).
///
/// # Errors
/// [`MeasureError`] if the file cannot be read or decoded, or is empty.
pub fn load(path: &Path) -> Result<Planes, MeasureError> {
    let img = image::open(path).map_err(|e| MeasureError::Image { path: path.to_path_buf(), reason: e.to_string() })?;
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
