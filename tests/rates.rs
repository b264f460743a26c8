//! Rate expressions: compiled programs, symbolic Jacobians, and published
//! pattern-forming and oscillating systems written as rates.

use anlage::kinetics;
use anlage::phase::{self, Frozen, Kind};
use approx::assert_relative_eq;

use crate::common::{load, parse, run};

const ROW: &str =
    "[tissue]\nnuclei = [8]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\nstep_min = 0.1\nsnapshot_every_min = 1.0\n";

/// The ribbon's circuit written as rate expressions gives the same rates as
/// the built-in Hill law to 1e-12, at many states.
#[test]
fn compiled_expressions_match_builtin_hill() {
    let ribbon = load("patterns/ribbon.toml");
    let text = ribbon.text.split("[circuit]").next().unwrap().replace(
        "diffusion = 0.5         # µm²/min\n",
        "diffusion = 0.5\nrate = \"1.0 * hill(head, 0.1, 2) / (1 + (cobalt / 2)^4) - 0.1 * amber\"\n",
    );
    let text = text.replacen(
        "production = 0.8\ndecay = 0.1\ndiffusion = 0.5\n",
        "production = 0.8\ndecay = 0.1\ndiffusion = 0.5\nrate = \"0.8 / (1 + (amber / 2)^4) - 0.1 * cobalt\"\n",
        1,
    ) + "[circuit]\nkinetics = \"rates\"\n";
    let as_rates = parse(&text);
    assert!(as_rates.genes.iter().all(|g| g.rate.is_some()), "{text}");
    let (a, b) = (kinetics::build(&ribbon), kinetics::build(&as_rates));
    for k in 0..200 {
        let u = [0.05 * k as f64, 9.0 - 0.04 * k as f64];
        let m = [(-(k as f64) / 70.0).exp()];
        let (mut fa, mut fb) = ([0.0; 2], [0.0; 2]);
        a.rates_one(&u, &m, &mut fa);
        b.rates_one(&u, &m, &mut fb);
        for g in 0..2 {
            assert_relative_eq!(fa[g], fb[g], max_relative = 1e-12, epsilon = 1e-14);
        }
        let (mut ja, mut jb) = ([0.0; 4], [0.0; 4]);
        a.jacobian(&u, &m, &mut ja);
        b.jacobian(&u, &m, &mut jb);
        for i in 0..4 {
            assert_relative_eq!(ja[i], jb[i], max_relative = 1e-10, epsilon = 1e-13);
        }
    }
    // And the runs agree.
    let (ra, rb) = (run(&ribbon).recording, run(&as_rates).recording);
    for (x, y) in ra.final_state().iter().zip(rb.final_state().iter()) {
        assert_relative_eq!(*x, *y, max_relative = 1e-9, epsilon = 1e-12);
    }
}

/// Symbolic derivatives (every function and operator) agree with central differences.
#[test]
fn symbolic_jacobian_matches_differences() {
    let model = parse(&format!(
        "{ROW}[[gradient]]\nname = \"m\"\nshape = \"linear\"\nfrom = \"left\"\npeak = 1.0\nlength_um = 8.0\n\
         [[gene]]\nname = \"p\"\nrate = \"exp(-q) * sqrt(p + 1) - ln(1 + p*q) + m * p^2.5\"\n\
         [[gene]]\nname = \"q\"\nrate = \"min(p, 2*q) - max(q^2, 0.3) + abs(p - q) / (1 + q) + hill(p, k, 3) * q^p\"\n\
         [circuit]\nkinetics = \"rates\"\nparameters = {{ k = 0.7 }}\n"
    ));
    let k = kinetics::build(&model);
    for (u, m) in [([0.4, 0.9], [0.3]), ([1.7, 0.2], [0.8]), ([0.9, 1.3], [0.0])] {
        let mut jac = [0.0; 4];
        k.jacobian(&u, &m, &mut jac);
        for j in 0..2 {
            let h = 1e-6;
            let (mut up, mut dn) = (u, u);
            up[j] += h;
            dn[j] -= h;
            let (mut fu, mut fd) = ([0.0; 2], [0.0; 2]);
            k.rates_one(&up, &m, &mut fu);
            k.rates_one(&dn, &m, &mut fd);
            for i in 0..2 {
                assert_relative_eq!(jac[i * 2 + j], (fu[i] - fd[i]) / (2.0 * h), max_relative = 1e-6, epsilon = 1e-7);
            }
        }
    }
}

