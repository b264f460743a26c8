//! Integrating a nucleus's isolated dynamics: the Dormand–Prince 5(4) pair
//! with step control (Dormand & Prince 1980, J. Comput. Appl. Math. 6:19;
//! Hairer, Nørsett & Wanner, Solving ODEs I, §II.5), until the state settles
//! on a stable fixed point or on a limit cycle.

use super::fixed::FixedPoint;
use super::system::System;

/// Where a state ends up under the isolated dynamics.
#[derive(Debug, Clone, PartialEq)]
pub enum Fate {
    /// Reaches the stable fixed point with this index (into the list given).
    Point(usize),
    /// Settles on a limit cycle with this period, min.
    Cycle {
        /// Period, min.
        period_min: f64,
        /// Peak-to-peak amplitude of the first coordinate, a.u.
        amplitude: f64,
    },
    /// Neither within the time allowed.
    Unresolved,
}

// Butcher tableau of the pair (autonomous systems: the nodes c_i are not needed).
const A: [[f64; 6]; 7] = [
    [0.0; 6],
    [1.0 / 5.0, 0.0, 0.0, 0.0, 0.0, 0.0],
    [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
    [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
    [19372.0 / 6561.0, -25360.0 / 2187.0, 64448.0 / 6561.0, -212.0 / 729.0, 0.0, 0.0],
    [9017.0 / 3168.0, -355.0 / 33.0, 46732.0 / 5247.0, 49.0 / 176.0, -5103.0 / 18656.0, 0.0],
    [35.0 / 384.0, 0.0, 500.0 / 1113.0, 125.0 / 192.0, -2187.0 / 6784.0, 11.0 / 84.0],
];
/// 5th-order weights (= last row of A; first same as last).
const B5: [f64; 7] = [35.0 / 384.0, 0.0, 500.0 / 1113.0, 125.0 / 192.0, -2187.0 / 6784.0, 11.0 / 84.0, 0.0];
/// 4th-order weights of the embedded pair.
const B4: [f64; 7] =
    [5179.0 / 57600.0, 0.0, 7571.0 / 16695.0, 393.0 / 640.0, -92097.0 / 339200.0, 187.0 / 2100.0, 1.0 / 40.0];

/// An adaptive integrator for one autonomous system.
pub struct Integrator<'a> {
    sys: &'a dyn System,
    /// Relative and absolute tolerance.
    pub tol: f64,
    /// Largest step, min.
    pub max_step: f64,
    k: [Vec<f64>; 7],
    y: Vec<f64>,
    err: Vec<f64>,
}

impl<'a> Integrator<'a> {
    /// A new integrator with tolerance `tol` and largest step `max_step` (min).
    pub fn new(sys: &'a dyn System, tol: f64, max_step: f64) -> Self {
        let n = sys.dim();
        Integrator { sys, tol, max_step, k: std::array::from_fn(|_| vec![0.0; n]), y: vec![0.0; n], err: vec![0.0; n] }
    }

    /// The rates at the start and at the end of the last accepted step
    /// (the first and the seventh stage: the pair is "first same as last").
    pub fn end_slopes(&self) -> (&[f64], &[f64]) {
        (&self.k[0], &self.k[6])
    }

    /// Advances `x` by one accepted step from a trial step `h`; returns the step
    /// taken and the next trial step. Negative `h` integrates backwards.
    pub fn step(&mut self, x: &mut [f64], h: f64) -> (f64, f64) {
        let n = x.len();
        let mut h = h;
        loop {
            self.sys.rates(x, &mut self.k[0]);
            for s in 1..7 {
                for i in 0..n {
                    self.y[i] = x[i] + h * (0..s).map(|j| A[s][j] * self.k[j][i]).sum::<f64>();
                }
                self.sys.rates(&self.y, &mut self.k[s]);
            }
            // 5th-order solution into `err` (reused as a buffer), error from the 4th-order difference.
            let mut e = 0.0f64;
            for i in 0..n {
                let diff: f64 = h * (0..7).map(|j| (B5[j] - B4[j]) * self.k[j][i]).sum::<f64>();
                let x5 = x[i] + h * (0..7).map(|j| B5[j] * self.k[j][i]).sum::<f64>();
                self.err[i] = x5;
                e = e.max(diff.abs() / (self.tol + self.tol * x[i].abs().max(x5.abs())));
            }
            let give_up = !e.is_finite() && h.abs() < 1e-12;
            if e <= 1.0 || give_up {
                // On giving up the state turns non-finite and the caller stops.
                x.copy_from_slice(&self.err);
                let factor = if e > 0.0 && e.is_finite() { (0.9 * e.powf(-0.2)).clamp(0.2, 5.0) } else { 5.0 };
                return (h, (h * factor).abs().min(self.max_step) * h.signum());
            }
            h *= if e.is_finite() { (0.9 * e.powf(-0.2)).clamp(0.1, 0.9) } else { 0.1 };
        }
    }
}

/// How far the time allowed for a fate grows beyond its first horizon.
pub const HORIZON_GROWTH: f64 = 64.0;

/// [`fate_with`] at tolerance 1e-8.
pub fn fate(sys: &dyn System, x0: &[f64], points: &[FixedPoint], radius: f64, horizon: f64) -> Fate {
    fate_with(sys, x0, points, radius, horizon, 1e-8)
}

/// One accepted step of the first coordinate: its ends, values and slopes.
#[derive(Clone, Copy)]
struct Step {
    t0: f64,
    t1: f64,
    x0: f64,
    x1: f64,
    f0: f64,
    f1: f64,
}

impl Step {
    /// The cubic Hermite interpolant through both ends (values and slopes),
    /// at time t: third order, and exact at the step's ends.
    fn at(&self, t: f64) -> f64 {
        let h = self.t1 - self.t0;
        let s = (t - self.t0) / h;
        let (s2, s3) = (s * s, s * s * s);
        (2.0 * s3 - 3.0 * s2 + 1.0) * self.x0
            + (s3 - 2.0 * s2 + s) * h * self.f0
            + (-2.0 * s3 + 3.0 * s2) * self.x1
            + (s3 - s2) * h * self.f1
    }
    /// The time the first coordinate rises through `level` in this step, if it does.
    fn rises_through(&self, level: f64) -> Option<f64> {
        if !(self.x0 < level && self.x1 >= level) {
            return None;
        }
        let (mut a, mut b) = (self.t0, self.t1);
        for _ in 0..80 {
            let mid = 0.5 * (a + b);
            if self.at(mid) < level { a = mid } else { b = mid }
        }
        Some(0.5 * (a + b))
    }
    /// The extremes of the first coordinate over this step: at its ends and
    /// where the interpolant's slope (a quadratic) vanishes inside it.
    fn extremes(&self) -> (f64, f64) {
        let h = self.t1 - self.t0;
        // d/ds of the Hermite cubic: a s² + b s + c.
        let (dx, m0, m1) = (self.x1 - self.x0, h * self.f0, h * self.f1);
        let a = 3.0 * (m0 + m1 - 2.0 * dx);
        let b = 2.0 * (3.0 * dx - 2.0 * m0 - m1);
        let c = m0;
        let (mut lo, mut hi) = (self.x0.min(self.x1), self.x0.max(self.x1));
        let mut visit = |s: f64| {
            if s > 0.0 && s < 1.0 {
                let v = self.at(self.t0 + s * h);
                lo = lo.min(v);
                hi = hi.max(v);
            }
        };
        if a.abs() > 1e-300 {
            let disc = b * b - 4.0 * a * c;
            if disc >= 0.0 {
                let r = disc.sqrt();
                visit((-b + r) / (2.0 * a));
                visit((-b - r) / (2.0 * a));
            }
        } else if b.abs() > 1e-300 {
            visit(-c / b);
        }
        (lo, hi)
    }
}

/// Accepted steps allowed for one fate before it is called unresolved.
pub const MAX_STEPS: usize = 2_000_000;

/// Integrates the isolated dynamics from `x0` (Dormand–Prince at relative
/// and absolute tolerance `tol`) and says where they end:
/// - within `radius` (max-norm) of a stable point of `points`, once the
///   state also moves slower than `radius` per unit time;
/// - or on a limit cycle, from upward crossings of the first coordinate
///   through the middle of its range over the second half of the time so
///   far: three successive periods equal to 1e-3 relative, and amplitudes
///   (peak to peak per cycle) that are not dying away. The crossings are
///   located on each step's cubic Hermite interpolant (event location on
///   the dense output), and the run goes on until two successive periods
///   agree to 10·`tol` relative and the amplitude has settled (at most 200
///   more cycles), so the period is as accurate as the integration. An
///   oscillation whose amplitude shrinks geometrically towards zero (a
///   stable focus, however slowly it decays) is not a cycle: the run goes on;
/// - unresolved when neither happens within `horizon` min, doubled while
///   neither is seen, up to [`HORIZON_GROWTH`] × `horizon`, or within
///   [`MAX_STEPS`] steps.
pub fn fate_with(sys: &dyn System, x0: &[f64], points: &[FixedPoint], radius: f64, horizon: f64, tol: f64) -> Fate {
    let n = sys.dim();
    let mut x = x0.to_vec();
    let mut rates = vec![0.0; n];
    let mut integ = Integrator::new(sys, tol, horizon / 2000.0);
    let (mut t, mut h) = (0.0, horizon * 1e-6);
    let near = |x: &[f64], p: &FixedPoint| x.iter().zip(&p.x).all(|(a, b)| (a - b).abs() <= radius);
    let mut steps: Vec<Step> = Vec::new();
    let mut taken_steps = 0usize;
    let mut t_end = horizon;
    loop {
        while t < t_end {
            let start = x[0];
            let (taken, next) = integ.step(&mut x, h.min(t_end - t));
            let (f0, f1) = (integ.end_slopes().0[0], integ.end_slopes().1[0]);
            steps.push(Step { t0: t, t1: t + taken, x0: start, x1: x[0], f0, f1 });
            t += taken;
            h = next;
            taken_steps += 1;
            if let Some(k) = points.iter().position(|p| p.kind.is_stable() && near(&x, p)) {
                sys.rates(&x, &mut rates);
                if rates.iter().all(|r| r.abs() <= radius) {
                    return Fate::Point(k);
                }
            }
            if !x.iter().all(|v| v.is_finite()) || taken_steps > MAX_STEPS {
                return Fate::Unresolved;
            }
        }
        steps.retain(|s| s.t0 >= 0.5 * t_end);
        if let Some((level, amplitude)) = cycle_level(&steps) {
            // Keep going until the period and the amplitude stop changing.
            let mut crossings: Vec<f64> = steps.iter().filter_map(|s| s.rises_through(level)).collect();
            let mut amplitudes = cycle_amplitudes(&steps, &crossings);
            let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
            let mut periods = 0;
            let last_period = crossings[crossings.len() - 1] - crossings[crossings.len() - 2];
            let mut settled = None;
            while periods < 200 && t - crossings[crossings.len() - 1] < 10.0 * last_period {
                let start = x[0];
                let (taken, next) = integ.step(&mut x, h);
                let (f0, f1) = (integ.end_slopes().0[0], integ.end_slopes().1[0]);
                let step = Step { t0: t, t1: t + taken, x0: start, x1: x[0], f0, f1 };
                t += taken;
                h = next;
                taken_steps += 1;
                if !x.iter().all(|v| v.is_finite()) || taken_steps > MAX_STEPS {
                    return Fate::Unresolved;
                }
                let (a, b) = step.extremes();
                (lo, hi) = (lo.min(a), hi.max(b));
                if let Some(c) = step.rises_through(level) {
                    crossings.push(c);
                    amplitudes.push(hi - lo);
                    (lo, hi) = (f64::INFINITY, f64::NEG_INFINITY);
                    periods += 1;
                    let k = crossings.len();
                    settled = amplitude_settled(&amplitudes);
                    if settled == Some(false) {
                        break;
                    }
                    if k >= 3 && settled == Some(true) {
                        let (p1, p2) = (crossings[k - 1] - crossings[k - 2], crossings[k - 2] - crossings[k - 3]);
                        if (p1 - p2).abs() <= 10.0 * tol * p1 {
                            return Fate::Cycle { period_min: p1, amplitude: amplitudes[amplitudes.len() - 1] };
                        }
                    }
                }
            }
            if settled != Some(false) && t - crossings[crossings.len() - 1] < 10.0 * last_period {
                let k = crossings.len();
                let amplitude = amplitudes.last().copied().unwrap_or(amplitude);
                return Fate::Cycle { period_min: crossings[k - 1] - crossings[k - 2], amplitude };
            }
            // Dying away (or stopped): an ordinary run towards a point again.
            steps.clear();
            t_end = t;
        }
        if t_end >= HORIZON_GROWTH * horizon {
            return Fate::Unresolved;
        }
        t_end *= 2.0;
    }
}

/// Peak-to-peak range of the first coordinate over each cycle between
/// successive crossings (times, ascending) of `steps`.
fn cycle_amplitudes(steps: &[Step], crossings: &[f64]) -> Vec<f64> {
    crossings
        .windows(2)
        .map(|w| {
            let (lo, hi) = steps
                .iter()
                .filter(|s| s.t1 > w[0] && s.t0 < w[1])
                .map(Step::extremes)
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), (a, b)| (l.min(a), h.max(b)));
            hi - lo
        })
        .collect()
}

