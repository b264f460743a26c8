//! Running statistics over replicate embryos, accumulated in replicate
//! order so that the result does not depend on the thread count, with
//! memory that does not grow with the number of embryos.

use nalgebra::{DMatrix, DVector};

/// Mean and variance of one quantity by Welford's update (Welford 1962,
/// Technometrics 4:419; Knuth, TAOCP vol. 2, 3rd ed., §4.2.2, eq. 15–16).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Running {
    /// Values seen.
    pub n: usize,
    mean: f64,
    m2: f64,
}

impl Running {
    /// Adds a value.
    pub fn push(&mut self, x: f64) {
        self.n += 1;
        let d = x - self.mean;
        self.mean += d / self.n as f64;
        self.m2 += d * (x - self.mean);
    }
    /// The mean (NaN with no values).
    pub fn mean(&self) -> f64 {
        if self.n == 0 { f64::NAN } else { self.mean }
    }
    /// The sample variance, divisor n − 1 (NaN with fewer than two values).
    pub fn variance(&self) -> f64 {
        if self.n < 2 { f64::NAN } else { self.m2 / (self.n - 1) as f64 }
    }
    /// The sample standard deviation.
    pub fn sd(&self) -> f64 {
        self.variance().sqrt()
    }
}

/// Per nucleus along the axis: the mean profile of every gene and the
/// covariance between genes across embryos (the multivariate Welford update).
#[derive(Debug, Clone, PartialEq)]
pub struct ProfileStats {
    /// Embryos seen.
    pub n: usize,
    genes: usize,
    /// `mean[g][i]`, a.u.
    pub mean: Vec<Vec<f64>>,
    /// `co[i][g*genes + h]`: running sum of products of deviations.
    co: Vec<Vec<f64>>,
}

impl ProfileStats {
    /// Empty statistics for `genes` genes at `nuclei` positions.
    pub fn new(genes: usize, nuclei: usize) -> Self {
        ProfileStats { n: 0, genes, mean: vec![vec![0.0; nuclei]; genes], co: vec![vec![0.0; genes * genes]; nuclei] }
    }

    /// Adds one embryo's profiles, `profiles[g][i]`.
    pub fn push(&mut self, profiles: &[Vec<f64>]) {
        self.n += 1;
        let n = self.n as f64;
        let genes = self.genes;
        let mut before = vec![0.0; genes];
        for i in 0..self.co.len() {
            for g in 0..genes {
                before[g] = profiles[g][i] - self.mean[g][i];
                self.mean[g][i] += before[g] / n;
            }
            for g in 0..genes {
                let after = profiles[g][i] - self.mean[g][i];
                for h in 0..genes {
                    // Σ (x_h − mean_h,old)(x_g − mean_g,new): the rank-one update.
                    self.co[i][g * genes + h] += before[h] * after;
                }
            }
        }
    }

    /// Sample covariance between genes g and h at nucleus i (divisor n − 1).
    pub fn covariance(&self, i: usize, g: usize, h: usize) -> f64 {
        if self.n < 2 { f64::NAN } else { self.co[i][g * self.genes + h] / (self.n - 1) as f64 }
    }

    /// Sample standard deviation of gene g at nucleus i.
    pub fn sd(&self, g: usize, i: usize) -> f64 {
        self.covariance(i, g, g).max(0.0).sqrt()
    }