fn brusselator(a: f64, b: f64) -> anlage::model::Model {
    parse(&format!(
        "{ROW}[[gene]]\nname = \"u\"\nrate = \"A - (B + 1) * u + u^2 * v\"\n[[gene]]\nname = \"v\"\nrate = \"B * u - u^2 * v\"\n\
         [circuit]\nkinetics = \"rates\"\nparameters = {{ A = {a:?}, B = {b:?} }}\n"
    ))
}

/// The Brusselator written as rates: the fixed point (A, B/A) loses stability
/// (stable → unstable focus) at B = 1 + A² (Strogatz, Nonlinear Dynamics and
/// Chaos, Hopf bifurcation of the Brusselator); bisection to 1e-7.
#[test]
fn brusselator_as_rates_hopf_onset() {
    let a = 1.5;
    let kind = |b: f64| {
        let model = brusselator(a, b);
        let k = kinetics::build(&model);
        let sys = Frozen { kinetics: k.as_ref(), inputs: vec![], influx: vec![0.0; 2] };
        phase::fixed::fixed_point_at(&sys, vec![a, b / a]).kind
    };
    assert_eq!((kind(2.0), kind(4.0)), (Kind::StableFocus, Kind::UnstableFocus));
    let onset = crate::common::bisect(2.0, 4.0, 40, |b| kind(b) == Kind::StableFocus);
    assert_relative_eq!(onset, 1.0 + a * a, max_relative = 1e-7);
}

/// Wavelength (cells) of the fastest-growing mode on a periodic row of `n`
/// cells (h = 1) for a 2×2 Jacobian J = [[fu, fv], [gu, gv]] and diffusion
/// (du, dv): the growth rate of mode q is the larger eigenvalue of
/// J − λ_q·diag(du, dv), λ_q = 2 − 2cos(2πp/n) (Murray 2003, ch. 2).
fn fastest_wavelength(j: [f64; 4], du: f64, dv: f64, n: usize) -> f64 {
    let [fu, fv, gu, gv] = j;
    let growth = |p: usize| {
        let lam = 2.0 - 2.0 * (2.0 * std::f64::consts::PI * p as f64 / n as f64).cos();
        let (m11, m22) = (fu - du * lam, gv - dv * lam);
        let (tr, det) = (m11 + m22, m11 * m22 - fv * gu);
        let disc = tr * tr - 4.0 * det;
        if disc >= 0.0 { 0.5 * (tr + disc.sqrt()) } else { 0.5 * tr }
    };
    n as f64 / (1..n / 2).max_by(|&p, &q| growth(p).total_cmp(&growth(q))).unwrap() as f64
}

/// Stored linear-theory values (tests/reference/turing.py, SciPy): fastest-growing
/// wavelength and critical diffusion ratio of a system.
fn turing_reference(system: &str) -> (f64, f64) {
    let text = std::fs::read_to_string(crate::common::root().join("tests/reference/turing.json")).unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    (v[system]["fastest_wavelength_cells"].as_f64().unwrap(), v[system]["critical_ratio"].as_f64().unwrap())
}

/// Schnakenberg kinetics on a periodic row of 256 cells (h = 1), a = 0.1, b = 0.9,
/// Du = 1, from the uniform state plus 1 % noise.
fn schnakenberg(dv: f64) -> anlage::model::Model {
    parse(&format!(
        "seed = 3\n[tissue]\nnuclei = [256]\nspacing_um = 1.0\nedges = \"periodic\"\n\
         [clock]\nuntil_min = 300.0\ntolerance = 1e-6\nsnapshot_every_min = 300.0\n\
         [[gene]]\nname = \"u\"\nrate = \"a - u + u^2 * v\"\ndiffusion = 1.0\ninitial = 1.0\ninitial_noise = 0.01\n\
         [[gene]]\nname = \"v\"\nrate = \"b - u^2 * v\"\ndiffusion = {dv:?}\ninitial = 0.9\ninitial_noise = 0.01\n\
         [circuit]\nkinetics = \"rates\"\nparameters = {{ a = 0.1, b = 0.9 }}\n"
    ))
}

/// Dominant mode of a periodic profile (mean removed), by DFT power.
fn dominant_mode(u: &[f64]) -> usize {
    let n = u.len();
    let mean = u.iter().sum::<f64>() / n as f64;
    (1..n / 2)
        .max_by(|&p, &q| {
            let power = |k: usize| {
                let (mut re, mut im) = (0.0, 0.0);
                for (i, v) in u.iter().enumerate() {
                    let th = 2.0 * std::f64::consts::PI * (k * i) as f64 / n as f64;
                    re += (v - mean) * th.cos();
                    im -= (v - mean) * th.sin();
                }
                re * re + im * im
            };
            power(p).total_cmp(&power(q))
        })
        .unwrap()
}

