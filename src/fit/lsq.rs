//! Local least-squares tools on any residual function r(u) of parameters u
//! scaled to the unit cube (0 and 1 are each parameter's bounds), objective
//! S(u) = Σ rᵢ²:
//!
//! - slopes ∂r/∂u that step across the stairs of pinned boundaries
//!   ([`stair_steps`], [`regression_slopes`], [`slopes`]);
//! - a bounded Levenberg–Marquardt polish ([`polish`]; Levenberg 1944,
//!   Q. Appl. Math. 2:164; Marquardt 1963, J. SIAM 11:431; the damping
//!   scaled by diag(JᵀJ) as in Moré 1978, Lecture Notes in Math. 630:105);
//! - profile-likelihood bounds found by re-optimising the other parameters
//!   and bisecting on S − S_best = 3.84 ([`profile_bound`]; Venzon &
//!   Moolgavkar 1988, Appl. Statist. 37:87; Raue et al. 2009,
//!   Bioinformatics 25:1923);
//! - the parameter combinations the data do not fix, from the eigenvectors
//!   of JᵀJ (the right singular vectors of J) ([`weak_combinations`]).

use nalgebra::{DMatrix, DVector, SymmetricEigen};
use rayon::prelude::*;

/// A residual function; None where it cannot be evaluated (a failed run).
pub type Res<'a> = dyn Fn(&[f64]) -> Option<Vec<f64>> + Sync + 'a;

/// 95 % point of χ² with one degree of freedom.
pub const CHI2_95: f64 = 3.841_458_820_694_124;
/// The 97.5 % point of the standard normal (two-sided 95 %).
pub const Z95: f64 = 1.959_963_984_540_054;
/// First half-width of a slope step, in units of the search range (common practice, no source).
pub const FIRST_STEP: f64 = 1e-4;
/// Largest half-width of a slope step, in units of the search range.
pub const MAX_STEP: f64 = 0.1;
/// A polish has converged when an accepted step lowers S by less than this
/// relative amount, ×(1 + S) (common practice, no source).
pub const POLISH_RTOL: f64 = 1e-10;
/// Re-optimised points a profile side may take.
pub const MAX_PROFILE_POINTS: usize = 80;
/// Iterations of a polish before it gives up, unconverged.
pub const POLISH_ITERATIONS: usize = 60;

/// Σ rᵢ².
pub fn sum_of_squares(r: &[f64]) -> f64 {
    r.iter().map(|v| v * v).sum()
}

fn with(u: &[f64], j: usize, z: f64) -> Vec<f64> {
    let mut v = u.to_vec();
    v[j] = z.clamp(0.0, 1.0);
    v
}

fn map<T: Send>(items: &[usize], parallel: bool, f: impl Fn(usize) -> T + Sync) -> Vec<T> {
    if parallel { items.par_iter().map(|&j| f(j)).collect() } else { items.iter().map(|&j| f(j)).collect() }
}

/// The half-width of each parameter's slope step at `u`: from
/// [`FIRST_STEP`], doubled (up to [`MAX_STEP`]) until some residual i moves
/// by at least `min_move[i]` across ±h. Boundaries of sharp switches move in
/// nucleus-sized jumps, so residuals are staircases in each parameter, and a
/// slope must span several stairs, not the derivative of one. Smooth
/// problems pass tiny `min_move` and keep the first step.
pub fn stair_steps(res: &Res, u: &[f64], n: usize, min_move: &[f64], parallel: bool) -> Option<Vec<f64>> {
    let all: Vec<usize> = (0..u.len()).collect();
    map(&all, parallel, |j| {
        let mut h = FIRST_STEP;
        loop {
            let a = res(&with(u, j, u[j] - h))?;
            let b = res(&with(u, j, u[j] + h))?;
            if a.len() != n || b.len() != n {
                return None;
            }
            let moved = a.iter().zip(&b).zip(min_move).map(|((a, b), m)| (b - a).abs() / m).fold(0.0, f64::max);
            if moved >= 1.0 || h >= MAX_STEP {
                return Some(h);
            }
            h *= 2.0;
        }
    })
    .into_iter()
    .collect()
}

