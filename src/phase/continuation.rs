//! Pseudo-arclength continuation of fixed points F(u, s) = 0 in a parameter s
//! (Keller 1977, in Applications of Bifurcation Theory, Academic Press;
//! Seydel, Practical Bifurcation and Stability Analysis, 3rd ed., §4.5), with
//! the special points met on the way, each found by a test function that
//! changes sign there and located by the Illinois method on the arclength
//! (Kuznetsov, Elements of Applied Bifurcation Theory, 3rd ed. 2004, §10.2,
//! from memory for the section):
//! - folds (saddle-node points): the tangent's s-component changes sign;
//! - branch points (pitchfork, transcritical): `det [F_u F_s; tᵀ]` changes
//!   sign (it keeps its sign through a fold), with the direction of the
//!   branch that crosses there, for switching onto it;
//! - Hopf points: `Π_{i<j}(λ_i + λ_j)` changes sign and a complex pair sits
//!   on the imaginary axis, with the period 2π/ω at onset.

use nalgebra::{Complex, DMatrix, DVector};

use super::arclength::{self, Curve};
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

/// A point where two branches cross (pitchfork or transcritical).
#[derive(Debug, Clone, PartialEq)]
pub struct Crossing {
    /// Parameter there.
    pub s: f64,
    /// Fixed point there.
    pub x: Vec<f64>,
    /// Unit tangent (u, s) of the other branch through it.
    pub other: Vec<f64>,
    /// Second-smallest singular value of `[F_u F_s]` there (0 at an exact
    /// branch point): how well it was located.
    pub residual: f64,
}

/// A Hopf point: a complex pair of eigenvalues ±iω crosses the imaginary axis.
#[derive(Debug, Clone, PartialEq)]
pub struct Hopf {
    /// Parameter there.
    pub s: f64,
    /// Fixed point there.
    pub x: Vec<f64>,
    /// Angular frequency ω at onset, rad/min.
    pub omega: f64,
}

impl Hopf {
    /// Period of the oscillation at onset, 2π/ω, min.
    pub fn period_min(&self) -> f64 {
        std::f64::consts::TAU / self.omega
    }
}

/// A continued branch of fixed points.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Branch {
    /// Points in arclength order.
    pub points: Vec<BranchPoint>,
    /// Folds met on the way.
    pub folds: Vec<Fold>,
    /// Branch points met on the way.
    pub crossings: Vec<Crossing>,
    /// Hopf points met on the way.
    pub hopfs: Vec<Hopf>,
}

struct Tracer<'a> {
    fam: &'a dyn Family,
    n: usize,
}

impl Curve for Tracer<'_> {
    fn unknowns(&self) -> usize {
        self.n + 1
    }

    fn residual(&self, y: &[f64], out: &mut [f64]) {
        self.fam.rates(&y[..self.n], y[self.n], out);
    }

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
}

impl Tracer<'_> {
    fn tangent(&self, y: &[f64], prev: &DVector<f64>) -> Option<DVector<f64>> {
        arclength::tangent(self, y, prev)
    }

    fn correct(&self, yp: &DVector<f64>, t: &DVector<f64>) -> Option<(DVector<f64>, usize)> {
        arclength::correct(self, yp, t)
    }

    fn locate(
        &self,
        y: &DVector<f64>,
        t: &DVector<f64>,
        ds: f64,
        g: (f64, f64),
        test: impl Fn(&DVector<f64>, &DVector<f64>) -> f64,
    ) -> Option<(DVector<f64>, DVector<f64>)> {
        arclength::locate(self, y, t, ds, g, test)
    }

    /// The branch-point test function `det [F_u F_s; tᵀ]` at y with tangent t.
    fn crossing_test(&self, y: &DVector<f64>, t: &DVector<f64>) -> f64 {
        let n = self.n;
        let mut a = self.jacobian(y.as_slice()).insert_row(n, 0.0);
        for j in 0..=n {
            a[(n, j)] = t[j];
        }
        a.determinant()
    }

    /// The Hopf test function `Π_{i<j}(λ_i + λ_j)` (real for a real
    /// Jacobian), and the eigenvalues.
    fn hopf_test(&self, y: &DVector<f64>) -> (f64, Vec<Complex<f64>>) {
        let n = self.n;
        let mut jx = vec![0.0; n * n];
        self.fam.jacobian(&y.as_slice()[..n], y[n], &mut jx);
        let ev = eigenvalues(&jx, n);
        let mut product = Complex::new(1.0, 0.0);
        for i in 0..n {
            for j in i + 1..n {
                product *= ev[i] + ev[j];
            }
        }
        (product.re, ev)
    }

    /// The unit tangent of the other branch at a branch point, and how far
    /// the point is from one: the null space of `[F_u F_s]` is
    /// two-dimensional there (the two smallest eigenvalues of its Gram
    /// matrix vanish); within it, the direction orthogonal to the branch's
    /// own tangent `t` (taken before the point: the tangent solve is
    /// singular at a branch point). The distance is the square root of the
    /// second-smallest eigenvalue, 0 exactly at a branch point.
    fn other_direction(&self, y: &DVector<f64>, t: &DVector<f64>) -> Option<(DVector<f64>, f64)> {
        let j = self.jacobian(y.as_slice());
        let eig = (j.transpose() * &j).symmetric_eigen();
        let mut order: Vec<usize> = (0..eig.eigenvalues.len()).collect();
        order.sort_by(|&a, &b| eig.eigenvalues[a].total_cmp(&eig.eigenvalues[b]));
        let (e1, e2) = (eig.eigenvectors.column(order[0]).into_owned(), eig.eigenvectors.column(order[1]).into_owned());
        let (alpha, beta) = (e1.dot(t), e2.dot(t));
        let norm = alpha.hypot(beta);
        if norm < 1e-6 {
            return None;
        }
        let other = (e1 * -beta + e2 * alpha) / norm;
        Some((other, eig.eigenvalues[order[1]].max(0.0).sqrt()))
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
    let mut seed = DVector::zeros(n + 1);
    seed[n] = direction.signum();
    trace(fam, x0, s0, &seed, range, ds_max, max_points)
}