/// Above the critical diffusion ratio (d_c ≈ 8.6 here) a pattern appears whose
/// dominant wavelength is within 10 % of the fastest-growing wavelength of the
/// linear theory on this lattice; below it (Dv = 5) the uniform state stays
/// uniform. Schnakenberg (1979), J. Theor. Biol. 81:389; linear stability
/// analysis as in Murray, Mathematical Biology II (2003), ch. 2 (the growth rate
/// of mode q is the larger eigenvalue of J − λ_q·diag(Du, Dv), λ_q the discrete
/// Laplacian eigenvalue (2 − 2cos q)/h²), computed here.
#[test]
fn schnakenberg_turing_wavelength_murray_2003() {
    let (a, b, du, dv) = (0.1, 0.9, 1.0, 20.0);
    let (us, vs) = (a + b, b / ((a + b) * (a + b)));
    let n = 256;
    let (want, critical) = turing_reference("schnakenberg");
    assert!(5.0 < critical && critical < dv, "Dv = 5 below and Dv = 20 above the critical ratio {critical}");
    // The same linear theory computed here agrees with SciPy's.
    let here = fastest_wavelength([-1.0 + 2.0 * us * vs, us * us, -2.0 * us * vs, -us * us], du, dv, n);
    assert_relative_eq!(here, want, max_relative = 1e-12);
    assert!((12.0..14.0).contains(&want), "linear theory wavelength {want}");

    let rec = run(&schnakenberg(dv)).recording;
    let u = rec.final_state().row(0).to_vec();
    let amplitude =
        u.iter().copied().fold(f64::NEG_INFINITY, f64::max) - u.iter().copied().fold(f64::INFINITY, f64::min);
    assert!(amplitude > 0.5, "no pattern: amplitude {amplitude}");
    let got = n as f64 / dominant_mode(&u) as f64;
    assert!((got - want).abs() <= 0.1 * want, "wavelength {got} vs linear theory {want}");
    eprintln!("Schnakenberg: wavelength {got:.2} cells vs linear theory {want:.2}, amplitude {amplitude:.2}");

    let rec = run(&schnakenberg(5.0)).recording;
    let u = rec.final_state().row(0).to_vec();
    let spread = u.iter().copied().fold(f64::NEG_INFINITY, f64::max) - u.iter().copied().fold(f64::INFINITY, f64::min);
    assert!(spread < 0.02, "below the critical ratio the state should stay uniform: spread {spread}");
}

/// Peer problem P1 written as rate expressions reproduces the peer's checksum
/// (../shared/peer/peer_numpy.py, stored in tests/reference/peer_p1.csv) to 1e-9.
#[test]
fn peer_p1_as_rates_matches_checksum() {
    let model = anlage::reference::parse(&anlage::reference::peer_p1_as_rates(100, 1000), "p1r.toml").unwrap();
    assert!(model.genes.iter().all(|g| g.rate.is_some()));
    let got = anlage::reference::checksum(run(&model).recording.final_state());
    assert_relative_eq!(got, 47.79765276245791, max_relative = 1e-9);
}

/// A Hill circuit may give one gene a rate expression (mixing families).
#[test]
fn hill_and_rate_genes_mix() {
    let model = parse(&format!(
        "{ROW}[[gradient]]\nname = \"m\"\nshape = \"linear\"\nfrom = \"left\"\npeak = 1.0\nlength_um = 8.0\n\
         [[gene]]\nname = \"a\"\nproduction = 2.0\ndecay = 0.5\n\
         [[gene]]\nname = \"b\"\nrate = \"0.3 * a - 0.2 * b\"\n\
         [circuit]\nkinetics = \"hill\"\n[[circuit.link]]\nfrom = \"m\"\nto = \"a\"\nsign = \"+\"\nthreshold = 0.5\nhill = 2\n"
    ));
    let k = kinetics::build(&model);
    let mut f = [0.0; 2];
    k.rates_one(&[1.0, 2.0], &[0.5], &mut f);
    assert_relative_eq!(f[0], 2.0 * 0.5 - 0.5 * 1.0, max_relative = 1e-14);
    assert_relative_eq!(f[1], 0.3 - 0.4, max_relative = 1e-14);
}

