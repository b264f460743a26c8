//! Variable-step SBDF2 (Wang & Ruuth 2008, J. Comput. Math. 26:838, eq. 2.4;
//! constant-step form: Ruuth 1995, J. Math. Biol. 34:148), with ω = kₙ/kₙ₋₁,
//! multiplied through by (1 + ω):
//!
//! ```text
//! (1+2ω) u¹ − k(1+ω) D∇²u¹ = (1+ω)² u⁰ − ω² u⁻¹ + k(1+ω) [(1+ω) f(u⁰) − ω f(u⁻¹)]
//! ```
//! For ω = 1 this is `3u¹ − 2kD∇²u¹ = 4u⁰ − u⁻¹ + 2k(2f⁰ − f⁻¹)`. The first
//! step, with no history, is IMEX Euler: `u¹ − kD∇²u¹ = u⁰ + k f(u⁰)`.
//! Diffusion is implicit (exact solve), reactions explicit.
//!
//! Its history: the state one and two steps back (u⁻¹, u⁻²), the rates one
//! step back (f⁻¹), the step before the last and how many states are held.

use nalgebra::Complex;
use ndarray::{Array2, Zip};
use rayon::prelude::*;

use super::StepError;
use super::scheme::{Accepted, History, Operators, TimeScheme};
use crate::kinetics::CHUNK;
use crate::simd::with_avx2;
use crate::tissue::Rhs;

/// `max |c·(r − (wn·u + wn1·u1 + wn2·u2))| / (atol + rtol·max(|u|, |r|))`
/// over equal-length slices, infinite if any term is not finite. Four
/// running maxima (max is exact, so the order of the lanes does not change
/// the result) let the loop vectorise.
fn error_max(r: &[f64], u: &[f64], u1: &[f64], u2: &[f64], w: [f64; 4], rtol: f64, atol: f64) -> f64 {
    with_avx2(
        #[inline(always)]
        || error_max_plain(r, u, u1, u2, w, rtol, atol),
    )
}

#[inline(always)]
fn error_max_plain(r: &[f64], u: &[f64], u1: &[f64], u2: &[f64], w: [f64; 4], rtol: f64, atol: f64) -> f64 {
    const LANES: usize = 4;
    let [c, wn, wn1, wn2] = w;
    let term = |r: f64, u: f64, u1: f64, u2: f64| {
        let e = c * (r - (wn * u + wn1 * u1 + wn2 * u2)) / (atol + rtol * u.abs().max(r.abs()));
        e.abs()
    };
    let (mut top, mut finite) = ([0.0f64; LANES], [true; LANES]);
    let n = r.len();
    let (u, u1, u2) = (&u[..n], &u1[..n], &u2[..n]);
    fn lanes(s: &[f64]) -> impl Iterator<Item = &[f64; LANES]> {
        s.chunks_exact(LANES).map(|c| <&[f64; LANES]>::try_from(c).expect("LANES values"))
    }
    for (((r, u), u1), u2) in lanes(r).zip(lanes(u)).zip(lanes(u1)).zip(lanes(u2)) {
        for l in 0..LANES {
            let e = term(r[l], u[l], u1[l], u2[l]);
            finite[l] &= e <= f64::MAX;
            top[l] = top[l].max(e);
        }
    }
    for i in n / LANES * LANES..n {
        let e = term(r[i], u[i], u1[i], u2[i]);
        finite[0] &= e <= f64::MAX;
        top[0] = top[0].max(e);
    }
    if finite.iter().all(|&t| t) { top.into_iter().fold(0.0, f64::max) } else { f64::INFINITY }
}

fn flat(a: &Array2<f64>) -> &[f64] {
    a.as_slice().expect("standard layout")
}

