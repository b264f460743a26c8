//! Fold curves in two parameters: the curves in the (p, q) plane along
//! which a fixed point of the isolated nucleus is a fold (saddle-node), that
//! bound its bistable regions, and the cusps where two of them meet.
//!
//! The fold curve solves G(u, p, q) = [F(u, p, q); g(u, p, q)] = 0, n + 1
//! equations in n + 2 unknowns, continued by pseudo-arclength
//! ([`super::arclength`]). The test function g is the last unknown of the
//! bordered system (Govaerts, Numerical Methods for Bifurcations of
//! Dynamical Equilibria, SIAM 2000, ch. 3, from memory for the chapter):
//!
//! ```text
//! [ F_u  b ] [ v ]   [ 0 ]
//! [ cᵀ   0 ] [ g ] = [ 1 ],
//! ```
//!
//! which vanishes exactly where F_u is singular; b and c are the left and
//! right null vectors of F_u at the last point, so the matrix stays
//! regular along the curve. A cusp is where the fold's quadratic
//! coefficient a = wᵀ F_uu(v, v) (w the left null vector from the transposed
//! system) changes sign (Kuznetsov, Elements of Applied Bifurcation Theory,
//! 3rd ed. 2004, §8.2, from memory for the section); F_uu(v, v) is the
//! central difference of F_u·v along v.
//!
//! Seeds come from one-parameter diagrams in p at evenly spaced values of
//! q; a fold curve that meets none of those lines (an isola narrower than
//! their spacing) is missed.

use nalgebra::{DMatrix, DVector};

use super::arclength::{self, Curve};
use super::bifurcation::{Diagram, DiagramRequest, ParameterFamily, Special, capacity, diagram_of, search_limit};
use super::system::Family;

/// A point of a fold curve.
#[derive(Debug, Clone, PartialEq)]
pub struct FoldCurvePoint {
    /// First parameter.
    pub p: f64,
    /// Second parameter.
    pub q: f64,
    /// Fixed point at the fold.
    pub x: Vec<f64>,
}

/// A fold curve, with the cusps met on it.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FoldCurve {
    /// Points in arclength order.
    pub points: Vec<FoldCurvePoint>,
    /// Cusps on it.
    pub cusps: Vec<FoldCurvePoint>,
}

/// The ranges to trace in.
#[derive(Debug, Clone, Copy)]
pub struct FoldCurveRequest {
    /// First parameter's range.
    pub p: (f64, f64),
    /// Second parameter's range.
    pub q: (f64, f64),
    /// Values of q at which one-parameter diagrams seed the curves.
    pub seed_lines: usize,
}

/// The fold system in scaled unknowns z = y / scale.
struct FoldSystem<'a> {
    fam: &'a ParameterFamily,
    n: usize,
    scale: Vec<f64>,
    b: DVector<f64>,
    c: DVector<f64>,
}

impl FoldSystem<'_> {
    fn unscale(&self, z: &[f64]) -> Vec<f64> {
        z.iter().zip(&self.scale).map(|(a, s)| a * s).collect()
    }

    fn jac_u(&self, y: &[f64]) -> DMatrix<f64> {
        let n = self.n;
        let mut j = vec![0.0; n * n];
        self.fam.jacobian2(&y[..n], y[n], y[n + 1], &mut j);
        DMatrix::from_row_slice(n, n, &j)
    }

    fn bordered(&self, ju: &DMatrix<f64>) -> DMatrix<f64> {
        let n = self.n;
        let mut m = ju.clone().insert_row(n, 0.0).insert_column(n, 0.0);
        for i in 0..n {
            m[(i, n)] = self.b[i];
            m[(n, i)] = self.c[i];
        }
        m
    }

    /// (v, g) and w of the bordered system at y (unscaled).
    fn null_vectors(&self, y: &[f64]) -> Option<(DVector<f64>, f64, DVector<f64>)> {
        let n = self.n;
        let m = self.bordered(&self.jac_u(y));
        let mut rhs = DVector::zeros(n + 1);
        rhs[n] = 1.0;
        let lu = m.clone().lu();
        let vg = lu.solve(&rhs)?;
        let wh = m.transpose().lu().solve(&rhs)?;
        Some((vg.rows(0, n).into_owned(), vg[n], wh.rows(0, n).into_owned()))
    }

    /// The cusp test a = wᵀ F_uu(v, v) / (|w| |v|²) at y (unscaled).
    fn cusp_test(&self, y: &[f64]) -> f64 {
        let n = self.n;
        let Some((v, _, w)) = self.null_vectors(y) else { return f64::NAN };
        let v = &v / v.norm();
        let w = &w / w.norm();
        let h = 1e-5 * (1.0 + y[..n].iter().fold(0.0f64, |m, a| m.max(a.abs())));
        let jv = |sign: f64| {
            let mut yy = y.to_vec();
            for i in 0..n {
                yy[i] += sign * h * v[i];
            }
            self.jac_u(&yy) * &v
        };
        w.dot(&((jv(1.0) - jv(-1.0)) / (2.0 * h)))
    }

    /// b and c from the null vectors at y (unscaled): kept continuous, as the
    /// new ones solve bᵀw = cᵀv = 1 with the old.
    fn renew_borders(&mut self, y: &[f64]) {
        if let Some((v, _, w)) = self.null_vectors(y) {
            let (nv, nw) = (v.norm(), w.norm());
            if nv > 0.0 && nw > 0.0 && nv.is_finite() && nw.is_finite() {
                self.c = v / nv;
                self.b = w / nw;
            }
        }
    }
}

