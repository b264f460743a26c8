//! The image's background, estimated away from the embryo, and each plane's
//! stain signal above it.
//!
//! - **Background surface.** A quadratic surface
//!   `B(x, y) = c₀ + c₁x + c₂y + c₃x² + c₄xy + c₅y²` (x, y scaled to [−½, ½]) is
//!   fitted by least squares to background pixels, re-fitted twice without
//!   pixels more than 3.5 robust sd from it. A quadratic holds a tilted
//!   background and the radial fall-off of vignetting, `I₀(1 − c·r²)`, exactly.
//! - **Noise.** The robust sd `1.4826·MAD` of the residuals on the background
//!   pixels: the median absolute deviation, scaled to equal the sd of a normal
//!   distribution (Hampel 1974, J. Am. Stat. Assoc. 69:383; Rousseeuw & Croux
//!   1993, J. Am. Stat. Assoc. 88:1273; from memory).
//! - **Signal.** Fluorescent (bright on dark) stains: the intensity above the
//!   surface, `v − B`. Absorbing (dark on light, bright-field) stains: the
//!   optical density `−log₁₀(v/B)`, which Beer–Lambert's law makes
//!   proportional to the amount of stain, with B the lamp's field.
//!
//! Which pixels are background is decided by the caller: at first a band
//! along the image border, later every pixel away from the embryos found.

use rayon::prelude::*;

/// Robust sd of a normal sample from its median absolute deviation.
pub const MAD_TO_SD: f64 = 1.4826;

/// Smoothing of the outline signal before thresholding, Gaussian σ in px
/// (common practice, no source): white noise falls by 1/(2σ√π) = 0.14, so
/// tissue only 2 noise sd above the background stands 14 smoothed sd above it.
pub const SMOOTH_PX: f64 = 2.0;

/// How the stain shows against the background.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Contrast {
    /// Fluorescence: stain and tissue brighter than the background.
    Bright,
    /// Bright-field (chromogenic, absorbing): stain darker than the background.
    Dark,
}

impl Contrast {
    /// "bright on dark" or "dark on light".
    pub fn describe(self) -> &'static str {
        match self {
            Contrast::Bright => "bright on dark (fluorescent)",
            Contrast::Dark => "dark on light (absorbing, read as optical density)",
        }
    }
}

/// Median of a slice (sorted in place); NaN when empty.
pub fn median(v: &mut [f64]) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    let k = v.len() / 2;
    let (_, m, _) = v.select_nth_unstable_by(k, f64::total_cmp);
    *m
}

/// The `q` quantile (0–1) of a slice by the nearest rank (sorted in place).
pub fn quantile(v: &mut [f64], q: f64) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    let k = (((v.len() - 1) as f64) * q.clamp(0.0, 1.0)).round() as usize;
    let (_, m, _) = v.select_nth_unstable_by(k, f64::total_cmp);
    *m
}

/// Median and robust sd (1.4826·MAD) of `values`.
pub fn median_and_sd(values: &[f64]) -> (f64, f64) {
    let mut v = values.to_vec();
    let m = median(&mut v);
    let mut dev: Vec<f64> = values.iter().map(|x| (x - m).abs()).collect();
    (m, MAD_TO_SD * median(&mut dev))
}

/// Separable Gaussian smoothing with σ in px, edges replicated.
pub fn smooth(plane: &[f64], width: usize, sigma: f64) -> Vec<f64> {
    let height = plane.len() / width;
    let r = (3.0 * sigma).ceil() as isize;
    let kernel: Vec<f64> = (-r..=r).map(|k| (-((k * k) as f64) / (2.0 * sigma * sigma)).exp()).collect();
    let norm: f64 = kernel.iter().sum();
    let kernel: Vec<f64> = kernel.iter().map(|k| k / norm).collect();
    let mut across = vec![0.0; plane.len()];
    across.par_chunks_mut(width).enumerate().for_each(|(y, row)| {
        let src = &plane[y * width..(y + 1) * width];
        for (x, out) in row.iter_mut().enumerate() {
            *out = (-r..=r)
                .map(|k| src[(x as isize + k).clamp(0, width as isize - 1) as usize] * kernel[(k + r) as usize])
                .sum();
        }
    });
    let mut out = vec![0.0; plane.len()];
    out.par_chunks_mut(width).enumerate().for_each(|(y, row)| {
        for (x, o) in row.iter_mut().enumerate() {
            *o = (-r..=r)
                .map(|k| {
                    across[(y as isize + k).clamp(0, height as isize - 1) as usize * width + x]
                        * kernel[(k + r) as usize]
                })
                .sum();
        }
    });
    out
}