/// Continues the branch through (x0, s0) starting along `seed` (a vector in
/// (u, s); the tangent is oriented to agree with it); see [`continue_branch`].
pub fn trace(
    fam: &dyn Family,
    x0: &[f64],
    s0: f64,
    seed: &DVector<f64>,
    range: (f64, f64),
    ds_max: f64,
    max_points: usize,
) -> Branch {
    let n = fam.dim();
    let tr = Tracer { fam, n };
    let mut y = DVector::from_iterator(n + 1, x0.iter().copied().chain([s0]));
    let mut branch = Branch::default();
    let Some(mut t) = tr.tangent(y.as_slice(), seed) else { return branch };
    branch.points.push(tr.point(&y));
    let mut ds = ds_max;
    let mut tests = (tr.crossing_test(&y, &t), tr.hopf_test(&y).0);
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
        let new_tests = (tr.crossing_test(&y_new, &t_new), tr.hopf_test(&y_new).0);
        if tests.0 * new_tests.0 < 0.0
            && let Some((yc, tc)) = tr.locate(&y, &t, ds, (tests.0, new_tests.0), |y, t| tr.crossing_test(y, t))
            && let Some((other, residual)) = tr.other_direction(&yc, &t)
        {
            let _ = tc;
            branch.crossings.push(Crossing {
                s: yc[n],
                x: yc.as_slice()[..n].to_vec(),
                other: other.as_slice().to_vec(),
                residual,
            });
        }
        if tests.1 * new_tests.1 < 0.0
            && let Some((yh, _)) = tr.locate(&y, &t, ds, (tests.1, new_tests.1), |y, _| tr.hopf_test(y).0)
        {
            // A Hopf point if a complex pair sits on the imaginary axis (not
            // a neutral saddle, whose real pair sums to zero).
            let (_, ev) = tr.hopf_test(&yh);
            let scale = ev.iter().map(|e| e.norm()).fold(1e-300, f64::max);
            if let Some(pair) =
                ev.iter().filter(|e| e.im > 1e-9 * scale).min_by(|a, b| a.re.abs().total_cmp(&b.re.abs()))
                && pair.re.abs() <= 1e-6 * scale
            {
                branch.hopfs.push(Hopf { s: yh[n], x: yh.as_slice()[..n].to_vec(), omega: pair.im });
            }
        }
        tests = new_tests;
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
            // Special points beyond the range are not reported.
            branch.folds.retain(|p| p.s >= range.0 && p.s <= range.1);
            branch.crossings.retain(|p| p.s >= range.0 && p.s <= range.1);
            branch.hopfs.retain(|p| p.s >= range.0 && p.s <= range.1);
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

/// Switches onto the other branch at a branch point: one corrected step of
/// `ds` along its direction (`sign` = ±1 chooses the half), then traced on;
/// the branch starts at the branch point.
pub fn switch_branch(
    fam: &dyn Family,
    at: &Crossing,
    sign: f64,
    range: (f64, f64),
    ds_max: f64,
    max_points: usize,
) -> Option<Branch> {
    let n = fam.dim();
    let tr = Tracer { fam, n };
    let y0 = DVector::from_iterator(n + 1, at.x.iter().copied().chain([at.s]));
    let dir = DVector::from_vec(at.other.clone()) * sign.signum();
    let mut ds = ds_max;
    let y1 = loop {
        if let Some((y1, _)) = tr.correct(&(&y0 + &dir * ds), &dir) {
            // Off the branch it started from: farther from the branch point
            // along its own direction than across.
            if (&y1 - &y0).dot(&dir) > 0.5 * ds {
                break y1;
            }
        }
        ds *= 0.5;
        if ds < 1e-6 * ds_max {
            return None;
        }
    };
    if y1[n] < range.0 || y1[n] > range.1 {
        return None;
    }
    let mut branch = trace(fam, &y1.as_slice()[..n], y1[n], &dir, range, ds_max, max_points);
    branch.points.insert(0, tr.point(&y0));
    // The branch point itself belongs to the branch it was found on.
    branch.crossings.retain(|c| (c.s - at.s).abs() > 1e-9 * (1.0 + at.s.abs()));
    Some(branch)
}

/// True if (s, x) lies on one of `branches` (linear between their points,
/// within `tol` in every gene).
pub fn lies_on(branches: &[Branch], s: f64, x: &[f64], tol: f64) -> bool {
    branches.iter().any(|b| {
        b.points.windows(2).any(|w| {
            let (a, c) = (&w[0], &w[1]);
            let (lo, hi) = (a.s.min(c.s), a.s.max(c.s));
            s >= lo - 1e-9
                && s <= hi + 1e-9
                && x.iter().enumerate().all(|(g, v)| {
                    let f = if c.s != a.s { (s - a.s) / (c.s - a.s) } else { 0.0 };
                    (a.x[g] + f * (c.x[g] - a.x[g]) - v).abs() <= tol
                })
        })
    })
}

/// Branches through every fixed point of `seeds` (each a parameter value and
/// the fixed points there), each traced both ways within `range`, skipping
/// points that lie on a branch already traced (within 1e-3·`scale` in every
/// gene). Returns them in the order found.
pub fn trace_through(
    fam: &dyn Family,
    seeds: &[(f64, Vec<Vec<f64>>)],
    range: (f64, f64),
    ds_max: f64,
    scale: f64,
) -> Vec<Branch> {
    let mut branches: Vec<Branch> = Vec::new();
    for (s, points) in seeds {
        for x in points {
            if lies_on(&branches, *s, x, 1e-3 * scale) {
                continue;
            }
            let mut both = Branch::default();
            for dir in [-1.0, 1.0] {
                let mut b = continue_branch(fam, x, *s, range, ds_max, dir, 20_000);
                if dir < 0.0 {
                    b.points.reverse();
                    both = b;
                } else {
                    both.points.extend(b.points.into_iter().skip(1));
                    both.folds.extend(b.folds);
                    both.crossings.extend(b.crossings);
                    both.hopfs.extend(b.hopfs);
                }
            }
            branches.push(both);
        }
    }
    branches
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The symmetric toggle switch du/dt = s/(1 + v²) − u, dv/dt = s/(1 + u²) − v.
    struct Toggle;

    impl Family for Toggle {
        fn dim(&self) -> usize {
            2
        }
        fn rates(&self, u: &[f64], s: f64, out: &mut [f64]) {
            out[0] = s / (1.0 + u[1] * u[1]) - u[0];
            out[1] = s / (1.0 + u[0] * u[0]) - u[1];
        }
        fn jacobian(&self, u: &[f64], s: f64, jac: &mut [f64]) {
            let d = |x: f64| -2.0 * s * x / ((1.0 + x * x) * (1.0 + x * x));
            jac.copy_from_slice(&[-1.0, d(u[1]), d(u[0]), -1.0]);
        }
    }

    /// Switching at the toggle's pitchfork (s = 2, u = v = 1; Cherry & Adler
    /// 2000, J. Theor. Biol. 203:117) lands on the two asymmetric branches,
    /// one each way: every point has uv = 1 and u + v = s (subtracting the
    /// equations: (u − v)(1 − uv) = 0), with s ≥ 2.
    #[test]
    fn switching_at_the_pitchfork_follows_the_asymmetric_branches() {
        // u(1 + u²) = 1 at s = 1.
        let x0 = 0.6823278038280193;
        let symmetric = continue_branch(&Toggle, &[x0, x0], 1.0, (1.0, 3.0), 0.02, 1.0, 10_000);
        assert_eq!(symmetric.crossings.len(), 1, "{:?}", symmetric.crossings);
        let c = &symmetric.crossings[0];
        assert!((c.s - 2.0).abs() < 1e-8, "{}", c.s);
        let mut signs = Vec::new();
        for sign in [-1.0, 1.0] {
            let b = switch_branch(&Toggle, c, sign, (1.0, 3.0), 0.02, 10_000).expect("switched");
            assert!(b.points.len() > 20);
            for p in &b.points {
                let (u, v) = (p.x[0], p.x[1]);
                assert!((u * v - 1.0).abs() < 1e-7 && (u + v - p.s).abs() < 1e-7 && p.s >= 2.0 - 1e-8, "{p:?}");
            }
            let last = b.points.last().unwrap();
            assert!((last.s - 3.0).abs() < 1e-9 && last.kind.is_stable(), "{last:?}");
            signs.push((last.x[0] - last.x[1]).signum());
        }
        assert_ne!(signs[0], signs[1], "one branch each way");
    }
}
