//! Fixed points: damped Newton from many starts with the analytic Jacobian,
//! deduplicated, classified by the eigenvalues of the Jacobian.

use nalgebra::{Complex, DMatrix, DVector};
use serde::Serialize;

use super::system::System;

/// Stability type of a hyperbolic fixed point (Strogatz, Nonlinear Dynamics
/// and Chaos, 2nd ed., §5.2 and §6.3: classification by eigenvalues).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    /// All eigenvalues real and negative.
    StableNode,
    /// All real parts negative, some eigenvalues complex.
    StableFocus,
    /// Real parts of both signs.
    Saddle,
    /// All eigenvalues real and positive.
    UnstableNode,
    /// All real parts positive, some complex.
    UnstableFocus,
    /// Some real part zero (within rounding): not hyperbolic.
    NonHyperbolic,
}

impl Kind {
    /// True for attractors.
    pub fn is_stable(self) -> bool {
        matches!(self, Kind::StableNode | Kind::StableFocus)
    }
    /// Name used in tables.
    pub fn name(self) -> &'static str {
        match self {
            Kind::StableNode => "stable node",
            Kind::StableFocus => "stable focus",
            Kind::Saddle => "saddle",
            Kind::UnstableNode => "unstable node",
            Kind::UnstableFocus => "unstable focus",
            Kind::NonHyperbolic => "non-hyperbolic",
        }
    }
}

/// A fixed point with its Jacobian's eigenvalues.
#[derive(Debug, Clone, PartialEq)]
pub struct FixedPoint {
    /// Coordinates, a.u.
    pub x: Vec<f64>,
    /// Eigenvalues of ∂F/∂u there, 1/min, sorted by real part (descending).
    pub eigenvalues: Vec<Complex<f64>>,
    /// Stability type.
    pub kind: Kind,
}

/// Eigenvalues of a row-major n×n matrix, sorted by real part, descending.
pub fn eigenvalues(jac: &[f64], n: usize) -> Vec<Complex<f64>> {
    let m = DMatrix::from_row_slice(n, n, jac);
    let mut ev: Vec<Complex<f64>> = m.complex_eigenvalues().iter().copied().collect();
    ev.sort_by(|a, b| b.re.total_cmp(&a.re).then(b.im.total_cmp(&a.im)));
    ev
}

/// Classifies by eigenvalues; `tol` is the relative size of a real part taken as zero.
pub fn classify(ev: &[Complex<f64>]) -> Kind {
    let scale = ev.iter().map(|e| e.norm()).fold(1e-300, f64::max);
    let zero = 1e-9 * scale;
    if ev.iter().any(|e| e.re.abs() <= zero) {
        return Kind::NonHyperbolic;
    }
    let complex = ev.iter().any(|e| e.im.abs() > zero);
    match (ev.iter().all(|e| e.re < 0.0), ev.iter().all(|e| e.re > 0.0)) {
        (true, _) => {
            if complex {
                Kind::StableFocus
            } else {
                Kind::StableNode
            }
        }
        (_, true) => {
            if complex {
                Kind::UnstableFocus
            } else {
                Kind::UnstableNode
            }
        }
        _ => Kind::Saddle,
    }
}

/// Classifies the fixed point at `x`.
pub fn fixed_point_at(sys: &dyn System, x: Vec<f64>) -> FixedPoint {
    let n = sys.dim();
    let mut jac = vec![0.0; n * n];
    sys.jacobian(&x, &mut jac);
    let eigenvalues = eigenvalues(&jac, n);
    let kind = classify(&eigenvalues);
    FixedPoint { x, eigenvalues, kind }
}

fn norm_inf(v: &[f64]) -> f64 {
    v.iter().fold(0.0f64, |m, x| m.max(x.abs()))
}

/// Damped Newton for F(x) = 0 from `x0`: at most 80 iterations, step halved
/// (up to 30 times) until ‖F‖ falls; converged when ‖F‖∞ ≤ `tol`. `None` if it
/// does not converge, the Jacobian is singular, or (with `nonnegative`) the root
/// has a component below −1e-9.
pub fn newton(sys: &dyn System, x0: &[f64], tol: f64, nonnegative: bool) -> Option<Vec<f64>> {
    let n = sys.dim();
    let mut x = x0.to_vec();
    let (mut f, mut jac, mut trial, mut ft) = (vec![0.0; n], vec![0.0; n * n], vec![0.0; n], vec![0.0; n]);
    sys.rates(&x, &mut f);
    for _ in 0..80 {
        let fnorm = norm_inf(&f);
        if !fnorm.is_finite() {
            return None;
        }
        if fnorm <= tol {
            return (!nonnegative || x.iter().all(|v| *v >= -1e-9)).then_some(x);
        }
        sys.jacobian(&x, &mut jac);
        let step = DMatrix::from_row_slice(n, n, &jac).lu().solve(&DVector::from_iterator(n, f.iter().map(|v| -v)))?;
        let mut lambda = 1.0;
        let mut improved = false;
        for _ in 0..30 {
            for k in 0..n {
                trial[k] = x[k] + lambda * step[k];
            }
            sys.rates(&trial, &mut ft);
            if norm_inf(&ft) < fnorm {
                improved = true;
                break;
            }
            lambda *= 0.5;
        }
        if !improved {
            return None;
        }
        std::mem::swap(&mut x, &mut trial);
        std::mem::swap(&mut f, &mut ft);
    }
    None
}

