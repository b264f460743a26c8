//! Pseudo-arclength continuation of a curve G(y) = 0, G: R^{m+1} → R^m
//! (Keller 1977, in Applications of Bifurcation Theory, Academic Press;
//! Seydel, Practical Bifurcation and Stability Analysis, 3rd ed., §4.5):
//! tangents, the Newton corrector on the hyperplane through the predictor,
//! and the location of a test function's zero along the curve. Used for
//! branches of fixed points ([`super::continuation`]) and fold curves in two
//! parameters ([`super::fold_curves`]).

use nalgebra::{DMatrix, DVector};

/// A curve of solutions of m equations in m + 1 unknowns.
pub trait Curve {
    /// m + 1.
    fn unknowns(&self) -> usize;
    /// G(y) into `out` (m values).
    fn residual(&self, y: &[f64], out: &mut [f64]);
    /// ∂G/∂y, m × (m + 1).
    fn jacobian(&self, y: &[f64]) -> DMatrix<f64>;
}

/// Unit tangent at y with t·`prev` > 0: solves [G_y; prevᵀ] t = [0; 1].
pub fn tangent(c: &(impl Curve + ?Sized), y: &[f64], prev: &DVector<f64>) -> Option<DVector<f64>> {
    let m = c.unknowns() - 1;
    let mut a = c.jacobian(y).insert_row(m, 0.0);
    for j in 0..=m {
        a[(m, j)] = prev[j];
    }
    let mut rhs = DVector::zeros(m + 1);
    rhs[m] = 1.0;
    let t = a.lu().solve(&rhs)?;
    let norm = t.norm();
    (norm.is_finite() && norm > 0.0).then(|| t / norm)
}

/// Newton on [G(y) = 0; t·(y − y_p) = 0] from the predictor y_p; the point
/// and the iterations taken (converged when the step is below 1e-11 of the
/// point's size and the residual below 1e-9).
pub fn correct(c: &(impl Curve + ?Sized), yp: &DVector<f64>, t: &DVector<f64>) -> Option<(DVector<f64>, usize)> {
    let m = c.unknowns() - 1;
    let mut y = yp.clone();
    let mut f = vec![0.0; m];
    for it in 1..=12 {
        c.residual(y.as_slice(), &mut f);
        let mut g = DVector::zeros(m + 1);
        for i in 0..m {
            g[i] = -f[i];
        }
        g[m] = -t.dot(&(&y - yp));
        let mut a = c.jacobian(y.as_slice()).insert_row(m, 0.0);
        for j in 0..=m {
            a[(m, j)] = t[j];
        }
        let dy = a.lu().solve(&g)?;
        y += &dy;
        if !y.iter().all(|v| v.is_finite()) {
            return None;
        }
        c.residual(y.as_slice(), &mut f);
        let fnorm = f.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if dy.amax() <= 1e-11 * (1.0 + y.amax()) && fnorm <= 1e-9 {
            return Some((y, it));
        }
    }
    None
}

/// The corrected point at arclength σ along t from y, with its tangent.
pub fn at(
    c: &(impl Curve + ?Sized),
    y: &DVector<f64>,
    t: &DVector<f64>,
    sigma: f64,
) -> Option<(DVector<f64>, DVector<f64>)> {
    let (ym, _) = correct(c, &(y + t * sigma), t)?;
    let tm = tangent(c, ym.as_slice(), t)?;
    Some((ym, tm))
}

/// The point between σ = 0 (test `g0`) and σ = `ds` (test `g1`, of the
/// other sign) where `test` vanishes: the Illinois variant of regula
/// falsi (Dowell & Jarratt 1971, BIT 11:168) on corrected points, to
/// 1e-13 of the step. Next to a branch point the corrector cannot
/// converge (its matrix is singular there, and round-off is amplified by
/// the inverse of the distance); the root is then the secant root of the
/// bracket, and the point interpolated linearly between its ends, which
/// are close enough for both to be within O(bracket²).
pub fn locate(
    curve: &(impl Curve + ?Sized),
    y: &DVector<f64>,
    t: &DVector<f64>,
    ds: f64,
    (g0, g1): (f64, f64),
    test: impl Fn(&DVector<f64>, &DVector<f64>) -> f64,
) -> Option<(DVector<f64>, DVector<f64>)> {
    let (end_a, end_b) = (at(curve, y, t, 0.0)?, at(curve, y, t, ds)?);
    let (mut a, mut b, mut ga, mut gb) = (0.0, ds, g0, g1);
    let (mut pa, mut pb) = (end_a, end_b);
    let mut side = 0;
    for _ in 0..100 {
        let c = (a * gb - b * ga) / (gb - ga);
        let c = if c.is_finite() && (c - a) * (c - b) < 0.0 { c } else { 0.5 * (a + b) };
        let Some((yc, tc)) = at(curve, y, t, c) else {
            // Interpolate within the bracket at the secant root.
            let w = (c - a) / (b - a);
            let yi = &pa.0 + (&pb.0 - &pa.0) * w;
            let ti = &pa.1 + (&pb.1 - &pa.1) * w;
            let norm = ti.norm();
            return Some((yi, ti / norm));
        };
        let gc = test(&yc, &tc);
        if gc == 0.0 {
            return Some((yc, tc));
        }
        if gc.signum() == gb.signum() {
            (b, gb, pb) = (c, gc, (yc, tc));
            if side == -1 {
                ga *= 0.5;
            }
            side = -1;
        } else {
            (a, ga, pa) = (c, gc, (yc, tc));
            if side == 1 {
                gb *= 0.5;
            }
            side = 1;
        }
        if (b - a).abs() <= 1e-13 * ds.abs() {
            break;
        }
    }
    Some(if ga.abs() < gb.abs() { pa } else { pb })
}
