//! Time to solution at equal accuracy on the ribbon demo: error-controlled
//! steps (the fourth-order ARK4(3) pair, and SBDF2 with its predictor)
//! against fixed-step SBDF2, each at the loosest setting that comes within
//! 1e-4 (max abs, a.u.) of a very fine fixed-step reference.
//!
//! Two yardsticks: the final state alone, and every recorded snapshot (the
//! whole kymograph). The ribbon settles into a stable steady state, which any
//! stable scheme approaches whatever its step, so the final state alone is a
//! weak test; the recording is what a modeller looks at.
//!
//! `cargo bench --bench stepping`. The reference uses 1/1024 of the demo's
//! snapshot interval as its step; its own error is estimated by Richardson
//! extrapolation against half as many steps (second order: |e| ≈ |Δ|/3).

use std::time::Instant;

use anlage::model::{Model, Scheme, Stepping};
use anlage::{RunOptions, simulate};

const TARGET: f64 = 1e-4;

/// Every snapshot of a run, [gene, nucleus] each.
fn states(model: &Model) -> Vec<ndarray::Array2<f64>> {
    simulate(model, &RunOptions { parallel: false, ..Default::default() })
        .expect("ribbon runs")
        .recording
        .states()
        .map(|s| s.expect("in memory").into_owned())
        .collect()
}

/// Max abs difference over the last snapshot only (`whole` false) or over all.
fn max_abs(a: &[ndarray::Array2<f64>], b: &[ndarray::Array2<f64>], whole: bool) -> f64 {
    let skip = if whole { 0 } else { a.len() - 1 };
    a.iter().zip(b).skip(skip).flat_map(|(a, b)| a.iter().zip(b).map(|(x, y)| (x - y).abs())).fold(0.0, f64::max)
}

fn with(model: &Model, stepping: Stepping) -> Model {
    let mut m = model.clone();
    m.clock.stepping = stepping;
    m
}

fn best_time(model: &Model, repeats: usize) -> f64 {
    (0..repeats)
        .map(|_| {
            let start = Instant::now();
            states(model);
            start.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

fn main() {
    let ribbon = Model::load(std::path::Path::new("patterns/ribbon.toml")).expect("demo model");
    let every = ribbon.clock.snapshot_every_min;
    let fixed = |per_interval: usize| with(&ribbon, Stepping::Fixed { step_min: every / per_interval as f64 });
    let reference = states(&fixed(1024));
    let coarser = states(&fixed(512));
    println!(
        "reference: step {:.3e} min, estimated own error {:.1e} (whole recording)",
        every / 1024.0,
        max_abs(&reference, &coarser, true) / 3.0
    );
    println!("target: within {TARGET:e} of the reference (max abs, a.u.)");
    for whole in [false, true] {
        compare(&ribbon, &reference, whole);
    }
}

fn compare(ribbon: &Model, reference: &[ndarray::Array2<f64>], whole: bool) {
    let every = ribbon.clock.snapshot_every_min;
    let fixed = |per_interval: usize| with(ribbon, Stepping::Fixed { step_min: every / per_interval as f64 });
    // Fixed steps: the fewest steps per snapshot interval that meet the target
    // (doubling, then bisection on the integer count).
    let error_fixed = |k: usize| max_abs(&states(&fixed(k)), reference, whole);
    let mut hi = 1;
    while error_fixed(hi) > TARGET {
        hi *= 2;
    }
    let mut lo = hi / 2;
    while hi - lo > 1 {
        let mid = (lo + hi) / 2;
        if error_fixed(mid) > TARGET { lo = mid } else { hi = mid }
    }
    let fixed_model = fixed(hi);
    let fixed_err = error_fixed(hi);

    let tf = best_time(&fixed_model, 30);
    let sf = steps(&fixed_model);
    println!("yardstick: {}", if whole { "every snapshot" } else { "final state only" });
    println!(
        "  fixed-step SBDF2   {:.4e} min: {:>7} steps, error {fixed_err:.2e}, best {tf:.4} s",
        every / hi as f64,
        sf.steps
    );
    for scheme in [Scheme::Ark4, Scheme::Sbdf2] {
        let (tol, err, stats, ta) = loosest_tolerance(ribbon, reference, whole, scheme);
        println!(
            "  error control {:<5} tol {tol:.2e}: {:>7} steps ({} rejected), error {err:.2e}, best {ta:.4} s \
             -> fixed / error-controlled time {:.1}x",
            scheme.key(),
            stats.steps,
            stats.rejected,
            tf / ta
        );
    }
}

fn steps(m: &Model) -> anlage::integrate::StepStats {
    simulate(m, &RunOptions { parallel: false, ..Default::default() }).unwrap().stats
}

/// Error control with `scheme`: the loosest tolerance that meets the target,
/// searched as finely as the fixed step count: steps of 10^(1/4) down from
/// 1e-2, then bisection on log(tol) to within 1 %. Returns the tolerance, its
/// error, its step counts and its best time.
fn loosest_tolerance(
    ribbon: &Model,
    reference: &[ndarray::Array2<f64>],
    whole: bool,
    scheme: Scheme,
) -> (f64, f64, anlage::integrate::StepStats, f64) {
    let every = ribbon.clock.snapshot_every_min;
    let adaptive = |tol: f64| {
        let mut m = with(ribbon, Stepping::Adaptive { rtol: tol, atol: tol, max_step_min: every });
        m.clock.scheme = scheme;
        m
    };
    let meets = |tol: f64| max_abs(&states(&adaptive(tol)), reference, whole) <= TARGET;
    let mut tol = 1e-2;
    while !meets(tol) {
        tol /= 10f64.powf(0.25);
    }
    let mut loose = tol * 10f64.powf(0.25);
    if tol < 1e-2 {
        while loose / tol > 1.01 {
            let mid = (loose * tol).sqrt();
            if meets(mid) { tol = mid } else { loose = mid }
        }
    }
    let model = adaptive(tol);
    let err = max_abs(&states(&model), reference, whole);
    (tol, err, steps(&model), best_time(&model, 30))
}