/// Gierer–Meinhardt activator–inhibitor, da/dt = a²/h − a + σ, dh/dt = a² − νh
/// (Gierer & Meinhardt 1972, Kybernetik 12:30), σ = 0.1, ν = 2, Da = 1, on a
/// periodic row of 256 cells: with Dh = 25 (above the critical ratio ≈ 13.8) a
/// pattern appears whose dominant wavelength is within 10 % of the linear
/// theory's fastest-growing wavelength; with Dh = 8 the uniform state stays.
#[test]
fn gierer_meinhardt_turing_wavelength() {
    let gm = |dh: f64| {
        parse(&format!(
            "seed = 5\n[tissue]\nnuclei = [256]\nspacing_um = 1.0\nedges = \"periodic\"\n\
             [clock]\nuntil_min = 400.0\ntolerance = 1e-6\nsnapshot_every_min = 400.0\n\
             [[gene]]\nname = \"act\"\nrate = \"a^2 / inh - a + sigma\"\ndiffusion = 1.0\ninitial = 2.1\ninitial_noise = 0.02\n\
             [[gene]]\nname = \"inh\"\nrate = \"act^2 - nu * inh\"\ndiffusion = {dh:?}\ninitial = 2.205\ninitial_noise = 0.02\n\
             [circuit]\nkinetics = \"rates\"\nparameters = {{ sigma = 0.1, nu = 2.0 }}\n"
        ).replace("a^2 / inh - a + sigma", "act^2 / inh - act + sigma"))
    };
    let (a, h) = (2.1, 2.205);
    let j = [2.0 * a / h - 1.0, -(a * a) / (h * h), 2.0 * a, -2.0];
    let (want, critical) = turing_reference("gierer_meinhardt");
    assert!(8.0 < critical && critical < 25.0, "Dh = 8 below and 25 above the critical ratio {critical}");
    assert_relative_eq!(fastest_wavelength(j, 1.0, 25.0, 256), want, max_relative = 1e-12);
    let u = run(&gm(25.0)).recording.final_state().row(0).to_vec();
    let amplitude =
        u.iter().copied().fold(f64::NEG_INFINITY, f64::max) - u.iter().copied().fold(f64::INFINITY, f64::min);
    assert!(amplitude > 0.5, "no pattern: amplitude {amplitude}");
    let got = 256.0 / dominant_mode(&u) as f64;
    eprintln!("Gierer-Meinhardt: wavelength {got:.2} cells vs linear theory {want:.2}, amplitude {amplitude:.2}");
    assert!((got - want).abs() <= 0.1 * want, "wavelength {got} vs linear theory {want}");
    let u = run(&gm(8.0)).recording.final_state().row(0).to_vec();
    let spread = u.iter().copied().fold(f64::NEG_INFINITY, f64::max) - u.iter().copied().fold(f64::INFINITY, f64::min);
    assert!(spread < 0.05, "below the critical ratio: spread {spread}");
}

/// Fisher–KPP, u_t = D u_xx + r u(1 − u): a front from a step travels at
/// 2√(Dr) (Fisher 1937, Ann. Eugen. 7:355; Kolmogorov, Petrovsky & Piskunov
/// 1937), approached slowly as x(t) = 2√(Dr)·t − (3/2)√(D/r)·ln t + const
/// (Bramson 1983, Mem. AMS 44:285). Measured between t = 200 and 300 min and
/// compared with the speed corrected for that term: within 2 %. D = 1 µm²/min,
/// r = 1 /min, h = 0.25 µm.
#[test]
fn fisher_kpp_front_speed() {
    let n = 4000;
    let initial: Vec<String> = (0..n).map(|i| if i < 80 { "1.0".into() } else { "0.0".into() }).collect();
    let model = parse(&format!(
        "[tissue]\nnuclei = [{n}]\nspacing_um = 0.25\n[clock]\nuntil_min = 300.0\ntolerance = 1e-6\nsnapshot_every_min = 100.0\n\
         [[gene]]\nname = \"u\"\nrate = \"r * u * (1 - u)\"\ndiffusion = 1.0\ninitial_profile = [{}]\n\
         [circuit]\nkinetics = \"rates\"\nparameters = {{ r = 1.0 }}\n",
        initial.join(", ")
    ));
    let rec = run(&model).recording;
    let front = |s: usize| {
        let p = rec.axis_profiles(s, [0]).unwrap().remove(0);
        let c = anlage::readout::profile_boundaries(&p, 0.25, false);
        assert_eq!(c.len(), 1, "one front at t = {}", rec.times[s]);
        c[0].position_um
    };
    let (x2, x3) = (front(2), front(3));
    let measured = (x3 - x2) / 100.0;
    let corrected = 2.0 - 1.5 * (300.0f64 / 200.0).ln() / 100.0;
    eprintln!("Fisher-KPP: front speed {measured:.4} µm/min; 2√(Dr) = 2, with Bramson's term {corrected:.4}");
    assert!((measured - corrected).abs() <= 0.02 * corrected, "speed {measured} vs {corrected}");
}