impl Curve for FoldSystem<'_> {
    fn unknowns(&self) -> usize {
        self.n + 2
    }

    fn residual(&self, z: &[f64], out: &mut [f64]) {
        let n = self.n;
        let y = self.unscale(z);
        self.fam.rates2(&y[..n], y[n], y[n + 1], &mut out[..n]);
        out[n] = self.null_vectors(&y).map_or(f64::NAN, |(_, g, _)| g);
    }

    /// By central differences in the scaled unknowns (step 1e-7).
    fn jacobian(&self, z: &[f64]) -> DMatrix<f64> {
        let m = self.n + 1;
        let mut jac = DMatrix::zeros(m, m + 1);
        let (mut fp, mut fm) = (vec![0.0; m], vec![0.0; m]);
        let h = 1e-7;
        let mut zz = z.to_vec();
        for j in 0..=m {
            zz[j] = z[j] + h;
            self.residual(&zz, &mut fp);
            zz[j] = z[j] - h;
            self.residual(&zz, &mut fm);
            zz[j] = z[j];
            for i in 0..m {
                jac[(i, j)] = (fp[i] - fm[i]) / (2.0 * h);
            }
        }
        jac
    }
}

/// Whether a point lies within 1e-3 (scaled) of a traced curve.
fn on_curves(curves: &[FoldCurve], y: &FoldCurvePoint, scale: &[f64], n: usize) -> bool {
    curves.iter().any(|c| {
        c.points.windows(2).any(|w| {
            // Distance to the chord, in the max norm, bounded by the nearer end's.
            chord(&w[0], y, scale, n).min(chord(&w[1], y, scale, n)) <= 0.6 * chord(&w[0], &w[1], scale, n) + 1e-3
        })
    })
}

fn chord(a: &FoldCurvePoint, b: &FoldCurvePoint, scale: &[f64], n: usize) -> f64 {
    let mut d = 0.0f64;
    for i in 0..n {
        d = d.max(((a.x[i] - b.x[i]) / scale[i]).abs());
    }
    d.max(((a.p - b.p) / scale[n]).abs()).max(((a.q - b.q) / scale[n + 1]).abs())
}

fn point(y: &[f64], n: usize) -> FoldCurvePoint {
    FoldCurvePoint { p: y[n], q: y[n + 1], x: y[..n].to_vec() }
}

/// Longest step along a fold curve, scaled units (the ranges are 1).
const DS_MAX: f64 = 0.02;

