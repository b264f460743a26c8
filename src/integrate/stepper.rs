//! One IMEX step at a time, on structure-of-arrays state `u[[gene, nucleus]]`.
//!
//! Variable-step SBDF2 (Wang & Ruuth 2008, J. Comput. Math. 26:838, eq. 2.4;
//! constant-step form: Ruuth 1995, J. Math. Biol. 34:148), with ω = kₙ/kₙ₋₁,
//! multiplied through by (1 + ω):
//!
//! ```text
//! (1+2ω) u¹ − k(1+ω) D∇²u¹ = (1+ω)² u⁰ − ω² u⁻¹ + k(1+ω) [(1+ω) f(u⁰) − ω f(u⁻¹)]
//! ```
//! For ω = 1 this is `3u¹ − 2kD∇²u¹ = 4u⁰ − u⁻¹ + 2k(2f⁰ − f⁻¹)`. The first
//! step, with no history, is IMEX Euler: `u¹ − kD∇²u¹ = u⁰ + k f(u⁰)`.
//! Diffusion is implicit (exact solve), reactions explicit. With
//! [`Scheme::Ark4`] the same stepper takes ARK4(3)6L\[2\]SA steps instead
//! (see [`super::ark`]).

use ndarray::{Array2, Zip};
use rayon::prelude::*;

use super::Scheme;
use super::StepError;
use super::ark4::Ark;
use super::reactions::Reactions;
use crate::kinetics::{CHUNK, Kinetics};
use crate::simd::with_avx2;
use crate::tissue::{Diffusion, Rhs, Tissue};

/// Below this many values, work is done on one thread.
const PARALLEL_MIN: usize = 8192;

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

/// The integrator's state and working arrays; nothing is allocated per step.
pub struct Stepper<'a> {
    reactions: Reactions<'a>,
    diffusion: Diffusion,
    /// Time of `u`, min.
    t: f64,
    u: Array2<f64>,
    u1: Array2<f64>,
    u2: Array2<f64>,
    f: Array2<f64>,
    f1: Array2<f64>,
    trial: Array2<f64>,
    /// Accepted states held: 1 = u; 2 = u, u1; 3 = u, u1, u2.
    history: usize,
    /// t(u) − t(u1), min.
    k1: f64,
    /// t(u1) − t(u2), min.
    k2: f64,
    /// The fourth-order scheme's working arrays, when it is the scheme.
    ark: Option<Box<Ark>>,
    /// Every attempt is accepted and no error is estimated (see [`Self::accept_every_step`]).
    accepts_every_step: bool,
    /// The scheme.
    scheme: Scheme,
}

/// Changes to the plain reaction–diffusion system made by mutants.
#[derive(Debug, Clone, Default)]
pub struct Forcing {
    /// Genes held at a level (their rates are zero and their level is reset after each step).
    pub clamps: Vec<Option<f64>>,
    /// Extra production [gene, nucleus], a.u./min, added to the rates.
    pub source: Option<Array2<f64>>,
}

