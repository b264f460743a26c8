//! The type-II discrete cosine transform of a row and its inverse.
//!
//! `X_k = Σ_n x_n cos(πk(2n+1)/(2N))`. For even N it is computed from one
//! real FFT of length N (Makhoul 1980, IEEE Trans. ASSP 28:27, "A fast cosine
//! transform in one and two dimensions"): with `v_n = x_{2n}`,
//! `v_{N−1−n} = x_{2n+1}` and `V = FFT(v)`, `X_k = Re(e^{−iπk/2N} V_k)` and
//! `X_{N−k} = −Im(e^{−iπk/2N} V_k)`; the inverse runs the same steps backwards.
//! Odd N falls back to rustdct's transforms.

use std::sync::Arc;

use realfft::num_complex::Complex64;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};
use rustdct::{DctPlanner, TransformType2And3};

/// A planned transform pair for rows of `n` values.
pub struct CosineRows {
    n: usize,
    plan: Plan,
}

enum Plan {
    Fft { forward: Arc<dyn RealToComplex<f64>>, inverse: Arc<dyn ComplexToReal<f64>>, twiddle: Vec<Complex64> },
    Direct(Arc<dyn TransformType2And3<f64>>),
}

/// Working memory for one row at a time.
pub struct RowScratch {
    real: Vec<f64>,
    spectrum: Vec<Complex64>,
    fft: Vec<Complex64>,
    direct: Vec<f64>,
}

impl CosineRows {
    /// Plans transforms of length `n`.
    pub fn new(n: usize) -> CosineRows {
        let plan = if n >= 2 && n.is_multiple_of(2) {
            let mut planner = RealFftPlanner::<f64>::new();
            let twiddle = (0..=n / 2)
                .map(|k| {
                    let a = -std::f64::consts::PI * k as f64 / (2 * n) as f64;
                    Complex64::new(a.cos(), a.sin())
                })
                .collect();
            Plan::Fft { forward: planner.plan_fft_forward(n), inverse: planner.plan_fft_inverse(n), twiddle }
        } else {
            Plan::Direct(DctPlanner::new().plan_dct2(n))
        };
        CosineRows { n, plan }
    }

    /// Scratch for [`Self::forward`] and [`Self::inverse`].
    pub fn scratch(&self) -> RowScratch {
        match &self.plan {
            Plan::Fft { forward, inverse, .. } => RowScratch {
                real: vec![0.0; self.n],
                spectrum: vec![Complex64::default(); self.n / 2 + 1],
                fft: vec![Complex64::default(); forward.get_scratch_len().max(inverse.get_scratch_len())],
                direct: Vec::new(),
            },
            Plan::Direct(dct) => RowScratch {
                real: Vec::new(),
                spectrum: Vec::new(),
                fft: Vec::new(),
                direct: vec![0.0; dct.get_scratch_len()],
            },
        }
    }

    /// `row ← X` (the DCT-II above, unnormalised).
    pub fn forward(&self, row: &mut [f64], s: &mut RowScratch) {
        let n = self.n;
        match &self.plan {
            Plan::Fft { forward, twiddle, .. } => {
                let half = n / 2;
                for k in 0..half {
                    s.real[k] = row[2 * k];
                    s.real[n - 1 - k] = row[2 * k + 1];
                }
                forward.process_with_scratch(&mut s.real, &mut s.spectrum, &mut s.fft).expect("planned lengths");
                row[0] = s.spectrum[0].re;
                for k in 1..half {
                    let z = twiddle[k] * s.spectrum[k];
                    row[k] = z.re;
                    row[n - k] = -z.im;
                }
                row[half] = (twiddle[half] * s.spectrum[half]).re;
            }
            Plan::Direct(dct) => {
                dct.process_dct2_with_scratch(row, &mut s.direct);
                // rustdct's DCT-II is the same unnormalised sum.
            }
        }
    }

    /// `row ← x` with `forward(x) = X` (exact inverse up to round-off).
    pub fn inverse(&self, row: &mut [f64], s: &mut RowScratch) {
        let n = self.n;
        match &self.plan {
            Plan::Fft { inverse, twiddle, .. } => {
                let half = n / 2;
                s.spectrum[0] = Complex64::new(row[0], 0.0);
                for k in 1..half {
                    s.spectrum[k] = twiddle[k].conj() * Complex64::new(row[k], -row[n - k]);
                }
                s.spectrum[half] = Complex64::new(std::f64::consts::SQRT_2 * row[half], 0.0);
                inverse.process_with_scratch(&mut s.spectrum, &mut s.real, &mut s.fft).expect("planned lengths");
                let scale = 1.0 / n as f64;
                for k in 0..half {
                    row[2 * k] = s.real[k] * scale;
                    row[2 * k + 1] = s.real[n - 1 - k] * scale;
                }
            }
            Plan::Direct(dct) => {
                // DCT-III(DCT-II(x)) = (N/2)·x for rustdct's conventions.
                dct.process_dct3_with_scratch(row, &mut s.direct);
                let scale = 2.0 / n as f64;
                row.iter_mut().for_each(|v| *v *= scale);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Checks against the defining sum and the round trip, for even and odd lengths.
    #[test]
    fn matches_the_defining_sum_and_inverts() {
        for n in [2usize, 3, 8, 12, 17, 64] {
            let x: Vec<f64> = (0..n).map(|i| ((i * 37 + 5) % 11) as f64 - 4.5).collect();
            let rows = CosineRows::new(n);
            let mut s = rows.scratch();
            let mut y = x.clone();
            rows.forward(&mut y, &mut s);
            for (k, got) in y.iter().enumerate() {
                let want: f64 = x
                    .iter()
                    .enumerate()
                    .map(|(i, v)| v * (std::f64::consts::PI * k as f64 * (2 * i + 1) as f64 / (2 * n) as f64).cos())
                    .sum();
                assert_relative_eq!(*got, want, epsilon = 1e-11);
            }
            rows.inverse(&mut y, &mut s);
            for (got, want) in y.iter().zip(&x) {
                assert_relative_eq!(*got, *want, epsilon = 1e-12);
            }
        }
    }
}
