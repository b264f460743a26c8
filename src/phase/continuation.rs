//! Pseudo-arclength continuation of fixed points F(u, s) = 0 in a parameter s
//! (Keller 1977, in Applications of Bifurcation Theory, Academic Press;
//! Seydel, Practical Bifurcation and Stability Analysis, 3rd ed., §4.5), with
//! folds (saddle-node points) where the tangent's s-component changes sign.

use nalgebra::{DMatrix, DVector};

use super::fixed::{Kind, classify, eigenvalues};
use super::system::Family;

/// One point of a branch.
#[derive(Debug, Clone, PartialEq)]
pub struct BranchPoint {
    /// Parameter.
    pub s: f64,
    /// Fixed point.
    pub x: Vec<f64>,
    /// Stability there.
    pub kind: Kind,
}

/// A fold (saddle-node point) on a branch.
#[derive(Debug, Clone, PartialEq)]
pub struct Fold {
    /// Parameter at the fold.
    pub s: f64,
    /// Fixed point at the fold.
    pub x: Vec<f64>,
}

/// A continued branch of fixed points.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Branch {
    /// Points in arclength order.
    pub points: Vec<BranchPoint>,
    /// Folds met on the way.
    pub folds: Vec<Fold>,
}

struct Tracer<'a> {
    fam: &'a dyn Family,
    n: usize,
}

impl Tracer<'_> {
    /// [F_x | F_s] at y = (x, s), F_s by central differences (step 1e-6·(1 + |s|)).
    fn jacobian(&self, y: &[f64]) -> DMatrix<f64> {
        let n = self.n;
        let (x, s) = (&y[..n], y[n]);
        let mut jx = vec![0.0; n * n];
        self.fam.jacobian(x, s, &mut jx);
        let d = 1e-6 * (1.0 + s.abs());
        let (mut fp, mut fm) = (vec![0.0; n], vec![0.0; n]);
        self.fam.rates(x, s + d, &mut fp);
        self.fam.rates(x, s - d, &mut fm);
        let mut m = DMatrix::zeros(n, n + 1);
        for i in 0..n {
            for j in 0..n {
                m[(i, j)] = jx[i * n + j];
            }
            m[(i, n)] = (fp[i] - fm[i]) / (2.0 * d);
        }
        m
    }

    /// Unit tangent at y with t·`prev` > 0: solves [F_x F_s; prevᵀ] t = [0; 1].
    fn tangent(&self, y: &[f64], prev: &DVector<f64>) -> Option<DVector<f64>> {
        let n = self.n;
        let mut a = self.jacobian(y).insert_row(n, 0.0);
        for j in 0..=n {
            a[(n, j)] = prev[j];
        }
        let mut rhs = DVector::zeros(n + 1);
        rhs[n] = 1.0;
        let t = a.lu().solve(&rhs)?;
        let norm = t.norm();
        (norm.is_finite() && norm > 0.0).then(|| t / norm)
    }

    /// Newton on [F(y) = 0; t·(y − y_p) = 0] from the predictor y_p.
    fn correct(&self, yp: &DVector<f64>, t: &DVector<f64>) -> Option<(DVector<f64>, usize)> {
        let n = self.n;
        let mut y = yp.clone();
        let mut f = vec![0.0; n];
        for it in 1..=12 {
            self.fam.rates(&y.as_slice()[..n], y[n], &mut f);
            let mut g = DVector::zeros(n + 1);
            for i in 0..n {
                g[i] = -f[i];
            }
            g[n] = -t.dot(&(&y - yp));
            let mut a = self.jacobian(y.as_slice()).insert_row(n, 0.0);
            for j in 0..=n {
                a[(n, j)] = t[j];
            }
            let dy = a.lu().solve(&g)?;
            y += &dy;
            if !y.iter().all(|v| v.is_finite()) {
                return None;
            }
            self.fam.rates(&y.as_slice()[..n], y[n], &mut f);
            let fnorm = f.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            if dy.amax() <= 1e-11 * (1.0 + y.amax()) && fnorm <= 1e-9 {
                return Some((y, it));
            }
        }
        None
    }

    fn point(&self, y: &DVector<f64>) -> BranchPoint {
        let n = self.n;
        let mut jx = vec![0.0; n * n];
        self.fam.jacobian(&y.as_slice()[..n], y[n], &mut jx);
        BranchPoint { s: y[n], x: y.as_slice()[..n].to_vec(), kind: classify(&eigenvalues(&jx, n)) }
    }

    /// Between y (tangent t, s-component of sign σ) and a step `ds` along t,
    /// finds by bisection the arclength where the tangent's s-component turns.
    fn locate_fold(&self, y: &DVector<f64>, t: &DVector<f64>, ds: f64) -> Option<Fold> {
        let n = self.n;
        let sign = t[n].signum();
        let (mut lo, mut hi) = (0.0, ds);
        let mut best: Option<DVector<f64>> = None;
        for _ in 0..50 {
            let mid = 0.5 * (lo + hi);
            let (ym, _) = self.correct(&(y + t * mid), t)?;
            let tm = self.tangent(ym.as_slice(), t)?;
            if tm[n].signum() == sign {
                lo = mid
            } else {
                hi = mid
            }
            best = Some(ym);
            if hi - lo <= 1e-10 * ds.abs().max(1e-300) {
                break;
            }
        }
        best.map(|y| Fold { s: y[n], x: y.as_slice()[..n].to_vec() })
    }
}