/// A fitted polynomial background surface, `Σ c_ij x^i y^j` over
/// i + j ≤ degree, x and y scaled to [−½, ½].
#[derive(Debug, Clone, PartialEq)]
pub struct Surface {
    coef: Vec<f64>,
    degree: usize,
    width: usize,
    height: usize,
}

impl Surface {
    fn new(degree: usize, width: usize, height: usize) -> Surface {
        Surface { coef: vec![0.0; terms(degree)], degree, width, height }
    }
    fn basis(&self, x: usize, y: usize, out: &mut [f64]) {
        let u = x as f64 / self.width.max(2) as f64 - 0.5;
        let v = y as f64 / self.height.max(2) as f64 - 0.5;
        let mut k = 0;
        for total in 0..=self.degree {
            for j in 0..=total {
                out[k] = u.powi((total - j) as i32) * v.powi(j as i32);
                k += 1;
            }
        }
    }
    /// B at column x, row y.
    pub fn at(&self, x: usize, y: usize) -> f64 {
        let mut b = [0.0; 28];
        self.basis(x, y, &mut b);
        b.iter().zip(&self.coef).map(|(b, c)| b * c).sum()
    }
}

/// Number of terms of a surface of `degree` (at most 6).
fn terms(degree: usize) -> usize {
    (degree + 1) * (degree + 2) / 2
}

/// Degree of the background surface fitted to the border alone: a quadratic,
/// which holds a tilt and a radial fall-off `I₀(1 − c·r²)` exactly.
pub const BORDER_DEGREE: usize = 2;
/// Degree of the surface fitted to every pixel away from the embryos: a
/// quartic, which also follows the steeper, non-quadratic fall-off of strong
/// vignetting (cos⁴, Gaussian) under the embryo.
pub const FULL_DEGREE: usize = 4;

/// Fits a background surface of `degree` to `plane` over the pixels `set`
/// (indices), robustly: twice more without the points farther than 3.5
/// robust sd. Returns the surface and the robust sd of its residuals on the set.
pub fn fit_surface(plane: &[f64], width: usize, set: &[usize], degree: usize) -> (Surface, f64) {
    let height = plane.len() / width;
    let mut s = Surface::new(degree, width, height);
    let n = terms(degree);
    let mut keep: Vec<usize> = set.to_vec();
    let mut sd = 0.0;
    let mut b = vec![0.0; n];
    for round in 0..3 {
        let mut ata = nalgebra::DMatrix::<f64>::zeros(n, n);
        let mut atb = nalgebra::DVector::<f64>::zeros(n);
        for &i in &keep {
            s.basis(i % width, i / width, &mut b);
            for r in 0..n {
                atb[r] += b[r] * plane[i];
                for c in 0..=r {
                    ata[(r, c)] += b[r] * b[c];
                }
            }
        }
        for r in 0..n {
            for c in r + 1..n {
                ata[(r, c)] = ata[(c, r)];
            }
        }
        // A set too small or degenerate for the surface falls back to its median.
        let coef = if keep.len() >= 10 * n { ata.lu().solve(&atb) } else { None };
        s.coef = match coef {
            Some(c) => c.iter().copied().collect(),
            None => {
                let mut v: Vec<f64> = keep.iter().map(|&i| plane[i]).collect();
                let mut c = vec![0.0; n];
                c[0] = median(&mut v);
                c
            }
        };
        let residuals: Vec<f64> = set.iter().map(|&i| plane[i] - s.at(i % width, i / width)).collect();
        let (m, robust) = median_and_sd(&residuals);
        sd = robust;
        if round < 2 {
            let cut = 3.5 * robust.max(1e-12);
            keep = set.iter().zip(&residuals).filter(|(_, r)| (*r - m).abs() <= cut).map(|(i, _)| *i).collect();
        }
    }
    (s, sd)
}

