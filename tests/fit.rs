//! Fitting parameters to measured boundaries (`anlage fit`).

use std::path::{Path, PathBuf};

use anlage::fit::{FitProblem, fit, objective};
use anlage::model::Model;
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};

use crate::common::root;

/// True values used to make the data: the ribbon's head gradient decay
/// length and the threshold at which it switches amber on.
const TRUE_LAMBDA: f64 = 130.0;
const TRUE_K: f64 = 0.12;

fn ribbon_with(lambda: f64, k: f64) -> String {
    std::fs::read_to_string(root().join("patterns/ribbon.toml"))
        .unwrap()
        .replace("decay_length_um = 150.0", &format!("decay_length_um = {lambda:?}"))
        .replacen("threshold = 0.1\n", &format!("threshold = {k:?}\n"), 1)
}

/// Boundaries of one genotype of the true model, each "measured" in `n`
/// embryos with Gaussian scatter of sd `sd` % (noise-free if `sd` is 0),
/// written as a measured table.
fn write_table(dir: &Path, name: &str, genotype: Option<&str>, sd: f64, seed: u64) -> PathBuf {
    let truth = Model::from_toml(&ribbon_with(TRUE_LAMBDA, TRUE_K), Path::new("truth.toml")).unwrap();
    let model = match genotype {
        Some(m) => truth.with_mutant(truth.mutants.iter().find(|x| x.name == m).unwrap()),
        None => truth,
    };
    let bounds = anlage::readout::predicted_final_boundaries(&model).unwrap();
    let mut rng = rand_pcg::Pcg64::seed_from_u64(seed);
    let n = 8usize;
    let mut text = String::from("sample,time,gene,direction,position_pct,sd_pct,n\n");
    for b in &bounds {
        let mean = if sd > 0.0 {
            let noise = Normal::new(0.0, sd).unwrap();
            (0..n).map(|_| b.position_pct + noise.sample(&mut rng)).sum::<f64>() / n as f64
        } else {
            b.position_pct
        };
        // The stated sd is the scatter per embryo; the fit weighs the mean by sd/√n.
        text.push_str(&format!("mean,,{},{},{mean:?},{:?},{n}\n", b.gene, b.direction, sd.max(0.5)));
    }
    let path = dir.join(format!("{name}.csv"));
    std::fs::write(&path, text).unwrap();
    path
}

