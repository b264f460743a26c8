//! Checks against closed-form results.

use anlage::reference;
use approx::assert_relative_eq;

use crate::common::{parse, run, with_tolerance};

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
fn measured_rate(m: &Mode, dt: f64, t: f64, scheme: &str) -> f64 {
    let (nx, ny) = (m.nx, m.ny);
    let period = if m.edges == "sealed" { std::f64::consts::PI } else { 2.0 * std::f64::consts::PI };
    let (tx, ty) = (period * m.p as f64 / nx as f64, period * m.q as f64 / ny as f64);
    let mode = |ix: usize, iy: usize| (tx * (ix as f64 + 0.5)).cos() * (ty * (iy as f64 + 0.5)).cos();
    let initial: Vec<f64> = (0..nx * ny).map(|k| 1.0 + 0.5 * mode(k % nx, k / nx)).collect();
    let dims: Vec<usize> = if ny > 1 { vec![nx, ny] } else { vec![nx] };
    let text = reference::pure_diffusion(&dims, m.edges, m.d, &initial, dt, t)
        .replace("[clock]", &format!("[clock]\nscheme = \"{scheme}\""));
    let fin = run(&parse(&text)).recording.final_state().row(0).to_vec();
    let norm: f64 = (0..nx * ny).map(|k| mode(k % nx, k / nx).powi(2)).sum();
    let amp = (0..nx * ny).map(|k| (fin[k] - 1.0) * mode(k % nx, k / nx)).sum::<f64>() / norm;
    -(amp / 0.5).ln() / t
}

/// Discrete Laplacian eigenvalue along one axis: (2 − 2 cos θ)/h², h = 1 µm.
fn lam(theta: f64) -> f64 {
    2.0 - 2.0 * theta.cos()
}

/// A cosine mode of the sealed row decays at exactly D·(2 − 2cos kh)/h², k = πp/L.
/// Source: Crank (1975), The Mathematics of Diffusion, 2nd ed., ch. 4 (separation
/// of variables); the discrete eigenvalues: Strang (1999), SIAM Review 41:135.
/// Tolerance: SBDF2's time error (λΔt)² ≈ 1e-7 here; checked to 1e-5.
#[test]
fn heat_mode_decay_row_crank_1975() {
    let (n, p, d) = (32, 3, 1.5);
    let want = d * lam(std::f64::consts::PI * p as f64 / n as f64);
    assert_relative_eq!(measured_rate(&Mode::row(n, "sealed", p, d), 0.01, 10.0, "sbdf2"), want, max_relative = 1e-5);
}

/// The same on a sealed sheet (DCT solve): rate D·(λ_p + λ_q).
/// Source: Crank (1975), ch. 4 (product solutions in two dimensions).
#[test]
fn heat_mode_decay_sheet_crank_1975() {
    let (nx, ny, p, q, d) = (24, 16, 2, 1, 1.0);
    let want =
        d * (lam(std::f64::consts::PI * p as f64 / nx as f64) + lam(std::f64::consts::PI * q as f64 / ny as f64));
    assert_relative_eq!(
        measured_rate(&Mode { nx, ny, edges: "sealed", p, q, d }, 0.01, 10.0, "sbdf2"),
        want,
        max_relative = 1e-5
    );
}

/// Periodic row (Fourier solve): mode cos(2πp x/L) decays at D·(2 − 2cos(2πp/N))/h².
/// Source: Crank (1975), ch. 4.
#[test]
fn heat_mode_decay_periodic_row_crank_1975() {
    let (n, p, d) = (30, 2, 2.0);
    let want = d * lam(2.0 * std::f64::consts::PI * p as f64 / n as f64);
    assert_relative_eq!(measured_rate(&Mode::row(n, "periodic", p, d), 0.01, 10.0, "sbdf2"), want, max_relative = 1e-5);
}

/// The ARK scheme on pure diffusion is its ESDIRK tableau alone, fourth
/// order: the error of a mode's measured decay rate falls 16-fold per halving
/// of the step (observed order in [3.8, 4.2]), on a sealed row (Thomas), a
/// sealed sheet (DCT and sweeps) and a periodic sheet (Fourier). Exact rates
/// as above (Crank 1975, ch. 4); order 4: Kennedy & Carpenter (2003), Appl.
/// Numer. Math. 44:139. Steps of 2 and 1 min with λ_max·Δt up to 16 on the
/// sheets: the stiff modes are damped (L-stable), the measured one converges.
#[test]
fn ark4_heat_mode_decay_is_fourth_order_in_time() {
    let pi = std::f64::consts::PI;
    let cases = [
        (Mode::row(32, "sealed", 3, 1.5), 1.5 * lam(pi * 3.0 / 32.0)),
        (Mode { nx: 24, ny: 16, edges: "sealed", p: 2, q: 1, d: 1.0 }, lam(pi * 2.0 / 24.0) + lam(pi / 16.0)),
        (
            Mode { nx: 18, ny: 12, edges: "periodic", p: 2, q: 1, d: 0.5 },
            0.5 * (lam(2.0 * pi * 2.0 / 18.0) + lam(2.0 * pi / 12.0)),
        ),
    ];
    for (mode, want) in &cases {
        let errors: Vec<f64> =
            [2.0, 1.0].iter().map(|dt| (measured_rate(mode, *dt, 16.0, "ark4") - want).abs() / want).collect();
        let order = (errors[0] / errors[1]).log2();
        eprintln!("{} {}x{}: relative errors {errors:?}, order {order:.3}", mode.edges, mode.nx, mode.ny);
        assert!((3.8..=4.2).contains(&order), "order {order:.3}, errors {errors:?}");
    }
}

