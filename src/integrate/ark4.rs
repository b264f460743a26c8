//! Fourth-order additive Runge–Kutta: ARK4(3)6L\[2\]SA (Kennedy & Carpenter
//! 2003, Appl. Numer. Math. 44:139, Table 5 of the published coefficients),
//! diffusion through its ESDIRK tableau (implicit, L-stable, γ = 1/4),
//! reactions through its explicit tableau. For stage i = 2…6 at `t + cᵢk`:
//!
//! ```text
//! (I − γk D∇²) Yᵢ = u + k Σ_{j<i} (aᴱᵢⱼ fᴱⱼ + aᴵᵢⱼ fᴵⱼ),   fᴱᵢ = f(Yᵢ, m(t + cᵢk)),  fᴵᵢ = D∇²Yᵢ
//! u¹ = u + k Σᵢ bᵢ (fᴱᵢ + fᴵᵢ),     error estimate  e = k Σᵢ (bᵢ − b̂ᵢ)(fᴱᵢ + fᴵᵢ)
//! ```
//! with Y₁ = u, so fᴱ₁ and fᴵ₁ = D∇²u are carried from the last accepted
//! step. Each stage's `fᴵᵢ` is read off its own solve as `(Yᵢ − rhsᵢ)/(γk)`,
//! which is exact for the linear implicit part; only `D∇²u` at an accepted
//! state is applied explicitly. Every stage solves with the same `γk`, so a
//! row's tridiagonal factorisation is made once per step size.
//!
//! A one-step scheme: it has no history. `D∇²u` at the accepted state is
//! computed again from the state (after a restart from a checkpoint too).

use nalgebra::Complex;
use ndarray::Array2;

use super::StepError;
use super::reactions::Reactions;
use super::scheme::{Accepted, History, Operators, TimeScheme};
use crate::simd::with_avx2;
use crate::tissue::Diffusion;

/// Stages.
const S: usize = 6;
/// Diagonal of the implicit tableau.
pub const GAMMA: f64 = 0.25;
/// Explicit tableau aᴱᵢⱼ (strictly lower triangular).
pub const AE: [[f64; S]; S] = [
    [0.0; S],
    [0.5, 0.0, 0.0, 0.0, 0.0, 0.0],
    [13861.0 / 62500.0, 6889.0 / 62500.0, 0.0, 0.0, 0.0, 0.0],
    [
        -116923316275.0 / 2393684061468.0,
        -2731218467317.0 / 15368042101831.0,
        9408046702089.0 / 11113171139209.0,
        0.0,
        0.0,
        0.0,
    ],
    [
        -451086348788.0 / 2902428689909.0,
        -2682348792572.0 / 7519795681897.0,
        12662868775082.0 / 11960479115383.0,
        3355817975965.0 / 11060851509271.0,
        0.0,
        0.0,
    ],
    [
        647845179188.0 / 3216320057751.0,
        73281519250.0 / 8382639484533.0,
        552539513391.0 / 3454668386233.0,
        3354512671639.0 / 8306763924573.0,
        4040.0 / 17871.0,
        0.0,
    ],
];
/// Implicit tableau aᴵᵢⱼ (lower triangular, aᴵᵢᵢ = γ from the second stage on).
pub const AI: [[f64; S]; S] = [
    [0.0; S],
    [0.25, 0.25, 0.0, 0.0, 0.0, 0.0],
    [8611.0 / 62500.0, -1743.0 / 31250.0, 0.25, 0.0, 0.0, 0.0],
    [5012029.0 / 34652500.0, -654441.0 / 2922500.0, 174375.0 / 388108.0, 0.25, 0.0, 0.0],
    [
        15267082809.0 / 155376265600.0,
        -71443401.0 / 120774400.0,
        730878875.0 / 902184768.0,
        2285395.0 / 8070912.0,
        0.25,
        0.0,
    ],
    B,
];
/// Weights of the fourth-order solution (both tableaux).
pub const B: [f64; S] = [82889.0 / 524892.0, 0.0, 15625.0 / 83664.0, 69875.0 / 102672.0, -2260.0 / 8211.0, 0.25];
/// Weights of the embedded third-order solution.
pub const B_HAT: [f64; S] = [
    4586570599.0 / 29645900160.0,
    0.0,
    178811875.0 / 945068544.0,
    814220225.0 / 1159782912.0,
    -3700637.0 / 11593932.0,
    61727.0 / 225920.0,
];
/// Stage times as fractions of the step.
pub const C: [f64; S] = [0.0, 0.5, 83.0 / 250.0, 31.0 / 50.0, 17.0 / 20.0, 1.0];

