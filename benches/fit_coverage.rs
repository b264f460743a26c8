//! Coverage of the fit's intervals: `cargo bench --bench fit_coverage`.
//!
//! A scenario of its own (invented names): a row of 100 nuclei, 5 µm apart,
//! with an exponential gradient `beacon` from the left. `teal` is switched on
//! by beacon (Hill, n = 3); `russet` is switched on by beacon (n = 2) and
//! repressed by teal (n = 4), so it forms a stripe behind teal's domain. Each
//! genotype shows three smooth, gradient-read boundaries (teal falling, russet
//! rising, russet falling). The mutant `beacon half` halves the gradient's
//! dosage, which moves every boundary by about λ·ln 2 and so fixes the decay
//! length λ apart from the thresholds.
//!
//! For each noise seed the "measured" mean of every boundary is the true one
//! plus Normal(0, sd/√n), sd 0.75 % of the length, n = 10 embryos; the tables
//! are written to a temporary folder and fitted twice: λ and the beacon→teal
//! threshold free (2 parameters; the beacon→russet threshold held at its true
//! value), then also the beacon→russet threshold (3).
//! Bounds contain the truth but are not centred on it; starts are the model
//! file's values, not the truth.
//!
//! Per parameter it reports how often the 95 % profile interval (and the
//! curvature interval) contains the truth, the scatter of the fitted values
//! across seeds against the mean profile half-width / 1.96, and how many
//! fits said they converged. As an independent check it also re-minimises
//! the objective with each parameter held at its true value (a bounded
//! Levenberg–Marquardt from the fitted point with small, smooth slope steps)
//! and compares that rise with 3.84.
//!
//! As a reference independent of the fit, it also gives the estimates a
//! linear model (J at the truth) would make from the same noise draws: with
//! a finite number of seeds the scatter itself strays from its expectation,
//! and this column shows by how much.
//!
//! `FIT_COVERAGE_SEEDS=N` runs N seeds instead of the default, and
//! `FIT_COVERAGE_BUDGET=A,B` sets the global-search budgets (for trials).
//! The table goes to stdout and to benches/fit_coverage_last.txt.

use std::fmt::Write as _;
use std::path::Path;
use std::time::Instant;

use anlage::fit::{FitProblem, FitResult, fit, lsq, objective};
use anlage::model::Model;
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};

/// Noise seeds by default.
const SEEDS: u64 = 100;
/// Embryos per measured mean.
const EMBRYOS: usize = 10;
/// Scatter per embryo, % of the length.
const SD_PCT: f64 = 0.75;
/// Global-search budgets (objective evaluations) for 2 and 3 free parameters.
const BUDGET: [usize; 2] = [1200, 2000];

/// True values.
const TRUE_LAMBDA: f64 = 120.0;
const TRUE_KT: f64 = 0.2;
const TRUE_KR: f64 = 0.05;
/// The model file's values (the fit's starts).
const FILE_LAMBDA: f64 = 160.0;
const FILE_KT: f64 = 0.3;
const FILE_KR: f64 = 0.08;

const PARAM_NAMES: [&str; 3] = ["beacon.decay_length_um", "beacon->teal.threshold", "beacon->russet.threshold"];
const TRUTH: [f64; 3] = [TRUE_LAMBDA, TRUE_KT, TRUE_KR];
/// Search bounds: contain the truth, not centred on it (log scale for all).
const BOUNDS: [(f64, f64); 3] = [(60.0, 300.0), (0.05, 0.8), (0.01, 0.3)];

fn model_text(lambda: f64, kt: f64, kr: f64) -> String {
    format!(
        r##"title = "Coverage scenario: two genes read off one gradient"

[tissue]
nuclei = [100]
spacing_um = 5.0
edges = "sealed"

[clock]
until_min = 200.0
step_min = 0.5
snapshot_every_min = 10.0

[[gradient]]
name = "beacon"
shape = "exponential"
from = "left"
peak = 1.0
decay_length_um = {lambda:?}

[[gene]]
name = "teal"
production = 1.0
decay = 0.1
diffusion = 0.5

[[gene]]
name = "russet"
production = 1.0
decay = 0.1
diffusion = 0.5

[circuit]
kinetics = "hill"

[[circuit.link]]
from = "beacon"
to = "teal"
sign = "+"
threshold = {kt:?}
hill = 3

[[circuit.link]]
from = "beacon"
to = "russet"
sign = "+"
threshold = {kr:?}
hill = 2

[[circuit.link]]
from = "teal"
to = "russet"
sign = "-"
threshold = 2.0
hill = 4

[[mutant]]
name = "beacon half"
scale = {{ "beacon.peak" = 0.5 }}
"##
    )
}