/// As h → 0 the discrete rate tends to the continuum rate D·k², with relative
/// error (kh)²/12 (Taylor expansion of 2 − 2cos kh). Source: Crank (1975), ch. 4
/// (continuum rate D k²); the h² error term: textbook Taylor expansion.
#[test]
fn heat_mode_rate_tends_to_d_k_squared() {
    let (length, d) = (64.0, 1.0);
    let k = std::f64::consts::PI / length; // p = 1 on L = 64 µm
    let want = d * k * k;
    let mut errors = Vec::new();
    for n in [16usize, 64] {
        // spacing h = L/n: run on h = 1 and rescale D so that D/h² matches.
        let h = length / n as f64;
        let rate = measured_rate(&Mode::row(n, "sealed", 1, d / (h * h)), 0.01, 40.0 * h * h, "sbdf2");
        errors.push((rate - want).abs() / want);
        assert_relative_eq!(errors.last().copied().unwrap(), (k * h).powi(2) / 12.0, max_relative = 0.02);
    }
    // Four times finer, sixteen times smaller error: second order in h.
    assert_relative_eq!(errors[0] / errors[1], 16.0, max_relative = 0.02);
}

/// With sealed edges and no reactions the total amount is conserved to rounding.
/// (The discrete Neumann Laplacian's columns sum to zero: common practice, no source.)
#[test]
fn sealed_edges_conserve_mass() {
    for (dims, init_len) in [(vec![50usize], 50usize), (vec![20, 12], 240)] {
        let initial: Vec<f64> = (0..init_len).map(|i| ((i * 7919) % 97) as f64 / 9.0).collect();
        let total0: f64 = initial.iter().sum();
        let mut model = parse(&reference::pure_diffusion(&dims, "sealed", 3.0, &initial, 0.05, 20.0));
        model.clock.snapshot_every_min = 2.0;
        for m in [model.clone(), with_tolerance(&model, 1e-6)] {
            let rec = run(&m).recording;
            assert_eq!(rec.times.len(), 11);
            for state in rec.states().map(Result::unwrap) {
                assert_relative_eq!(state.sum(), total0, max_relative = 1e-13);
            }
        }
    }
}

/// One gene with constant production: x(t) = p/d + (x0 − p/d)·e^(−d t).
/// Source: Alon (2006), An Introduction to Systems Biology, ch. 2 (response
/// time of a stable protein), from memory. Tolerances: SBDF2 at Δt = 0.001 has
/// global error ~ 1e-7 here; error control at 1e-9 stays within 1e-6.
#[test]
fn production_decay_follows_exponential_alon_2006() {
    let model = parse(
        "[tissue]\nnuclei = [3]\nspacing_um = 1.0\n[clock]\nuntil_min = 12.0\nstep_min = 0.001\nsnapshot_every_min = 1.5\n\
         [[gene]]\nname = \"solo\"\nproduction = 2.0\ndecay = 0.5\ndiffusion = 1.0\ninitial = 1.0\n",
    );
    let exact = |t: f64| 4.0 + (1.0 - 4.0) * (-0.5 * t).exp();
    for (m, tol) in [(model.clone(), 1e-6), (with_tolerance(&model, 1e-9), 1e-6)] {
        let rec = run(&m).recording;
        assert_eq!(rec.times.len(), 9);
        for (t, state) in rec.times.iter().zip(rec.states().map(Result::unwrap)) {
            for v in state.iter() {
                assert_relative_eq!(*v, exact(*t), max_relative = tol);
            }
        }
    }
}

/// Production at a source nucleus, decay and diffusion reach the steady profile
/// u(x) ∝ cosh((L − x)/λ) with λ = √(D/k).
/// Source: Crick (1970), Nature 225:420 (gradient length √(D/k)); Crank (1975),
/// ch. 14 (diffusion with first-order removal). The discrete λ differs by
/// (h/λ)²/24 ≈ 1e-4 here; checked to 1e-3.
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
    let u = run(&model).recording.final_state().row(0).to_vec();
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

/// The run agrees with an independent NumPy/LAPACK implementation of problem P1
/// (../shared/peer/peer_numpy.py, values stored by tests/reference/peer_p1.sh):
/// final-state sums equal to 1e-9 relative, as the peer's docstring requires.
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
