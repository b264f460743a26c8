//! Checks against closed-form results.

use anlage::model::Scheme;
use anlage::reference;
use approx::assert_relative_eq;

use crate::common::{parse, run, with_scheme, with_tolerance};

/// A cosine mode `cos(θx·(ix+½))·cos(θy·(iy+½))` of an `nx × ny` grid with
/// spacing 1 µm, θ = πp/nx (sealed) or 2πp/nx (periodic), and diffusion `d`, µm²/min.
struct Mode {
    nx: usize,
    ny: usize,
    edges: &'static str,
    p: usize,
    q: usize,
    d: f64,
}

impl Mode {
    fn row(nx: usize, edges: &'static str, p: usize, d: f64) -> Mode {
        Mode { nx, ny: 1, edges, p, q: 0, d }
    }
}

/// Runs pure diffusion from `1 + ½·mode` with fixed steps `dt` to `t` (min)
/// with `scheme`, and returns the measured decay rate of the mode, 1/min.
fn measured_rate(m: &Mode, dt: f64, t: f64, scheme: Scheme) -> f64 {
    let (nx, ny) = (m.nx, m.ny);
    let period = if m.edges == "sealed" { std::f64::consts::PI } else { 2.0 * std::f64::consts::PI };
    let (tx, ty) = (period * m.p as f64 / nx as f64, period * m.q as f64 / ny as f64);
    let mode = |ix: usize, iy: usize| (tx * (ix as f64 + 0.5)).cos() * (ty * (iy as f64 + 0.5)).cos();
    let initial: Vec<f64> = (0..nx * ny).map(|k| 1.0 + 0.5 * mode(k % nx, k / nx)).collect();
    let dims: Vec<usize> = if ny > 1 { vec![nx, ny] } else { vec![nx] };
    let text = reference::pure_diffusion(&dims, m.edges, m.d, &initial, dt, t)
        .replace("[clock]", &format!("[clock]\nscheme = \"{}\"", scheme.key()));
    let fin = run(&parse(&text)).recording.final_state().row(0).to_vec();
    let norm: f64 = (0..nx * ny).map(|k| mode(k % nx, k / nx).powi(2)).sum();
    let amp = (0..nx * ny).map(|k| (fin[k] - 1.0) * mode(k % nx, k / nx)).sum::<f64>() / norm;
    -(amp / 0.5).ln() / t
}

/// Discrete Laplacian eigenvalue along one axis: (2 − 2 cos θ)/h², h = 1 µm.
fn lam(theta: f64) -> f64 {
    2.0 - 2.0 * theta.cos()
}

/// Relative tolerance on a mode's decay rate measured with steps of 0.01 min
/// over 10 min, from the scheme's time error (λΔt)ᵖ with λΔt ≤ 2e-3 here:
/// SBDF2 (p = 2) ≈ 1e-7 to 1e-6 (1.4e-6 measured on the row; checked to
/// 1e-5, as before the schemes were looped); ARK4 (p = 4) ≈ 1e-14, below the
/// rounding of the measured amplitude (≤ 1e-12 measured), checked to 1e-10.
fn rate_tolerance(scheme: Scheme) -> f64 {
    match scheme {
        Scheme::Sbdf2 => 1e-5,
        Scheme::Ark4 => 1e-10,
    }
}

/// A cosine mode of the sealed row decays at exactly D·(2 − 2cos kh)/h², k = πp/L,
/// with every scheme (tolerance: [`rate_tolerance`]).
/// Source: Crank (1975), The Mathematics of Diffusion, 2nd ed., ch. 4 (separation
/// of variables); the discrete eigenvalues: Strang (1999), SIAM Review 41:135.
#[test]
fn heat_mode_decay_row_crank_1975() {
    let (n, p, d) = (32, 3, 1.5);
    let want = d * lam(std::f64::consts::PI * p as f64 / n as f64);
    for scheme in Scheme::ALL {
        let got = measured_rate(&Mode::row(n, "sealed", p, d), 0.01, 10.0, scheme);
        assert_relative_eq!(got, want, max_relative = rate_tolerance(scheme));
    }
}

