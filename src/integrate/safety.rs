//! Is a fixed step safe? The reactions are stepped explicitly, so a step k
//! is stable only while k·λ lies in the explicit scheme's stability region
//! for every eigenvalue λ of the reaction Jacobian ∂f/∂u of every nucleus —
//! along the whole trajectory, not only at the start (a sharpening boundary
//! or a switching nucleus can be much stiffer than the initial state).
//!
//! Each scheme's region (test equation y′ = λy taken explicitly, z = kλ) is
//! given by its amplification, [`super::TimeScheme::amplification`].
//!
//! A nucleus's mode counts as unstable when the scheme amplifies it per step
//! by more than the exact flow does (or by more than 1 for a decaying mode),
//! beyond a slack: 0.1 % per step, and no more than 5 % over the whole run
//! (so that a neutral oscillation, which any explicit scheme slowly grows,
//! does not drift by more than 5 % in amplitude; common practice, no source).

use nalgebra::{Complex, DMatrix};
use ndarray::Array2;

use super::Scheme;
use crate::kinetics::Kinetics;

/// Spurious growth per step tolerated at most (0.1 %).
pub const SLACK: f64 = 1e-3;
/// Spurious growth tolerated over a whole run (5 %).
pub const RUN_SLACK: f64 = 0.05;

/// The spurious growth factor tolerated per step of `k` min over a run of
/// `horizon` min: (1 + [`RUN_SLACK`])^(k/horizon), at most 1 + [`SLACK`]
/// (and exactly that for an unknown, infinite horizon).
pub fn slack(k: f64, horizon: f64) -> f64 {
    let per_run = if horizon.is_finite() && horizon > 0.0 { (k / horizon) * RUN_SLACK.ln_1p() } else { f64::INFINITY };
    per_run.min(SLACK.ln_1p()).exp()
}

/// True when step `k` is stable for the mode λ: the scheme amplifies it per
/// step by no more than the exact flow does (|e^{kλ}|, or 1 for a decaying
/// mode) times the [`slack`] for a run of `horizon` min. A mode on or near
/// the imaginary axis (an oscillator) is neutral in the exact flow, and an
/// explicit scheme that amplifies it grows the oscillation without bound.
pub fn stable(scheme: Scheme, lambda: Complex<f64>, k: f64, horizon: f64) -> bool {
    let exact = (lambda.re * k).exp().max(1.0);
    scheme.amplification(lambda * k) <= exact * slack(k, horizon)
}

/// The longest step that is stable for λ and for every shorter step: scanned
/// in 2 % increments of k·|λ| from 0, then bisected; infinite when no step
/// up to k·|λ| = 20 is unstable. `horizon`: the run's length, min.
pub fn stable_step(scheme: Scheme, lambda: Complex<f64>, horizon: f64) -> f64 {
    if lambda.norm() == 0.0 {
        return f64::INFINITY;
    }
    let unit = 1.0 / lambda.norm();
    let (mut good, mut k) = (0.0, 0.02 * unit);
    while k * lambda.norm() < 20.0 {
        if !stable(scheme, lambda, k, horizon) {
            let mut bad = k;
            for _ in 0..50 {
                let mid = 0.5 * (good + bad);
                if stable(scheme, lambda, mid, horizon) { good = mid } else { bad = mid }
            }
            return good;
        }
        good = k;
        k += 0.02 * unit;
    }
    f64::INFINITY
}

/// The largest ρ such that every z on the circle |z + ρ| = ρ (a disk in the
/// left half-plane touching 0) is [`stable`] for step `k` over a run of
/// `horizon` min, found by bisection (to 0.1 %) over 180 points of the circle; 0 if
/// none. The amplification is the largest root modulus of an algebraic
/// function of z, which is subharmonic, so by the maximum principle every z
/// inside the disk is stable as well (the bound there is the constant slack,
/// since Re z ≤ 0). A nucleus whose Gershgorin discs of k·∂f/∂u all lie
/// inside needs no eigenvalues ([`check`]).
pub fn safe_disk(scheme: Scheme, k: f64, horizon: f64) -> f64 {
    let circle_ok = |rho: f64| {
        (0..180).all(|a| {
            let th = (2.0 * a as f64 + 1.0).to_radians();
            let z = Complex::new(-rho + rho * th.cos(), rho * th.sin());
            stable(scheme, z / k, k, horizon)
        })
    };
    let (mut lo, mut hi) = (0.0, 8.0);
    if circle_ok(hi) {
        return hi;
    }
    while hi - lo > 1e-3 * hi {
        let mid = 0.5 * (lo + hi);
        if circle_ok(mid) { lo = mid } else { hi = mid }
    }
    lo
}