    /// The positional error decoded from all genes jointly in the Gaussian
    /// approximation, µm, at each nucleus:
    /// σ_x⁻²(x) = Σᵢⱼ g′ᵢ(x) (C⁻¹)ᵢⱼ(x) g′ⱼ(x)
    /// (Dubuis, Tkačik, Wieschaus, Gregor & Bialek 2013, PNAS 110:16301,
    /// eq. 3, from memory), with g′ the slope of the mean profiles by central
    /// differences (one-sided at the ends) at spacing `h_um`, and C the
    /// covariance across embryos. C is taken with a floor ε²·I, ε = 10⁻⁶ of
    /// the largest mean level (common practice, no source: a reading
    /// precision no stain reaches), so that where every embryo is the same
    /// and the profiles are flat — a gene saturated at its capacity — the
    /// error comes out huge (position cannot be read there) instead of a
    /// ratio of round-off errors; where embryos do not vary but a profile has
    /// a slope, it comes out about ε/|g′|.
    ///
    /// Two corrections for a finite number n of embryos and G genes:
    /// - the inverse of a sample covariance overstates the inverse of the
    ///   true one by (n − 1)/(n − G − 2) on average (the inverse Wishart
    ///   mean; Anderson 2003, An Introduction to Multivariate Statistical
    ///   Analysis, 3rd ed., §7.7, from memory), so the information is scaled
    ///   by (n − G − 2)/(n − 1); with n < G + 3 nothing can be decoded and
    ///   every value is NaN;
    /// - a slope of the mean profile that sampling noise alone could make
    ///   (|g′| within 3 standard errors, SE² ≈ (varᵢ₊₁ + varᵢ₋₁)/(4h²n),
    ///   neighbours taken as independent) carries no position. Where no
    ///   gene's central difference stands out — intrinsic noise in every
    ///   nucleus on a gentle slope — the slope is taken by least squares over
    ///   a wider window, ±2, 4, 8 … nuclei up to a tenth of the row each side,
    ///   the narrowest over which some gene's slope exceeds 3 standard
    ///   errors; where none does even then, the error is infinite (position
    ///   cannot be read there), not a number that shrinks as embryos are
    ///   added.
    pub fn decoded_error_um(&self, h_um: f64) -> Vec<f64> {
        let nuclei = self.co.len();
        let k_genes = self.genes;
        if self.n < k_genes + 3 {
            return vec![f64::NAN; nuclei];
        }
        let unbias = (self.n - k_genes - 2) as f64 / (self.n - 1) as f64;
        let scale = self.mean.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs())).max(f64::MIN_POSITIVE);
        let floor = (1e-6 * scale).powi(2);
        let var = |g: usize, j: usize| self.covariance(j, g, g).max(0.0);
        let widest = (nuclei / 10).max(1);
        (0..nuclei)
            .map(|i| {
                // The least-squares slope of gene g's mean profile over nuclei
                // i − k ..= i + k (clipped at the ends), and its squared
                // standard error with the nuclei taken as independent:
                // weights (x_j − x̄)/Σ(x − x̄)². For k = 1 this is the central
                // difference inside and the one-sided one at the ends.
                let fit = |g: usize, k: usize| -> (f64, f64) {
                    let (lo, hi) = (i.saturating_sub(k), (i + k).min(nuclei - 1));
                    let mid = (lo + hi) as f64 / 2.0;
                    let sxx: f64 = (lo..=hi).map(|j| (j as f64 - mid).powi(2)).sum::<f64>() * h_um * h_um;
                    let (mut slope, mut se2) = (0.0, 0.0);
                    for j in lo..=hi {
                        let w = (j as f64 - mid) * h_um / sxx;
                        slope += w * self.mean[g][j];
                        se2 += w * w * var(g, j);
                    }
                    (slope, se2 / self.n as f64)
                };
                if nuclei < 2 {
                    return f64::INFINITY;
                }
                // The narrowest window (±1, 2, 4, … nuclei, at most a tenth
                // of the row each side) over which some gene's slope stands
                // out of its sampling error.
                let mut k = 1;
                let d = loop {
                    let fits: Vec<(f64, f64)> = (0..self.genes).map(|g| fit(g, k)).collect();
                    if fits.iter().any(|&(d, se2)| d * d > 9.0 * se2 && d != 0.0) {
                        break Some(DVector::from_fn(self.genes, |a, _| fits[a].0));
                    }
                    if k >= widest {
                        break None;
                    }
                    k = (2 * k).min(widest);
                };
                let Some(d) = d else { return f64::INFINITY };
                let c = DMatrix::from_fn(k_genes, k_genes, |a, b| {
                    let v = if self.n < 2 { 0.0 } else { self.covariance(i, a, b) };
                    if a == b { v + floor } else { v }
                });
                let info = match c.clone().cholesky() {
                    Some(ch) => d.dot(&ch.solve(&d)),
                    None => {
                        let eps = 1e-12 * c.amax();
                        c.pseudo_inverse(eps).map_or(0.0, |inv| d.dot(&(inv * &d)))
                    }
                };
                let info = info * unbias;
                if info > 0.0 { 1.0 / info.sqrt() } else { f64::INFINITY }
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Welford's mean and variance equal the two-pass formulas (textbook
    /// definitions, divisor n − 1).
    #[test]
    fn running_matches_two_pass() {
        let xs = [4.0, 7.0, 13.0, 16.0, 1e9 + 4.0, 1e9 + 7.0];
        let mut r = Running::default();
        xs.iter().for_each(|x| r.push(*x));
        let mean = xs.iter().sum::<f64>() / 6.0;
        let var = xs.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / 5.0;
        assert!((r.mean() - mean).abs() <= 1e-6);
        assert!((r.variance() / var - 1.0).abs() < 1e-12);
    }

    /// Two independent genes with linear mean profiles g₁ = a₁x, g₂ = a₂x
    /// and noise sds s₁, s₂: σ_x⁻² = a₁²/s₁² + a₂²/s₂², which for one gene is
    /// σ_x = s/|a| (Dubuis et al. 2013, PNAS 110:16301, from memory). The
    /// embryos are built so that the sample covariance is exactly diagonal:
    /// gene 1 takes ±s₁·√((n−1)/n)… by a ±1 pattern orthogonal to gene 2's.
    #[test]
    fn decoding_two_independent_linear_profiles() {
        let (a1, a2, s1, s2, h) = (0.02, -0.05, 0.1, 0.4, 5.0);
        let nuclei = 20;
        // Eight embryos, deviations (+,+), (+,−), (−,+), (−,−) twice: zero
        // sample covariance, sample variances d²·8/7.
        let signs = [(1.0, 1.0), (1.0, -1.0), (-1.0, 1.0), (-1.0, -1.0)];
        let (d1, d2) = (s1 * (7.0f64 / 8.0).sqrt(), s2 * (7.0f64 / 8.0).sqrt());
        let mut st = ProfileStats::new(2, nuclei);
        for (e1, e2) in signs.iter().chain(&signs).copied() {
            let g1: Vec<f64> = (0..nuclei).map(|i| a1 * i as f64 * h + 1.0 + e1 * d1).collect();
            let g2: Vec<f64> = (0..nuclei).map(|i| a2 * i as f64 * h + 5.0 + e2 * d2).collect();
            st.push(&[g1, g2]);
        }
        assert!((st.sd(0, 3) - s1).abs() < 1e-12 && (st.sd(1, 3) - s2).abs() < 1e-12);
        assert!(st.covariance(3, 0, 1).abs() < 1e-15);
        // With the inverse-Wishart correction (n − G − 2)/(n − 1) = 4/7.
        let want = 1.0 / (4.0 / 7.0 * (a1 * a1 / (s1 * s1) + a2 * a2 / (s2 * s2))).sqrt();
        // (Interior nuclei: at the ends a one-sided slope from 8 embryos is
        // within its sampling error here, so nothing is decoded there.)
        for e in &st.decoded_error_um(h)[1..nuclei - 1] {
            let e = *e;
            // The ε² floor (10⁻¹² of the largest level squared) shifts σ by < 1e-9 relative here.
            assert!((e / want - 1.0).abs() < 1e-9, "{e} vs {want}");
        }
        // Identical embryos on a flat profile: position cannot be read (huge
        // error), not a ratio of round-off errors; on a slope: about ε/|g′|.
        let mut flat = ProfileStats::new(1, nuclei);
        for _ in 0..4 {
            flat.push(&[(0..nuclei).map(|i| 8.0 + 1e-13 * (i % 3) as f64).collect()]);
        }
        assert!(
            flat.decoded_error_um(h).iter().all(|e| *e > 1e3 * h * nuclei as f64),
            "{:?}",
            flat.decoded_error_um(h)
        );
        let mut sloped = ProfileStats::new(1, nuclei);
        for _ in 0..4 {
            sloped.push(&[(0..nuclei).map(|i| 0.1 * i as f64 * h).collect()]);
        }
        let eps = 1e-6 * 0.1 * (nuclei - 1) as f64 * h;
        // Four embryos, one gene: the correction (4 − 1 − 2)/3 = 1/3.
        assert!((sloped.decoded_error_um(h)[5] / (eps / 0.1 * 3f64.sqrt()) - 1.0).abs() < 1e-6);
        // One gene alone: σ_x = s/|a|.
        // (eight embryos, correction (8 − 1 − 2)/7 = 5/7).
        let mut one = ProfileStats::new(1, nuclei);
        for (e1, _) in signs.iter().chain(&signs).copied() {
            one.push(&[(0..nuclei).map(|i| a1 * i as f64 * h + e1 * d1).collect()]);
        }
        assert!((one.decoded_error_um(h)[7] / (s1 / a1.abs() / (5.0f64 / 7.0).sqrt()) - 1.0).abs() < 1e-9);
        // Too few embryos for two genes: nothing is decoded.
        let mut few = ProfileStats::new(2, nuclei);
        for (e1, e2) in signs {
            few.push(&[vec![e1; nuclei], vec![e2; nuclei]]);
        }
        assert!(few.decoded_error_um(h).iter().all(|e| e.is_nan()));
        // Noise on a flat mean: no slope beyond sampling error, so no position.
        let mut flat_noise = ProfileStats::new(1, nuclei);
        for (e1, e2) in signs.iter().chain(&signs).copied() {
            flat_noise.push(&[(0..nuclei).map(|i| 3.0 + if i % 2 == 0 { e1 } else { e2 } * 0.5).collect()]);
        }
        assert!(flat_noise.decoded_error_um(h).iter().all(|e| e.is_infinite()), "{:?}", flat_noise.decoded_error_um(h));
    }

    /// A gentle linear profile g = a·x under noise so large that no central
    /// difference stands out of its sampling error (a = 0.02, s = 0.4,
    /// h = 5 µm, 8 embryos: 3 SE = 0.06 at ±1 nucleus, 0.027 at ±2): the slope
    /// is taken over ±4 nuclei (3 SE = 0.011), and the decoded error is the
    /// one-gene value s/|a| (Dubuis et al. 2013, from memory) with the
    /// inverse-Wishart factor, not "cannot be read".
    #[test]
    fn a_gentle_slope_under_strong_noise_is_read_over_a_wider_window() {
        let (a, s, h, nuclei) = (0.02, 0.4, 5.0, 60);
        let d = s * (7.0f64 / 8.0).sqrt();
        let mut st = ProfileStats::new(1, nuclei);
        for e in [1.0, -1.0, 1.0, -1.0, 1.0, -1.0, 1.0, -1.0] {
            st.push(&[(0..nuclei).map(|i| a * i as f64 * h + 3.0 + e * d).collect()]);
        }
        let want = s / a / (5.0f64 / 7.0).sqrt();
        let got = st.decoded_error_um(h);
        for e in &got[4..nuclei - 4] {
            assert!((e / want - 1.0).abs() < 1e-9, "{e} vs {want}");
        }
        // Too few nuclei for a window wide enough: nothing can be read.
        let mut short = ProfileStats::new(1, 20);
        for e in [1.0, -1.0, 1.0, -1.0, 1.0, -1.0, 1.0, -1.0] {
            short.push(&[(0..20).map(|i| a * i as f64 * h + 3.0 + e * d).collect()]);
        }
        assert!(short.decoded_error_um(h).iter().all(|e| e.is_infinite()));
    }
}