/// J (n × dim) at `u` as least-squares slopes over offsets ±h/2, ±h, ±2h of
/// each parameter (a regression over several stairs); None if the number of
/// residuals changes within the offsets.
pub fn regression_slopes(res: &Res, u: &[f64], n: usize, h: &[f64], parallel: bool) -> Option<DMatrix<f64>> {
    let all: Vec<usize> = (0..u.len()).collect();
    let columns: Vec<Option<Vec<f64>>> = map(&all, parallel, |j| {
        let samples: Vec<(f64, Vec<f64>)> = [-2.0, -1.0, -0.5, 0.5, 1.0, 2.0]
            .iter()
            .map(|m| {
                let v = with(u, j, u[j] + m * h[j]);
                let r = res(&v)?;
                (r.len() == n).then(|| (v[j] - u[j], r))
            })
            .collect::<Option<_>>()?;
        let mean_d = samples.iter().map(|s| s.0).sum::<f64>() / samples.len() as f64;
        let sxx: f64 = samples.iter().map(|s| (s.0 - mean_d).powi(2)).sum();
        if sxx <= 0.0 {
            return None;
        }
        Some(
            (0..n)
                .map(|i| {
                    let mean_r = samples.iter().map(|s| s.1[i]).sum::<f64>() / samples.len() as f64;
                    samples.iter().map(|s| (s.0 - mean_d) * (s.1[i] - mean_r)).sum::<f64>() / sxx
                })
                .collect(),
        )
    });
    let mut jac = DMatrix::zeros(n, u.len());
    for (j, c) in columns.into_iter().enumerate() {
        jac.set_column(j, &DVector::from_vec(c?));
    }
    Some(jac)
}

/// Central-difference slopes of the `free` parameters at `u` over ±h
/// (clamped to the bounds), n × free.len(); None if a run fails or the
/// number of residuals changes.
pub fn slopes(res: &Res, u: &[f64], n: usize, free: &[usize], h: &[f64], parallel: bool) -> Option<DMatrix<f64>> {
    let columns: Vec<Option<Vec<f64>>> = map(free, parallel, |j| {
        let (lo, hi) = (with(u, j, u[j] - h[j]), with(u, j, u[j] + h[j]));
        let (a, b) = (res(&lo)?, res(&hi)?);
        let d = hi[j] - lo[j];
        (a.len() == n && b.len() == n && d > 0.0).then(|| a.iter().zip(&b).map(|(a, b)| (b - a) / d).collect())
    });
    let mut jac = DMatrix::zeros(n, free.len());
    for (k, c) in columns.into_iter().enumerate() {
        jac.set_column(k, &DVector::from_vec(c?));
    }
    Some(jac)
}

/// The outcome of a polish.
#[derive(Debug, Clone, PartialEq)]
pub struct Polish {
    /// Final point.
    pub u: Vec<f64>,
    /// S there.
    pub value: f64,
    /// Accepted steps.
    pub iterations: usize,
    /// Residual evaluations used.
    pub evaluations: usize,
    /// True when it stopped on its convergence rule (see [`polish`]).
    pub converged: bool,
    /// Why it stopped, in words.
    pub reason: String,
}

