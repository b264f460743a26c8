//! Phase space against published results (values from tests/reference/phase.py).

use anlage::kinetics::{self, Kinetics};
use anlage::phase::{self, Family, Fate, Frozen, Kind, System, continue_branch};
use approx::assert_relative_eq;
use serde::Deserialize;

use crate::common::{parse, root};

#[derive(Deserialize)]
struct Point {
    u: f64,
    v: f64,
    eig_re: Vec<f64>,
}

#[derive(Deserialize)]
struct Reference {
    toggle_symmetric_threshold: f64,
    toggle_points_at_3: Vec<Point>,
    toggle_folds_a1_at_a2_3: Vec<f64>,
    autoregulation_folds_s: Vec<f64>,
    brusselator_period: f64,
}

fn reference() -> Reference {
    serde_json::from_str(&std::fs::read_to_string(root().join("tests/reference/phase.json")).unwrap()).unwrap()
}

/// The toggle switch written as a model file: u, v repress each other with
/// K = 1, n = 3, decay 1, production a1 and a2.
fn toggle_model(a1: f64, a2: f64) -> anlage::model::Model {
    parse(&format!(
        "[tissue]\nnuclei = [2]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\nstep_min = 0.1\nsnapshot_every_min = 1.0\n\
         [[gene]]\nname = \"u\"\nproduction = {a1:?}\ndecay = 1.0\n[[gene]]\nname = \"v\"\nproduction = {a2:?}\ndecay = 1.0\n\
         [circuit]\nkinetics = \"hill\"\n\
         [[circuit.link]]\nfrom = \"v\"\nto = \"u\"\nsign = \"-\"\nthreshold = 1.0\nhill = 3\n\
         [[circuit.link]]\nfrom = \"u\"\nto = \"v\"\nsign = \"-\"\nthreshold = 1.0\nhill = 3\n"
    ))
}

fn toggle_points(a1: f64, a2: f64) -> Vec<phase::FixedPoint> {
    let model = toggle_model(a1, a2);
    let k: Box<dyn Kinetics> = kinetics::build(&model);
    let sys = Frozen { kinetics: k.as_ref(), inputs: vec![], influx: vec![0.0; 2] };
    phase::find_fixed_points(&sys, &phase::box_starts(&[1.2 * a1, 1.2 * a2], 30), 1e-12, true)
}

/// Gardner, Cantor & Collins (2000), Nature 403:339: at a1 = a2 = 3 (n = 3)
/// two stable nodes and a saddle, coordinates and eigenvalues as SciPy finds.
#[test]
fn toggle_points_and_eigenvalues_gardner_2000() {
    let r = reference();
    let got = toggle_points(3.0, 3.0);
    assert_eq!(got.len(), 3, "{got:?}");
    // Sorted by u: (low u, high v), symmetric, (high u, low v).
    let want: Vec<&Point> = {
        let mut w: Vec<&Point> = r.toggle_points_at_3.iter().collect();
        w.sort_by(|a, b| a.u.total_cmp(&b.u));
        w
    };
    for (g, w) in got.iter().zip(want) {
        assert_relative_eq!(g.x[0], w.u, max_relative = 1e-9);
        assert_relative_eq!(g.x[1], w.v, max_relative = 1e-9);
        let mut re: Vec<f64> = g.eigenvalues.iter().map(|e| e.re).collect();
        re.sort_by(f64::total_cmp);
        for (a, b) in re.iter().zip(&w.eig_re) {
            assert_relative_eq!(*a, *b, max_relative = 1e-9);
        }
        assert!(g.eigenvalues.iter().all(|e| e.im == 0.0));
    }
    assert_eq!([got[0].kind, got[1].kind, got[2].kind], [Kind::StableNode, Kind::Saddle, Kind::StableNode]);
}