/// The SBDF2 scheme and its history; nothing is allocated per step.
pub struct Sbdf2 {
    /// The state one step back, u⁻¹ [gene, nucleus].
    u1: Array2<f64>,
    /// The state two steps back, u⁻².
    u2: Array2<f64>,
    /// Rates at u⁻¹, a.u./min.
    f1: Array2<f64>,
    /// Accepted states held: 1 = u; 2 = u, u⁻¹; 3 = u, u⁻¹, u⁻².
    held: usize,
    /// t(u⁻¹) − t(u⁻²), min (the last step, t(u) − t(u⁻¹), is [`Accepted::k`]).
    k2: f64,
    /// Every attempt is accepted (see [`TimeScheme::accept_every_step`]).
    in_place: bool,
}

impl TimeScheme for Sbdf2 {
    const KEY: &'static str = "sbdf2";
    const NAME: &'static str = "SBDF2";
    const ADVICE: &'static str = "second order, the default";
    const ORDER: u32 = 2;
    /// The error is estimated against a polynomial predictor (Milne's device), O(k³).
    const ESTIMATE_ORDER: u32 = 2;
    /// Variable-step BDF2 is zero-stable for ratios below 1 + √2
    /// (Grigorieff 1983, Numer. Math. 42:359); we allow 2.
    const MAX_GROWTH: f64 = 2.0;
    /// The root of `3ξ² − 4(1+z)ξ + (1+2z)` reaches ξ = −1 at z = kλ = −4/3
    /// (derived here, no source).
    const EXPLICIT_STABILITY: f64 = 4.0 / 3.0;
    /// The state one and two steps back, and the rates one step back.
    const ARRAYS_PER_GENE: u64 = 3;
    const HISTORY_NUMBERS: &'static [&'static str] = &["held_states", "step_before_last_min"];
    /// (The state two steps back is not used with fixed steps, which hold two states.)
    const HISTORY_ARRAYS: &'static [&'static str] = &["previous_state", "state_before_previous", "previous_rates"];

    /// The larger modulus of the roots ζ of `3ζ² − (4 + 4z)ζ + (1 + 2z) = 0`
    /// (the explicit part of SBDF2 on `y′ = λy`, z = kλ: Ascher, Ruuth &
    /// Wetton 1995, SIAM J. Numer. Anal. 32:797, the SBDF scheme); on the
    /// negative real axis stable up to z = −4/3.
    fn amplification(z: Complex<f64>) -> f64 {
        let one = Complex::new(1.0, 0.0);
        let b = (one + z) * 4.0;
        let c = (one + z * 2.0) * 3.0;
        let root = (b * b - c * 4.0).sqrt();
        ((b + root) / 6.0).norm().max(((b - root) / 6.0).norm())
    }

    fn new(now: &Accepted, _ops: &Operators) -> Sbdf2 {
        let dim = now.u.dim();
        Sbdf2 {
            u1: Array2::zeros(dim),
            u2: Array2::zeros(dim),
            f1: Array2::zeros(dim),
            held: 1,
            k2: 0.0,
            in_place: false,
        }
    }

    /// The trial is then built over the previous state's values, and only
    /// two states are held, so a step streams through four arrays of the
    /// state's size instead of six: at 10⁵ nuclei and more this decides how
    /// much stays in cache. Results are bit-identical.
    fn accept_every_step(&mut self) {
        self.in_place = true;
        self.held = self.held.min(2);
    }

    /// The first step (one state held) is IMEX Euler; later ones SBDF2 with
    /// ω = k/k₁ (see the module doc). With [`Self::accept_every_step`] the
    /// previous state is consumed: the trial must be accepted.
    fn attempt(&mut self, k: f64, now: &Accepted, ops: &mut Operators, trial: &mut Array2<f64>) {
        let parallel = ops.reactions.parallel;
        if self.held == 1 {
            Zip::from(&mut *trial).and(&now.u).and(&now.f).for_each(|r, &u, &f| *r = u + k * f);
            ops.diffusion.solve(trial, 1.0, k, parallel);
        } else {
            let w = k / now.k;
            if self.in_place {
                std::mem::swap(trial, &mut self.u1);
            }
            let rhs = Rhs {
                u: flat(&now.u),
                u1: if self.in_place { None } else { Some(flat(&self.u1)) },
                f: flat(&now.f),
                f1: flat(&self.f1),
                c: [(1.0 + w) * (1.0 + w), w * w, k * (1.0 + w), 1.0 + w, w],
            };
            ops.diffusion.solve_rhs(trial, &rhs, 1.0 + 2.0 * w, k * (1.0 + w), parallel);
        }
    }

    /// `max |C·(u_trial − u_pred)| / (atol + rtol·max(|u|, |u_trial|))`, with
    /// `u_pred` the polynomial extrapolation of the held states (quadratic once
    /// three are held; linear before, C = 1; 0 with one). This is Milne's
    /// device (Hairer, Nørsett & Wanner, Solving ODEs I, 2nd ed., §III.7):
    /// with constant steps the quadratic predictor's error is k³u‴, implicit
    /// BDF2's is −(2/9)k³u‴ and the explicit (reaction) part of SBDF2's is
    /// (4/9)k³u‴ (Taylor expansion; checked numerically), so C = (4/9)/(1 −
    /// 4/9) = 0.8 for reaction-driven error and 2/11 for diffusion-driven
    /// error. We take C = 0.8, which over-estimates the latter: safe.
    fn error_norm(&self, k: f64, now: &Accepted, trial: &Array2<f64>, rtol: f64, atol: f64, parallel: bool) -> f64 {
        assert!(!self.in_place, "no error estimate after accept_every_step");
        let (c, wn, wn1, wn2) = if self.held >= 3 {
            let (k1, k2) = (now.k, self.k2);
            let wn = (k + k1) * (k + k1 + k2) / (k1 * (k1 + k2));
            let wn1 = -k * (k + k1 + k2) / (k1 * k2);
            let wn2 = k * (k + k1) / ((k1 + k2) * k2);
            (0.8, wn, wn1, wn2)
        } else if self.held == 2 {
            let w = k / now.k;
            (1.0, 1.0 + w, -w, 0.0)
        } else {
            return 0.0;
        };
        let (r, u, u1, u2) = (flat(trial), flat(&now.u), flat(&self.u1), flat(&self.u2));
        let part = |range: std::ops::Range<usize>| {
            error_max(
                &r[range.clone()],
                &u[range.clone()],
                &u1[range.clone()],
                &u2[range],
                [c, wn, wn1, wn2],
                rtol,
                atol,
            )
        };
        let n = r.len();
        const BLOCK: usize = CHUNK * 32;
        if parallel && n >= 2 * BLOCK {
            (0..n.div_ceil(BLOCK))
                .into_par_iter()
                .map(|b| part(b * BLOCK..((b + 1) * BLOCK).min(n)))
                .reduce(|| 0.0, f64::max)
        } else {
            part(0..n)
        }
    }

    /// u⁻² ← u⁻¹ ← u ← trial and f⁻¹ ← f, by swapping buffers.
    fn accept(
        &mut self,
        k: f64,
        t_new: f64,
        now: &mut Accepted,
        trial: &mut Array2<f64>,
        ops: &mut Operators,
    ) -> Result<(), StepError> {
        if !self.in_place {
            std::mem::swap(&mut self.u2, &mut self.u1);
        }
        std::mem::swap(&mut self.u1, &mut now.u);
        std::mem::swap(&mut self.f1, &mut now.f);
        self.k2 = now.k;
        self.held = (self.held + 1).min(if self.in_place { 2 } else { 3 });
        now.take(trial, k, t_new, &mut ops.reactions)
    }

    fn held(&self) -> usize {
        self.held
    }

    /// The next step is IMEX Euler again.
    fn forget_history(&mut self) {
        self.held = 1;
    }

    fn save(&self) -> History {
        History {
            numbers: vec![self.held as f64, self.k2],
            arrays: vec![self.u1.clone(), self.u2.clone(), self.f1.clone()],
        }
    }

    fn restore(&mut self, history: &History, _now: &Accepted, _ops: &Operators) {
        self.held = (history.numbers[0] as usize).clamp(1, 3);
        self.k2 = history.numbers[1];
        self.u1.assign(&history.arrays[0]);
        self.u2.assign(&history.arrays[1]);
        self.f1.assign(&history.arrays[2]);
    }
}