/// Bounded Levenberg–Marquardt from `u0`, moving only the `free`
/// parameters, with slope steps `h`. Each iteration solves
/// (JᵀJ + λ·diag(JᵀJ)) δ = −Jᵀr, clamps u + δ to the bounds and accepts it
/// if S falls (λ ÷ 3), else raises λ (× 4, up to 12 tries). When no damped
/// step lowers S, a compass search over the coordinates (steps 8h down to
/// h/8) looks for a lower stair, and the iterations go on from there. It
/// has converged when an accepted step lowers S by less than
/// [`POLISH_RTOL`]·(1 + S) or moves no parameter by more than 1e-10 of its
/// range, or when neither kind of step lowers S (a minimum at the
/// resolution of the slope steps); it has not after [`POLISH_ITERATIONS`]
/// iterations, or when the slopes cannot be taken.
pub fn polish(res: &Res, u0: &[f64], free: &[usize], h: &[f64], parallel: bool) -> Polish {
    let mut u = u0.to_vec();
    let stop = |u: Vec<f64>, value, iterations, evaluations, converged, reason: &str| Polish {
        u,
        value,
        iterations,
        evaluations,
        converged,
        reason: reason.to_string(),
    };
    let Some(mut r) = res(&u) else {
        return stop(u, f64::INFINITY, 0, 1, false, "the model cannot be run at the starting point");
    };
    let mut value = sum_of_squares(&r);
    let mut evaluations = 1;
    if free.is_empty() {
        return stop(u, value, 0, evaluations, true, "no free parameter");
    }
    let mut lambda = 1e-3;
    for iteration in 0..POLISH_ITERATIONS {
        let n = r.len();
        let Some(jac) = slopes(res, &u, n, free, h, parallel) else {
            return stop(u, value, iteration, evaluations, false, "the set of boundaries changes within a slope step");
        };
        evaluations += 2 * free.len();
        let a = jac.transpose() * &jac;
        let g = jac.transpose() * DVector::from_column_slice(&r);
        let top = a.diagonal().max().max(1e-300);
        let mut accepted = false;
        for _ in 0..12 {
            let mut m = a.clone();
            for k in 0..free.len() {
                m[(k, k)] += lambda * a[(k, k)].max(1e-12 * top);
            }
            let Some(chol) = m.cholesky() else {
                lambda *= 10.0;
                continue;
            };
            let delta = chol.solve(&(-&g));
            let mut trial = u.clone();
            for (k, &j) in free.iter().enumerate() {
                trial[j] = (u[j] + delta[k]).clamp(0.0, 1.0);
            }
            let moved = free.iter().map(|&j| (trial[j] - u[j]).abs()).fold(0.0, f64::max);
            let Some(rt) = res(&trial) else {
                evaluations += 1;
                lambda *= 4.0;
                continue;
            };
            evaluations += 1;
            let vt = sum_of_squares(&rt);
            if vt < value {
                let gain = value - vt;
                (u, r, value) = (trial, rt, vt);
                lambda = (lambda / 3.0).max(1e-12);
                accepted = true;
                if gain <= POLISH_RTOL * (1.0 + value) || moved <= 1e-10 {
                    return stop(u, value, iteration + 1, evaluations, true, "the objective stopped changing");
                }
                break;
            }
            if moved <= 1e-10 {
                break;
            }
            lambda *= 4.0;
        }
        if !accepted {
            // On a staircase (pinned boundaries) the slopes can point nowhere
            // lower from a flat stair: search the coordinates directly.
            let (cu, cv, ce) = compass(res, &u, value, free, h);
            evaluations += ce;
            if cv < value - POLISH_RTOL * (1.0 + value) {
                (u, value) = (cu, cv);
                r = res(&u).unwrap_or_default();
                evaluations += 1;
                continue;
            }
            return stop(
                u,
                value,
                iteration,
                evaluations,
                true,
                "no damped step or coordinate step lowers the objective",
            );
        }
    }
    stop(u, value, POLISH_ITERATIONS, evaluations, false, "the iteration limit was reached")
}

/// Compass search (Kolda, Lewis & Torczon 2003, SIAM Rev. 45:385) over the
/// `free` coordinates from `u` (S = `value`): each coordinate is tried at
/// ±Δⱼ, the first improvement taken; when none improves, Δ halves. Δⱼ
/// starts at 8·hⱼ and ends below hⱼ/8. Returns (point, S, evaluations).
fn compass(res: &Res, u: &[f64], value: f64, free: &[usize], h: &[f64]) -> (Vec<f64>, f64, usize) {
    let (mut u, mut value, mut evaluations) = (u.to_vec(), value, 0);
    let mut scale = 8.0;
    while scale >= 1.0 / 8.0 {
        let mut improved = false;
        for &j in free {
            for sign in [1.0, -1.0] {
                let trial = with(&u, j, u[j] + sign * scale * h[j]);
                if trial[j] == u[j] {
                    continue;
                }
                evaluations += 1;
                if let Some(v) = res(&trial).map(|r| sum_of_squares(&r))
                    && v < value
                {
                    (u, value, improved) = (trial, v, true);
                    break;
                }
            }
        }
        if !improved {
            scale /= 2.0;
        }
    }
    (u, value, evaluations)
}