impl<'a> Stepper<'a> {
    /// Starts from `u0` at `t0` (min); evaluates the first rates.
    ///
    /// # Errors
    /// [`StepError::NonFinite`] if the initial rates are not finite.
    pub fn new(
        kinetics: &'a dyn Kinetics,
        tissue: &'a Tissue,
        diffusion: &[f64],
        gene_names: Vec<String>,
        u0: Array2<f64>,
        t0: f64,
        parallel: bool,
        forcing: Forcing,
    ) -> Result<Stepper<'a>, StepError> {
        let dim = u0.dim();
        let parallel = parallel && dim.0 * dim.1 >= PARALLEL_MIN;
        let mut s = Stepper {
            reactions: Reactions::new(kinetics, tissue, gene_names, parallel, t0, forcing),
            diffusion: Diffusion::new(&tissue.grid, diffusion),
            t: t0,
            u: u0,
            u1: Array2::zeros(dim),
            u2: Array2::zeros(dim),
            f: Array2::zeros(dim),
            f1: Array2::zeros(dim),
            trial: Array2::zeros(dim),
            history: 1,
            k1: 0.0,
            k2: 0.0,
            ark: None,
            accepts_every_step: false,
            scheme: Scheme::Sbdf2,
        };
        s.reactions.clamp(&mut s.u);
        s.reactions.eval(s.t, &s.u, &mut s.f)?;
        Ok(s)
    }

    /// Steps with `scheme` from now on (SBDF2 unless told).
    pub fn with_scheme(mut self, scheme: Scheme) -> Stepper<'a> {
        self.scheme = scheme;
        self.ark = match scheme {
            Scheme::Sbdf2 => None,
            Scheme::Ark4 => {
                let mut ark = Box::new(Ark::new(self.u.dim()));
                ark.apply_diffusion(&self.diffusion, &self.reactions, &self.u);
                Some(ark)
            }
        };
        self
    }

    /// Exponent of the step-size controller ([`Scheme::error_exponent`]).
    pub fn error_exponent(&self) -> f64 {
        self.scheme.error_exponent()
    }

    /// Largest growth of the step from one step to the next ([`Scheme::max_growth`]).
    pub fn max_growth(&self) -> f64 {
        self.scheme.max_growth()
    }

    /// Current time, min.
    pub fn time(&self) -> f64 {
        self.t
    }

    /// Current state [gene, nucleus].
    pub fn state(&self) -> &Array2<f64> {
        &self.u
    }

    /// Rates f(u, m(t)) at the current state [gene, nucleus], a.u./min.
    pub fn rates(&self) -> &Array2<f64> {
        &self.f
    }

    /// Last accepted step, min (0 before the first).
    pub fn last_step(&self) -> f64 {
        self.k1
    }

    /// Number of accepted states held (1 before the first step).
    pub fn history(&self) -> usize {
        self.history
    }

    /// A copy of everything the next steps depend on (for checkpoints).
    pub fn save(&self) -> super::checkpoint::StepperState {
        super::checkpoint::StepperState {
            t: self.t,
            history: self.history,
            k1: self.k1,
            k2: self.k2,
            u: [self.u.clone(), self.u1.clone(), self.u2.clone()],
            f: [self.f.clone(), self.ark.as_ref().map_or_else(|| self.f1.clone(), |a| a.lu.clone())],
        }
    }

    /// Puts back a saved state (same model, so same shapes).
    ///
    /// # Panics
    /// If the shapes differ from this stepper's.
    pub fn restore(&mut self, s: &super::checkpoint::StepperState) {
        assert_eq!(s.u[0].dim(), self.u.dim(), "checkpoint shape");
        self.t = s.t;
        self.history = s.history;
        self.k1 = s.k1;
        self.k2 = s.k2;
        self.u.assign(&s.u[0]);
        self.u1.assign(&s.u[1]);
        self.u2.assign(&s.u[2]);
        self.f.assign(&s.f[0]);
        match &mut self.ark {
            Some(ark) => ark.lu.assign(&s.f[1]),
            None => self.f1.assign(&s.f[1]),
        }
    }

    /// From now on every attempt is accepted and [`Self::error_norm`] is not
    /// called (fixed steps). The trial is then built over the previous
    /// state's values, and only two states are held, so a step streams
    /// through four arrays of the state's size instead of six: at 10⁵
    /// nuclei and more this decides how much stays in cache. Results are
    /// bit-identical. ARK steps then skip their error estimate.
    pub fn accept_every_step(&mut self) {
        self.accepts_every_step = true;
        if let Some(ark) = &mut self.ark {
            ark.estimate = false;
        }
        self.history = self.history.min(2);
    }

    /// Computes a trial state at `t + k` into the trial buffer (history
    /// unchanged, unless [`Self::accept_every_step`] was called: then the
    /// previous state is consumed and the trial must be accepted).
    pub fn attempt(&mut self, k: f64) {
        let parallel = self.reactions.parallel;
        if let Some(ark) = &mut self.ark {
            ark.attempt(k, self.t, &self.u, &self.f, &mut self.trial, &mut self.diffusion, &mut self.reactions);
        } else if self.history == 1 {
            Zip::from(&mut self.trial).and(&self.u).and(&self.f).for_each(|r, &u, &f| *r = u + k * f);
            self.diffusion.solve(&mut self.trial, 1.0, k, parallel);
        } else {
            let w = k / self.k1;
            if self.accepts_every_step {
                std::mem::swap(&mut self.trial, &mut self.u1);
            }
            let rhs = Rhs {
                u: self.u.as_slice().expect("standard layout"),
                u1: if self.accepts_every_step { None } else { Some(self.u1.as_slice().expect("standard layout")) },
                f: self.f.as_slice().expect("standard layout"),
                f1: self.f1.as_slice().expect("standard layout"),
                c: [(1.0 + w) * (1.0 + w), w * w, k * (1.0 + w), 1.0 + w, w],
            };
            self.diffusion.solve_rhs(&mut self.trial, &rhs, 1.0 + 2.0 * w, k * (1.0 + w), parallel);
        }
        self.reactions.clamp(&mut self.trial);
    }

    /// Weighted max-norm of the local error of the trial step of size `k`:
    /// `max |C·(u_trial − u_pred)| / (atol + rtol·max(|u|, |u_trial|))`, with
    /// `u_pred` the polynomial extrapolation of the held states (quadratic once
    /// three are held; linear before, C = 1). This is Milne's device (Hairer,
    /// Nørsett & Wanner, Solving ODEs I, 2nd ed., §III.7): with constant steps
    /// the quadratic predictor's error is k³u‴, implicit BDF2's is −(2/9)k³u‴
    /// and the explicit (reaction) part of SBDF2's is (4/9)k³u‴ (Taylor
    /// expansion; checked numerically), so C = (4/9)/(1 − 4/9) = 0.8 for
    /// reaction-driven error and 2/11 for diffusion-driven error. We take
    /// C = 0.8, which over-estimates the latter: safe.
    /// Infinite if the trial is not finite.
    ///
    /// With the ARK scheme: its embedded estimate (`ark::Ark::error_norm`).
    pub fn error_norm(&self, k: f64, rtol: f64, atol: f64) -> f64 {
        assert!(!self.accepts_every_step, "no error estimate after accept_every_step");
        if let Some(ark) = &self.ark {
            return ark.error_norm(&self.u, &self.trial, rtol, atol);
        }
        let (c, wn, wn1, wn2) = if self.history >= 3 {
            let (k1, k2) = (self.k1, self.k2);
            let wn = (k + k1) * (k + k1 + k2) / (k1 * (k1 + k2));
            let wn1 = -k * (k + k1 + k2) / (k1 * k2);
            let wn2 = k * (k + k1) / ((k1 + k2) * k2);
            (0.8, wn, wn1, wn2)
        } else if self.history == 2 {
            let w = k / self.k1;
            (1.0, 1.0 + w, -w, 0.0)
        } else {
            return 0.0;
        };
        fn flat(a: &Array2<f64>) -> &[f64] {
            a.as_slice().expect("standard layout")
        }
        let (r, u, u1, u2) = (flat(&self.trial), flat(&self.u), flat(&self.u1), flat(&self.u2));
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
        if self.reactions.parallel && n >= 2 * BLOCK {
            (0..n.div_ceil(BLOCK))
                .into_par_iter()
                .map(|b| part(b * BLOCK..((b + 1) * BLOCK).min(n)))
                .reduce(|| 0.0, f64::max)
        } else {
            part(0..n)
        }
    }

    /// Accepts the trial as the state at `t_new` (min), after a step of `k`;
    /// evaluates the rates there.
    ///
    /// # Errors
    /// [`StepError::NonFinite`] if the new state or its rates are NaN, infinite or blown up.
    pub fn accept(&mut self, k: f64, t_new: f64) -> Result<(), StepError> {
        if let Some(ark) = &mut self.ark {
            if let Some(e) = ark.failed.take() {
                return Err(e);
            }
            std::mem::swap(&mut self.u, &mut self.trial);
            self.k1 = k;
            self.t = t_new;
            self.reactions.eval(self.t, &self.u, &mut self.f)?;
            ark.apply_diffusion(&self.diffusion, &self.reactions, &self.u);
            return Ok(());
        }
        if !self.accepts_every_step {
            std::mem::swap(&mut self.u2, &mut self.u1);
        }
        std::mem::swap(&mut self.u1, &mut self.u);
        std::mem::swap(&mut self.u, &mut self.trial);
        std::mem::swap(&mut self.f1, &mut self.f);
        self.k2 = self.k1;
        self.k1 = k;
        self.history = (self.history + 1).min(if self.accepts_every_step { 2 } else { 3 });
        self.t = t_new;
        self.reactions.eval(self.t, &self.u, &mut self.f)
    }
}