/// The same on a sealed sheet (DCT solve): rate D·(λ_p + λ_q), every scheme.
/// Source: Crank (1975), ch. 4 (product solutions in two dimensions).
#[test]
fn heat_mode_decay_sheet_crank_1975() {
    let (nx, ny, p, q, d) = (24, 16, 2, 1, 1.0);
    let want =
        d * (lam(std::f64::consts::PI * p as f64 / nx as f64) + lam(std::f64::consts::PI * q as f64 / ny as f64));
    for scheme in Scheme::ALL {
        let got = measured_rate(&Mode { nx, ny, edges: "sealed", p, q, d }, 0.01, 10.0, scheme);
        assert_relative_eq!(got, want, max_relative = rate_tolerance(scheme));
    }
}

/// Periodic row (Fourier solve): mode cos(2πp x/L) decays at D·(2 − 2cos(2πp/N))/h²,
/// every scheme. Source: Crank (1975), ch. 4.
#[test]
fn heat_mode_decay_periodic_row_crank_1975() {
    let (n, p, d) = (30, 2, 2.0);
    let want = d * lam(2.0 * std::f64::consts::PI * p as f64 / n as f64);
    for scheme in Scheme::ALL {
        let got = measured_rate(&Mode::row(n, "periodic", p, d), 0.01, 10.0, scheme);
        assert_relative_eq!(got, want, max_relative = rate_tolerance(scheme));
    }
}

/// On pure diffusion every scheme shows its order p ([`Scheme::order`]) in
/// time: the error of a mode's measured decay rate falls 2ᵖ-fold per halving
/// of the step (observed order within 5 % of p: [1.9, 2.1] for SBDF2, [3.8,
/// 4.2] for ARK4), on a sealed row (Thomas), a sealed sheet (DCT and sweeps)
/// and a periodic sheet (Fourier). Exact rates as above (Crank 1975, ch. 4);
/// SBDF2's order 2: Ruuth (1995), J. Math. Biol. 34:148; ARK4's order 4:
/// Kennedy & Carpenter (2003), Appl. Numer. Math. 44:139 (its diffusion is
/// its ESDIRK tableau alone). Steps: ARK4 2 and 1 min, with λ_max·Δt up to 16
/// on the sheets (the stiff modes are damped, L-stable, the measured one
/// converges); SBDF2 0.1 and 0.05 min (at 2 and 1 min it is not yet in its
/// asymptotic range: 2.7 seen on the row), where its error is still far
/// above rounding.
#[test]
fn heat_mode_decay_has_each_schemes_order_in_time() {
    let pi = std::f64::consts::PI;
    let cases = [
        (Mode::row(32, "sealed", 3, 1.5), 1.5 * lam(pi * 3.0 / 32.0)),
        (Mode { nx: 24, ny: 16, edges: "sealed", p: 2, q: 1, d: 1.0 }, lam(pi * 2.0 / 24.0) + lam(pi / 16.0)),
        (
            Mode { nx: 18, ny: 12, edges: "periodic", p: 2, q: 1, d: 0.5 },
            0.5 * (lam(2.0 * pi * 2.0 / 18.0) + lam(2.0 * pi / 12.0)),
        ),
    ];
    for scheme in Scheme::ALL {
        let steps = match scheme {
            Scheme::Sbdf2 => [0.1, 0.05],
            Scheme::Ark4 => [2.0, 1.0],
        };
        let p = scheme.order() as f64;
        for (mode, want) in &cases {
            let errors: Vec<f64> =
                steps.iter().map(|dt| (measured_rate(mode, *dt, 16.0, scheme) - want).abs() / want).collect();
            let order = (errors[0] / errors[1]).log2();
            eprintln!(
                "{scheme:?} {} {}x{}: relative errors {errors:?}, order {order:.3}",
                mode.edges, mode.nx, mode.ny
            );
            assert!((0.95 * p..=1.05 * p).contains(&order), "{scheme:?}: order {order:.3}, errors {errors:?}");
        }
    }
}