/// One side of a profile-likelihood interval.
#[derive(Debug, Clone, PartialEq)]
pub struct Bound {
    /// Where S − S_best crosses 3.84 (unit range), or the search bound
    /// reached without crossing.
    pub u: f64,
    /// True when the profile crossed 3.84 before the search bound.
    pub closed: bool,
    /// A point whose S is lower than the best by more than 1e-6·(1 + S):
    /// the fit had not found the minimum.
    pub better: Option<(f64, Vec<f64>)>,
    /// (u_j, profiled S) at every point tried.
    pub points: Vec<(f64, f64)>,
    /// Residual evaluations used.
    pub evaluations: usize,
}

/// The profile of parameter `j` on one side (`dir` = −1 or +1) of the best
/// point `best` (S = `best_value`): at each fixed u_j the other parameters
/// are re-optimised by [`polish`], started from the previous profile
/// point and moved by a linear predictor from the last two (continuation).
/// Steps outward, from `first` (the curvature's σ, say) and doubling,
/// bracket the crossing of S_best + 3.84; bisection then narrows it to 0.1 %
/// of its distance from the best value. The point just outside is then re-fitted once more from
/// the nearest inside point (a re-fit started far from the valley can fail
/// and look like a rise); if it turns out inside, the search goes on from
/// there. The crossing is interpolated linearly within the last bracket. At
/// most [`MAX_PROFILE_POINTS`] re-fits per side.
pub fn profile_bound(res: &Res, best: &[f64], best_value: f64, j: usize, dir: f64, h: &[f64], first: f64) -> Bound {
    let target = best_value + CHI2_95;
    let others: Vec<usize> = (0..best.len()).filter(|&k| k != j).collect();
    let mut evaluations = 0;
    let mut at = |z: f64, start: &[f64]| -> (f64, Vec<f64>) {
        let p = polish(res, &with(start, j, z), &others, h, false);
        evaluations += p.evaluations;
        (p.value, p.u)
    };
    let mut points = Vec::new();
    let mut better: Option<(f64, Vec<f64>)> = None;
    let note_better = |f: f64, u: &[f64], better: &mut Option<(f64, Vec<f64>)>| {
        if f < best_value - 1e-6 * (1.0 + best_value) && better.as_ref().is_none_or(|b| f < b.0) {
            *better = Some((f, u.to_vec()));
        }
    };
    // Inside points so far: (u_j, the re-optimised point, S), the last two
    // give a linear predictor of where the others go next (continuation).
    let (mut z_in, mut u_in, mut f_in) = (best[j], best.to_vec(), best_value);
    let mut prev: Option<(f64, Vec<f64>)> = None;
    let predict = |z: f64, z_in: f64, u_in: &[f64], prev: &Option<(f64, Vec<f64>)>| -> Vec<f64> {
        match prev {
            Some((zp, up)) if (z_in - zp).abs() > 0.0 => {
                let t = (z - z_in) / (z_in - zp);
                u_in.iter().zip(up).map(|(a, b)| (a + t * (a - b)).clamp(0.0, 1.0)).collect()
            }
            _ => u_in.to_vec(),
        }
    };
    let first = first.clamp(1e-9, 0.25);
    let mut step = first;
    let mut tries = 0;
    let (z_out, f_out) = loop {
        // Bracket: step outwards, doubling, until S passes the target.
        let mut outside = None;
        while tries < MAX_PROFILE_POINTS {
            tries += 1;
            let z = (z_in + dir * step).clamp(0.0, 1.0);
            let (f, u) = at(z, &predict(z, z_in, &u_in, &prev));
            points.push((z, f));
            note_better(f, &u, &mut better);
            if f >= target {
                outside = Some((z, f));
                break;
            }
            prev = Some((z_in, u_in));
            (z_in, u_in, f_in) = (z, u, f);
            if z <= 0.0 || z >= 1.0 {
                break;
            }
            step *= 2.0;
        }
        let Some((mut z_out, mut _f_out)) = outside else {
            return Bound { u: z_in, closed: false, better, points, evaluations };
        };
        // Bisect, each re-fit started from the nearest inside point.
        // To 0.1 % of the crossing's distance from the best value, however
        // wide the search range.
        while (z_out - z_in).abs() > (1e-3 * (z_out - best[j]).abs()).max(1e-12) && tries < MAX_PROFILE_POINTS {
            tries += 1;
            let mid = 0.5 * (z_in + z_out);
            let (f, u) = at(mid, &predict(mid, z_in, &u_in, &prev));
            points.push((mid, f));
            note_better(f, &u, &mut better);
            if f < target {
                prev = Some((z_in, u_in));
                (z_in, u_in, f_in) = (mid, u, f);
            } else {
                (z_out, _f_out) = (mid, f);
            }
        }
        // The outside point was re-fitted from farther away; confirm it from
        // the nearest inside point, else go on stepping from there.
        tries += 1;
        let (f, u) = at(z_out, &predict(z_out, z_in, &u_in, &prev));
        note_better(f, &u, &mut better);
        if f >= target {
            break (z_out, f);
        }
        // Points beyond were re-fitted from too far away: forget them.
        points.retain(|(z, _)| dir * (z - z_in) <= 0.0);
        points.push((z_out, f));
        if tries >= MAX_PROFILE_POINTS {
            // Out of re-fits before a confirmed crossing: not closed.
            return Bound { u: z_out, closed: false, better, points, evaluations };
        }
        prev = Some((z_in, u_in));
        (z_in, u_in, f_in) = (z_out, u, f);
        step = first;
    };
    let w = if f_out > f_in { ((target - f_in) / (f_out - f_in)).clamp(0.0, 1.0) } else { 0.5 };
    points.sort_by(|a, b| a.0.total_cmp(&b.0));
    Bound { u: z_in + w * (z_out - z_in), closed: true, better, points, evaluations }
}

