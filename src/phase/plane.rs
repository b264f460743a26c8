//! Geometry of a two-gene phase plane: trajectories, separatrices (stable
//! manifolds of saddles) and nullclines.

use nalgebra::Matrix2;

use super::fixed::{FixedPoint, Kind};
use super::flow::Integrator;
use super::system::System;

/// Points of the trajectory from `x0` over `t_max` min (negative: backwards),
/// sampled at every integrator step; stops early when it leaves `bounds`
/// (per coordinate, with a 5 % margin).
pub fn trajectory(sys: &dyn System, x0: &[f64], t_max: f64, bounds: &[(f64, f64)]) -> Vec<Vec<f64>> {
    let mut x = x0.to_vec();
    let mut integ = Integrator::new(sys, 1e-8, t_max.abs() / 400.0);
    let (mut t, mut h): (f64, f64) = (0.0, t_max * 1e-5);
    let mut out = vec![x.clone()];
    let inside = |x: &[f64]| {
        x.iter().zip(bounds).all(|(v, (lo, hi))| {
            let m = 0.05 * (hi - lo);
            *v >= lo - m && *v <= hi + m
        })
    };
    while t.abs() < t_max.abs() {
        let remaining = t_max - t;
        let step = if h.abs() > remaining.abs() { remaining } else { h };
        let (taken, next) = integ.step(&mut x, step);
        t += taken;
        h = next;
        if !x.iter().all(|v| v.is_finite()) {
            break;
        }
        out.push(x.clone());
        if !inside(&x) {
            break;
        }
    }
    out
}

/// The separatrix through a saddle of a planar system: its stable manifold,
/// traced by integrating backwards in time from the saddle displaced by ±ε
/// along the stable eigenvector (Strogatz, Nonlinear Dynamics and Chaos, §6.5).
/// Two curves, one per side; empty unless `p` is a planar saddle.
pub fn separatrix(sys: &dyn System, p: &FixedPoint, bounds: &[(f64, f64)], t_max: f64) -> Vec<Vec<Vec<f64>>> {
    if p.kind != Kind::Saddle || p.x.len() != 2 {
        return Vec::new();
    }
    let mut j = [0.0; 4];
    sys.jacobian(&p.x, &mut j);
    let m = Matrix2::new(j[0], j[1], j[2], j[3]);
    let Some(eig) = m.eigenvalues() else { return Vec::new() };
    let lambda = eig[0].min(eig[1]);
    // (J − λI)v = 0: v ⟂ the first row, or the second if the first vanishes.
    let (r0, r1) = ((j[0] - lambda, j[1]), (j[2], j[3] - lambda));
    let row = if r0.0.hypot(r0.1) > r1.0.hypot(r1.1) { r0 } else { r1 };
    let (vx, vy) = (-row.1, row.0);
    let norm = vx.hypot(vy);
    if norm == 0.0 {
        return Vec::new();
    }
    let scale = bounds.iter().map(|(lo, hi)| hi - lo).fold(0.0, f64::max);
    let eps = 1e-4 * scale;
    [1.0, -1.0]
        .iter()
        .map(|side| {
            let start = [p.x[0] + side * eps * vx / norm, p.x[1] + side * eps * vy / norm];
            trajectory(sys, &start, -t_max, bounds)
        })
        .collect()
}

/// Line segments of the zero contour of `field` sampled on an `nx × ny` grid
/// over `bounds` (marching squares, linear interpolation along cell edges).
pub fn zero_contour(
    field: &dyn Fn(f64, f64) -> f64,
    bounds: [(f64, f64); 2],
    nx: usize,
    ny: usize,
) -> Vec<[(f64, f64); 2]> {
    let (x0, x1) = bounds[0];
    let (y0, y1) = bounds[1];
    let xs: Vec<f64> = (0..=nx).map(|i| x0 + (x1 - x0) * i as f64 / nx as f64).collect();
    let ys: Vec<f64> = (0..=ny).map(|j| y0 + (y1 - y0) * j as f64 / ny as f64).collect();
    let v: Vec<Vec<f64>> = ys.iter().map(|&y| xs.iter().map(|&x| field(x, y)).collect()).collect();
    let mut segments = Vec::new();
    for j in 0..ny {
        for i in 0..nx {
            let corners = [
                (xs[i], ys[j], v[j][i]),
                (xs[i + 1], ys[j], v[j][i + 1]),
                (xs[i + 1], ys[j + 1], v[j + 1][i + 1]),
                (xs[i], ys[j + 1], v[j + 1][i]),
            ];
            let mut crossings = Vec::new();
            for k in 0..4 {
                let (a, b) = (corners[k], corners[(k + 1) % 4]);
                if (a.2 < 0.0) != (b.2 < 0.0) {
                    let f = a.2 / (a.2 - b.2);
                    crossings.push((a.0 + f * (b.0 - a.0), a.1 + f * (b.1 - a.1)));
                }
            }
            for pair in crossings.chunks_exact(2) {
                segments.push([pair[0], pair[1]]);
            }
        }
    }
    segments
}
