//! The dominant wavelength of a sheet's pattern, from its radially averaged
//! power spectrum.
//!
//! The level field is expanded in the sheet's own modes: cosines
//! cos(π m x/W)·cos(π n y/H) on a sealed sheet (an orthonormal DCT-II, the
//! modes of diffusion with no flux through the walls), complex exponentials
//! on a periodic one (a discrete Fourier transform). Each mode's power is its
//! share of the field's variance (Parseval). Modes are grouped into rings of
//! equal wavenumber |q|, of width δ = the finest spacing of |q| along the
//! longer side (π/W sealed, 2π/W periodic), and each ring's power is the mean
//! over its modes: the radially averaged power spectrum P(|q|). The peak is
//! the ring of most power (|q| > 0) with the rings around it down to half its
//! power. Across three or more such rings, the dominant wavenumber is the
//! vertex of a parabola fitted to ln P (weighted by modes per ring; each
//! ring placed at its modes' power-weighted mean |q|): a Gaussian peak,
//! which is exact for a pattern still growing from noise, P ∝ e^{2σ(q)t}.
//! A sharper peak gives the power-weighted mean |q| of the modes of its ring
//! and the two beside it. Then the dominant wavelength is λ = 2π/|q|
//! (for hexagonal spots, the spacing of rows of spots; spot centres are
//! 2λ/√3 apart).

use rustdct::DctPlanner;
use rustfft::FftPlanner;
use rustfft::num_complex::Complex64;

use super::SheetField;

/// The radially averaged power spectrum and its peak.
#[derive(Debug, Clone, PartialEq)]
pub struct Spectrum {
    /// Mean wavenumber of each ring's modes, rad/µm (ring 0 is the mean level).
    pub wavenumber_per_um: Vec<f64>,
    /// Mean power of each ring's modes, (a.u.)².
    pub power: Vec<f64>,
    /// Dominant wavenumber, rad/µm (None for a field with no variation).
    pub dominant_per_um: Option<f64>,
}

impl Spectrum {
    /// The dominant wavelength 2π/|q|, µm.
    pub fn dominant_wavelength_um(&self) -> Option<f64> {
        self.dominant_per_um.map(|q| 2.0 * std::f64::consts::PI / q)
    }
}