/// Continues the branch through the fixed point `x0` at `s0`, starting in the
/// direction of increasing s (`direction` = 1) or decreasing (−1), while s stays
/// in `range`; arclength steps at most `ds_max` (in the scaled (u, s) space),
/// at most `max_points` points.
pub fn continue_branch(
    fam: &dyn Family,
    x0: &[f64],
    s0: f64,
    range: (f64, f64),
    ds_max: f64,
    direction: f64,
    max_points: usize,
) -> Branch {
    let n = fam.dim();
    let tr = Tracer { fam, n };
    let mut y = DVector::from_iterator(n + 1, x0.iter().copied().chain([s0]));
    let mut seed = DVector::zeros(n + 1);
    seed[n] = direction.signum();
    let mut branch = Branch::default();
    let Some(mut t) = tr.tangent(y.as_slice(), &seed) else { return branch };
    branch.points.push(tr.point(&y));
    let mut ds = ds_max;
    while branch.points.len() < max_points {
        let Some((y_new, iterations)) = tr.correct(&(&y + &t * ds), &t) else {
            ds *= 0.5;
            if ds < 1e-9 * ds_max {
                break;
            }
            continue;
        };
        let Some(t_new) = tr.tangent(y_new.as_slice(), &t) else { break };
        // Guard against jumping to another branch: the corrector must stay
        // within half a step of the predictor and the tangent turn < ~25°.
        let jump = (&y_new - (&y + &t * ds)).norm();
        if jump > 0.5 * ds.abs() || t.dot(&t_new) < 0.9 {
            ds *= 0.5;
            if ds < 1e-9 * ds_max {
                break;
            }
            continue;
        }

        if t[n] * t_new[n] < 0.0
            && let Some(f) = tr.locate_fold(&y, &t, ds)
        {
            branch.folds.push(f);
        }
        let s = y_new[n];
        if s < range.0 || s > range.1 {
            // End exactly on the boundary: interpolate, then solve at fixed s.
            let edge = if s < range.0 { range.0 } else { range.1 };
            let f = (edge - y[n]) / (s - y[n]);
            let guess: Vec<f64> = (0..n).map(|i| y[i] + f * (y_new[i] - y[i])).collect();
            let at = super::system::AtParameter { family: fam, s: edge };
            if let Some(x) = super::fixed::newton(&at, &guess, 1e-10, false) {
                let end = DVector::from_iterator(n + 1, x.into_iter().chain([edge]));
                branch.points.push(tr.point(&end));
            }
            break;
        }

        branch.points.push(tr.point(&y_new));
        y = y_new;
        t = t_new;
        if iterations <= 3 {
            ds = (ds * 1.5).min(ds_max);
        }
    }
    branch
}