/// The ARK4(3)6L\[2\]SA scheme's working arrays, allocated once.
pub struct Ark4 {
    /// `D∇²u` at the accepted state, a.u./min.
    lu: Array2<f64>,
    /// fᴱ and fᴵ of stages 2…6.
    fe: Vec<Array2<f64>>,
    fi: Vec<Array2<f64>>,
    /// The current stage's levels.
    y: Array2<f64>,
    /// Embedded estimate of the trial's local error, a.u.
    err: Array2<f64>,
    /// Why the last trial could not be completed (a stage blew up).
    failed: Option<StepError>,
    /// Whether attempts estimate their error (not with fixed steps).
    estimate: bool,
}

impl TimeScheme for Ark4 {
    const KEY: &'static str = "ark4";
    const NAME: &'static str = "ARK4(3)6L[2]SA";
    const ADVICE: &'static str =
        "fourth order: fewer, costlier steps, best with error-controlled steps at tight tolerances";
    const ORDER: u32 = 4;
    /// The embedded third-order solution.
    const ESTIMATE_ORDER: u32 = 3;
    /// The usual cap of embedded Runge–Kutta codes (Hairer, Nørsett &
    /// Wanner, Solving ODEs I, §II.4, "facmax" between 1.5 and 5): a one-step
    /// scheme has no ratio limit of its own.
    const MAX_GROWTH: f64 = 5.0;
    /// Stable on the negative real axis for `k|λ| ≤ 4.23` (largest x with
    /// |R(−x′)| ≤ 1 on (0, x], R the explicit tableau's stability function;
    /// computed here by tests/reference/ark4_tableau.py, no published value).
    const EXPLICIT_STABILITY: f64 = 4.23;
    /// Two per stage after the first (fᴱ, fᴵ), D∇²u, the stage levels and the
    /// error estimate.
    const ARRAYS_PER_GENE: u64 = 13;
    const HISTORY_NUMBERS: &'static [&'static str] = &[];
    const HISTORY_ARRAYS: &'static [&'static str] = &[];

    /// `|R(z)|`, `R(z) = 1 + z bᵀ(I − zA)⁻¹𝟙` of the explicit tableau (Kennedy
    /// & Carpenter 2003, Appl. Numer. Math. 44:139; Hairer & Wanner, Solving
    /// ODEs II, §IV.2); edge −4.2345 on the real axis (computed by
    /// tests/reference/ark4_tableau.py).
    fn amplification(z: Complex<f64>) -> f64 {
        let mut g = [Complex::new(0.0, 0.0); S];
        for i in 0..S {
            let sum: Complex<f64> = (0..i).map(|j| g[j] * AE[i][j]).sum();
            g[i] = Complex::new(1.0, 0.0) + z * sum;
        }
        let bg: Complex<f64> = (0..S).map(|i| g[i] * B[i]).sum();
        (Complex::new(1.0, 0.0) + z * bg).norm()
    }

    fn new(now: &Accepted, ops: &Operators) -> Ark4 {
        let zeros = || Array2::zeros(now.u.dim());
        let mut ark = Ark4 {
            lu: zeros(),
            fe: (1..S).map(|_| zeros()).collect(),
            fi: (1..S).map(|_| zeros()).collect(),
            y: zeros(),
            err: zeros(),
            failed: None,
            estimate: true,
        };
        ark.apply_diffusion(&ops.diffusion, &ops.reactions, &now.u);
        ark
    }

    /// Attempts then skip the error estimate.
    fn accept_every_step(&mut self) {
        self.estimate = false;
    }

    /// One step of `k` from `now`; the error estimate is kept for
    /// [`TimeScheme::error_norm`]. A stage that blows up is kept in `failed`
    /// (the trial is then not usable: its error is infinite and accepting it
    /// fails).
    fn attempt(&mut self, k: f64, now: &Accepted, ops: &mut Operators, trial: &mut Array2<f64>) {
        self.failed = None;
        let gk = GAMMA * k;
        let parallel = ops.reactions.parallel;
        for i in 1..S {
            // Right-hand side of stage i, kept in fᴵᵢ's slot until the solve.
            let (done_e, rest_e) = self.fe.split_at_mut(i - 1);
            let (done_i, rest_i) = self.fi.split_at_mut(i - 1);
            let mut terms = [(0.0, &[][..]); 2 * S];
            terms[0] = (k * AE[i][0], flat(&now.f));
            terms[1] = (k * AI[i][0], flat(&self.lu));
            for j in 1..i {
                terms[2 * j] = (k * AE[i][j], flat(&done_e[j - 1]));
                terms[2 * j + 1] = (k * AI[i][j], flat(&done_i[j - 1]));
            }
            let rhs = &mut rest_i[0];
            combine(flat_mut(rhs), Some(flat(&now.u)), &terms[..2 * i], parallel);
            self.y.assign(rhs);
            ops.diffusion.solve(&mut self.y, 1.0, gk, parallel);
            ops.reactions.clamp(&mut self.y);
            let y = flat(&self.y);
            let inv_gk = 1.0 / gk;
            by_blocks(flat_mut(rhs), parallel, |at, r| {
                r.iter_mut().zip(&y[at..]).for_each(|(r, &y)| *r = (y - *r) * inv_gk);
            });
            for (g, _) in ops.reactions.clamps() {
                rhs.row_mut(g).fill(0.0);
            }
            if let Err(e) = ops.reactions.eval(now.t + C[i] * k, &self.y, &mut rest_e[0]) {
                self.failed = Some(e);
                return;
            }
        }
        // u¹ and the error estimate from every stage's fᴱ and fᴵ.
        let stage = |m: usize| match (m / 2, m % 2) {
            (0, 0) => flat(&now.f),
            (0, _) => flat(&self.lu),
            (i, 0) => flat(&self.fe[i - 1]),
            (i, _) => flat(&self.fi[i - 1]),
        };
        let terms: [(f64, &[f64]); 2 * S] = std::array::from_fn(|m| (k * B[m / 2], stage(m)));
        combine(flat_mut(trial), Some(flat(&now.u)), &terms, parallel);
        if !self.estimate {
            return;
        }
        let terms: [(f64, &[f64]); 2 * S] = std::array::from_fn(|m| (k * (B[m / 2] - B_HAT[m / 2]), stage(m)));
        combine(flat_mut(&mut self.err), None, &terms, parallel);
        // Filter the estimate through the stage solve, so stiff diffusion
        // modes, which the L-stable main scheme damps but the embedded one
        // does not, do not shrink the step (the device of Hairer & Wanner,
        // Solving ODEs II, 2nd ed., §IV.8, for Radau IIA; from memory). On
        // the spots demo it cut the steps from 2121 to 1665.
        ops.diffusion.solve(&mut self.err, 1.0, gk, ops.reactions.parallel);
    }

    /// `max |e| / (atol + rtol·max(|u|, |u¹|))` for the last trial; infinite
    /// if a stage blew up or any value is not finite.
    fn error_norm(&self, _k: f64, now: &Accepted, trial: &Array2<f64>, rtol: f64, atol: f64, _parallel: bool) -> f64 {
        assert!(self.estimate, "no error estimate with fixed steps");
        if self.failed.is_some() {
            return f64::INFINITY;
        }
        let (mut top, mut finite) = (0.0f64, true);
        for ((&e, &u), &r) in flat(&self.err).iter().zip(flat(&now.u)).zip(flat(trial)) {
            let v = (e / (atol + rtol * u.abs().max(r.abs()))).abs();
            finite &= v <= f64::MAX;
            top = top.max(v);
        }
        if finite { top } else { f64::INFINITY }
    }

    fn accept(
        &mut self,
        k: f64,
        t_new: f64,
        now: &mut Accepted,
        trial: &mut Array2<f64>,
        ops: &mut Operators,
    ) -> Result<(), StepError> {
        if let Some(e) = self.failed.take() {
            return Err(e);
        }
        now.take(trial, k, t_new, &mut ops.reactions)?;
        self.apply_diffusion(&ops.diffusion, &ops.reactions, &now.u);
        Ok(())
    }

    fn held(&self) -> usize {
        1
    }

    fn save(&self) -> History {
        History::default()
    }

    fn restore(&mut self, _history: &History, now: &Accepted, ops: &Operators) {
        self.apply_diffusion(&ops.diffusion, &ops.reactions, &now.u);
    }
}