/// The radially averaged power spectrum of `field`.
pub fn spectrum(field: &SheetField) -> Spectrum {
    let SheetField { nx, ny, spacing_um: h, periodic, .. } = *field;
    let (wx, wy) = (nx as f64 * h, ny as f64 * h);
    let pi = std::f64::consts::PI;
    // Per mode along each axis: its wavenumber, rad/µm.
    let (qx, qy, power): (Vec<f64>, Vec<f64>, Vec<f64>) = if periodic {
        let fold = |m: usize, n: usize| m.min(n - m) as f64;
        let qx = (0..nx).map(|m| 2.0 * pi * fold(m, nx) / wx).collect();
        let qy = (0..ny).map(|m| 2.0 * pi * fold(m, ny) / wy).collect();
        (qx, qy, fourier_power(field))
    } else {
        let qx = (0..nx).map(|m| pi * m as f64 / wx).collect();
        let qy = (0..ny).map(|m| pi * m as f64 / wy).collect();
        (qx, qy, cosine_power(field))
    };
    let delta = if periodic { 2.0 * pi / wx.max(wy) } else { pi / wx.max(wy) };
    let rings = ((qx.iter().copied().fold(0.0, f64::max).hypot(qy.iter().copied().fold(0.0, f64::max)) / delta).round()
        as usize)
        + 1;
    let (mut sum_q, mut sum_p, mut sum_pq) = (vec![0.0; rings], vec![0.0; rings], vec![0.0; rings]);
    let mut count = vec![0usize; rings];
    for (j, &b) in qy.iter().enumerate() {
        for (i, &a) in qx.iter().enumerate() {
            let q = a.hypot(b);
            let r = ((q / delta).round() as usize).min(rings - 1);
            sum_q[r] += q;
            sum_p[r] += power[j * nx + i];
            sum_pq[r] += power[j * nx + i] * q;
            count[r] += 1;
        }
    }
    let (mut wavenumber_per_um, mut mean_power) = (Vec::new(), Vec::new());
    for r in 0..rings {
        let c = count[r].max(1) as f64;
        wavenumber_per_um.push(sum_q[r] / c);
        mean_power.push(sum_p[r] / c);
    }
    // The peak ring above |q| = 0 (rings that hold no mode have zero power).
    let peak = (1..rings).filter(|&r| count[r] > 0).max_by(|&a, &b| mean_power[a].total_cmp(&mean_power[b]));
    let total: f64 = mean_power[1..].iter().sum();
    let dominant_per_um = peak.filter(|&p| total > 0.0 && mean_power[p] > 0.0).map(|p| {
        // The peak: the rings around it down to half its power.
        let half = mean_power[p] / 2.0;
        let (mut lo, mut hi) = (p, p);
        while lo > 1 && (count[lo - 1] == 0 || mean_power[lo - 1] >= half) {
            lo -= 1;
        }
        while hi + 1 < rings && (count[hi + 1] == 0 || mean_power[hi + 1] >= half) {
            hi += 1;
        }
        let held: Vec<usize> = (lo..=hi).filter(|&r| count[r] > 0 && sum_p[r] > 0.0).collect();
        let at = |r: usize| sum_pq[r] / sum_p[r];
        if held.len() >= 3
            && let Some(q) = log_parabola_vertex(
                &held.iter().map(|&r| (at(r), mean_power[r].ln(), count[r] as f64)).collect::<Vec<_>>(),
            )
            && (at(held[0])..=at(held[held.len() - 1])).contains(&q)
        {
            return q;
        }
        // A sharp peak: the power-weighted mean |q| of its ring and the two beside it.
        let near: Vec<usize> =
            (p.saturating_sub(1).max(1)..=(p + 1).min(rings - 1)).filter(|&r| count[r] > 0).collect();
        near.iter().map(|&r| sum_pq[r]).sum::<f64>() / near.iter().map(|&r| sum_p[r]).sum::<f64>()
    });
    Spectrum { wavenumber_per_um, power: mean_power, dominant_per_um }
}

/// The vertex of the parabola ln P = a + b q + c q² fitted by least squares
/// to points (q, ln P, weight), when it opens downwards (a Gaussian peak in
/// P; for a pattern growing from noise, P ∝ exp(2σ(q)t) with σ(q) a parabola
/// about its maximum, so the vertex is the fastest-growing wavenumber).
fn log_parabola_vertex(points: &[(f64, f64, f64)]) -> Option<f64> {
    // Centred and scaled abscissa for a well-conditioned 3×3 solve.
    let w: f64 = points.iter().map(|p| p.2).sum();
    let q0 = points.iter().map(|p| p.0 * p.2).sum::<f64>() / w;
    let s = points.iter().map(|p| (p.0 - q0).abs()).fold(0.0, f64::max).max(f64::MIN_POSITIVE);
    let mut m = nalgebra::Matrix3::<f64>::zeros();
    let mut v = nalgebra::Vector3::<f64>::zeros();
    for &(q, y, wt) in points {
        let x = (q - q0) / s;
        let basis = nalgebra::Vector3::new(1.0, x, x * x);
        m += wt * basis * basis.transpose();
        v += wt * y * basis;
    }
    let c = m.lu().solve(&v)?;
    (c[2] < 0.0).then(|| q0 - s * c[1] / (2.0 * c[2]))
}

/// Applies `along_x` to every row of the nx × ny array `a` (x fastest) and
/// then `along_y` to every column: a separable two-dimensional transform.
fn transform_2d<T: Copy + Default>(
    a: &mut [T],
    nx: usize,
    ny: usize,
    along_x: impl Fn(&mut [T]),
    along_y: impl Fn(&mut [T]),
) {
    for row in a.chunks_exact_mut(nx) {
        along_x(row);
    }
    let mut column = vec![T::default(); ny];
    for i in 0..nx {
        for (j, c) in column.iter_mut().enumerate() {
            *c = a[j * nx + i];
        }
        along_y(&mut column);
        for (j, c) in column.iter().enumerate() {
            a[j * nx + i] = *c;
        }
    }
}