/// As h → 0 the discrete rate tends to the continuum rate D·k², with relative
/// error (kh)²/12 (Taylor expansion of 2 − 2cos kh), with every scheme (the
/// time error, below 1e-6 relative with steps of 0.01 min, is negligible
/// beside the 2 % checked). Source: Crank (1975), ch. 4 (continuum rate
/// D k²); the h² error term: textbook Taylor expansion.
#[test]
fn heat_mode_rate_tends_to_d_k_squared() {
    let (length, d) = (64.0, 1.0);
    let k = std::f64::consts::PI / length; // p = 1 on L = 64 µm
    let want = d * k * k;
    for scheme in Scheme::ALL {
        let mut errors = Vec::new();
        for n in [16usize, 64] {
            // spacing h = L/n: run on h = 1 and rescale D so that D/h² matches.
            let h = length / n as f64;
            let rate = measured_rate(&Mode::row(n, "sealed", 1, d / (h * h)), 0.01, 40.0 * h * h, scheme);
            errors.push((rate - want).abs() / want);
            assert_relative_eq!(errors.last().copied().unwrap(), (k * h).powi(2) / 12.0, max_relative = 0.02);
        }
        // Four times finer, sixteen times smaller error: second order in h.
        assert_relative_eq!(errors[0] / errors[1], 16.0, max_relative = 0.02);
    }
}

/// With sealed edges and no reactions the total amount is conserved to
/// rounding, with every scheme, fixed and error-controlled steps.
/// (The discrete Neumann Laplacian's columns sum to zero: common practice, no source.)
/// Tolerance: SBDF2 1e-13 (one solve a step; measured ≤ 6e-14). ARK4 reads
/// five stage derivatives a step off its solves, (Yᵢ − rhsᵢ)/(γk), a
/// difference of nearly equal numbers, so its rounding drifts faster: 2.3e-13
/// measured over 400 fixed steps (about 2 ulp a step); checked to 1e-12.
#[test]
fn sealed_edges_conserve_mass() {
    for (dims, init_len) in [(vec![50usize], 50usize), (vec![20, 12], 240)] {
        let initial: Vec<f64> = (0..init_len).map(|i| ((i * 7919) % 97) as f64 / 9.0).collect();
        let total0: f64 = initial.iter().sum();
        let mut model = parse(&reference::pure_diffusion(&dims, "sealed", 3.0, &initial, 0.05, 20.0));
        model.clock.snapshot_every_min = 2.0;
        for scheme in Scheme::ALL {
            let tol = match scheme {
                Scheme::Sbdf2 => 1e-13,
                Scheme::Ark4 => 1e-12,
            };
            let model = with_scheme(&model, scheme);
            for m in [model.clone(), with_tolerance(&model, 1e-6)] {
                let rec = run(&m).recording;
                assert_eq!(rec.times.len(), 11);
                for state in rec.states().map(Result::unwrap) {
                    assert_relative_eq!(state.sum(), total0, max_relative = tol);
                }
            }
        }
    }
}

/// One gene with constant production: x(t) = p/d + (x0 − p/d)·e^(−d t), with
/// every scheme. Source: Alon (2006), An Introduction to Systems Biology, ch.
/// 2 (response time of a stable protein), from memory. Tolerances: SBDF2 at
/// Δt = 0.001 has global error ~ 1e-7 here, checked to 1e-6; ARK4's, of
/// order (dΔt)⁴ ≈ 1e-14, is below the rounding of 12,000 steps (3.5e-13
/// measured), checked to 1e-11; error control at 1e-9 stays within 1e-6 for
/// both (the tolerance bounds local errors).
#[test]
fn production_decay_follows_exponential_alon_2006() {
    let model = parse(
        "[tissue]\nnuclei = [3]\nspacing_um = 1.0\n[clock]\nuntil_min = 12.0\nstep_min = 0.001\nsnapshot_every_min = 1.5\n\
         [[gene]]\nname = \"solo\"\nproduction = 2.0\ndecay = 0.5\ndiffusion = 1.0\ninitial = 1.0\n",
    );
    let exact = |t: f64| 4.0 + (1.0 - 4.0) * (-0.5 * t).exp();
    for scheme in Scheme::ALL {
        let fixed = match scheme {
            Scheme::Sbdf2 => 1e-6,
            Scheme::Ark4 => 1e-11,
        };
        let model = with_scheme(&model, scheme);
        for (m, tol) in [(model.clone(), fixed), (with_tolerance(&model, 1e-9), 1e-6)] {
            let rec = run(&m).recording;
            assert_eq!(rec.times.len(), 9);
            for (t, state) in rec.times.iter().zip(rec.states().map(Result::unwrap)) {
                for v in state.iter() {
                    assert_relative_eq!(*v, exact(*t), max_relative = tol);
                }
            }
        }
    }
}