/// Whether per-cycle amplitudes `a` (oldest first) have settled on a cycle
/// (Some(true)), are dying away towards a point (Some(false)), or cannot
/// tell yet (None). From the last three: when they change geometrically
/// (ratio r of successive changes in (0, 1)), Aitken's extrapolation
/// a∞ = a₁ + d₁·r/(1 − r) gives their limit (Aitken 1926, Proc. R. Soc.
/// Edinb. 46:289); a limit below 5 % of the last amplitude is a decay to a
/// point; a last change below 1e-6 relative (after one below 1e-5) is a
/// settled cycle.
fn amplitude_settled(a: &[f64]) -> Option<bool> {
    let k = a.len();
    if k < 3 {
        return None;
    }
    let (a1, a2, a3) = (a[k - 1], a[k - 2], a[k - 3]);
    let (d1, d2) = (a1 - a2, a2 - a3);
    if d1.abs() <= 1e-6 * a1 && d2.abs() <= 1e-5 * a1 {
        return Some(true);
    }
    if d1 < 0.0 && d2 < 0.0 {
        let r = d1 / d2;
        if r > 0.0 && r < 1.0 && a1 + d1 * r / (1.0 - r) < 0.05 * a1 {
            return Some(false);
        }
    }
    None
}

/// The middle of the first coordinate's range over `steps` and the range,
/// when its upward crossings there show an oscillation (at least four, the
/// last three periods equal to 1e-3 relative) that is not dying away.
fn cycle_level(steps: &[Step]) -> Option<(f64, f64)> {
    let (lo, hi) = steps.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), s| (l.min(s.x1), h.max(s.x1)));
    if !(hi - lo > 1e-9 * (1.0 + hi.abs())) {
        return None;
    }
    let mid = 0.5 * (lo + hi);
    let crossings: Vec<f64> = steps.iter().filter_map(|s| s.rises_through(mid)).collect();
    if crossings.len() < 4 {
        return None;
    }
    let periods: Vec<f64> = crossings.windows(2).map(|w| w[1] - w[0]).collect();
    let last = &periods[periods.len() - 3..];
    let mean = last.iter().sum::<f64>() / 3.0;
    let regular = last.iter().all(|p| (p - mean).abs() <= 1e-3 * mean);
    (regular && amplitude_settled(&cycle_amplitudes(steps, &crossings)) != Some(false)).then_some((mid, hi - lo))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    struct Decay;
    impl System for Decay {
        fn dim(&self) -> usize {
            1
        }
        fn rates(&self, u: &[f64], out: &mut [f64]) {
            out[0] = -u[0];
        }
        fn jacobian(&self, _: &[f64], jac: &mut [f64]) {
            jac[0] = -1.0;
        }
    }

    /// Oscillator x'' = −x: x = cos t.
    struct Spring;
    impl System for Spring {
        fn dim(&self) -> usize {
            2
        }
        fn rates(&self, u: &[f64], out: &mut [f64]) {
            out[0] = u[1];
            out[1] = -u[0];
        }
        fn jacobian(&self, _: &[f64], jac: &mut [f64]) {
            jac.copy_from_slice(&[0.0, 1.0, -1.0, 0.0]);
        }
    }

    #[test]
    fn dormand_prince_integrates_exponential_and_spring() {
        let mut x = vec![1.0];
        let mut integ = Integrator::new(&Decay, 1e-10, 0.5);
        let (mut t, mut h): (f64, f64) = (0.0, 1e-3);
        while t < 5.0 {
            let (taken, next) = integ.step(&mut x, h.min(5.0 - t));
            t += taken;
            h = next;
        }
        assert_relative_eq!(x[0], (-5.0f64).exp(), max_relative = 1e-7);
        let mut y = vec![1.0, 0.0];
        let mut integ = Integrator::new(&Spring, 1e-10, 0.5);
        let (mut t, mut h): (f64, f64) = (0.0, 1e-3);
        while t < 10.0 {
            let (taken, next) = integ.step(&mut y, h.min(10.0 - t));
            t += taken;
            h = next;
        }
        assert_relative_eq!(y[0], 10.0f64.cos(), epsilon = 1e-7);
    }

    #[test]
    fn spring_is_a_cycle_of_period_two_pi() {
        match fate(&Spring, &[1.0, 0.0], &[], 1e-6, 200.0) {
            Fate::Cycle { period_min, amplitude } => {
                assert_relative_eq!(period_min, 2.0 * std::f64::consts::PI, max_relative = 1e-4);
                assert_relative_eq!(amplitude, 2.0, max_relative = 1e-3);
            }
            other => panic!("{other:?}"),
        }
    }

    /// Brusselator u' = A − (B+1)u + u²v, v' = Bu − u²v (Prigogine & Lefever
    /// 1968, J. Chem. Phys. 48:1695): fixed point (A, B/A), a Hopf
    /// bifurcation at B = 1 + A² (Strogatz, Nonlinear Dynamics and Chaos,
    /// 1994, §8.3).
    struct Bruss(f64);
    impl System for Bruss {
        fn dim(&self) -> usize {
            2
        }
        fn rates(&self, u: &[f64], out: &mut [f64]) {
            out[0] = 1.0 - (self.0 + 1.0) * u[0] + u[0] * u[0] * u[1];
            out[1] = self.0 * u[0] - u[0] * u[0] * u[1];
        }
        fn jacobian(&self, u: &[f64], jac: &mut [f64]) {
            jac.copy_from_slice(&[
                -(self.0 + 1.0) + 2.0 * u[0] * u[1],
                u[0] * u[0],
                self.0 - 2.0 * u[0] * u[1],
                -u[0] * u[0],
            ]);
        }
    }

    /// Just below the Hopf point (B = 1.99, A = 1) the fixed point is a stable
    /// focus with Re λ = (B − 1 − A²)/2 = −0.005 /min: the oscillation dies
    /// away by only 3 % per cycle. That is a point, not a cycle, and the
    /// answer comes back (no hang).
    #[test]
    fn a_slowly_decaying_focus_is_a_point_not_a_cycle() {
        let sys = Bruss(1.99);
        let p = crate::phase::fixed::fixed_point_at(&sys, vec![1.0, 1.99]);
        assert!(p.kind.is_stable());
        let fate = fate_with(&sys, &[0.90366682, 2.03346343], &[p], 1e-4, 200.0, 1e-8);
        assert_eq!(fate, Fate::Point(0));
        // Just above it (B = 2.1) the cycle is born and found.
        match fate_with(&Bruss(2.1), &[0.9, 2.0], &[], 1e-4, 200.0, 1e-8) {
            Fate::Cycle { period_min, .. } => {
                assert!((period_min - 2.0 * std::f64::consts::PI).abs() < 0.3, "{period_min}")
            }
            other => panic!("{other:?}"),
        }
    }
}