/// The symmetric toggle (a1 = a2 = a) is bistable above a_c = (n−1)^(−1/n)·n/(n−1)
/// (Gardner et al. 2000; closed form from the Jacobian at the symmetric point,
/// value from SciPy): bisection on the number of stable fixed points.
#[test]
fn toggle_symmetric_threshold_gardner_2000() {
    let r = reference();
    let stable = |a: f64| toggle_points(a, a).iter().filter(|p| p.kind.is_stable()).count();
    assert_eq!((stable(1.0), stable(1.5)), (1, 2));
    let threshold = crate::common::bisect(1.0, 1.5, 40, |a| stable(a) == 1);
    assert_relative_eq!(threshold, r.toggle_symmetric_threshold, max_relative = 1e-6);
}

/// The toggle with a2 = 3 as a family in a1.
struct ToggleInA1;
impl Family for ToggleInA1 {
    fn dim(&self) -> usize {
        2
    }
    fn rates(&self, u: &[f64], a1: f64, out: &mut [f64]) {
        out[0] = a1 / (1.0 + u[1].powi(3)) - u[0];
        out[1] = 3.0 / (1.0 + u[0].powi(3)) - u[1];
    }
    fn jacobian(&self, u: &[f64], a1: f64, jac: &mut [f64]) {
        jac[0] = -1.0;
        jac[1] = -a1 * 3.0 * u[1].powi(2) / (1.0 + u[1].powi(3)).powi(2);
        jac[2] = -3.0 * 3.0 * u[0].powi(2) / (1.0 + u[0].powi(3)).powi(2);
        jac[3] = -1.0;
    }
}

fn folds_from(fam: &dyn Family, points: &[Vec<f64>], s0: f64, range: (f64, f64), ds: f64) -> Vec<f64> {
    let mut folds: Vec<f64> = Vec::new();
    for x0 in points {
        for dir in [1.0, -1.0] {
            for f in continue_branch(fam, x0, s0, range, ds, dir, 20_000).folds {
                if !folds.iter().any(|g| (g - f.s).abs() < 1e-6) {
                    folds.push(f.s);
                }
            }
        }
    }
    folds.sort_by(f64::total_cmp);
    folds
}

/// Both folds of the toggle's bistable range in a1 (a2 = 3), by pseudo-arclength
/// continuation from the three fixed points at a1 = 5. Reference: SciPy fsolve
/// on F = 0, det J = 0 (Gardner et al. 2000, Fig. 1 shows this bistable region).
#[test]
fn toggle_folds_in_a1_gardner_2000() {
    let r = reference();
    let at5 = phase::find_fixed_points(
        &phase::AtParameter { family: &ToggleInA1, s: 5.0 },
        &phase::box_starts(&[6.0, 4.0], 30),
        1e-12,
        true,
    );
    assert_eq!(at5.len(), 3);
    let starts: Vec<Vec<f64>> = at5.iter().map(|p| p.x.clone()).collect();
    let folds = folds_from(&ToggleInA1, &starts, 5.0, (0.5, 20.0), 0.05);
    assert_eq!(folds.len(), 2, "{folds:?}");
    for (g, w) in folds.iter().zip(&r.toggle_folds_a1_at_a2_3) {
        assert_relative_eq!(*g, *w, max_relative = 1e-6);
    }
}

/// Positive autoregulation with basal production s: dx/dt = s + x³/(K³+x³) − x,
/// K = 0.6. Its hysteresis loop has two folds (textbook bistable switch;
/// Strogatz, Nonlinear Dynamics and Chaos, §3.7, the same form as his
/// genetic-switch example); values from SciPy.
#[test]
fn autoregulation_hysteresis_folds() {
    struct Auto;
    impl Family for Auto {
        fn dim(&self) -> usize {
            1
        }
        fn rates(&self, u: &[f64], s: f64, out: &mut [f64]) {
            let x3 = u[0].powi(3);
            out[0] = s + x3 / (0.216 + x3) - u[0];
        }
        fn jacobian(&self, u: &[f64], _s: f64, jac: &mut [f64]) {
            let x = u[0];
            jac[0] = 3.0 * 0.216 * x * x / (0.216 + x.powi(3)).powi(2) - 1.0;
        }
    }
    let r = reference();
    let at0 = phase::find_fixed_points(
        &phase::AtParameter { family: &Auto, s: 0.0 },
        &phase::box_starts(&[2.0], 10),
        1e-13,
        true,
    );
    let folds = folds_from(&Auto, &at0.iter().map(|p| p.x.clone()).collect::<Vec<_>>(), 0.0, (-0.05, 0.5), 0.01);
    assert_eq!(folds.len(), 2, "{folds:?}");
    for (g, w) in folds.iter().zip(&r.autoregulation_folds_s) {
        assert_relative_eq!(*g, *w, max_relative = 1e-6);
    }
}

