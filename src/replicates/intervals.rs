//! Confidence intervals for what replicate embryos are used to say: a mean
//! shift, and whether one set of embryos is more or less precise than
//! another (a ratio of standard deviations), both for paired embryos (a
//! mutant run with the wild type's seeds) and for independent sets (a model
//! against measured embryos). Every interval is two-sided at [`LEVEL`].

use statrs::distribution::{ContinuousCDF, FisherSnedecor, StudentsT};

/// Confidence level of every interval here.
pub const LEVEL: f64 = 0.95;

/// Means, variances and the covariance of paired values (x, y), by the
/// bivariate Welford update (Welford 1962, Technometrics 4:419; the
/// co-moment form as in Pébay 2008, Sandia report SAND2008-6212, eq. 3.12,
/// from memory). Accumulated in embryo order, so the result does not depend
/// on the thread count.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Paired {
    /// Pairs seen.
    pub n: usize,
    mean_x: f64,
    mean_y: f64,
    m2_x: f64,
    m2_y: f64,
    c_xy: f64,
}

impl Paired {
    /// Adds a pair.
    pub fn push(&mut self, x: f64, y: f64) {
        self.n += 1;
        let n = self.n as f64;
        let dx = x - self.mean_x;
        let dy = y - self.mean_y;
        self.mean_x += dx / n;
        self.mean_y += dy / n;
        self.m2_x += dx * (x - self.mean_x);
        self.m2_y += dy * (y - self.mean_y);
        self.c_xy += dx * (y - self.mean_y);
    }
    fn div(&self, s: f64) -> f64 {
        if self.n < 2 { f64::NAN } else { s / (self.n - 1) as f64 }
    }
    /// Mean of x (NaN with no pairs).
    pub fn mean_x(&self) -> f64 {
        if self.n == 0 { f64::NAN } else { self.mean_x }
    }
    /// Mean of y (NaN with no pairs).
    pub fn mean_y(&self) -> f64 {
        if self.n == 0 { f64::NAN } else { self.mean_y }
    }
    /// Sample sd of x (divisor n − 1).
    pub fn sd_x(&self) -> f64 {
        self.div(self.m2_x).sqrt()
    }
    /// Sample sd of y.
    pub fn sd_y(&self) -> f64 {
        self.div(self.m2_y).sqrt()
    }
    /// Sample sd of y − x: √(s²ₓ + s²ᵧ − 2 sₓᵧ) (NaN with fewer than two pairs).
    pub fn sd_difference(&self) -> f64 {
        let v = self.div(self.m2_x + self.m2_y - 2.0 * self.c_xy);
        if v.is_nan() { v } else { v.max(0.0).sqrt() }
    }
    /// Sample correlation of x and y (NaN when either does not vary).
    pub fn correlation(&self) -> f64 {
        let d = (self.m2_x * self.m2_y).sqrt();
        if self.n < 2 || d <= 0.0 { f64::NAN } else { (self.c_xy / d).clamp(-1.0, 1.0) }
    }
}

/// Student's t quantile, or NaN for no degrees of freedom.
fn t_quantile(p: f64, dof: usize) -> f64 {
    StudentsT::new(0.0, 1.0, dof as f64).map_or(f64::NAN, |t| t.inverse_cdf(p))
}

/// The [`LEVEL`] interval of a mean from n values with sample sd `sd`:
/// mean ± t₀.₉₇₅,ₙ₋₁ · sd/√n (Student 1908; any statistics text). NaN
/// bounds with fewer than two values.
pub fn mean_interval(mean: f64, sd: f64, n: usize) -> (f64, f64) {
    if n < 2 {
        return (f64::NAN, f64::NAN);
    }
    let half = t_quantile(0.5 + LEVEL / 2.0, n - 1) * sd / (n as f64).sqrt();
    (mean - half, mean + half)
}