/// Production at a source nucleus, decay and diffusion reach the steady profile
/// u(x) ∝ cosh((L − x)/λ) with λ = √(D/k), with every scheme.
/// Source: Crick (1970), Nature 225:420 (gradient length √(D/k)); Crank (1975),
/// ch. 14 (diffusion with first-order removal). The discrete λ differs by
/// (h/λ)²/24 ≈ 1e-4 here; checked to 1e-3 (the steady state does not depend
/// on the scheme).
#[test]
fn source_decay_diffusion_profile_has_lambda_sqrt_d_over_k() {
    let (d, k, n): (f64, f64, usize) = (4.0, 0.01, 200);
    let model = parse(&format!(
        "[tissue]\nnuclei = [{n}]\nspacing_um = 1.0\n[clock]\nuntil_min = 3000.0\ntolerance = 1e-9\nsnapshot_every_min = 1000.0\n\
         [[gradient]]\nname = \"source\"\nshape = \"step\"\nfrom = \"left\"\npeak = 1.0\nwidth_um = 1.0\n\
         [[gene]]\nname = \"signal\"\nproduction = 1.0\ndecay = {k:?}\ndiffusion = {d:?}\n\
         [circuit]\nkinetics = \"hill\"\n\
         [[circuit.link]]\nfrom = \"source\"\nto = \"signal\"\nsign = \"+\"\nthreshold = 1.0\nhill = 1\n"
    ));
    for scheme in Scheme::ALL {
        let u = run(&with_scheme(&model, scheme)).recording.final_state().row(0).to_vec();
        let length = n as f64;
        let (i1, i2) = (40usize, 120usize);
        let (x1, x2) = (i1 as f64 + 0.5, i2 as f64 + 0.5);
        let ratio = u[i1] / u[i2];
        // Solve cosh((L − x1)/λ) / cosh((L − x2)/λ) = ratio for λ by bisection (decreasing in λ).
        let f = |lam: f64| ((length - x1) / lam).cosh() / ((length - x2) / lam).cosh() - ratio;
        let (mut lo, mut hi) = (1.0, 200.0);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if f(mid) > 0.0 { lo = mid } else { hi = mid }
        }
        assert_relative_eq!(0.5 * (lo + hi), (d / k).sqrt(), max_relative = 1e-3);
    }
}

/// The run agrees with an independent NumPy/LAPACK implementation of problem P1
/// (../shared/peer/peer_numpy.py, values stored by tests/reference/peer_p1.sh):
/// final-state sums equal to 1e-9 relative, as the peer's docstring requires.
/// SBDF2 only: the peer implements that scheme, so the agreement is to
/// rounding, not to a discretisation error.
#[test]
fn peer_p1_checksums_agree() {
    let table = std::fs::read_to_string(crate::common::root().join("tests/reference/peer_p1.csv")).unwrap();
    let mut checked = 0;
    for line in table.lines().skip(1) {
        let v: Vec<&str> = line.split(',').collect();
        let (n, steps, want): (usize, usize, f64) =
            (v[0].parse().unwrap(), v[1].parse().unwrap(), v[2].parse().unwrap());
        let model = reference::parse(&reference::peer_p1(n, steps), "p1.toml").unwrap();
        assert_eq!(model.clock.fixed_steps(), Some(steps));
        let got = reference::checksum(run(&model).recording.final_state());
        assert_relative_eq!(got, want, max_relative = 1e-9);
        checked += 1;
    }
    assert_eq!(checked, 3);
}