struct Brusselator {
    a: f64,
    b: f64,
}
impl System for Brusselator {
    fn dim(&self) -> usize {
        2
    }
    fn rates(&self, u: &[f64], out: &mut [f64]) {
        let (x, y) = (u[0], u[1]);
        out[0] = self.a - (self.b + 1.0) * x + x * x * y;
        out[1] = self.b * x - x * x * y;
    }
    fn jacobian(&self, u: &[f64], jac: &mut [f64]) {
        let (x, y) = (u[0], u[1]);
        jac.copy_from_slice(&[-(self.b + 1.0) + 2.0 * x * y, x * x, self.b - 2.0 * x * y, -x * x]);
    }
}

/// Brusselator: the fixed point (A, B/A) turns from a stable to an unstable
/// focus at B = 1 + A² (Strogatz, Nonlinear Dynamics and Chaos, 2nd ed.,
/// exercise 8.2.x / example 7.3.2, Hopf bifurcation); found by bisection on the
/// classification, to 1e-7.
#[test]
fn brusselator_hopf_onset_strogatz() {
    let a = 1.5;
    let kind = |b: f64| {
        let sys = Brusselator { a, b };
        phase::fixed::fixed_point_at(&sys, vec![a, b / a]).kind
    };
    assert_eq!((kind(2.0), kind(4.0)), (Kind::StableFocus, Kind::UnstableFocus));
    let onset = crate::common::bisect(2.0, 4.0, 40, |b| kind(b) == Kind::StableFocus);
    assert_relative_eq!(onset, 1.0 + a * a, max_relative = 1e-7);
}

/// Past onset (A = 1, B = 3) the state settles on a limit cycle whose period
/// matches SciPy's within 1 % (the issue's tolerance; we see far better).
#[test]
fn brusselator_limit_cycle_period() {
    let r = reference();
    let sys = Brusselator { a: 1.0, b: 3.0 };
    let fp = phase::fixed::fixed_point_at(&sys, vec![1.0, 3.0]);
    assert_eq!(fp.kind, Kind::UnstableFocus);
    match phase::fate(&sys, &[1.2, 3.0], &[fp], 1e-6, 400.0) {
        Fate::Cycle { period_min, .. } => {
            eprintln!("Brusselator period {period_min} vs SciPy {}", r.brusselator_period);
            assert_relative_eq!(period_min, r.brusselator_period, max_relative = 1e-2)
        }

        other => panic!("expected a cycle, got {other:?}"),
    }
}

/// Issue 19, item 6: at integrator tolerance 1e-10 the period, located by
/// events on the dense output, agrees with SciPy's (DOP853, rtol 1e-12,
/// tests/reference/phase.py) to 1e-7 relative.
#[test]
fn issue_19_brusselator_period_to_1e_minus_7() {
    let r = reference();
    let sys = Brusselator { a: 1.0, b: 3.0 };
    let fp = phase::fixed::fixed_point_at(&sys, vec![1.0, 3.0]);
    match phase::fate_with(&sys, &[1.2, 3.0], &[fp], 1e-6, 400.0, 1e-10) {
        Fate::Cycle { period_min, .. } => assert_relative_eq!(period_min, r.brusselator_period, max_relative = 1e-7),
        other => panic!("expected a cycle, got {other:?}"),
    }
}