/// Starting points in the box [0, hi]: the 3ⁿ grid {0, ½, 1}·hi for n ≤ 4
/// (else its 2n+1 axis points), plus `extra` points of a fixed quasi-random
/// (Halton) sequence, so the same box always gives the same starts.
pub fn box_starts(hi: &[f64], extra: usize) -> Vec<Vec<f64>> {
    let n = hi.len();
    let mut starts = Vec::new();
    if n <= 4 {
        for k in 0..3usize.pow(n as u32) {
            let mut code = k;
            starts.push(
                (0..n)
                    .map(|d| {
                        let digit = code % 3;
                        code /= 3;
                        0.5 * digit as f64 * hi[d]
                    })
                    .collect(),
            );
        }
    } else {
        starts.push(vec![0.0; n]);
        for d in 0..n {
            for f in [0.5, 1.0] {
                let mut p = vec![0.0; n];
                p[d] = f * hi[d];
                starts.push(p);
            }
        }
    }
    const PRIMES: [u64; 8] = [2, 3, 5, 7, 11, 13, 17, 19];
    for i in 1..=extra as u64 {
        starts.push(
            (0..n)
                .map(|d| {
                    let (base, mut f, mut r, mut k) = (PRIMES[d % 8], 1.0, 0.0, i);
                    while k > 0 {
                        f /= base as f64;
                        r += f * (k % base) as f64;
                        k /= base;
                    }
                    r * hi[d]
                })
                .collect(),
        );
    }
    starts
}

/// All fixed points Newton reaches from `starts`, deduplicated (two roots are
/// the same when they differ by at most 1e-6·(1 + |x|) in every coordinate),
/// sorted by their first coordinate.
pub fn find_fixed_points(sys: &dyn System, starts: &[Vec<f64>], tol: f64, nonnegative: bool) -> Vec<FixedPoint> {
    let mut roots: Vec<Vec<f64>> = Vec::new();
    for s in starts {
        if let Some(r) = newton(sys, s, tol, nonnegative) {
            let same =
                |q: &Vec<f64>| q.iter().zip(&r).all(|(a, b)| (a - b).abs() <= 1e-6 * (1.0 + a.abs().max(b.abs())));
            if !roots.iter().any(same) {
                roots.push(r);
            }
        }
    }
    roots.sort_by(|a, b| {
        a.iter().zip(b).map(|(p, q)| p.total_cmp(q)).find(|o| o.is_ne()).unwrap_or(std::cmp::Ordering::Equal)
    });
    roots.into_iter().map(|x| fixed_point_at(sys, x)).collect()
}

/// True when no gene of `model` can go below 0: every gene follows the
/// circuit's rate law (production and first-order decay). A gene with its
/// own rate expression is signed (the integrator lets it go negative too),
/// and fixed points with negative levels are then kept.
pub fn nonnegative(model: &crate::model::Model) -> bool {
    model.genes.iter().all(|g| g.rate.is_none())
}

/// [`box_starts`] for `model`'s genes: over [0, hi] for a gene of the
/// circuit's rate law, over [−hi, hi] for a signed (rate-expression) gene.
pub fn model_starts(model: &crate::model::Model, hi: &[f64], extra: usize) -> Vec<Vec<f64>> {
    let mut starts = box_starts(hi, extra);
    for s in &mut starts {
        for ((v, h), gene) in s.iter_mut().zip(hi).zip(&model.genes) {
            if gene.rate.is_some() {
                *v = 2.0 * *v - h;
            }
        }
    }
    starts
}

/// Newton's residual tolerance for a model's fixed points: 1e-10 of its
/// largest production rate (at least 1e-10), a.u./min.
pub fn newton_tolerance(model: &crate::model::Model) -> f64 {
    1e-10 * model.genes.iter().map(|g| g.production).fold(1.0, f64::max)
}