/// Traces one fold curve from a fold `y0` (unscaled) in one direction.
fn trace_one(sys: &mut FoldSystem, y0: &[f64], dir: f64, req: &FoldCurveRequest) -> FoldCurve {
    let n = sys.n;
    let mut out = FoldCurve::default();
    let z0 = DVector::from_iterator(n + 2, y0.iter().zip(&sys.scale).map(|(a, s)| a / s));
    let mut e = DVector::zeros(n + 2);
    e[n + 1] = dir;
    let Some(mut t) = arclength::tangent(&*sys, z0.as_slice(), &e).or_else(|| {
        e[n + 1] = 0.0;
        e[n] = dir;
        arclength::tangent(&*sys, z0.as_slice(), &e)
    }) else {
        return out;
    };
    let mut z = z0.clone();
    out.points.push(point(y0, n));
    let mut a0 = sys.cusp_test(y0);
    let mut ds = DS_MAX;
    let inside = |y: &[f64]| {
        let (p, q) = (y[n], y[n + 1]);
        let slack = 1e-9;
        p >= req.p.0 - slack * (req.p.1 - req.p.0)
            && p <= req.p.1 + slack * (req.p.1 - req.p.0)
            && q >= req.q.0 - slack * (req.q.1 - req.q.0)
            && q <= req.q.1 + slack * (req.q.1 - req.q.0)
    };
    for step in 0..20_000 {
        let next = arclength::at(&*sys, &z, &t, ds).filter(|(_, t1)| t1.dot(&t) > 0.95);
        let Some((z1, t1)) = next else {
            ds *= 0.5;
            if ds < 1e-7 {
                break;
            }
            continue;
        };
        let y1 = sys.unscale(z1.as_slice());
        if y1[..n].iter().zip(&sys.scale).any(|(u, s)| *u < -1e-9 * s) {
            break;
        }
        let a1 = sys.cusp_test(&y1);
        if a0.is_finite() && a1.is_finite() && a0 * a1 < 0.0 {
            let cusp =
                arclength::locate(&*sys, &z, &t, ds, (a0, a1), |zc, _| sys.cusp_test(&sys.unscale(zc.as_slice())));
            if let Some((zc, _)) = cusp {
                let yc = sys.unscale(zc.as_slice());
                if inside(&yc) {
                    out.cusps.push(point(&yc, n));
                }
            }
        }
        if !inside(&y1) {
            // End on the edge of the box, between the last two points.
            let y = sys.unscale(z.as_slice());
            let (mut w, mut side) = (1.0f64, n);
            for (k, (lo, hi)) in [(n, req.p), (n + 1, req.q)] {
                for edge in [lo, hi] {
                    let f = (edge - y[k]) / (y1[k] - y[k]);
                    if f >= 0.0 && f < w {
                        (w, side) = (f, k);
                    }
                }
            }
            // Linear between the two, then corrected onto the fold curve
            // within the edge's hyperplane.
            let zp = &z + (&z1 - &z) * w;
            let mut normal = DVector::zeros(n + 2);
            normal[side] = 1.0;
            // (Nothing to add when the last point is on the edge already.)
            if w <= 1e-12 {
                break;
            }
            if let Some((ze, _)) = arclength::correct(&*sys, &zp, &normal) {
                out.points.push(point(&sys.unscale(ze.as_slice()), n));
            }
            break;
        }
        out.points.push(point(&y1, n));
        // Closed curve: back at the start.
        if step > 10 && (&z1 - &z0).amax() < 0.5 * ds {
            break;
        }
        sys.renew_borders(&y1);
        a0 = a1;
        z = z1;
        t = arclength::tangent(&*sys, z.as_slice(), &t1).unwrap_or(t1);
        ds = (ds * 1.5).min(DS_MAX);
    }
    out
}

/// One-parameter diagrams in p at evenly spaced values of q: the seeds of
/// the fold curves and of the point-by-point count of stable states.
pub struct SeedLines {
    /// (q, the diagram in p there).
    pub lines: Vec<(f64, Diagram)>,
    /// The largest level of each gene on any branch, a.u. (at least 1e-12).
    pub level_scale: Vec<f64>,
}

/// Diagrams in p at `req.seed_lines` evenly spaced values of q.
pub fn seed_lines(fam: &ParameterFamily, name: &str, req: &FoldCurveRequest) -> SeedLines {
    let count = req.seed_lines.max(2);
    let mut level_scale = vec![1e-12f64; fam.dim()];
    let mut lines = Vec::with_capacity(count);
    for k in 0..count {
        let q = req.q.0 + (req.q.1 - req.q.0) * k as f64 / (count - 1) as f64;
        let held = fam.held_at(q);
        let one = DiagramRequest { param: fam.param(), from: req.p.0, to: req.p.1, x_pct: 0.0, t_min: 0.0 };
        let d = diagram_of(&held, name.to_string(), &one);
        for b in &d.branches {
            for p in &b.points {
                for (s, v) in level_scale.iter_mut().zip(&p.x) {
                    *s = (*s).max(v.abs());
                }
            }
        }
        lines.push((q, d));
    }
    SeedLines { lines, level_scale }
}