/// What makes a fixed step unsafe at a state.
#[derive(Debug, Clone, PartialEq)]
pub struct Unsafe {
    /// Nucleus.
    pub nucleus: usize,
    /// In words: the unstable mode, or the negative level.
    pub why: String,
    /// A step that would be stable for that nucleus, min (∞ when the cause
    /// is not a stability limit).
    pub stable_step: f64,
    /// True for a negative level (certain at once), false for an unstable
    /// mode (the run stops when two checks in a row find one).
    pub negative: bool,
}

/// Nuclei whose Jacobians one check examines at most: evenly spread over
/// the tissue, a different set at each check ([`picks`]).
pub const SAMPLE: usize = 256;
/// Circuits of more genes are not checked mode by mode (an eigenvalue
/// problem per nucleus would cost more than the run); only for negative levels.
pub const MAX_GENES_CHECKED: usize = 32;

/// Checks step `k` at state `u` [gene, nucleus] with inputs `m` [input,
/// nucleus]: every eigenvalue of the reaction Jacobian of the `nuclei` (see
/// [`picks`]) must be in the scheme's region (nuclei inside the safe disk
/// of radius `rho`, [`safe_disk`], need no eigenvalues) (held genes excluded), and no gene
/// that cannot go negative (`signed[g]` false) may fall below −1 % of its
/// largest level. Returns the first problem, the nucleus with the shortest
/// stable step first; `names` are the genes' names, for the message;
/// `horizon` the run's length, min.
#[allow(clippy::too_many_arguments)]
pub fn check(
    kinetics: &dyn Kinetics,
    scheme: Scheme,
    k: f64,
    horizon: f64,
    u: &Array2<f64>,
    m: &Array2<f64>,
    held: &[bool],
    signed: &[bool],
    names: &[String],
    nuclei: &[usize],
    rho: f64,
) -> Option<Unsafe> {
    let genes = u.nrows();
    for g in (0..genes).filter(|&g| !signed[g] && !held[g]) {
        let row = u.row(g);
        let top = row.iter().copied().fold(0.0f64, f64::max);
        if let Some((i, v)) = row.iter().enumerate().find(|(_, v)| **v < -0.01 * top.max(1e-12)) {
            return Some(Unsafe {
                nucleus: i,
                why: format!(
                    "gene `{}` went negative ({v:.3e}; its top is {top:.3e}), which its rate law cannot do",
                    names[g]
                ),
                stable_step: f64::INFINITY,
                negative: true,
            });
        }
    }
    if genes > MAX_GENES_CHECKED {
        return None;
    }
    let mut worst: Option<Unsafe> = None;
    each_mode(kinetics, u, m, held, nuclei.iter().copied(), Some((k, rho)), |i, lambda| {
        if stable(scheme, lambda, k, horizon) {
            return;
        }
        let step = stable_step(scheme, lambda, horizon);
        if worst.as_ref().is_none_or(|w| step < w.stable_step) {
            worst = Some(Unsafe {
                nucleus: i,
                why: describe(scheme, lambda, k, horizon),
                stable_step: step,
                negative: false,
            });
        }
    });
    worst
}