/// Pixels within `band` px of the image border.
pub fn border_band(width: usize, height: usize, band: usize) -> Vec<usize> {
    (0..width * height)
        .filter(|&i| {
            let (x, y) = (i % width, i / width);
            x < band || y < band || x + band >= width || y + band >= height
        })
        .collect()
}

/// Pieces the border band is cut into for [`background_border`].
pub const BORDER_PIECES: usize = 32;

/// Noise sd of a plane from differences of horizontal neighbours within
/// `set` (both pixels in it): 1.4826·median|Δ|/√2. Smooth changes of the
/// background and the edges of the few regions the set crosses hardly move it.
pub fn difference_noise(plane: &[f64], width: usize, set: &[usize]) -> f64 {
    let mut inside = vec![false; plane.len()];
    set.iter().for_each(|&i| inside[i] = true);
    let mut d: Vec<f64> = set
        .iter()
        .filter(|&&i| (i + 1) % width != 0 && inside[i + 1])
        .map(|&i| (plane[i + 1] - plane[i]).abs())
        .collect();
    MAD_TO_SD * median(&mut d) / std::f64::consts::SQRT_2
}

/// The part of the border band (`band` px wide) that is background. The band
/// is cut into [`BORDER_PIECES`] pieces along the perimeter; a quadratic
/// surface is fitted to the pieces' medians, and the piece farthest from it
/// is dropped while it is more than 3 noise sd off (noise from
/// [`difference_noise`]) and more than 12 pieces remain. An embryo cut by the
/// image edge covers some pieces: they are dropped, where a fit to the whole
/// band would bend towards them (common practice, no source).
pub fn background_border(plane: &[f64], width: usize, band: usize) -> Vec<usize> {
    let height = plane.len() / width;
    background_of_band(plane, width, border_band(width, height, band))
}

/// [`background_border`] for any band of pixels along the picture's edge
/// (`all`, e.g. the edge of a padded frame).
pub fn background_of_band(plane: &[f64], width: usize, all: Vec<usize>) -> Vec<usize> {
    let height = plane.len() / width;
    let perimeter = 2.0 * (width + height) as f64;
    // Position along the perimeter, clockwise from the top-left corner.
    let along = |i: usize| {
        let (x, y) = ((i % width) as f64, (i / width) as f64);
        let (w, h) = (width as f64, height as f64);
        let d = [y, w - 1.0 - x, h - 1.0 - y, x];
        let side = (0..4).min_by(|&a, &b| d[a].total_cmp(&d[b])).unwrap_or(0);
        match side {
            0 => x,
            1 => w + y,
            2 => w + h + (w - 1.0 - x),
            _ => 2.0 * w + h + (h - 1.0 - y),
        }
    };
    let mut pieces: Vec<Vec<usize>> = vec![Vec::new(); BORDER_PIECES];
    for &i in &all {
        let k = ((along(i) / perimeter * BORDER_PIECES as f64) as usize).min(BORDER_PIECES - 1);
        pieces[k].push(i);
    }
    pieces.retain(|p| p.len() >= 8);
    let noise = difference_noise(plane, width, &all).max(1e-12);
    let surface = Surface::new(BORDER_DEGREE, width, height);
    let n = terms(BORDER_DEGREE);
    let centre = |p: &Vec<usize>| {
        let n = p.len() as f64;
        let (sx, sy) = p.iter().fold((0.0, 0.0), |(a, b), &i| (a + (i % width) as f64, b + (i / width) as f64));
        ((sx / n).round() as usize, (sy / n).round() as usize)
    };
    let points: Vec<((usize, usize), f64)> = pieces
        .iter()
        .map(|p| {
            let mut v: Vec<f64> = p.iter().map(|&i| plane[i]).collect();
            (centre(p), median(&mut v))
        })
        .collect();
    let mut keep: Vec<usize> = (0..points.len()).collect();
    let mut b = vec![0.0; n];
    while keep.len() > 12 {
        let mut ata = nalgebra::DMatrix::<f64>::zeros(n, n);
        let mut atb = nalgebra::DVector::<f64>::zeros(n);
        for &k in &keep {
            let ((x, y), v) = points[k];
            surface.basis(x, y, &mut b);
            let r = nalgebra::DVector::from_column_slice(&b);
            ata += &r * r.transpose();
            atb += r * v;
        }
        let Some(c) = ata.lu().solve(&atb) else { break };
        let fitted = Surface { coef: c.iter().copied().collect(), ..surface.clone() };
        let (worst, off) = keep
            .iter()
            .map(|&k| (k, (points[k].1 - fitted.at(points[k].0.0, points[k].0.1)).abs()))
            .fold((usize::MAX, 0.0), |a, b| if b.1 > a.1 { b } else { a });
        if off <= 3.0 * noise {
            break;
        }
        keep.retain(|&k| k != worst);
    }
    let mut out: Vec<usize> = keep.iter().flat_map(|&k| pieces[k].iter().copied()).collect();
    out.sort_unstable();
    out
}