/// The [`LEVEL`] interval of σ_y/σ_x from n pairs that are correlated
/// (the same embryos, or the same seeds): with F = s²ᵧ/s²ₓ, the sample
/// correlation r and t = t₀.₉₇₅,ₙ₋₂, K = 1 + 2(1 − r²)t²/(n − 2), the
/// variance ratio lies in F·(K ∓ √(K² − 1)) (Pitman 1939, Biometrika
/// 31:9–12 and Morgan 1939, Biometrika 31:13–19: the correlation of x + y/√φ
/// and x − y/√φ is zero exactly when σ²ᵧ/σ²ₓ = φ, inverted for φ). The sd
/// ratio is its square root. NaN with fewer than three pairs or when x
/// does not vary; when the two vary exactly alike (r = ±1 and F = 1, no
/// sampling spread of the ratio) the interval is the point.
pub fn paired_sd_ratio(p: &Paired) -> (f64, f64, f64) {
    let (sx, sy) = (p.sd_x(), p.sd_y());
    if p.n < 3 || !(sx > 0.0) || !sy.is_finite() {
        return (f64::NAN, f64::NAN, f64::NAN);
    }
    let f = (sy / sx).powi(2);
    let r = if sy > 0.0 { p.correlation() } else { 0.0 };
    let t = t_quantile(0.5 + LEVEL / 2.0, p.n - 2);
    let k = 1.0 + 2.0 * (1.0 - r * r) * t * t / (p.n - 2) as f64;
    let root = (k * k - 1.0).max(0.0).sqrt();
    (f.sqrt(), (f * (k - root)).sqrt(), (f * (k + root)).sqrt())
}

/// The [`LEVEL`] interval of σ₁/σ₂ from two independent samples (sd s₁ of
/// n₁ values, s₂ of n₂): with F = s₁²/s₂², the variance ratio lies in
/// [F / F₀.₉₇₅(n₁−1, n₂−1), F / F₀.₀₂₅(n₁−1, n₂−1)] for normal values
/// (the F test; Snedecor & Cochran 1989, Statistical Methods, 8th ed.,
/// §6.12, from memory). Returns (ratio, low, high), NaN where either sample
/// has fewer than two values or s₂ is 0.
pub fn independent_sd_ratio(s1: f64, n1: usize, s2: f64, n2: usize) -> (f64, f64, f64) {
    if n1 < 2 || n2 < 2 || !(s2 > 0.0) || !s1.is_finite() {
        return (f64::NAN, f64::NAN, f64::NAN);
    }
    let f = (s1 / s2).powi(2);
    let Ok(dist) = FisherSnedecor::new((n1 - 1) as f64, (n2 - 1) as f64) else {
        return (f64::NAN, f64::NAN, f64::NAN);
    };
    let upper = dist.inverse_cdf(0.5 + LEVEL / 2.0);
    let lower = dist.inverse_cdf(0.5 - LEVEL / 2.0);
    (f.sqrt(), (f / upper).sqrt(), (f / lower).sqrt())
}

/// A ratio of sds within this much of 1 (±5 %) is "the same" even where its
/// interval excludes 1: with many embryos, or paired embryos whose
/// boundaries move together, intervals become so narrow that a few per cent
/// of interpolation or discretisation difference would read as a change of
/// precision nobody could measure in stained embryos (common practice, no
/// source).
pub const SAME_WITHIN: f64 = 0.05;