/// Calls `visit(nucleus, λ)` for every eigenvalue λ of the reaction
/// Jacobian of each of the `nuclei` of state `u` [gene, nucleus] with inputs
/// `m`; the rows of held genes are zeroed, and nuclei with a non-finite
/// Jacobian are skipped, and so are nuclei whose Gershgorin discs of k·J
/// lie inside the disk of `disk` = (k, ρ) ([`safe_disk`]). One and two genes take the closed form (the roots
/// of λ² − tr·λ + det), more genes nalgebra's Schur decomposition.
fn each_mode(
    kinetics: &dyn Kinetics,
    u: &Array2<f64>,
    m: &Array2<f64>,
    held: &[bool],
    nuclei: impl Iterator<Item = usize>,
    disk: Option<(f64, f64)>,
    mut visit: impl FnMut(usize, Complex<f64>),
) {
    let genes = u.nrows();
    let mut jac = vec![0.0; genes * genes];
    let (mut ui, mut mi) = (vec![0.0; genes], vec![0.0; m.nrows()]);
    for i in nuclei {
        ui.iter_mut().zip(u.column(i)).for_each(|(a, b)| *a = *b);
        mi.iter_mut().zip(m.column(i)).for_each(|(a, b)| *a = *b);
        kinetics.jacobian(&ui, &mi, &mut jac);
        for (g, h) in held.iter().enumerate() {
            if *h {
                jac[g * genes..(g + 1) * genes].fill(0.0);
            }
        }
        if jac.iter().any(|v| !v.is_finite()) {
            continue;
        }
        if let Some((k, rho)) = disk
            && (0..genes).all(|g| {
                let row = &jac[g * genes..(g + 1) * genes];
                let radius: f64 = row.iter().enumerate().filter(|(j, _)| *j != g).map(|(_, v)| v.abs()).sum();
                (k * row[g] + rho).abs() + k * radius <= rho
            })
        {
            continue;
        }
        match genes {
            1 => visit(i, Complex::new(jac[0], 0.0)),
            2 => {
                let (tr, det) = (jac[0] + jac[3], jac[0] * jac[3] - jac[1] * jac[2]);
                let root = Complex::new(0.25 * tr * tr - det, 0.0).sqrt();
                visit(i, Complex::new(0.5 * tr, 0.0) + root);
                visit(i, Complex::new(0.5 * tr, 0.0) - root);
            }
            _ => {
                let a = DMatrix::from_row_slice(genes, genes, &jac);
                for lambda in a.complex_eigenvalues().iter() {
                    visit(i, *lambda);
                }
            }
        }
    }
}

/// Nuclei a check adds beyond its evenly spread sample: those whose levels
/// change fastest relative to their size.
pub const FASTEST: usize = 16;

/// The nuclei a run's `round`-th step check examines: up to [`SAMPLE`]
/// evenly spread, the offset moving by one each round so that every nucleus
/// of the row or sheet is examined within ⌈nuclei / SAMPLE⌉ rounds; the
/// [`FASTEST`] nuclei by max over genes of |f| / (|u| + 10⁻³·top of the
/// gene), where an unstable mode shows first (rates `f` and state `u`,
/// [gene, nucleus]); and `also` (a nucleus flagged at the previous check).
/// `scores` is a reused buffer.
pub fn picks(
    u: &Array2<f64>,
    f: &Array2<f64>,
    round: usize,
    also: Option<usize>,
    scores: &mut Vec<(f64, usize)>,
) -> Vec<usize> {
    let n = u.ncols();
    let stride = n.div_ceil(SAMPLE).max(1);
    let mut out: Vec<usize> = ((round % stride)..n).step_by(stride).collect();
    if stride > 1 {
        scores.clear();
        scores.resize(n, (0.0, 0));
        for (i, s) in scores.iter_mut().enumerate() {
            s.1 = i;
        }
        for (ug, fg) in u.outer_iter().zip(f.outer_iter()) {
            let top = ug.iter().fold(0.0f64, |a, v| a.max(v.abs()));
            let floor = 1e-3 * top + 1e-300;
            for ((s, uv), fv) in scores.iter_mut().zip(ug).zip(fg) {
                let r = fv.abs() / (uv.abs() + floor);
                if r > s.0 || r.is_nan() {
                    s.0 = if r.is_nan() { f64::INFINITY } else { r };
                }
            }
        }
        let k = FASTEST.min(n);
        scores.select_nth_unstable_by(k - 1, |a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
        let mut fastest: Vec<usize> = scores[..k].iter().map(|s| s.1).collect();
        fastest.sort_unstable();
        out.extend(fastest.into_iter().filter(|i| i % stride != round % stride));
    }
    if let Some(a) = also.filter(|a| *a < n && !out.contains(a)) {
        out.push(a);
    }
    out
}

/// The unstable mode in words: its amplification per step and, when that is
/// close to 1, how far it drifts from the exact flow over the run.
fn describe(scheme: Scheme, lambda: Complex<f64>, k: f64, horizon: f64) -> String {
    let amp = scheme.amplification(lambda * k);
    let exact = (lambda.re * k).exp().max(1.0);
    let mut s =
        format!("its reactions have a mode λ = {:.3e}{:+.3e}i /min, which this step amplifies ", lambda.re, lambda.im);
    if amp < 1.01 && horizon.is_finite() {
        let drift = ((amp / exact).ln() * horizon / k).exp();
        s += &format!("{amp:.6}-fold each step (a spurious {drift:.3}-fold growth over the {horizon} min run)");
    } else {
        s += &format!("{amp:.3}-fold each step");
    }
    s
}

/// The shortest stable step over the (up to `sample`) nuclei of state `u`:
/// (step, nucleus), ∞ when nothing limits it, for a run of `horizon` min.
pub fn shortest_stable_step(
    kinetics: &dyn Kinetics,
    scheme: Scheme,
    horizon: f64,
    u: &Array2<f64>,
    m: &Array2<f64>,
    held: &[bool],
    sample: usize,
) -> (f64, usize) {
    let mut best = (f64::INFINITY, 0);
    let n = u.ncols();
    each_mode(kinetics, u, m, held, (0..n).step_by(n.div_ceil(sample).max(1)), None, |i, lambda| {
        let k = stable_step(scheme, lambda, horizon);
        if k < best.0 {
            best = (k, i);
        }
    });
    best
}

/// What a trial run found about fixed steps.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trial {
    /// The longest fixed step that stays stable along the trial, min (∞: no limit found).
    pub stable_step: f64,
    /// When that limit was met, min.
    pub at_min: f64,
    /// Where.
    pub nucleus: usize,
    /// How far the trial ran, min.
    pub until_min: f64,
    /// Steps it took.
    pub steps: usize,
}