/// At most `limit` of `set`, evenly strided (deterministic), so that fits on
/// large images stay cheap.
pub fn thin(set: Vec<usize>, limit: usize) -> Vec<usize> {
    if set.len() <= limit {
        return set;
    }
    let stride = set.len().div_ceil(limit);
    set.into_iter().step_by(stride).collect()
}

/// Counts, in the mean of the planes, the pixels clearly brighter and clearly
/// darker than the background: after fitting the surface to `set`, the
/// smoothed residual above +6 and below −6 smoothed sd (pixels of `padding`
/// not counted).
pub fn contrast_counts(planes: &[Vec<f64>], width: usize, set: &[usize], padding: Option<&[bool]>) -> (usize, usize) {
    let n = planes[0].len();
    let mean: Vec<f64> = (0..n).map(|i| planes.iter().map(|p| p[i]).sum::<f64>() / planes.len() as f64).collect();
    let (surface, _) = fit_surface(&mean, width, set, BORDER_DEGREE);
    let residual: Vec<f64> = (0..n).map(|i| mean[i] - surface.at(i % width, i / width)).collect();
    let sm = smooth(&residual, width, SMOOTH_PX);
    let on_set: Vec<f64> = set.iter().map(|&i| sm[i]).collect();
    let (m, s) = median_and_sd(&on_set);
    let s = s.max(1e-9);
    let framed = |i: &usize| !padding.is_some_and(|p| p[*i]);
    let bright = (0..n).filter(framed).filter(|&i| sm[i] - m > 6.0 * s).count();
    let dark = (0..n).filter(framed).filter(|&i| m - sm[i] > 6.0 * s).count();
    (bright, dark)
}

/// The contrast that the counts of [`contrast_counts`] show: the side with at
/// least 3× the pixels of the other, or None when neither wins.
pub fn decide_contrast(bright: usize, dark: usize) -> Option<Contrast> {
    if bright >= 3 * dark.max(1) {
        Some(Contrast::Bright)
    } else if dark >= 3 * bright.max(1) {
        Some(Contrast::Dark)
    } else {
        None
    }
}