/// A model file (the ribbon at its file values) that fits λ and K to the wild
/// type and the `head x2` mutant.
fn recovery_problem(tag: &str, sd: f64, seed: u64, evaluations: usize) -> (PathBuf, FitProblem) {
    let dir = std::env::temp_dir().join(format!("anlage-fit-{}-{tag}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    write_table(&dir, "wt", None, sd, seed);
    write_table(&dir, "x2", Some("head x2"), sd, seed + 1);
    let text = format!(
        "{}\n[fit]\nseed = 4\nevaluations = {evaluations}\n\
         [[fit.parameter]]\nname = \"head.decay_length_um\"\nmin = 80.0\nmax = 250.0\n\
         [[fit.parameter]]\nname = \"head->amber.threshold\"\nmin = 0.03\nmax = 0.3\nscale = \"log\"\n\
         [[fit.data]]\ntable = \"wt.csv\"\n[[fit.data]]\ntable = \"x2.csv\"\ngenotype = \"head x2\"\n",
        ribbon_with(150.0, 0.1)
    );
    let path = dir.join("fit.toml");
    std::fs::write(&path, text).unwrap();
    let model = Model::load(&path).unwrap();
    (path, FitProblem::from_model(&model).unwrap())
}

/// Scored against its own noise-free boundaries, the true model's objective
/// is zero; a fit that starts at the truth stays there.
#[test]
fn objective_is_zero_at_the_truth_and_a_fit_there_stays() {
    let (_, mut problem) = recovery_problem("zero", 0.0, 1, 60);
    assert!(objective::objective(&problem, &[TRUE_LAMBDA, TRUE_K]) < 1e-18);
    assert!(objective::objective(&problem, &[150.0, 0.1]) > 1.0);
    for p in &mut problem.params {
        p.start = if p.name.starts_with("head.") { TRUE_LAMBDA } else { TRUE_K };
    }
    let r = fit(&problem, true, &mut |_, _| {});
    assert!(r.objective < 1e-18, "{}", r.objective);
    assert!((r.estimates[0].value - TRUE_LAMBDA).abs() < 1e-9 && (r.estimates[1].value - TRUE_K).abs() < 1e-12);
}

/// Parameter recovery: from boundaries made by the model itself with noise
/// of a known size (sd 1.5 % per embryo, 8 embryos), the fit puts each true
/// parameter inside its 95 % profile-likelihood interval, and the objective is
/// consistent with χ² on 4 − 2 = 2 degrees of freedom (below its 99.9 %
/// point, 13.8; common practice, no source). Repeated over three noise draws.
#[test]
fn fit_recovers_known_parameters_within_intervals() {
    for seed in [11u64, 23, 37] {
        let (_, problem) = recovery_problem(&format!("rec{seed}"), 1.5, seed, 1200);
        let r = fit(&problem, true, &mut |_, _| {});
        assert_eq!(r.residuals.len(), 4);
        assert!(r.objective < 13.8, "seed {seed}: objective {}", r.objective);
        assert_eq!(r.dof, 2);
        assert!(r.p_value.is_some_and(|p| p > 1e-3), "{:?}", r.p_value);
        for (e, truth) in r.estimates.iter().zip([TRUE_LAMBDA, TRUE_K]) {
            let (lo, hi) = e.interval;
            assert!(lo <= truth && truth <= hi, "seed {seed}: {truth} outside [{lo}, {hi}] (best {})", e.value);
            assert!(e.determined && e.closed == (true, true), "seed {seed}: {e:?}");
        }
        let c = r.correlation.as_ref().unwrap();
        assert!((c[0][0] - 1.0).abs() < 1e-9 && (c[0][1] - c[1][0]).abs() < 1e-9 && c[0][1].abs() <= 1.0);
    }
}

/// `anlage fit` writes the same bytes with 1 and 2 threads, and its fitted
/// model runs unchanged.
#[test]
fn fit_cli_is_deterministic_and_its_model_runs() {
    let (model, _) = recovery_problem("cli", 1.5, 5, 150);
    let exe = env!("CARGO_BIN_EXE_anlage");
    let mut outs = Vec::new();
    for threads in ["1", "2"] {
        let out = model.with_file_name(format!("out{threads}"));
        let o = std::process::Command::new(exe)
            .args(["fit", model.to_str().unwrap(), "-q", "--threads", threads, "-o", out.to_str().unwrap()])
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        outs.push(out);
    }
    for name in [
        "fit.csv",
        "fit_trace.csv",
        "fit_residuals.csv",
        "fitted.toml",
        "fit_trace.png",
        "fit_boundaries.png",
        "fit_starts.csv",
        "fit_profiles.csv",
        "fit_combinations.csv",
    ] {
        let (a, b) = (std::fs::read(outs[0].join(name)).unwrap(), std::fs::read(outs[1].join(name)).unwrap());
        assert!(a == b, "{name} differs between 1 and 2 threads");
    }
    // --json: the values of fit.csv, and the verdict, on standard output.
    let o = std::process::Command::new(exe)
        .args(["fit", model.to_str().unwrap(), "--json", "-o", model.with_file_name("outj").to_str().unwrap()])
        .output()
        .unwrap();
    let doc: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let table = std::fs::read_to_string(outs[0].join("fit.csv")).unwrap();
    for (k, line) in table.lines().skip(1).enumerate() {
        let value: f64 = line.split(',').nth(1).unwrap().parse().unwrap();
        assert_eq!(doc["parameters"][k]["value"].as_f64(), Some(value));
    }
    assert!(["converged", "converged locally only", "not converged"].contains(&doc["verdict"].as_str().unwrap()));
    let fitted = outs[0].join("fitted.toml");
    let run = outs[0].join("run");
    let o = std::process::Command::new(exe)
        .args(["run", fitted.to_str().unwrap(), "-q", "--no-pictures", "-o", run.to_str().unwrap()])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}

/// A [fit] that names an unknown parameter or genotype is bad input with the line.
#[test]
fn bad_fit_sections_are_refused_with_the_line() {
    let base = ribbon_with(150.0, 0.1);
    for (fit, want) in [
        (
            "[fit]\n[[fit.parameter]]\nname = \"amber.speed\"\nmin = 1.0\nmax = 2.0\n[[fit.data]]\ntable = \"x.csv\"\n",
            "`fit.parameter[0].name` `amber.speed`: genes have production, decay, diffusion or bias",
        ),
        (
            "[fit]\n[[fit.parameter]]\nname = \"amber.production\"\nmin = 2.0\nmax = 1.0\n[[fit.data]]\ntable = \"x.csv\"\n",
            "`fit.parameter[0].min` and max are 2 and 1; give finite bounds with min < max",
        ),
        (
            "[fit]\n[[fit.parameter]]\nname = \"amber.production\"\nmin = 0.5\nmax = 2.0\n[[fit.data]]\ntable = \"x.csv\"\ngenotype = \"tall\"\n",
            "`fit.data[0].genotype` `tall` is not a declared mutant",
        ),
    ] {
        let text = format!("{base}\n{fit}");
        let model = Model::from_toml(&text, Path::new("f.toml")).unwrap();
        let err = FitProblem::from_model(&model).unwrap_err().to_string();
        assert!(err.starts_with("f.toml:") && err.contains(want), "{err}");
    }
    let none = Model::from_toml(&base, Path::new("f.toml")).unwrap();
    assert!(FitProblem::from_model(&none).unwrap_err().to_string().contains("there is no [fit] section"));
}

/// Profile likelihood (Venzon & Moolgavkar 1988; Raue et al. 2009): at each
/// end of λ's 95 % interval the objective re-minimised over K (checked here
/// by an independent one-dimensional scan of K, not the fit's own polish)
/// crosses 3.84 above the best: below it just inside the end, above it just
/// outside (0.5 µm either way; the ribbon's boundary is pinned between nuclei,
/// so the profile is a staircase and the crossing is often a jump). No
/// profile point falls below the best.
#[test]
fn profile_bounds_sit_where_the_refitted_objective_rises_by_3_84() {
    let (_, problem) = recovery_problem("profile", 1.5, 23, 1200);
    let r = fit(&problem, true, &mut |_, _| {});
    let e = &r.estimates[0];
    assert!(e.closed == (true, true), "{e:?}");
    assert!(r.profiles[0].points.iter().all(|(_, f)| *f >= r.objective - 1e-6 * (1.0 + r.objective)));
    let k = &problem.params[1];
    let profiled = |lambda: f64| {
        // A dense scan of K in the unit range, then a golden-section refinement.
        let f = |z: f64| objective::objective(&problem, &[lambda, k.value(z)]);
        let best = (0..=400).map(|i| i as f64 / 400.0).min_by(|a, b| f(*a).total_cmp(&f(*b))).unwrap();
        let (mut a, mut b) = ((best - 0.0025).max(0.0), (best + 0.0025).min(1.0));
        for _ in 0..40 {
            let (c, d) = (b - 0.618 * (b - a), a + 0.618 * (b - a));
            if f(c) < f(d) { b = d } else { a = c }
        }
        f(0.5 * (a + b)).min(f(best))
    };
    for (end, outward) in [(e.interval.0, -1.0), (e.interval.1, 1.0)] {
        let inside = profiled(end - outward * 0.5) - r.objective;
        let outside = profiled(end + outward * 0.5) - r.objective;
        assert!(inside < 3.84 + 0.3 && outside > 3.84 - 0.3, "at λ = {end}: {inside} inside, {outside} outside");
    }
}

/// The local polish on NIST's nonlinear-regression reference problem Misra1a
/// (y = b₁(1 − e^(−b₂x)), 14 points; NIST Statistical Reference Datasets,
/// certified values to 11 digits, quoted from memory and confirmed by SciPy's
/// least_squares in tests/reference/misra1a.py): from NIST's first start
/// (500, 1e-4) it lands on the certified b₁, b₂ and residual sum of squares,
/// and s·√((JᵀJ)⁻¹) from its slopes gives the certified standard errors.
#[test]
fn polish_reproduces_nist_misra1a() {
    use anlage::fit::lsq;
    let reference: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(root().join("tests/reference/misra1a.json")).unwrap()).unwrap();
    let column =
        |k: &str| -> Vec<f64> { reference[k].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect() };
    let (x, y) = (column("x"), column("y"));
    let cert = |k: &str| reference["certified"][k].as_f64().unwrap();
    // b₁ on [100, 600], b₂ on [1e-5, 1e-3], both linear.
    let b1 = |u: f64| 100.0 + 500.0 * u;
    let b2 = |u: f64| 1e-5 + (1e-3 - 1e-5) * u;
    let res = |u: &[f64]| {
        Some(x.iter().zip(&y).map(|(x, y)| b1(u[0]) * (1.0 - (-b2(u[1]) * x).exp()) - y).collect::<Vec<f64>>())
    };
    let start = [(500.0 - 100.0) / 500.0, (1e-4 - 1e-5) / (1e-3 - 1e-5)];
    let h = lsq::stair_steps(&res, &start, 14, &[1e-12; 14], false).unwrap();
    let p = lsq::polish(&res, &start, &[0, 1], &h, false);
    assert!(p.converged, "{p:?}");
    assert!((b1(p.u[0]) / cert("b1") - 1.0).abs() < 1e-6, "b1 {}", b1(p.u[0]));
    assert!((b2(p.u[1]) / cert("b2") - 1.0).abs() < 1e-6, "b2 {}", b2(p.u[1]));
    assert!((p.value / cert("rss") - 1.0).abs() < 1e-9, "rss {}", p.value);
    let jac = lsq::regression_slopes(&res, &p.u, 14, &h, false).unwrap();
    let cov = lsq::covariance(&jac).unwrap();
    let s2 = p.value / 12.0;
    let se1 = 500.0 * (s2 * cov[(0, 0)]).sqrt();
    let se2 = (1e-3 - 1e-5) * (s2 * cov[(1, 1)]).sqrt();
    assert!((se1 / cert("sd_b1") - 1.0).abs() < 1e-4, "sd b1 {se1}");
    assert!((se2 / cert("sd_b2") - 1.0).abs() < 1e-4, "sd b2 {se2}");
}

/// The ribbon's boundaries depend on cobalt's production p and the
/// cobalt → amber threshold K only through p/K (cobalt's level scales with p,
/// the Hill term reads c/K, and each boundary sits at half its gene's
/// maximum): scaling both by 0.6 moves no boundary (checked first). Fitting
/// both to noise-free data of the truth must say that only the ratio is
/// determined, and call neither parameter determined.
#[test]
fn an_exact_trade_off_is_named_and_neither_partner_is_determined() {
    let dir = std::env::temp_dir().join(format!("anlage-fit-{}-ratio", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    write_table(&dir, "wt", None, 0.0, 1);
    write_table(&dir, "x2", Some("head x2"), 0.0, 2);
    let truth = Model::from_toml(&ribbon_with(TRUE_LAMBDA, TRUE_K), Path::new("t.toml")).unwrap();
    let scaled = truth
        .parse_mutant(r#"{ name = "both", scale = { "cobalt.production" = 0.6, "cobalt->amber.threshold" = 0.6 } }"#)
        .unwrap();
    let (a, b) = (
        anlage::readout::predicted_final_boundaries(&truth).unwrap(),
        anlage::readout::predicted_final_boundaries(&truth.with_mutant(&scaled)).unwrap(),
    );
    assert_eq!(a.len(), b.len());
    assert!(a.iter().zip(&b).all(|(a, b)| (a.position_pct - b.position_pct).abs() < 1e-6), "{a:?} {b:?}");
    let text = format!(
        "{}\n[fit]\nseed = 2\nevaluations = 300\n\
         [[fit.parameter]]\nname = \"cobalt.production\"\nmin = 0.3\nmax = 3.0\nscale = \"log\"\n\
         [[fit.parameter]]\nname = \"cobalt->amber.threshold\"\nmin = 0.5\nmax = 8.0\nscale = \"log\"\n\
         [[fit.data]]\ntable = \"wt.csv\"\n[[fit.data]]\ntable = \"x2.csv\"\ngenotype = \"head x2\"\n",
        ribbon_with(TRUE_LAMBDA, TRUE_K)
    );
    let path = dir.join("fit.toml");
    std::fs::write(&path, text).unwrap();
    let problem = FitProblem::from_model(&Model::load(&path).unwrap()).unwrap();
    let r = fit(&problem, true, &mut |_, _| {});
    assert!(r.objective < 1e-6, "{}", r.objective);
    assert_eq!(r.weak.len(), 1, "{:?}", r.weak);
    assert!(
        r.weak[0].text.contains("only the ratio cobalt.production / cobalt->amber.threshold is determined"),
        "{}",
        r.weak[0].text
    );
    assert!(r.estimates.iter().all(|e| !e.determined && e.in_weak), "{:?}", r.estimates);
    // Along the ratio p/K = 0.4 the profile of p stays flat over its whole
    // range (K can follow: 0.75 … 7.5 lies inside [0.5, 8]), so it is open on
    // both sides; that of K rises only where p meets its bounds, at
    // K = 0.3/0.4 = 0.75 and 3.0/0.4 = 7.5.
    let (p, k) = (&r.estimates[0], &r.estimates[1]);
    assert_eq!(p.closed, (false, false), "{p:?}");
    assert!((p.interval.0 - 0.3).abs() < 1e-9 && (p.interval.1 - 3.0).abs() < 1e-9, "{p:?}");
    assert!((k.interval.0 / 0.75 - 1.0).abs() < 0.03 && (k.interval.1 / 7.5 - 1.0).abs() < 0.03, "{k:?}");
}

/// A global search stopped by its budget while the objective still falls is
/// reported as not converged, in the result and in the report's words.
#[test]
fn a_search_stopped_by_its_budget_while_improving_says_so() {
    let (path, mut problem) = recovery_problem("budget", 0.5, 3, 80);
    for p in &mut problem.params {
        p.start = p.max;
    }
    let r = fit(&problem, true, &mut |_, _| {});
    let (quarter, end) = r.convergence.still_improving.expect("still improving");
    assert!(quarter - end > anlage::fit::quality::STILL_IMPROVING);
    assert!(!r.convergence.converged);
    assert!(r.convergence.lines[0].contains("it was still improving"), "{:?}", r.convergence.lines);
    let verdict = if r.convergence.local { "CONVERGED LOCALLY ONLY" } else { "NOT CONVERGED" };
    let exe = env!("CARGO_BIN_EXE_anlage");
    let text = std::fs::read_to_string(&path).unwrap().replace("evaluations = 80", "evaluations = 80\nstarts = 1");
    std::fs::write(&path, text).unwrap();
    let o = std::process::Command::new(exe)
        .args(["fit", path.to_str().unwrap(), "-o", path.with_file_name("out").to_str().unwrap()])
        .output()
        .unwrap();
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success() && out.contains(verdict) && !out.contains("\nconverged\n"), "{out}");
}

/// When the model cannot fit the data (here the mutant's amber and cobalt
/// boundaries, which the ribbon's toggle keeps together, are measured 10 %
/// apart), the fit says POOR FIT and calls no parameter determined: the 3.84
/// rule assumes the model is right (a trial found tight "determined"
/// intervals on a poor fit).
#[test]
fn a_poor_fit_determines_nothing() {
    let (path, _) = recovery_problem("poor", 0.0, 9, 400);
    let table = path.with_file_name("x2.csv");
    let text = std::fs::read_to_string(&table).unwrap();
    let moved: Vec<String> = text
        .lines()
        .map(|l| {
            let mut cells: Vec<String> = l.split(',').map(String::from).collect();
            if let Ok(x) = cells[4].parse::<f64>() {
                cells[4] = format!("{}", if cells[2] == "amber" { x - 5.0 } else { x + 5.0 });
            }
            cells.join(",")
        })
        .collect();
    std::fs::write(&table, moved.join("\n") + "\n").unwrap();
    let problem = FitProblem::from_model(&Model::load(&path).unwrap()).unwrap();
    let r = fit(&problem, true, &mut |_, _| {});
    assert!(r.p_value.is_some_and(|p| p < anlage::fit::quality::POOR_FIT), "{:?} {}", r.p_value, r.objective);
    assert!(r.estimates.iter().all(|e| !e.determined), "{:?}", r.estimates);
}

/// Multi-start fits sharded: 5 starts of a fit of three parameters, two of
/// which enter only as the ratio p/K (the trade-off of the test above) and
/// one, the head gradient's decay length λ, fixed by the data. Run whole,
/// and as 3 shards merged, the outputs are the same bytes; a merge with a
/// shard missing names the command that runs it. The spread of the optima
/// over the agreeing starts pins λ down and shows p and K wandering
/// together (correlation near +1 in log units).
#[test]
fn a_multi_start_fit_sharded_in_three_merges_into_the_same_fit_and_shows_the_trade_off() {
    let dir = std::env::temp_dir().join(format!("anlage-fit-{}-shards", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    write_table(&dir, "wt", None, 0.0, 1);
    write_table(&dir, "x2", Some("head x2"), 0.0, 2);
    let text = format!(
        "{}\n[fit]\nseed = 7\nevaluations = 240\nstarts = 5\n\
         [[fit.parameter]]\nname = \"head.decay_length_um\"\nmin = 80.0\nmax = 250.0\n\
         [[fit.parameter]]\nname = \"cobalt.production\"\nmin = 0.3\nmax = 3.0\nscale = \"log\"\n\
         [[fit.parameter]]\nname = \"cobalt->amber.threshold\"\nmin = 0.5\nmax = 8.0\nscale = \"log\"\n\
         [[fit.data]]\ntable = \"wt.csv\"\n[[fit.data]]\ntable = \"x2.csv\"\ngenotype = \"head x2\"\n",
        ribbon_with(TRUE_LAMBDA, TRUE_K)
    );
    let model = dir.join("fit.toml");
    std::fs::write(&model, text).unwrap();
    let m = model.to_str().unwrap();
    let (whole, sharded) = (dir.join("whole"), dir.join("sharded"));
    let run = |extra: &[&str], out: &Path| {
        let mut args = vec!["fit", m];
        args.extend_from_slice(extra);
        args.extend_from_slice(&["-o", out.to_str().unwrap()]);
        crate::common::anlage(&args)
    };
    let o = run(&["--json"], &whole);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let json_whole = String::from_utf8_lossy(&o.stdout).to_string();
    for k in [1, 3] {
        let o = run(&["--shard", &format!("{k}/3")], &sharded);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let o = run(&["--merge"], &sharded);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--shard 2/3"), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(!sharded.join("fit.csv").exists(), "nothing is written while a shard is missing");
    assert!(run(&["--shard", "2/3"], &sharded).status.success());
    let o = run(&["--merge", "--json"], &sharded);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let json_merged = String::from_utf8_lossy(&o.stdout).to_string();
    let mut names: Vec<String> = std::fs::read_dir(&whole)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| [".csv", ".png", ".toml"].iter().any(|x| n.ends_with(x)))
        .collect();
    names.sort();
    assert!(names.len() >= 6, "{names:?}");
    for name in &names {
        assert!(
            std::fs::read(whole.join(name)).unwrap() == std::fs::read(sharded.join(name)).unwrap(),
            "{name} differs between the whole fit and the merged shards"
        );
    }
    let strip = |t: &str| {
        let mut v: serde_json::Value = serde_json::from_str(t).unwrap();
        v.as_object_mut().unwrap().remove("outputs");
        v
    };
    let (a, b) = (strip(&json_whole), strip(&json_merged));
    assert_eq!(a, b);
    let spread = &a["optima_spread"];
    let params = spread["parameters"].as_array().unwrap();
    assert!(spread["agreeing_starts"].as_array().unwrap().len() >= 3, "{spread}");
    assert_eq!(params[0]["pinned"], true, "λ is fixed by the data: {spread}");
    assert_eq!((params[1]["pinned"].as_bool(), params[2]["pinned"].as_bool()), (Some(false), Some(false)), "{spread}");
    let trade = spread["trade_offs"].as_array().unwrap();
    assert_eq!(trade.len(), 1, "{spread}");
    assert_eq!(trade[0]["parameters"], serde_json::json!(["cobalt.production", "cobalt->amber.threshold"]));
    assert!(trade[0]["correlation"].as_f64().unwrap() > 0.99, "{spread}");
    // Shards of a fit with other starts are refused.
    let o = run(&["--merge", "--starts", "4"], &sharded);
    assert_eq!(o.status.code(), Some(2), "{}", String::from_utf8_lossy(&o.stderr));
}