impl Ark4 {
    /// `lu ← D∇²u` (zero for held genes).
    fn apply_diffusion(&mut self, diffusion: &Diffusion, reactions: &Reactions, u: &Array2<f64>) {
        diffusion.apply(u, &mut self.lu);
        for (g, _) in reactions.clamps() {
            self.lu.row_mut(g).fill(0.0);
        }
    }
}

fn flat(a: &Array2<f64>) -> &[f64] {
    a.as_slice().expect("standard layout")
}

fn flat_mut(a: &mut Array2<f64>) -> &mut [f64] {
    a.as_slice_mut().expect("standard layout")
}

/// Values per block of the combinations below, when split between threads.
const BLOCK: usize = 8192;

/// Runs `body(offset, block)` over blocks of `out`, on several threads when
/// asked and worth it (each value's arithmetic is the same either way).
fn by_blocks(out: &mut [f64], parallel: bool, body: impl Fn(usize, &mut [f64]) + Sync) {
    if parallel && out.len() >= 2 * BLOCK {
        use rayon::prelude::*;
        out.par_chunks_mut(BLOCK).enumerate().for_each(|(b, o)| body(b * BLOCK, o));
    } else {
        body(0, out);
    }
}

/// `out = base + Σ aⱼ·xⱼ` (no base: zero), adding the terms in order.
/// Eight values at a time are held in registers while every term is added,
/// so `out` is written once.
fn combine(out: &mut [f64], base: Option<&[f64]>, terms: &[(f64, &[f64])], parallel: bool) {
    const LANES: usize = 8;
    let block = |at: usize, out: &mut [f64]| {
        let lanes = out.len() / LANES * LANES;
        for (c, out) in out[..lanes].chunks_exact_mut(LANES).enumerate() {
            let i = at + c * LANES;
            let mut acc = [0.0; LANES];
            if let Some(base) = base {
                acc.copy_from_slice(&base[i..i + LANES]);
            }
            for &(a, x) in terms {
                for (acc, x) in acc.iter_mut().zip(&x[i..i + LANES]) {
                    *acc += a * x;
                }
            }
            out.copy_from_slice(&acc);
        }
        for (l, o) in out.iter_mut().enumerate().skip(lanes) {
            let i = at + l;
            *o = terms.iter().fold(base.map_or(0.0, |b| b[i]), |acc, &(a, x)| acc + a * x[i]);
        }
    };
    by_blocks(out, parallel, |at, out| {
        with_avx2(
            #[inline(always)]
            || block(at, out),
        )
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dot(a: &[f64; S], b: &[f64; S]) -> f64 {
        a.iter().zip(b).map(|(a, b)| a * b).sum()
    }
    fn times(a: &[[f64; S]; S], v: &[f64; S]) -> [f64; S] {
        std::array::from_fn(|i| dot(&a[i], v))
    }
    fn pow(k: i32) -> [f64; S] {
        C.map(|c| c.powi(k))
    }

    /// The transcribed coefficients satisfy the order conditions of an
    /// additive Runge–Kutta method of order 4 (every coupled tree: both
    /// tableaux share b and c, so the conditions are those of each tableau
    /// plus `b·A₁A₂c = 1/24` for every pairing; Kennedy & Carpenter 2003,
    /// Appl. Numer. Math. 44:139, §2; the single-tableau conditions: Butcher,
    /// Numerical Methods for ODEs, 2nd ed., §31), and the embedded weights
    /// those of order 3, to 1e-14.
    #[test]
    fn tableaux_meet_the_order_conditions() {
        let close = |got: f64, want: f64, what: &str| assert!((got - want).abs() < 1e-14, "{what}: {got} vs {want}");
        for (name, a) in [("explicit", &AE), ("implicit", &AI)] {
            for i in 0..S {
                close(a[i].iter().sum(), C[i], &format!("{name} row {i} sums to c"));
            }
        }
        for (name, b, order) in [("b", &B, 4), ("b̂", &B_HAT, 3)] {
            for k in 0..order {
                close(dot(b, &pow(k)), 1.0 / (k + 1) as f64, &format!("{name}·c^{k}"));
            }
            for (n1, a1) in [("E", &AE), ("I", &AI)] {
                close(dot(b, &times(a1, &C)), 1.0 / 6.0, &format!("{name}·A{n1}c"));
                if order < 4 {
                    continue;
                }
                let cac: [f64; S] = std::array::from_fn(|i| C[i] * times(a1, &C)[i]);
                close(dot(b, &cac), 1.0 / 8.0, &format!("{name}·(c∘A{n1}c)"));
                close(dot(b, &times(a1, &pow(2))), 1.0 / 12.0, &format!("{name}·A{n1}c²"));
                for (n2, a2) in [("E", &AE), ("I", &AI)] {
                    close(dot(b, &times(a1, &times(a2, &C))), 1.0 / 24.0, &format!("{name}·A{n1}A{n2}c"));
                }
            }
        }
        assert!(AI[1..].iter().enumerate().all(|(i, row)| row[i + 1] == GAMMA), "ESDIRK diagonal");
        assert!(AE.iter().enumerate().all(|(i, row)| row[i..].iter().all(|&v| v == 0.0)), "explicit");
    }

    /// Stability function of the explicit tableau on the real axis,
    /// `R(z) = 1 + z bᵀ(I − zA)⁻¹𝟙` (Hairer & Wanner, Solving ODEs II, §IV.2).
    fn explicit_r(z: f64) -> f64 {
        let mut g = [0.0; S];
        for i in 0..S {
            g[i] = 1.0 + z * (0..i).map(|j| AE[i][j] * g[j]).sum::<f64>();
        }
        1.0 + z * dot(&B, &g)
    }

    /// [`Ark4::EXPLICIT_STABILITY`]: |R(−x)| ≤ 1 for every x up to it, and not
    /// much beyond (tests/reference/ark4_tableau.py finds the edge at 4.2345).
    #[test]
    fn explicit_stability_edge() {
        for i in 1..=4230 {
            let x = i as f64 * Ark4::EXPLICIT_STABILITY / 4230.0;
            assert!(explicit_r(-x).abs() <= 1.0 + 1e-12, "|R(-{x})| = {}", explicit_r(-x).abs());
        }
        assert!(explicit_r(-4.24).abs() > 1.0);
    }
}