/// How an sd ratio reads: `above` when its interval lies above 1 and the
/// ratio is more than [`SAME_WITHIN`] above 1; `below` when the interval
/// lies below 1 and the ratio is more than [`SAME_WITHIN`] below 1;
/// otherwise "same"; "" when there is no interval.
pub fn verdict(ratio: f64, low: f64, high: f64, above: &'static str, below: &'static str) -> &'static str {
    if !(low.is_finite() && high.is_finite() && ratio.is_finite()) {
        ""
    } else if low > 1.0 && ratio > 1.0 + SAME_WITHIN {
        above
    } else if high < 1.0 && ratio < 1.0 - SAME_WITHIN {
        below
    } else {
        "same"
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};

    /// Quantiles against printed tables (from memory): t₀.₉₇₅,₉ = 2.262
    /// and F₀.₉₇₅(9, 9) = 4.026 (e.g. Snedecor & Cochran 1989, Statistical
    /// Methods, Tables A4 and A14).
    #[test]
    fn quantiles_match_the_tables() {
        assert!((t_quantile(0.975, 9) - 2.262).abs() < 5e-4);
        let (f, lo, hi) = independent_sd_ratio(2.0, 10, 1.0, 10);
        assert_eq!(f, 2.0);
        assert!(((4.0 / lo / lo) - 4.026).abs() < 5e-3, "{lo}");
        // F₀.₀₂₅(9, 9) = 1/F₀.₉₇₅(9, 9).
        assert!(((hi * hi / 4.0) - 4.026).abs() < 5e-3, "{hi}");
    }

    /// The bivariate update equals the two-pass sums (textbook definitions).
    #[test]
    fn paired_matches_two_pass() {
        let xs = [1.0, 4.0, 2.0, 8.0, 5.0];
        let ys = [2.0, 3.0, 7.0, 9.0, 4.0];
        let mut p = Paired::default();
        xs.iter().zip(&ys).for_each(|(x, y)| p.push(*x, *y));
        let (mx, my) = (4.0, 5.0);
        let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum::<f64>() / 4.0;
        let sx2: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum::<f64>() / 4.0;
        let sy2: f64 = ys.iter().map(|y| (y - my) * (y - my)).sum::<f64>() / 4.0;
        assert!((p.correlation() - sxy / (sx2 * sy2).sqrt()).abs() < 1e-12);
        assert!((p.sd_difference().powi(2) - (sx2 + sy2 - 2.0 * sxy)).abs() < 1e-12);
        assert!((p.mean_y() - my).abs() < 1e-12);
    }

    /// Coverage by simulation: correlated normal pairs (ρ = 0.7, σ_y/σ_x =
    /// 1.5, n = 25) and independent samples (n₁ = 12, n₂ = 40, ratio 0.6):
    /// each interval holds the true ratio in 95 % of 4,000 trials, to within
    /// 4 binomial standard errors (√(0.95·0.05/4000) = 0.0034). The paired
    /// interval that ignores the correlation (the F interval) would cover
    /// far more often here; that it is not too wide is checked too.
    #[test]
    fn intervals_cover_the_truth_95_percent_of_the_time() {
        let mut rng = rand_pcg::Pcg64::seed_from_u64(42);
        let mut z = || -> f64 { StandardNormal.sample(&mut rng) };
        let (trials, rho, ratio, n) = (4000, 0.7f64, 1.5, 25);
        let (mut paired_in, mut independent_in, mut width_paired, mut width_naive) = (0, 0, 0.0, 0.0);
        for _ in 0..trials {
            let mut p = Paired::default();
            for _ in 0..n {
                let (a, b) = (z(), z());
                p.push(a, ratio * (rho * a + (1.0 - rho * rho).sqrt() * b));
            }
            let (_, lo, hi) = paired_sd_ratio(&p);
            paired_in += usize::from(lo <= ratio && ratio <= hi);
            width_paired += hi / lo;
            let (_, lo, hi) = independent_sd_ratio(p.sd_y(), n, p.sd_x(), n);
            width_naive += hi / lo;
            let (s1, s2) = {
                let (mut a, mut b) = (crate::replicates::Running::default(), crate::replicates::Running::default());
                (0..12).for_each(|_| a.push(0.6 * z()));
                (0..40).for_each(|_| b.push(z()));
                (a.sd(), b.sd())
            };
            let (_, lo, hi) = independent_sd_ratio(s1, 12, s2, 40);
            independent_in += usize::from(lo <= 0.6 && 0.6 <= hi);
        }
        let se = (0.95f64 * 0.05 / trials as f64).sqrt();
        for covered in [paired_in, independent_in] {
            let f = covered as f64 / trials as f64;
            assert!((f - 0.95).abs() < 4.0 * se, "coverage {f}");
        }
        assert!(width_paired < 0.9 * width_naive, "{width_paired} vs {width_naive}");
    }

    /// The t interval of a mean covers the truth 95 % of the time.
    #[test]
    fn mean_interval_covers() {
        let mut rng = rand_pcg::Pcg64::seed_from_u64(3);
        let trials = 4000;
        let mut inside = 0;
        for _ in 0..trials {
            let mut r = crate::replicates::Running::default();
            for _ in 0..6 {
                let v: f64 = StandardNormal.sample(&mut rng);
                r.push(2.0 + 3.0 * v);
            }
            let (lo, hi) = mean_interval(r.mean(), r.sd(), r.n);
            inside += usize::from(lo <= 2.0 && 2.0 <= hi);
        }
        let f = inside as f64 / trials as f64;
        assert!((f - 0.95).abs() < 4.0 * (0.95f64 * 0.05 / trials as f64).sqrt(), "{f}");
    }

    /// The words of an interval.
    #[test]
    fn verdicts() {
        assert_eq!(verdict(1.5, 1.2, 2.0, "wider", "narrower"), "wider");
        assert_eq!(verdict(0.5, 0.2, 0.9, "wider", "narrower"), "narrower");
        assert_eq!(verdict(1.0, 0.8, 1.3, "wider", "narrower"), "same");
        // Significant but too small to matter.
        assert_eq!(verdict(1.02, 1.01, 1.03, "wider", "narrower"), "same");
        // 4.9 % below 1 is within 5 %; 5.1 % is not.
        assert_eq!(verdict(0.951, 0.95, 0.952, "wider", "narrower"), "same");
        assert_eq!(verdict(0.949, 0.948, 0.95, "wider", "narrower"), "narrower");
        assert_eq!(verdict(1.0, f64::NAN, 1.3, "wider", "narrower"), "");
    }
}