/// Nuclei·genes up to which the trial covers the whole run; bigger models
/// run the first tenth of it.
pub const WHOLE_TRIAL: usize = 20_000;

/// Runs the model with loose error control (tolerance 1e-4) — over the whole
/// run when it is small (≤ [`WHOLE_TRIAL`] nuclei·genes), else over its first
/// tenth — and finds, at every accepted step, the longest fixed step the
/// reactions allow (256 nuclei sampled): what `check` reports, because the
/// Jacobian at the start can allow far longer steps than later states.
///
/// # Errors
/// [`super::StepError`] when the trial run itself fails.
pub fn trial(model: &crate::model::Model) -> Result<Trial, super::StepError> {
    use crate::model::Stepping;
    let mut m = model.clone();
    let size = m.grid.len() * m.genes.len();
    if size > WHOLE_TRIAL {
        let every = m.clock.snapshot_every_min;
        m.clock.until_min = ((0.1 * m.clock.until_min / every).ceil() * every).min(m.clock.until_min);
    }
    m.clock.stepping = Stepping::Adaptive { rtol: 1e-4, atol: 1e-4, max_step_min: m.clock.snapshot_every_min };
    let kinetics = crate::kinetics::build(&m);
    let tissue = crate::tissue::Tissue::new(&m);
    let held: Vec<bool> = m.clamps.iter().map(Option::is_some).collect();
    let mut found =
        Trial { stable_step: f64::INFINITY, at_min: 0.0, nucleus: 0, until_min: m.clock.until_min, steps: 0 };
    let scheme = m.clock.scheme;
    let horizon = model.clock.until_min;
    let stats = super::integrate_from(
        &m,
        kinetics.as_ref(),
        &tissue,
        true,
        None,
        |_, _| {},
        |stepper, _, _| {
            let u = stepper.state();
            let inputs = tissue.inputs_with_state(stepper.time(), u);
            let (k, i) = shortest_stable_step(kinetics.as_ref(), scheme, horizon, u, &inputs, &held, 256);
            if k < found.stable_step {
                found = Trial { stable_step: k, at_min: stepper.time(), nucleus: i, ..found };
            }
            true
        },
    )?;
    found.steps = stats.steps;
    Ok(found)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every scheme's region, from its amplification: on the negative real
    /// axis it ends at k|λ| = 4/3 for SBDF2 (the root of 3ξ² − 4(1+z)ξ +
    /// (1+2z) reaches −1 at z = −4/3; derived, no source) and at 4.2345 for
    /// ARK4(3)6L\[2\]SA's explicit tableau (tests/reference/ark4_tableau.py),
    /// at most 1 % above the scheme's stated edge ([`Scheme::explicit_stability`],
    /// a safe bound), and twice as far for λ half as large. A pure oscillation
    /// is neutral in the exact flow: SBDF2 amplifies it by 1 + O(k⁴) per step,
    /// so only short steps keep it bounded, and over a long run (drift within
    /// 5 %) shorter ones still; ARK4 damps it up to k|λ| = 4.0008 (the same
    /// script), long run or not.
    #[test]
    fn real_axis_edges() {
        let (minus_one, i) = (Complex::new(-1.0, 0.0), Complex::new(0.0, 1.0));
        let inf = f64::INFINITY;
        for scheme in Scheme::ALL {
            let edge = match scheme {
                Scheme::Sbdf2 => 4.0 / 3.0,
                Scheme::Ark4 => 4.2345,
            };
            assert!((stable_step(scheme, minus_one, inf) - edge).abs() < 2e-3, "{scheme:?}");
            assert!((stable_step(scheme, Complex::new(-0.5, 0.0), inf) - 2.0 * edge).abs() < 4e-3, "{scheme:?}");
            let stated = scheme.explicit_stability();
            assert!(stated <= edge && stated >= 0.99 * edge, "{scheme:?}: {stated} vs {edge}");
            let spin = stable_step(scheme, i, inf);
            let long = stable_step(scheme, i, 200.0);
            match scheme {
                Scheme::Sbdf2 => {
                    assert!(spin > 0.1 && spin < 0.25, "{spin}");
                    // Over a long run the drift must stay within 5 %: a shorter step.
                    assert!(long < spin, "{long} {spin}");
                    let k = 0.99 * long;
                    let drift = scheme.amplification(Complex::new(0.0, k)).powf(200.0 / k);
                    assert!(drift <= 1.05 + 1e-9 && drift > 1.03, "{drift}");
                    assert!(scheme.amplification(Complex::new(0.0, 0.5)) > 1.05);
                }
                Scheme::Ark4 => {
                    assert!(spin > 4.0 && spin < 4.05, "{spin}");
                    assert!(long > 4.0 && long <= spin, "{long} {spin}");
                    assert!(scheme.amplification(Complex::new(0.0, 3.9)) < 1.0);
                }
            }
        }
    }

    /// Every eigenvalue inside the safe disk is stable: random points of the
    /// disk, for every scheme and a long and a short run (common practice,
    /// no source).
    #[test]
    fn the_safe_disk_is_safe() {
        for scheme in Scheme::ALL {
            for (k, horizon) in [(0.05, 100.0), (0.5, 1e4), (0.1, f64::INFINITY)] {
                let rho = safe_disk(scheme, k, horizon);
                assert!(rho > 0.0, "{scheme:?} {k} {horizon}");
                for a in 0..200 {
                    let (r, th) = ((a as f64 * 0.618).fract(), a as f64 * 2.399);
                    let z = Complex::new(-rho, 0.0) + Complex::from_polar(rho * r.sqrt(), th);
                    assert!(stable(scheme, z / k, k, horizon), "{scheme:?} z = {z}");
                }
                // Just outside, on the real axis beyond the edge, is not.
                assert!(!stable(scheme, Complex::new(-5.0, 0.0) / k, k, horizon));
            }
        }
    }

    /// Near 0 a scheme of order p amplifies as the exact flow to O(zᵖ⁺¹)
    /// (Hairer & Wanner, Solving ODEs II, §IV.3, for the stability function;
    /// SBDF2's principal root likewise): with |z| ≤ 0.01, SBDF2 (p = 2) within
    /// 1e-5 and ARK4 (p = 4) within 1e-9 of |eᶻ|.
    #[test]
    fn amplification_matches_the_exponential_near_zero() {
        for scheme in Scheme::ALL {
            let tol = match scheme {
                Scheme::Sbdf2 => 1e-5,
                Scheme::Ark4 => 1e-9,
            };
            for z in [Complex::new(-0.01, 0.0), Complex::new(-0.005, 0.008), Complex::new(0.0, 0.01)] {
                assert!((scheme.amplification(z) - z.exp().norm()).abs() < tol, "{scheme:?} {z}");
            }
        }
    }
}