/// One fit of one seed.
struct Run {
    values: Vec<f64>,
    intervals: Vec<(f64, f64)>,
    closed: Vec<(bool, bool)>,
    approx: Vec<Option<(f64, f64)>>,
    determined: Vec<bool>,
    /// Objective at the best point, and at the true values.
    objective: f64,
    truth_objective: f64,
    /// Profiled objective with parameter j held at the truth, minus the best
    /// objective (independent re-minimisation).
    truth_rise: Vec<f64>,
    /// An independent polish of all parameters from the fitted point with
    /// small slope steps: its objective and values.
    repolish: (f64, Vec<f64>),
    converged: bool,
    profile_lower: bool,
    evaluations: usize,
    seconds: f64,
    lines: Vec<String>,
}

/// σ of a measured mean, % of the length.
fn sigma() -> f64 {
    SD_PCT / (EMBRYOS as f64).sqrt()
}

/// A measured table of `bounds` with noise drawn from `rng`; the draws in σ
/// units are appended to `z`.
fn measured_table(bounds: &[anlage::readout::Boundary], rng: &mut rand_pcg::Pcg64, z: &mut Vec<f64>) -> String {
    let noise = Normal::new(0.0, sigma()).unwrap();
    let mut text = String::from("sample,time,gene,direction,position_pct,sd_pct,n\n");
    for b in bounds {
        let e = noise.sample(rng);
        z.push(e / sigma());
        let mean = b.position_pct + e;
        text.push_str(&format!("mean,,{},{},{mean:?},{SD_PCT:?},{EMBRYOS}\n", b.gene, b.direction));
    }
    text
}

/// Every boundary position (%) of the wild type then the mutant at the
/// values (λ, K_teal, K_russet).
fn positions(v: &[f64]) -> Vec<f64> {
    let m = Model::from_toml(&model_text(v[0], v[1], v[2]), Path::new("j.toml")).unwrap();
    let h = m.with_mutant(m.mutants.iter().find(|x| x.name == "beacon half").unwrap());
    let (a, b) = (
        anlage::readout::predicted_final_boundaries(&m).unwrap(),
        anlage::readout::predicted_final_boundaries(&h).unwrap(),
    );
    a.iter().chain(&b).map(|b| b.position_pct).collect()
}

/// The linearised reference, independent of the fit: J = ∂x/∂ln p / σ at the
/// truth (central differences, ±0.1 %), and for `free` parameters the
/// estimate truth·exp((JᵀJ)⁻¹Jᵀz) that the noise z (σ units) would give to a
/// linear model, with its predicted sd (values).
struct Linear {
    jac: nalgebra::DMatrix<f64>,
}

impl Linear {
    fn new() -> Linear {
        let e = 1e-3f64;
        let columns: Vec<Vec<f64>> = (0..3)
            .map(|j| {
                let (mut up, mut dn) = (TRUTH.to_vec(), TRUTH.to_vec());
                up[j] *= e.exp();
                dn[j] *= (-e).exp();
                positions(&up).iter().zip(positions(&dn)).map(|(a, b)| (a - b) / (2.0 * e) / sigma()).collect()
            })
            .collect();
        let rows = columns[0].len();
        Linear { jac: nalgebra::DMatrix::from_fn(rows, 3, |i, j| columns[j][i]) }
    }
    fn cov(&self, free: usize) -> nalgebra::DMatrix<f64> {
        let j = self.jac.columns(0, free).into_owned();
        (j.transpose() * &j).try_inverse().expect("identifiable")
    }
    fn sd(&self, free: usize) -> Vec<f64> {
        let c = self.cov(free);
        (0..free).map(|j| TRUTH[j] * c[(j, j)].sqrt()).collect()
    }
    fn estimate(&self, free: usize, z: &[f64]) -> Vec<f64> {
        let j = self.jac.columns(0, free).into_owned();
        let d = self.cov(free) * j.transpose() * nalgebra::DVector::from_column_slice(z);
        (0..free).map(|k| TRUTH[k] * d[k].exp()).collect()
    }
}

/// The budgets, or `FIT_COVERAGE_BUDGET=A,B` (for trials).
fn budget() -> [usize; 2] {
    std::env::var("FIT_COVERAGE_BUDGET")
        .ok()
        .and_then(|s| {
            let v: Vec<usize> = s.split(',').filter_map(|x| x.trim().parse().ok()).collect();
            (v.len() == 2).then(|| [v[0], v[1]])
        })
        .unwrap_or(BUDGET)
}

