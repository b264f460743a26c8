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
    let bounds = anlage::screen::final_boundaries(&model).unwrap();
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
/// parameter inside its approximate 95 % interval, and the objective is
/// consistent with χ² on 4 − 2 = 2 degrees of freedom (below its 99.9 %
/// point, 13.8; common practice, no source). Repeated over three noise draws.
#[test]
fn fit_recovers_known_parameters_within_intervals() {
    for seed in [11u64, 23, 37] {
        let (_, problem) = recovery_problem(&format!("rec{seed}"), 1.5, seed, 1200);
        let r = fit(&problem, true, &mut |_, _| {});
        assert_eq!(r.residuals.len(), 4);
        assert!(r.objective < 13.8, "seed {seed}: objective {}", r.objective);
        for (e, truth) in r.estimates.iter().zip([TRUE_LAMBDA, TRUE_K]) {
            let (lo, hi) = e.interval.expect("curvature available");
            assert!(lo <= truth && truth <= hi, "seed {seed}: {truth} outside [{lo}, {hi}] (best {})", e.value);
            assert!(e.determined, "seed {seed}: {e:?}");
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
    for name in ["fit.csv", "fit_trace.csv", "fit_residuals.csv", "fitted.toml", "fit_trace.png", "fit_boundaries.png"]
    {
        let (a, b) = (std::fs::read(outs[0].join(name)).unwrap(), std::fs::read(outs[1].join(name)).unwrap());
        assert!(a == b, "{name} differs between 1 and 2 threads");
    }
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

/// Profile likelihood of λ (Venzon & Moolgavkar 1988; Raue et al. 2009): the
/// re-fitted objective is lowest near the best fit, never below the best
/// objective by more than the re-fit's slack, rises past the 95 % line 3.84 at
/// both ends of its grid, and its 95 % region contains the true value.
#[test]
fn profile_likelihood_brackets_the_truth() {
    let (_, mut problem) = recovery_problem("profile", 1.5, 23, 1200);
    problem.profile = vec![0];
    let r = fit(&problem, true, &mut |_, _| {});
    let p = &r.profiles[0];
    assert_eq!(p.points.len(), 9);
    let (lowest_at, lowest) = p.points.iter().copied().min_by(|a, b| a.1.total_cmp(&b.1)).unwrap();
    assert!(lowest >= r.objective - 1.0, "profile {lowest} far below the fit {}", r.objective);
    let step = p.points[1].0 - p.points[0].0;
    assert!((lowest_at - r.estimates[0].value).abs() <= 1.01 * step, "lowest at {lowest_at}");
    assert!(p.points[0].1 - r.objective > 3.84 && p.points[8].1 - r.objective > 3.84, "{p:?}");
    assert!(p.points.windows(2).all(|w| w[0].0 < w[1].0));
    let inside: Vec<f64> = p.points.iter().filter(|(_, f)| f - r.objective < 3.84).map(|(v, _)| *v).collect();
    let (lo, hi) = (inside[0] - step, inside[inside.len() - 1] + step);
    assert!(lo <= TRUE_LAMBDA && TRUE_LAMBDA <= hi, "{TRUE_LAMBDA} outside [{lo}, {hi}]");
}