/// A direction in parameter space along which the data hardly constrain
/// the fit.
#[derive(Debug, Clone, PartialEq)]
pub struct Weak {
    /// Eigenvalue of JᵀJ (squared singular value of J).
    pub eigenvalue: f64,
    /// 1.96/√eigenvalue: the linearised 95 % half-width along the direction,
    /// in units of the search range (∞ for a zero eigenvalue).
    pub half_width: f64,
    /// Unit vector in the scaled parameters.
    pub direction: Vec<f64>,
}

/// The directions of JᵀJ's eigenvectors whose linearised 95 % half-width
/// exceeds `limit` (in units of the search range): combinations of the
/// parameters that the data do not fix. Eigenvalues below 1e-10 of the
/// largest count as zero.
pub fn weak_combinations(jac: &DMatrix<f64>, limit: f64) -> Vec<Weak> {
    let a = jac.transpose() * jac;
    let eig = SymmetricEigen::new(a);
    let top = eig.eigenvalues.iter().copied().fold(0.0, f64::max);
    let mut out: Vec<Weak> = (0..eig.eigenvalues.len())
        .filter_map(|k| {
            let e = eig.eigenvalues[k];
            let half = if e <= 1e-10 * top { f64::INFINITY } else { Z95 / e.sqrt() };
            (half > limit).then(|| {
                let v = eig.eigenvectors.column(k);
                // A sign convention: the largest component positive.
                let big = v.iter().copied().fold(0.0f64, |m, x| if x.abs() > m.abs() { x } else { m });
                let s = if big < 0.0 { -1.0 } else { 1.0 };
                Weak { eigenvalue: e.max(0.0), half_width: half, direction: v.iter().map(|x| s * x).collect() }
            })
        })
        .collect();
    out.sort_by(|a, b| b.half_width.total_cmp(&a.half_width));
    out
}