/// Power of each cosine mode (m, n) at index n·nx + m: the squared
/// coefficient of the orthonormal two-dimensional DCT-II.
fn cosine_power(field: &SheetField) -> Vec<f64> {
    let (nx, ny) = (field.nx, field.ny);
    let mut planner = DctPlanner::new();
    let (along_x, along_y) = (planner.plan_dct2(nx), planner.plan_dct2(ny));
    let mut a = field.values.to_vec();
    transform_2d(&mut a, nx, ny, |r| along_x.process_dct2(r), |c| along_y.process_dct2(c));
    // Orthonormal scaling: 1/N for the mean mode, 2/N for the others, per axis.
    let scale = |k: usize, n: usize| if k == 0 { 1.0 / n as f64 } else { 2.0 / n as f64 };
    a.iter().enumerate().map(|(k, c)| c * c * scale(k % nx, nx) * scale(k / nx, ny)).collect()
}

/// Power of each Fourier mode at index n·nx + m: |X|²/(nx·ny).
fn fourier_power(field: &SheetField) -> Vec<f64> {
    let (nx, ny) = (field.nx, field.ny);
    let mut planner = FftPlanner::new();
    let (along_x, along_y) = (planner.plan_fft_forward(nx), planner.plan_fft_forward(ny));
    let mut a: Vec<Complex64> = field.values.iter().map(|v| Complex64::new(*v, 0.0)).collect();
    transform_2d(&mut a, nx, ny, |r| along_x.process(r), |c| along_y.process(c));
    let n = (nx * ny) as f64;
    a.iter().map(|c| c.norm_sqr() / n).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sheet(nx: usize, ny: usize, h: f64, f: impl Fn(f64, f64) -> f64) -> Vec<f64> {
        (0..nx * ny).map(|k| f(((k % nx) as f64 + 0.5) * h, ((k / nx) as f64 + 0.5) * h)).collect()
    }

    /// Parseval: the powers add up to the field's sum of squares.
    #[test]
    fn powers_are_shares_of_the_sum_of_squares() {
        let v = sheet(12, 9, 1.0, |x, y| (0.7 * x).sin() + (0.3 * y * x).cos() + 0.2);
        let ss: f64 = v.iter().map(|x| x * x).sum();
        for periodic in [false, true] {
            let f = SheetField { values: &v, nx: 12, ny: 9, spacing_um: 1.0, periodic };
            let p: f64 = if periodic { fourier_power(&f) } else { cosine_power(&f) }.iter().sum();
            assert!((p / ss - 1.0).abs() < 1e-12, "{p} vs {ss}");
        }
    }

    /// A sheet's own mode is found exactly; an oblique plane wave of a
    /// wavelength that is not one of the sheet's modes, to within 1 %.
    #[test]
    fn plane_waves_give_their_wavelength() {
        let (n, h) = (128, 1.5);
        let w = n as f64 * h;
        // Sealed sheet, mode (12, 5): λ = 2π / (π √(12² + 5²) / W) = 2W/13.
        let v = sheet(n, n, h, |x, y| {
            (std::f64::consts::PI * 12.0 * x / w).cos() * (std::f64::consts::PI * 5.0 * y / w).cos()
        });
        let f = SheetField { values: &v, nx: n, ny: n, spacing_um: h, periodic: false };
        let got = spectrum(&f).dominant_wavelength_um().unwrap();
        assert!((got / (2.0 * w / 13.0) - 1.0).abs() < 1e-9, "{got}");
        let lambda = 17.3;
        let (kx, ky) = (0.6, 0.8);
        let v = sheet(n, n, h, |x, y| (2.0 * std::f64::consts::PI * (kx * x + ky * y) / lambda + 0.4).cos() + 2.0);
        let f = SheetField { values: &v, nx: n, ny: n, spacing_um: h, periodic: false };
        let got = spectrum(&f).dominant_wavelength_um().unwrap();
        assert!((got / lambda - 1.0).abs() < 0.01, "{got}");
    }

    #[test]
    fn a_flat_sheet_has_no_dominant_wavelength() {
        let v = vec![3.0; 64];
        let f = SheetField { values: &v, nx: 8, ny: 8, spacing_um: 1.0, periodic: false };
        assert_eq!(spectrum(&f).dominant_per_um, None);
    }
}