fn fit_text(free: usize) -> String {
    let kr = if free == 3 { FILE_KR } else { TRUE_KR };
    let mut text = model_text(FILE_LAMBDA, FILE_KT, kr);
    text.push_str(&format!("\n[fit]\nseed = 5\nevaluations = {}\nsd_floor_pct = 0.1\n", budget()[free - 2]));
    for j in 0..free {
        let (lo, hi) = BOUNDS[j];
        text.push_str(&format!(
            "\n[[fit.parameter]]\nname = \"{}\"\nmin = {lo:?}\nmax = {hi:?}\nscale = \"log\"\n",
            PARAM_NAMES[j]
        ));
    }
    text.push_str(
        "\n[[fit.data]]\ntable = \"wt.csv\"\n\n[[fit.data]]\ntable = \"half.csv\"\ngenotype = \"beacon half\"\n",
    );
    text
}

/// The objective re-minimised over the other parameters with parameter `j`
/// held at its true value, started from the fitted point; minus the best.
fn truth_rise(problem: &FitProblem, r: &FitResult, j: usize) -> f64 {
    let res = |u: &[f64]| {
        objective::residuals(problem, &problem.values(u)).map(|r| r.iter().map(|x| x.value).collect::<Vec<f64>>())
    };
    let mut u: Vec<f64> = problem.params.iter().zip(&r.values()).map(|(p, v)| p.unit(*v)).collect();
    u[j] = problem.params[j].unit(TRUTH[j]);
    let others: Vec<usize> = (0..u.len()).filter(|&k| k != j).collect();
    // Boundaries here are interpolated, not pinned: small central steps are
    // true derivatives. Two polishes from the fitted point and from the truth.
    let h = vec![1e-4; u.len()];
    let a = lsq::polish(&res, &u, &others, &h, false).value;
    let t: Vec<f64> = problem.params.iter().zip(TRUTH).map(|(p, v)| p.unit(v)).collect();
    let b = lsq::polish(&res, &t, &others, &h, false).value;
    a.min(b) - r.objective
}

/// All parameters re-polished from the fitted point with small central
/// slope steps (true derivatives of these smooth boundaries).
fn repolish(problem: &FitProblem, r: &FitResult) -> (f64, Vec<f64>) {
    let res = |u: &[f64]| {
        objective::residuals(problem, &problem.values(u)).map(|r| r.iter().map(|x| x.value).collect::<Vec<f64>>())
    };
    let u: Vec<f64> = problem.params.iter().zip(&r.values()).map(|(p, v)| p.unit(*v)).collect();
    let all: Vec<usize> = (0..u.len()).collect();
    let p = lsq::polish(&res, &u, &all, &vec![1e-4; u.len()], false);
    (p.value, problem.values(&p.u))
}

fn one_fit(dir: &Path, free: usize) -> Run {
    let path = dir.join(format!("fit{free}.toml"));
    std::fs::write(&path, fit_text(free)).unwrap();
    let model = Model::load(&path).unwrap();
    let problem = FitProblem::from_model(&model).unwrap();
    let start = Instant::now();
    let r = fit(&problem, true, &mut |_, _| {});
    let seconds = start.elapsed().as_secs_f64();
    let truth_objective = objective::objective(&problem, &TRUTH[..free]);
    let truth_rise = (0..free).map(|j| truth_rise(&problem, &r, j)).collect();
    Run {
        values: r.values(),
        intervals: r.estimates.iter().map(|e| e.interval).collect(),
        closed: r.estimates.iter().map(|e| e.closed).collect(),
        approx: r.estimates.iter().map(|e| e.approx).collect(),
        determined: r.estimates.iter().map(|e| e.determined).collect(),
        objective: r.objective,
        truth_objective,
        truth_rise,
        repolish: repolish(&problem, &r),
        converged: r.convergence.converged,
        profile_lower: r.convergence.lines.iter().any(|l| l.contains("a profile found a lower objective")),
        evaluations: r.evaluations,
        seconds,
        lines: r.convergence.lines.clone(),
    }
}

fn mean(x: &[f64]) -> f64 {
    x.iter().sum::<f64>() / x.len() as f64
}

fn sd(x: &[f64]) -> f64 {
    let m = mean(x);
    (x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (x.len() as f64 - 1.0).max(1.0)).sqrt()
}