/// Lateral inhibition by contact: each cell's receptor `plume` is activated by
/// the mean ligand `quill` of its neighbours, and `plume` represses the cell's
/// own `quill` (the model of Collier, Monk, Lewis & Lewis 1996, J. Theor. Biol.
/// 183:429, eqs. 2.1–2.2, with f(x) = x²/(a + x²), g(x) = 1/(1 + b x²),
/// a = 0.01, b = 100, v = 1; invented gene names). From small random
/// differences a sheet settles into alternating cells: every high-quill cell's
/// four neighbours are low.
#[test]
fn lateral_inhibition_gives_alternating_cells_collier_1996() {
    let model = parse(
        "seed = 2\n[tissue]\nnuclei = [16, 16]\nspacing_um = 10.0\nedges = \"periodic\"\n\
         [clock]\nuntil_min = 300.0\ntolerance = 1e-6\nsnapshot_every_min = 300.0\n\
         [[gene]]\nname = \"plume\"\nrate = \"neighbours(quill)^2 / (a + neighbours(quill)^2) - plume\"\ninitial = 0.5\ninitial_noise = 0.05\n\
         [[gene]]\nname = \"quill\"\nrate = \"v * (1 / (1 + b * plume^2) - quill)\"\ninitial = 0.5\ninitial_noise = 0.05\n\
         [circuit]\nkinetics = \"rates\"\nparameters = { a = 0.01, b = 100.0, v = 1.0 }\n",
    );
    assert!(model.circuit.neighbours);
    let rec = run(&model).recording;
    let q = rec.final_state().row(1).to_vec();
    let n = 16;
    let high: Vec<usize> = (0..n * n).filter(|&i| q[i] > 0.5).collect();
    assert!(high.len() > n * n / 5, "{} high cells", high.len());
    for &i in &high {
        let (x, y) = (i % n, i / n);
        for j in [y * n + (x + 1) % n, y * n + (x + n - 1) % n, ((y + 1) % n) * n + x, ((y + n - 1) % n) * n + x] {
            assert!(q[j] < 0.5, "cell {i} high and its neighbour {j} high too");
        }
    }
}

/// Position and time in expressions: du/dt = x/100 − u relaxes to u = x/100;
/// dw/dt = t gives w(T) = T²/2 (exact calculus), to within the O(Δt²) error
/// of the IMEX-Euler first step (w(Δt) = 0 instead of Δt²/2): 1e-6 relative.
#[test]
fn position_and_time_in_expressions() {
    let model = parse(
        "[tissue]\nnuclei = [10]\nspacing_um = 10.0\n[clock]\nuntil_min = 40.0\nstep_min = 0.01\nsnapshot_every_min = 40.0\n\
         [[gene]]\nname = \"u\"\nrate = \"x / 100 - u\"\n[[gene]]\nname = \"w\"\nrate = \"t\"\n\
         [circuit]\nkinetics = \"rates\"\n",
    );
    let rec = run(&model).recording;
    let fin = rec.final_state();
    for i in 0..10 {
        assert_relative_eq!(fin[[0, i]], (i as f64 + 0.5) * 10.0 / 100.0, max_relative = 1e-9);
        assert_relative_eq!(fin[[1, i]], 800.0, max_relative = 1e-6);
    }
}