/// A plane's stain signal above its background surface (of `degree`, fitted
/// to `set`): `v − B` for bright stains, `−log₁₀(v/B)` for dark ones (v
/// floored at `floor`, half a grey level). Returns the signal and its robust
/// sd on `set`.
pub fn signal(
    plane: &[f64],
    width: usize,
    set: &[usize],
    contrast: Contrast,
    floor: f64,
    degree: usize,
) -> (Vec<f64>, f64) {
    let (surface, _) = fit_surface(plane, width, set, degree);
    let out: Vec<f64> = plane
        .iter()
        .enumerate()
        .map(|(i, v)| {
            let b = surface.at(i % width, i / width);
            match contrast {
                Contrast::Bright => v - b,
                Contrast::Dark => -(v.max(floor) / b.max(floor)).log10(),
            }
        })
        .collect();
    let on_set: Vec<f64> = set.iter().map(|&i| out[i]).collect();
    let (_, sd) = median_and_sd(&on_set);
    (out, sd)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};

    /// Median and 1.4826·MAD of a large normal sample recover its mean and sd
    /// (Rousseeuw & Croux 1993: the MAD is consistent for the normal sd with that factor).
    #[test]
    fn robust_centre_and_spread_of_a_normal_sample() {
        let mut rng = rand_pcg::Pcg64::seed_from_u64(3);
        let normal = Normal::new(10.0, 2.0).unwrap();
        let mut v: Vec<f64> = (0..200_000).map(|_| normal.sample(&mut rng)).collect();
        // 5 % gross outliers (an embryo's pixels in the sample) move neither much.
        v.extend((0..10_000).map(|_| 500.0));
        let (m, sd) = median_and_sd(&v);
        assert!((m - 10.0).abs() < 0.15, "{m}");
        assert!((sd - 2.0).abs() < 0.15, "{sd}");
    }

    /// A vignetted background I₀(1 − c r²) plus a tilt is a quadratic, so the
    /// surface fitted to the border alone matches it in the middle, where
    /// there are no samples, to a small fraction of the noise.
    #[test]
    fn border_fit_extrapolates_vignetting_to_the_centre() {
        let (w, h) = (300, 200);
        let truth = |x: usize, y: usize| {
            let (u, v) = (x as f64 - 170.0, y as f64 - 90.0);
            0.6 * (1.0 - 0.2 * (u * u + v * v) / (150.0f64 * 150.0)) + 0.0001 * x as f64
        };
        let mut rng = rand_pcg::Pcg64::seed_from_u64(5);
        let normal = Normal::new(0.0, 0.01).unwrap();
        let plane: Vec<f64> = (0..w * h).map(|i| truth(i % w, i / w) + normal.sample(&mut rng)).collect();
        let (s, sd) = fit_surface(&plane, w, &border_band(w, h, 6), BORDER_DEGREE);
        assert!((sd - 0.01).abs() < 0.001, "{sd}");
        for (x, y) in [(150, 100), (60, 40), (240, 160)] {
            assert!((s.at(x, y) - truth(x, y)).abs() < 0.002, "({x}, {y}): {} vs {}", s.at(x, y), truth(x, y));
        }
    }

    /// Smoothing white noise with a Gaussian of σ px leaves sd/(2σ√π)
    /// (the kernel's squared sum; common practice, no source).
    #[test]
    fn smoothing_reduces_white_noise_as_expected() {
        let (w, h) = (256, 256);
        let mut rng = rand_pcg::Pcg64::seed_from_u64(9);
        let normal = Normal::new(0.0, 1.0).unwrap();
        let plane: Vec<f64> = (0..w * h).map(|_| normal.sample(&mut rng)).collect();
        let sm = smooth(&plane, w, SMOOTH_PX);
        let inner: Vec<f64> = (0..w * h).filter(|i| (i % w) > 10 && (i % w) < w - 10).map(|i| sm[i]).collect();
        let var = inner.iter().map(|v| v * v).sum::<f64>() / inner.len() as f64;
        let want = 1.0 / (2.0 * SMOOTH_PX * std::f64::consts::PI.sqrt());
        assert!((var.sqrt() / want - 1.0).abs() < 0.05, "{} vs {want}", var.sqrt());
    }

    /// Optical density of a uniform absorber under an uneven lamp is the
    /// same everywhere: −log₁₀(v/B) removes the lamp's field.
    #[test]
    fn optical_density_removes_the_lamp_field() {
        let (w, h) = (120, 80);
        let lamp = |x: usize, y: usize| 0.9 - 0.3 * ((x as f64 - 60.0).powi(2) + (y as f64 - 40.0).powi(2)) / 5200.0;
        let plane: Vec<f64> = (0..w * h)
            .map(|i| {
                let (x, y) = (i % w, i / w);
                let inside = (30..90).contains(&x) && (25..55).contains(&y);
                lamp(x, y) * if inside { 10f64.powf(-0.4) } else { 1.0 }
            })
            .collect();
        let (od, _) = signal(&plane, w, &border_band(w, h, 5), Contrast::Dark, 1e-4, BORDER_DEGREE);
        assert!((od[40 * w + 60] - 0.4).abs() < 1e-6, "{}", od[40 * w + 60]);
        assert!((od[30 * w + 35] - 0.4).abs() < 1e-6, "{}", od[30 * w + 35]);
        assert!(od[5 * w + 5].abs() < 1e-6);
    }
}