/// (JᵀJ)⁻¹, or None when it is singular: an eigenvalue at or below 1e-12 of
/// the largest (a parameter or combination the residuals do not feel, whose
/// rounding-level slopes would give meaningless variances and correlations).
pub fn covariance(jac: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    let a = jac.transpose() * jac;
    let eig = SymmetricEigen::new(a.clone()).eigenvalues;
    let top = eig.iter().copied().fold(0.0f64, f64::max);
    if !(top > 0.0) || eig.iter().any(|&e| e <= 1e-12 * top) {
        return None;
    }
    let inv = a.try_inverse()?;
    (inv.iter().all(|v| v.is_finite()) && (0..inv.nrows()).all(|k| inv[(k, k)] >= 0.0)).then_some(inv)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Straight line y = a + b x through five points with unit σ, the
    /// parameters mapped from [−10, 10]: LM lands on the normal-equation
    /// solution (any regression text), and the profile bound of b is the
    /// exact b̂ ± 1.96·SE(b), SE from (XᵀX)⁻¹ (a linear model: profile and
    /// curvature intervals coincide; Bates & Watts 1988, Nonlinear Regression
    /// Analysis and Its Applications, §1.1, from memory).
    #[test]
    fn a_linear_model_gets_the_exact_interval() {
        let xs = [0.0, 1.0, 2.0, 3.0, 4.0];
        let ys = [1.1, 2.9, 5.2, 6.8, 9.1];
        let p = |u: f64| -10.0 + 20.0 * u;
        let res = |u: &[f64]| Some(xs.iter().zip(&ys).map(|(x, y)| p(u[0]) + p(u[1]) * x - y).collect::<Vec<f64>>());
        let h = stair_steps(&res, &[0.5, 0.5], 5, &[1e-12; 5], false).unwrap();
        let fit = polish(&res, &[0.5, 0.5], &[0, 1], &h, false);
        assert!(fit.converged, "{fit:?}");
        // Normal equations: b = Sxy/Sxx, a = ȳ − b x̄.
        let (mx, my) = (2.0, ys.iter().sum::<f64>() / 5.0);
        let sxx: f64 = xs.iter().map(|x| (x - mx).powi(2)).sum();
        let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum();
        let (b, a) = (sxy / sxx, my - sxy / sxx * mx);
        assert!((p(fit.u[0]) - a).abs() < 1e-7 && (p(fit.u[1]) - b).abs() < 1e-7, "{fit:?}");
        let se_b = (1.0 / sxx).sqrt();
        for dir in [-1.0, 1.0] {
            let bound = profile_bound(&res, &fit.u, fit.value, 1, dir, &h, 0.01);
            assert!(bound.closed);
            let want = b + dir * Z95 * se_b;
            assert!((p(bound.u) - want).abs() < 1e-3, "{} vs {want}", p(bound.u));
        }
        // The same with a search range 10,000 times wider than the interval
        // (a trial found such intervals 9× too narrow): the bound is still
        // within 0.1 % of the half-width, whatever the first step.
        let q = |u: f64| -1e4 + 2e4 * u;
        let wide = |u: &[f64]| Some(xs.iter().zip(&ys).map(|(x, y)| q(u[0]) + q(u[1]) * x - y).collect::<Vec<f64>>());
        let hw = stair_steps(&wide, &[0.5, 0.5], 5, &[1e-12; 5], false).unwrap();
        let fw = polish(&wide, &[0.5, 0.5], &[0, 1], &hw, false);
        for (dir, first) in [(-1.0, 0.02), (1.0, 1e-7)] {
            let bound = profile_bound(&wide, &fw.u, fw.value, 1, dir, &hw, first);
            let want = b + dir * Z95 * se_b;
            assert!(bound.closed && (q(bound.u) - want).abs() < 1e-3 * Z95 * se_b, "{} vs {want}", q(bound.u));
        }
    }

    /// r = (p₁/p₂ − 2, …): only the ratio matters, so JᵀJ has one zero
    /// eigenvalue with eigenvector ∝ (p₁, p₂) in the ln-scaled coordinates.
    #[test]
    fn an_exact_trade_off_is_one_weak_combination() {
        // u ∈ [0,1] ↦ ln p on [ln 0.5, ln 2] for both.
        let lp = |u: f64| (0.5f64).ln() + u * 4f64.ln();
        let res = |u: &[f64]| {
            let ratio = (lp(u[0]) - lp(u[1])).exp();
            Some(vec![10.0 * (ratio - 1.2), 10.0 * (ratio - 1.2) * 0.5])
        };
        let u = [0.6, 0.6 - 1.2f64.ln() / 4f64.ln()];
        let h = vec![1e-4; 2];
        let jac = regression_slopes(&res, &u, 2, &h, false).unwrap();
        let weak = weak_combinations(&jac, 1.0);
        assert_eq!(weak.len(), 1, "{weak:?}");
        let d = &weak[0].direction;
        assert!((d[0] - d[1]).abs() < 1e-6 && d[0] > 0.7, "{d:?}");
    }
}