/// Peer problem P2 (Schnakenberg on a sealed sheet, the peer's splitmix64
/// start read through `initial_file`) agrees with the NumPy/SciPy DCT solve
/// (../shared/peer/peer_numpy.py, stored by tests/reference/peer_p2.sh) to
/// 1e-9 relative: an even side (real-FFT cosine transform) and an odd one
/// (direct DCT).
#[test]
fn peer_p2_checksums_agree() {
    let table = std::fs::read_to_string(crate::common::root().join("tests/reference/peer_p2.csv")).unwrap();
    let dir = std::env::temp_dir().join(format!("anlage_p2_{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let mut checked = 0;
    for line in table.lines().skip(1) {
        let v: Vec<&str> = line.split(',').collect();
        let (n, steps, want): (usize, usize, f64) =
            (v[0].parse().unwrap(), v[1].parse().unwrap(), v[2].parse().unwrap());
        let text = anlage::reference::write_peer_p2(&dir, n, steps).unwrap();
        let path = dir.join(format!("p2_{n}.toml"));
        std::fs::write(&path, text).unwrap();
        let model = anlage::model::Model::load(&path).unwrap();
        assert_eq!(model.clock.fixed_steps(), Some(steps));
        let got = anlage::reference::checksum(run(&model).recording.final_state());
        assert_relative_eq!(got, want, max_relative = 1e-9);
        checked += 1;
    }
    assert_eq!(checked, 2);
}

/// Rate-expression genes are signed: they may start below 0, the run lets
/// them go there, and the phase-space verbs keep fixed points with negative
/// levels. Before, a diagram of du/dt = a − u for a in [−3, −1] reported no
/// branch at all with exit 0. The fixed point is u* = a, and a cosine mode
/// riding on 0 (no constant offset) decays as e^{−(1 + Dπ²/L²)t} (the linear
/// equation's solution; discrete eigenvalue (4/h²)·sin²(π/2n)).
#[test]
fn rate_expression_genes_take_either_sign() {
    let m = crate::common::parse(
        "[tissue]\nnuclei = [40]\nspacing_um = 2.0\n[clock]\nuntil_min = 3.0\ntolerance = 1e-10\n\
         snapshot_every_min = 1.0\n[[gene]]\nname = \"tilt\"\nrate = \"a - tilt\"\ndiffusion = 5.0\n\
         initial_formula = \"a + 0.5 * cos(pi * x / L)\"\n[circuit]\nkinetics = \"rates\"\n\
         parameters = { a = -2.0 }\n",
    );
    let rec = crate::common::run(&m).recording;
    let mu = 4.0 / 4.0 * (std::f64::consts::PI / 80.0).sin().powi(2);
    for (s, &t) in rec.times.iter().enumerate() {
        let state = rec.state(s).unwrap();
        for i in [0usize, 13, 39] {
            let c = (std::f64::consts::PI * (i as f64 + 0.5) / 40.0).cos();
            let want = -2.0 + 0.5 * c * (-(1.0 + 5.0 * mu) * t).exp();
            approx::assert_abs_diff_eq!(state[[0, i]], want, epsilon = 1e-7);
        }
    }
    let param = m.parse_param("a").unwrap();
    let request = anlage::phase::DiagramRequest { param, from: -3.0, to: -1.0, x_pct: 50.0, t_min: 0.0 };
    let d = anlage::phase::diagram(&m, &request).unwrap();
    let points: Vec<_> = d.branches.iter().flat_map(|b| &b.points).collect();
    assert!(points.len() > 5, "the branch u* = a is found");
    for p in points {
        approx::assert_abs_diff_eq!(p.x[0], p.s, epsilon = 1e-9);
    }
}

/// A rate-expression gene has no capacity p/d, so its expression floor is
/// 5 % of the largest level it reaches in the run (common practice, no
/// source, as for the capacity-based floor): a ramp that decays as e^{−t/2}
/// has its half-maximum boundary at the start (at x = L/2, the ramp's
/// midpoint) and none once it has fallen below 5 % of its start (after
/// 2·ln 20 ≈ 6 min), where before it was read at any level at all.
#[test]
fn a_vanished_rate_gene_reports_no_boundary() {
    let m = parse(
        "[tissue]\nnuclei = [40]\nspacing_um = 2.0\n[clock]\nuntil_min = 10.0\ntolerance = 1e-8\n\
         snapshot_every_min = 2.0\n[[gene]]\nname = \"fade\"\nrate = \"-0.5 * fade\"\n\
         initial_formula = \"x / L\"\n[circuit]\nkinetics = \"rates\"\n",
    );
    let rec = run(&m).recording;
    let at = |s: usize| anlage::readout::boundaries_at(&rec, s).unwrap();
    assert_eq!(at(0).len(), 1);
    assert_relative_eq!(at(0)[0].position_um, 40.0, max_relative = 0.03);
    assert_eq!(at(2).len(), 1, "at 4 min the gene is at 13.5 % of its start");
    for s in 4..rec.len() {
        assert!(at(s).is_empty(), "t = {}: {:?}", rec.times[s], at(s));
    }
}