fn main() {
    let seeds: u64 = std::env::var("FIT_COVERAGE_SEEDS").ok().and_then(|s| s.parse().ok()).unwrap_or(SEEDS);
    let all = Instant::now();
    let truth = Model::from_toml(&model_text(TRUE_LAMBDA, TRUE_KT, TRUE_KR), Path::new("truth.toml")).unwrap();
    let half = truth.with_mutant(truth.mutants.iter().find(|m| m.name == "beacon half").unwrap());
    let wt_bounds = anlage::readout::predicted_final_boundaries(&truth).unwrap();
    let half_bounds = anlage::readout::predicted_final_boundaries(&half).unwrap();

    let mut out = String::new();
    let _ = writeln!(
        out,
        "fit coverage: 100 nuclei (5 µm), exponential gradient `beacon` from the left; teal (beacon-read, n = 3) \
         and a russet stripe (beacon-read n = 2, repressed by teal); mutant `beacon half` (peak × 0.5)."
    );
    let _ = writeln!(
        out,
        "truth: λ = {TRUE_LAMBDA} µm, beacon->teal K = {TRUE_KT}, beacon->russet K = {TRUE_KR}; starts {FILE_LAMBDA}, \
         {FILE_KT}, {FILE_KR}; bounds {BOUNDS:?} (log)."
    );
    let _ = writeln!(
        out,
        "noise: each mean = truth + Normal(0, {SD_PCT} %/√{EMBRYOS}); {seeds} seeds; DE budgets {:?} (2, 3 \
         parameters); {} threads.",
        budget(),
        rayon::current_num_threads()
    );
    for (name, b) in [("wild type", &wt_bounds), ("beacon half", &half_bounds)] {
        let list: Vec<String> =
            b.iter().map(|b| format!("{} {} {:.2} %", b.gene, b.direction, b.position_pct)).collect();
        let _ = writeln!(out, "true boundaries, {name}: {}", list.join("; "));
    }
    let linear = Linear::new();
    for free in [2usize, 3] {
        let _ = writeln!(
            out,
            "linearised sd at the truth, {free} free: {:.5?} (J = ∂x/∂ln p / σ, central differences)",
            linear.sd(free)
        );
    }
    print!("{out}");

    let mut lin: [Vec<Vec<f64>>; 2] = [Vec::new(), Vec::new()];
    let mut runs: [Vec<Run>; 2] = [Vec::new(), Vec::new()];
    let mut detail = String::new();
    for seed in 0..seeds {
        let dir = tempfile::tempdir().unwrap();
        let mut rng = rand_pcg::Pcg64::seed_from_u64(1000 + seed);
        let mut z = Vec::new();
        std::fs::write(dir.path().join("wt.csv"), measured_table(&wt_bounds, &mut rng, &mut z)).unwrap();
        std::fs::write(dir.path().join("half.csv"), measured_table(&half_bounds, &mut rng, &mut z)).unwrap();
        for free in [2usize, 3] {
            lin[free - 2].push(linear.estimate(free, &z));
            let run = one_fit(dir.path(), free);
            let mut line = format!(
                "seed {seed:>2} p={free}: S {:.4} (truth {:.3}; re-polished {:.4}) {} evals {:.1} s{}{}",
                run.objective,
                run.truth_objective,
                run.repolish.0,
                run.evaluations,
                run.seconds,
                if run.converged { "" } else { " NOT CONVERGED" },
                if run.profile_lower { " (profile found lower)" } else { "" }
            );
            for j in 0..free {
                let (lo, hi) = run.intervals[j];
                let inside = lo <= TRUTH[j] && TRUTH[j] <= hi;
                let approx = run.approx[j].map_or("none".to_string(), |(a, b)| format!("{a:.4}–{b:.4}"));
                let _ = write!(
                    line,
                    "\n    {:<25} {:>9.4} (re-polished {:>9.4}) profile {:.4}–{:.4}{}{} {} | approx {approx} | ΔS(truth held) {:.2}{}",
                    PARAM_NAMES[j],
                    run.values[j],
                    run.repolish.1[j],
                    lo,
                    hi,
                    if run.closed[j].0 { "" } else { " (open below)" },
                    if run.closed[j].1 { "" } else { " (open above)" },
                    if inside { "covers" } else { "MISSES" },
                    run.truth_rise[j],
                    if (run.truth_rise[j] < lsq::CHI2_95) != inside { "  <- disagrees with the interval" } else { "" },
                );
            }
            if !run.converged || run.profile_lower {
                for l in &run.lines {
                    let _ = write!(line, "\n      | {l}");
                }
            }
            println!("{line}");
            let _ = writeln!(detail, "{line}");
            runs[free - 2].push(run);
        }
    }

    let mut table = String::new();
    let _ = writeln!(
        table,
        "\n{:<4} {:<25} {:>8} {:>9} {:>9} {:>8} {:>9} {:>9} {:>8} {:>7} {:>8} {:>9} {:>9}",
        "free",
        "parameter",
        "truth",
        "mean fit",
        "profile",
        "curv.",
        "scatter",
        "prof σ",
        "ratio",
        "closed",
        "Δ<3.84",
        "re-pol.",
        "linear"
    );
    let _ = writeln!(
        table,
        "{:<4} {:<25} {:>8} {:>9} {:>9} {:>8} {:>9} {:>9} {:>8} {:>7} {:>8} {:>9} {:>9}",
        "", "", "", "", "covers", "covers", "sd", "hw/1.96", "", "both", "(check)", "ratio", "ratio"
    );
    for (k, rs) in runs.iter().enumerate() {
        let free = k + 2;
        let n = rs.len();
        for j in 0..free {
            let vals: Vec<f64> = rs.iter().map(|r| r.values[j]).collect();
            let rp: Vec<f64> = rs.iter().map(|r| r.repolish.1[j]).collect();
            let lv: Vec<f64> = lin[k].iter().map(|v| v[j]).collect();
            let cover = rs.iter().filter(|r| r.intervals[j].0 <= TRUTH[j] && TRUTH[j] <= r.intervals[j].1).count();
            let approx = rs.iter().filter(|r| r.approx[j].is_some_and(|(a, b)| a <= TRUTH[j] && TRUTH[j] <= b)).count();
            let half: Vec<f64> = rs.iter().map(|r| 0.5 * (r.intervals[j].1 - r.intervals[j].0) / lsq::Z95).collect();
            let closed = rs.iter().filter(|r| r.closed[j] == (true, true)).count();
            let check = rs.iter().filter(|r| r.truth_rise[j] < lsq::CHI2_95).count();
            let _ = writeln!(
                table,
                "{free:<4} {:<25} {:>8} {:>9.4} {:>9} {:>8} {:>9.4} {:>9.4} {:>8.2} {:>7} {:>8} {:>9.2} {:>9.2}",
                PARAM_NAMES[j],
                TRUTH[j],
                mean(&vals),
                format!("{cover}/{n}"),
                format!("{approx}/{n}"),
                sd(&vals),
                mean(&half),
                sd(&vals) / mean(&half),
                format!("{closed}/{n}"),
                format!("{check}/{n}"),
                sd(&rp) / mean(&half),
                sd(&lv) / mean(&half),
            );
        }
        let conv = rs.iter().filter(|r| r.converged).count();
        let lower = rs.iter().filter(|r| r.profile_lower).count();
        let det = rs.iter().filter(|r| r.determined.iter().all(|d| *d)).count();
        let objs: Vec<f64> = rs.iter().map(|r| r.objective).collect();
        let secs: Vec<f64> = rs.iter().map(|r| r.seconds).collect();
        let evals: Vec<f64> = rs.iter().map(|r| r.evaluations as f64).collect();
        let above = rs.iter().filter(|r| r.objective > r.truth_objective + 1e-6).count();
        let lowered = rs.iter().filter(|r| r.repolish.0 < r.objective - 0.01).count();
        let _ = writeln!(
            table,
            "{free:<4} converged {conv}/{n}; all determined {det}/{n}; a profile found a lower objective {lower}/{n}; \
             best objective above the truth's {above}/{n}; an independent re-polish lowered the objective by > 0.01 in {lowered}/{n}; mean objective {:.2} (χ² with {} dof expects {}); \
             {:.0} evaluations and {:.1} s per fit (max {:.1} s)",
            mean(&objs),
            6 - free,
            6 - free,
            mean(&evals),
            mean(&secs),
            secs.iter().copied().fold(0.0, f64::max),
        );
    }
    let _ = writeln!(table, "total {:.0} s", all.elapsed().as_secs_f64());
    let _ = writeln!(
        table,
        "covers: the truth lies in the 95 % interval (target ≥ 90 %). ratio: scatter of the fitted values across \
         seeds / mean profile half-width / 1.96 (target 0.8–1.2). Δ<3.84: the objective re-minimised with the \
         parameter held at the truth rises less than 3.84 above the best (an independent check of 'covers'). re-pol. ratio: the scatter ratio of the values after an independent \
         re-polish from the fitted point with small slope steps. linear ratio: the same for the estimates a linear model \
         would give from the same noise draws (how far the draws themselves stray from their expected scatter)."
    );
    print!("{table}");
    let text = format!("{out}\n{detail}{table}");
    let file = Path::new(env!("CARGO_MANIFEST_DIR")).join("benches/fit_coverage_last.txt");
    std::fs::write(&file, text).unwrap();
    println!("written to {}", file.display());
}
