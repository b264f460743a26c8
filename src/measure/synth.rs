//! Synthetic stained-embryo images, for demos and tests (invented data):
//! an elliptical embryo, rotated, with a faint counterstain everywhere inside
//! and each channel's stain following a profile along the axis; an uneven
//! background; Gaussian blur; seeded Gaussian noise; 8- or 16-bit output.

use rand::SeedableRng;
use rand_distr::{Distribution, Normal};

/// How to draw a synthetic image.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SynthOptions {
    /// Image size, px.
    pub width: usize,
    /// Image height, px.
    pub height: usize,
    /// Semi-axes of the embryo, px (along, across).
    pub semi_axes: (f64, f64),
    /// Rotation of the long axis from the x axis, degrees (the head is at the
    /// end the rotated +x direction points away from).
    pub angle_deg: f64,
    /// Gaussian blur σ, px (0: none).
    pub blur_px: f64,
    /// Noise σ as a fraction of full scale.
    pub noise: f64,
    /// Seed for the noise.
    pub seed: u64,
}

/// Draws `channels` planes; `level(c, pct)` is channel c's stain (0–1) at
/// `pct` % of the embryo length from the head. Values in [0, 1].
pub fn synthesize(o: &SynthOptions, channels: usize, level: &dyn Fn(usize, f64) -> f64) -> Vec<Vec<f64>> {
    let (w, h) = (o.width, o.height);
    let (cx, cy) = (w as f64 / 2.0, h as f64 / 2.0);
    let (ca, sa) = (o.angle_deg.to_radians().cos(), o.angle_deg.to_radians().sin());
    let (a, b) = o.semi_axes;
    let mut planes = vec![vec![0.0; w * h]; channels];
    for y in 0..h {
        for x in 0..w {
            let (dx, dy) = (x as f64 - cx, y as f64 - cy);
            let (u, v) = (dx * ca + dy * sa, -dx * sa + dy * ca);
            let inside = (u / a).powi(2) + (v / b).powi(2) <= 1.0;
            let pct = 100.0 * (u + a) / (2.0 * a);
            for (c, plane) in planes.iter_mut().enumerate() {
                let background = 0.04 + 0.06 * x as f64 / w as f64;
                plane[y * w + x] = if inside { 0.22 + 0.6 * level(c, pct).clamp(0.0, 1.0) } else { background };
            }
        }
    }
    if o.blur_px > 0.0 {
        for plane in &mut planes {
            blur(plane, w, h, o.blur_px);
        }
    }
    if o.noise > 0.0 {
        let mut rng = rand_pcg::Pcg64::seed_from_u64(o.seed);
        let normal = Normal::new(0.0, o.noise).expect("noise > 0");
        for plane in &mut planes {
            plane.iter_mut().for_each(|v| *v = (*v + normal.sample(&mut rng)).clamp(0.0, 1.0));
        }
    }
    planes
}

/// Separable Gaussian blur with σ in px, edges clamped.
fn blur(plane: &mut [f64], w: usize, h: usize, sigma: f64) {
    let r = (3.0 * sigma).ceil() as isize;
    let kernel: Vec<f64> = (-r..=r).map(|k| (-(k * k) as f64 / (2.0 * sigma * sigma)).exp()).collect();
    let norm: f64 = kernel.iter().sum();
    let mut tmp = vec![0.0; plane.len()];
    for y in 0..h {
        for x in 0..w {
            tmp[y * w + x] = (-r..=r)
                .map(|k| plane[y * w + (x as isize + k).clamp(0, w as isize - 1) as usize] * kernel[(k + r) as usize])
                .sum::<f64>()
                / norm;
        }
    }
    for y in 0..h {
        for x in 0..w {
            plane[y * w + x] = (-r..=r)
                .map(|k| tmp[(y as isize + k).clamp(0, h as isize - 1) as usize * w + x] * kernel[(k + r) as usize])
                .sum::<f64>()
                / norm;
        }
    }
}

/// Encodes up to three planes as an RGB PNG (missing channels black), 8 or 16 bit.
///
/// # Errors
/// An I/O error if encoding fails.
pub fn png(planes: &[Vec<f64>], width: usize, height: usize, bits: u8) -> std::io::Result<Vec<u8>> {
    let mut out = Vec::new();
    let enc = image::codecs::png::PngEncoder::new(&mut out);
    let px = |i: usize, c: usize| planes.get(c).map_or(0.0, |p| p[i]);
    if bits == 16 {
        let data: Vec<u8> = (0..width * height)
            .flat_map(|i| (0..3).flat_map(move |c| ((px(i, c) * 65535.0).round() as u16).to_ne_bytes()))
            .collect();
        image::ImageEncoder::write_image(enc, &data, width as u32, height as u32, image::ExtendedColorType::Rgb16)
            .map_err(std::io::Error::other)?;
    } else {
        let data: Vec<u8> =
            (0..width * height).flat_map(|i| (0..3).map(move |c| (px(i, c) * 255.0).round() as u8)).collect();
        image::ImageEncoder::write_image(enc, &data, width as u32, height as u32, image::ExtendedColorType::Rgb8)
            .map_err(std::io::Error::other)?;
    }
    Ok(out)
}