/// The symmetric toggle switch (a = 3, n = 3; Gardner, Cantor & Collins
/// 2000) from 1e-7 off its saddle, on the side of high v: the state lingers
/// near the saddle for longer than the first horizon, and the horizon grows
/// until it settles on the v-high attractor (was "unresolved").
#[test]
fn issue_19_a_start_next_to_the_saddle_settles() {
    struct Toggle;
    impl System for Toggle {
        fn dim(&self) -> usize {
            2
        }
        fn rates(&self, u: &[f64], out: &mut [f64]) {
            out[0] = 3.0 / (1.0 + u[1].powi(3)) - u[0];
            out[1] = 3.0 / (1.0 + u[0].powi(3)) - u[1];
        }
        fn jacobian(&self, u: &[f64], jac: &mut [f64]) {
            jac[0] = -1.0;
            jac[1] = -9.0 * u[1].powi(2) / (1.0 + u[1].powi(3)).powi(2);
            jac[2] = -9.0 * u[0].powi(2) / (1.0 + u[0].powi(3)).powi(2);
            jac[3] = -1.0;
        }
    }
    let starts: Vec<Vec<f64>> = vec![vec![0.1, 2.9], vec![2.9, 0.1], vec![1.2, 1.2]];
    let points = phase::find_fixed_points(&Toggle, &starts, 1e-12, true);
    let saddle = points.iter().find(|p| !p.kind.is_stable()).unwrap().x.clone();
    let high_v = points.iter().position(|p| p.kind.is_stable() && p.x[1] > p.x[0]).unwrap();
    // A horizon of 10 min (the decay rate is 1/min) is too short to leave the saddle.
    match phase::fate(&Toggle, &[saddle[0], saddle[1] + 1e-7], &points, 1e-6, 10.0) {
        Fate::Point(k) => assert_eq!(k, high_v),
        other => panic!("expected the v-high attractor, got {other:?}"),
    }
}

/// Ribbon demo: nuclei on either side of the boundary end in different
/// attractors (amber-on head side, cobalt-on tail side), and the continuation
/// in position finds the fold where the row switches from one to two
/// attractors between the two nuclei where the per-nucleus fixed points say so.
#[test]
fn ribbon_basins_and_fold_agree() {
    let model = crate::common::load("patterns/ribbon.toml");
    let rec = crate::common::run(&model).recording;
    let analysis = phase::analyse(&model, &rec, &phase::BasinOptions::default()).unwrap();
    let last = rec.times.len() - 1;
    let b = anlage::readout::boundaries_at(&rec, last).unwrap();
    let boundary_pct = b.iter().find(|b| b.gene == "amber").unwrap().position_pct;
    let n = rec.grid.nx;
    for i in 0..n {
        let pct = 100.0 * rec.grid.x_um(i) / rec.grid.length_um();
        let label = &analysis.basins[last][i].label;
        if pct < boundary_pct - 2.0 {
            assert_eq!(label, "amber", "nucleus {i} at {pct:.1} %");
        } else if pct > boundary_pct + 2.0 {
            assert_eq!(label, "cobalt", "nucleus {i} at {pct:.1} %");
        }
    }
    let commitment = analysis.commitment();
    assert!(commitment.iter().all(|c| c.time_min <= rec.times[last]));

    let hi = [12.0, 10.0];
    let land = phase::landscape(&model, rec.times[last], &hi);
    let stable: Vec<usize> =
        land.per_nucleus.iter().map(|ps| ps.iter().filter(|p| p.kind.is_stable()).count()).collect();
    let switches: Vec<usize> = (1..n).filter(|&i| stable[i] != stable[i - 1]).collect();
    let folds: Vec<f64> = land.branches.iter().flat_map(|b| b.folds.iter().map(|f| f.s)).collect();
    assert!(!switches.is_empty(), "stable counts {stable:?}");
    for &i in &switches {
        let (lo, hi) = (land.nucleus_pct[i - 1], land.nucleus_pct[i]);
        assert!(
            folds.iter().any(|f| *f >= lo && *f <= hi),
            "no fold between {lo:.2} and {hi:.2} %: folds {folds:?}, counts {stable:?}"
        );
    }
    eprintln!("stable counts change at {switches:?}; folds at {folds:?} %");
}