/// Every fold curve of `fam` (its second parameter set) in the box `req`,
/// from the folds of the seed lines.
pub fn fold_curves(fam: &ParameterFamily, seeds: &SeedLines, req: &FoldCurveRequest) -> Vec<FoldCurve> {
    let n = fam.dim();
    let level_scale = seeds.level_scale.clone();
    let mut starts: Vec<Vec<f64>> = Vec::new();
    for (q, d) in &seeds.lines {
        for f in d.special_points().into_iter().filter(|p| p.kind == Special::Fold) {
            let mut y = f.x.clone();
            y.extend([f.s, *q]);
            starts.push(y);
        }
    }
    let mut scale = level_scale;
    scale.extend([req.p.1 - req.p.0, req.q.1 - req.q.0]);
    let mut curves: Vec<FoldCurve> = Vec::new();
    for y0 in starts {
        if on_curves(&curves, &point(&y0, n), &scale, n) {
            continue;
        }
        let mut sys = FoldSystem { fam, n, scale: scale.clone(), b: DVector::zeros(n), c: DVector::zeros(n) };
        let ju = sys.jac_u(&y0);
        let svd = ju.svd(true, true);
        let k = svd.singular_values.argmin().0;
        let (Some(u), Some(vt)) = (svd.u, svd.v_t) else { continue };
        sys.b = u.column(k).into_owned();
        sys.c = vt.row(k).transpose();
        let start = sys.b.clone();
        let forward = trace_one(&mut sys, &y0, 1.0, req);
        let closed = forward.points.len() > 12 && {
            let last = forward.points.last().unwrap();
            chord(last, &forward.points[0], &scale, n) < DS_MAX
        };
        let mut curve = if closed {
            forward
        } else {
            sys.b = start;
            sys.c = vt.row(k).transpose();
            let mut back = trace_one(&mut sys, &y0, -1.0, req);
            back.points.reverse();
            back.points.pop();
            back.points.extend(forward.points);
            back.cusps.extend(forward.cusps);
            back
        };
        curve.cusps.dedup_by(|a, b| (a.p - b.p).abs() < 1e-9 * scale[n] && (a.q - b.q).abs() < 1e-9 * scale[n + 1]);
        if curve.points.len() > 1 {
            curves.push(curve);
        }
    }
    curves
}

/// The number of stable fixed points of the nucleus at the centres of an
/// `nx` × `ny` grid over the box (row by row from the lowest q): the
/// bistable regions the fold curves should bound, found without them. Each
/// row gets its own one-parameter diagram in p; at each point Newton starts
/// from where that diagram's branches cross the point's p (interpolated),
/// and from a box of starts up to 1.5 times each gene's capacity or its
/// largest level on any seed diagram, whichever is larger (so that a state
/// with a narrow basin, or above a capacity a rate expression ignores, is
/// not missed).
pub fn stable_counts(
    fam: &ParameterFamily,
    seeds: &SeedLines,
    req: &FoldCurveRequest,
    (nx, ny): (usize, usize),
) -> Vec<u8> {
    use rayon::prelude::*;
    let rows: Vec<Vec<u8>> = (0..ny)
        .into_par_iter()
        .map(|j| {
            let held = fam.held_at(req.q.0 + (req.q.1 - req.q.0) * (j as f64 + 0.5) / ny as f64);
            let one = DiagramRequest { param: fam.param(), from: req.p.0, to: req.p.1, x_pct: 0.0, t_min: 0.0 };
            let diagram = diagram_of(&held, String::new(), &one);
            (0..nx)
                .map(|i| {
                    stable_at(&held, &diagram, seeds, req.p.0 + (req.p.1 - req.p.0) * (i as f64 + 0.5) / nx as f64)
                })
                .collect()
        })
        .collect();
    rows.concat()
}

/// Stable fixed points of `held` at p: Newton from where the branches of
/// its `diagram` cross p and from the box of starts.
fn stable_at(held: &ParameterFamily, diagram: &Diagram, seeds: &SeedLines, p: f64) -> u8 {
    let model = held.model_at(p);
    let hi: Vec<f64> =
        model.genes.iter().zip(&seeds.level_scale).map(|(g, seen)| search_limit(capacity(g).max(*seen))).collect();
    let mut starts = super::fixed::model_starts(&model, &hi, 12);
    for b in &diagram.branches {
        for w in b.points.windows(2) {
            let (a, c) = (&w[0], &w[1]);
            if (a.s - p) * (c.s - p) <= 0.0 && a.s != c.s {
                let f = (p - a.s) / (c.s - a.s);
                starts.push(a.x.iter().zip(&c.x).map(|(u, v)| u + f * (v - u)).collect());
            }
        }
    }
    let sys = super::system::AtParameter { family: held, s: p };
    let found = super::fixed::find_fixed_points(
        &sys,
        &starts,
        super::fixed::newton_tolerance(&model),
        super::fixed::nonnegative(&model),
    );
    found.iter().filter(|f| f.kind.is_stable()).count().min(255) as u8
}
