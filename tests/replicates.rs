//! Replicate embryos (issue 23): the spread of a boundary over embryos
//! against closed forms, the decoded positional error against the direct
//! spread, and the same bytes on any thread count.

use anlage::progress::Silent;
use anlage::replicates::{self, Sources};

use crate::common::{anlage, parse, temp_dir};

/// A steep threshold read-out (Hill n = 8, no diffusion, steady state) of an
/// exponential gradient c(x) = c₀·e^(−x/λ), with the boundary at the fixed
/// level p/(2d): the gene is half on where c = K, at x* = λ·ln(c₀f/K) for a
/// peak factor f. With f lognormal of mean 1 and coefficient of variation
/// cv, ln f is normal with sd σ = √ln(1 + cv²) and mean −σ²/2, so x* has sd
/// λσ (λ·cv to first order: error propagation, Houchmandzadeh, Wieschaus &
/// Leibler 2002, Nature 415:798, from memory) and mean λ(ln(c₀/K) − σ²/2).
pub(crate) fn read_out(cv: f64, embryos: usize) -> String {
    format!(
        r#"
title = "threshold read-out"
[tissue]
nuclei = [300]
spacing_um = 2.0
[clock]
until_min = 40.0
tolerance = 1e-8
snapshot_every_min = 40.0
[[gradient]]
name = "cue"
shape = "exponential"
from = "left"
peak = 1.0
decay_length_um = 100.0
[[gene]]
name = "quill"
production = 1.0
decay = 1.0
boundary_level = {{ absolute = 0.5 }}
[circuit]
kinetics = "hill"
[[circuit.link]]
from = "cue"
to = "quill"
sign = "+"
threshold = 0.05
hill = 8
[noise]
replicates = {embryos}
[[noise.vary]]
parameter = "cue.peak"
cv = {cv}
"#
    )
}

#[test]
fn a_lognormal_gradient_peak_spreads_the_boundary_by_lambda_sigma() {
    let (lambda, cv, n) = (100.0, 0.2, 400);
    let model = parse(&read_out(cv, n));
    let r = replicates::run(&model, n, &Sources::all(&model), &Silent, &mut |_, _| {}).unwrap();
    let b = r.final_boundaries().next().expect("one boundary");
    assert_eq!(b.present_fraction, 1.0);
    let sigma = (1.0f64 + cv * cv).ln().sqrt();
    let want_sd = lambda * sigma;
    // Standard errors of a normal sample's sd and mean: sd/√(2(n−1)), sd/√n.
    let se_sd = want_sd / (2.0 * (n as f64 - 1.0)).sqrt();
    assert!((b.sd_um - want_sd).abs() < 3.0 * se_sd, "sd {} vs λσ = {want_sd} (3 SE = {})", b.sd_um, 3.0 * se_sd);
    let want_mean = lambda * ((1.0f64 / 0.05).ln() - 0.5 * sigma * sigma);
    let se_mean = want_sd / (n as f64).sqrt();
    assert!((b.mean_um - want_mean).abs() < 3.0 * se_mean, "mean {} vs {want_mean}", b.mean_um);
    // The noise-free embryo sits at λ·ln(c₀/K).
    assert!((b.reference_um - lambda * 20f64.ln()).abs() < 0.05, "{}", b.reference_um);
}

/// For one gene whose profile only shifts, the decoded error at the boundary,
/// σ_g/|g′|, equals the spread of the boundary to first order in the shift
/// (Dubuis, Tkačik, Wieschaus, Gregor & Bialek 2013, PNAS 110:16301, the
/// single-gene form, from memory). A small cv keeps the shift (2 µm) well
/// inside the boundary's width (about 12 µm), where first order holds.
#[test]
fn the_decoded_error_of_one_shifting_gene_equals_the_boundary_spread() {
    let model = parse(&read_out(0.02, 200));
    let r = replicates::run(&model, 200, &Sources::all(&model), &Silent, &mut |_, _| {}).unwrap();
    let b = r.final_boundaries().next().unwrap();
    let decoded = r.decoded_at(b.mean_um);
    assert!((decoded / b.sd_um - 1.0).abs() < 0.05, "decoded {decoded} vs direct {}", b.sd_um);
    // Attribution with one source: it explains all the variance.
    let shares = replicates::attribute(&model, 200, &r, &Silent).unwrap();
    assert_eq!(shares.len(), 1);
    assert!((shares[0].fraction - 1.0).abs() < 1e-12, "{shares:?}");
}

/// Embryo seeds come from the model seed, so one and two threads write the
/// same bytes; the embryos differ from each other.
#[test]
fn replicates_write_the_same_bytes_on_any_thread_count() {
    let dir = temp_dir("replicates");
    let model = dir.join("m.toml");
    std::fs::write(&model, read_out(0.1, 40)).unwrap();
    let mut outs = Vec::new();
    for threads in ["1", "2"] {
        let out = dir.join(format!("t{threads}"));
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_anlage"))
            .args(["replicates", model.to_str().unwrap(), "-o", out.to_str().unwrap(), "--attribute"])
            .env("RAYON_NUM_THREADS", threads)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        outs.push(out);
    }
    for name in
        ["precision.csv", "widths.csv", "decoding.csv", "embryo_boundaries.csv", "attribution.csv", "replicates.png"]
    {
        let (a, b) = (std::fs::read(outs[0].join(name)).unwrap(), std::fs::read(outs[1].join(name)).unwrap());
        assert!(a == b, "{name} differs between 1 and 2 threads");
    }
    let rows = std::fs::read_to_string(outs[0].join("embryo_boundaries.csv")).unwrap();
    let positions: std::collections::BTreeSet<&str> =
        rows.lines().skip(1).map(|l| l.split(',').nth(4).unwrap()).collect();
    assert_eq!(positions.len(), 40, "every embryo has its own boundary");
    let o = anlage(&["replicates", model.to_str().unwrap(), "-o", outs[0].to_str().unwrap(), "-n", "1"]);
    assert_eq!(o.status.code(), Some(2), "one embryo has no spread");
}

/// One gene with constant production p and linear decay d in `nuclei`
/// nuclei that do not exchange anything (no diffusion), so that the final
/// levels are that many independent samples of the stationary distribution.
fn independent(p: f64, d: f64, noise: &str, step: f64, until: f64, nuclei: usize) -> anlage::model::Model {
    parse(&format!(
        r#"
[tissue]
nuclei = [{nuclei}]
spacing_um = 1.0
[clock]
until_min = {until}
step_min = {step}
snapshot_every_min = {until}
[[gene]]
name = "quill"
production = {p}
decay = {d}
initial = {mean}
[noise]
{noise}
"#,
        mean = p / d
    ))
}

fn final_moments(model: &anlage::model::Model) -> (f64, f64, usize) {
    let run = anlage::simulate(model, &anlage::RunOptions { stochastic: true, ..Default::default() }).unwrap();
    let u = run.recording.final_state();
    let n = u.ncols();
    let mean = u.row(0).sum() / n as f64;
    let var = u.row(0).iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / (n - 1) as f64;
    (mean, var, n)
}

/// An Ornstein–Uhlenbeck gene, du = (p − k u) dt + σ dW, has stationary mean
/// p/k and variance σ²/(2k) (Gardiner, Handbook of Stochastic Methods,
/// §3.8.4, from memory). Euler–Maruyama with step Δ gives exactly
/// σ²Δ / (1 − (1 − kΔ)²) = σ²/(k(2 − kΔ)) (the AR(1) recursion
/// u' = (1 − kΔ)u + pΔ + σ√Δ ξ; textbook). Checked over 20,000 independent
/// nuclei to 3 standard errors of a sample variance (var·√(2/(n − 1))),
/// with a step large enough (kΔ = 0.2) that the two formulas differ by 11 %.
#[test]
fn an_ornstein_uhlenbeck_gene_has_the_scheme_s_exact_variance() {
    let (p, k, sigma) = (5.0, 0.5, 0.5);
    let coarse = independent(p, k, &format!("additive = {{ quill = {sigma} }}"), 0.4, 40.0, 20_000);
    let (mean, var, n) = final_moments(&coarse);
    let se = |v: f64| v * (2.0 / (n as f64 - 1.0)).sqrt();
    let scheme = sigma * sigma / (k * (2.0 - k * 0.4));
    let exact = sigma * sigma / (2.0 * k);
    assert!((var - scheme).abs() < 3.0 * se(scheme), "variance {var}, scheme {scheme}, 3 SE {}", 3.0 * se(scheme));
    assert!((var - exact).abs() > 3.0 * se(exact), "the step's effect is resolved: {var} vs {exact}");
    assert!((mean - p / k).abs() < 3.0 * (scheme / n as f64).sqrt(), "mean {mean}");
    // A small step (kΔ = 0.005) reaches the continuous variance.
    let fine = independent(p, k, &format!("additive = {{ quill = {sigma} }}"), 0.01, 20.0, 20_000);
    let (_, var, _) = final_moments(&fine);
    assert!((var - exact).abs() < 3.0 * se(exact), "variance {var}, σ²/2k = {exact}");
}

/// Birth and death with the chemical Langevin noise at Ω molecules per
/// unit: mean p/d, and in molecules a Fano factor var(n)/mean(n) of 1
/// (Poisson; Gillespie 2000, J. Chem. Phys. 113:297, from memory). The mean
/// is far from 0, so setting negative levels to 0 never acts and cannot
/// bias it; checked to 3 standard errors over 20,000 nuclei.
#[test]
fn birth_and_death_has_a_fano_factor_of_one() {
    let (p, d, omega) = (5.0, 0.5, 20.0);
    let model = independent(p, d, &format!("molecules_per_unit = {omega}"), 0.01, 20.0, 20_000);
    let (mean, var, n) = final_moments(&model);
    let fano = omega * var / mean;
    let se_fano = (2.0 / (n as f64 - 1.0)).sqrt();
    assert!((fano - 1.0).abs() < 3.0 * se_fano, "Fano {fano} (3 SE {})", 3.0 * se_fano);
    assert!((mean - p / d).abs() < 3.0 * (var / n as f64).sqrt(), "mean {mean} vs {}", p / d);
}

/// A stochastic model needs a fixed step for its noise.
#[test]
fn intrinsic_noise_with_error_controlled_steps_asks_for_a_noise_step() {
    let text = "[tissue]\nnuclei = [4]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\ntolerance = 1e-6\nsnapshot_every_min = 1.0\n[[gene]]\nname = \"quill\"\nproduction = 1.0\ndecay = 1.0\n[noise]\nmolecules_per_unit = 10.0\n";
    let err = anlage::model::Model::from_toml(text, "noisy.toml".as_ref()).unwrap_err().to_string();
    assert!(err.contains("noise.step_min") && err.contains("fixed steps"), "{err}");
}

/// `--check-step` sees a noise step that is too large: an intrinsically
/// noisy read-out whose level variance is σ²/(d(2 − dΔ)) (the AR(1) form
/// above) spreads its boundary √2.5 ≈ 1.6 times more at dΔ = 1.5 than at
/// dΔ = 0.75 (the noise is small enough that each embryo's profile crosses
/// the level once, between two nuclei), far beyond the sampling error of
/// 400 embryos; at dΔ = 0.02 halving the step changes nothing beyond it.
/// (21 min is a whole number of every step here: a shortened last step
/// would mix two variances.)
#[test]
fn halving_the_noise_step_flags_a_step_that_is_too_large() {
    let text = |step: f64| {
        format!(
            r#"
[tissue]
nuclei = [100]
spacing_um = 2.0
[clock]
until_min = 21.0
step_min = 0.1
snapshot_every_min = 21.0
[[gradient]]
name = "cue"
shape = "linear"
length_um = 200.0
from = "left"
peak = 1.0
[[gene]]
name = "quill"
production = 1.0
decay = 1.0
initial = 0.5
boundary_level = {{ absolute = 0.5 }}
[circuit]
kinetics = "hill"
[[circuit.link]]
from = "cue"
to = "quill"
sign = "+"
threshold = 0.5
hill = 4
[noise]
additive = {{ quill = 0.005 }}
step_min = {step}
"#
        )
    };
    let coarse = parse(&text(1.5));
    let all = replicates::run(&coarse, 400, &Sources::all(&coarse), &Silent, &mut |_, _| {}).unwrap();
    let change = replicates::halved_step(&coarse, 400, &all, &Silent).unwrap();
    assert_eq!(change.len(), 1);
    assert!(!change[0].unchanged, "{change:?}");
    let fine = parse(&text(0.02));
    let all = replicates::run(&fine, 400, &Sources::all(&fine), &Silent, &mut |_, _| {}).unwrap();
    let change = replicates::halved_step(&fine, 400, &all, &Silent).unwrap();
    assert!(change[0].unchanged, "{change:?}");
}

/// A mutant that doubles the gradient's peak moves the threshold boundary
/// x* = λ·ln(c₀f/K) by exactly λ·ln 2 in every embryo, whatever its factor
/// f: over the same embryos (common random numbers) the shift is λ·ln 2 with
/// almost no spread, while the boundary itself spreads by λσ.
#[test]
fn a_mutant_s_shift_over_the_same_embryos_has_its_own_small_error() {
    let wild_type = parse(&read_out(0.2, 100));
    let m = wild_type.parse_mutant(r#"{ name = "peak x2", scale = { "cue.peak" = 2.0 } }"#).unwrap();
    let mutant = wild_type.with_mutant(&m);
    let shifts = replicates::paired_shifts(&wild_type, &[(m.name.clone(), mutant)], 100, &Silent).unwrap();
    assert_eq!(shifts.len(), 1);
    let s = &shifts[0];
    let want = 100.0 * 2f64.ln();
    assert!((s.shift_um - want).abs() < 0.2, "shift {} vs λ ln 2 = {want}", s.shift_um);
    assert!(s.shift_sd_um < 0.2, "paired shifts hardly vary: {}", s.shift_sd_um);
    assert!(s.wild_type_sd_um > 15.0 && s.mutant_sd_um > 15.0, "{s:?}");
    // Its 95 % interval holds λ ln 2, and the precision is unchanged.
    assert!(s.shift_low_um <= want && want <= s.shift_high_um, "{s:?}");
    assert_eq!(s.precision, "same", "{s:?}");
}

/// Halving the gradient's decay length halves the boundary's spread λσ
/// (x* = λ·ln(c₀f/K), so sd = λ·sd(ln f); error propagation, as above):
/// the paired sd ratio is 0.5 and reads "more precise"; several mutants in
/// one call give the same rows as each alone.
#[test]
fn a_shorter_gradient_makes_the_boundary_more_precise() {
    let wild_type = parse(&read_out(0.2, 60));
    let mutant = |text: &str| {
        let m = wild_type.parse_mutant(text).unwrap();
        (m.name.clone(), wild_type.with_mutant(&m))
    };
    let short = mutant(r#"{ name = "short", scale = { "cue.decay_length_um" = 0.5 } }"#);
    let peak = mutant(r#"{ name = "peak x2", scale = { "cue.peak" = 2.0 } }"#);
    let both = replicates::paired_shifts(&wild_type, &[short.clone(), peak], 60, &Silent).unwrap();
    assert_eq!(both.len(), 2);
    let s = &both[0];
    assert_eq!(s.mutant, "short");
    assert!((s.sd_ratio - 0.5).abs() < 0.02, "{s:?}");
    assert!(s.sd_ratio_low < 0.5 && 0.5 < s.sd_ratio_high, "{s:?}");
    assert_eq!(s.precision, "more precise", "{s:?}");
    let alone = replicates::paired_shifts(&wild_type, &[short], 60, &Silent).unwrap();
    assert_eq!(alone[0], both[0]);
}

/// When the noise-free embryo has no boundary but some embryos form one
/// (production varied by 30 % around a level the mean profile just misses),
/// those embryos are counted, not silently dropped.
#[test]
fn boundaries_the_noise_free_embryo_lacks_are_counted() {
    let text = read_out(0.01, 100).replace(
        "[noise]\nreplicates = 100\n[[noise.vary]]\nparameter = \"cue.peak\"\ncv = 0.01",
        "[noise]\nreplicates = 100\n[[noise.vary]]\nparameter = \"quill.production\"\ncv = 0.3",
    );
    // The level sits above the noise-free plateau (p/d = 1): only embryos
    // with production factor above 1.05 cross it.
    let text = text.replace("absolute = 0.5", "absolute = 1.05");
    let model = parse(&text);
    let r = replicates::run(&model, 100, &Sources::all(&model), &Silent, &mut |_, _| {}).unwrap();
    assert_eq!(r.final_boundaries().count(), 0);
    let share = *r.unreferenced.last().unwrap() as f64 / 100.0;
    assert!((0.2..0.6).contains(&share), "{share}");
}

/// `screen --replicates`: a shorter gradient reads "more precise" and a
/// doubled peak "same" in replicate_shifts.csv, the table is the same bytes
/// with 1 and 2 threads, and `-o -` (which writes only shifts.csv) is
/// refused rather than dropping the replicates silently.
#[test]
fn a_screen_with_replicates_reports_precision_per_mutant() {
    let dir = temp_dir("screen-replicates");
    let model = dir.join("m.toml");
    let text = read_out(0.2, 30)
        + "[[mutant]]\nname = \"short\"\nscale = { \"cue.decay_length_um\" = 0.5 }\n"
        + "[[mutant]]\nname = \"peak x2\"\nscale = { \"cue.peak\" = 2.0 }\n";
    std::fs::write(&model, text).unwrap();
    let mut tables = Vec::new();
    for threads in ["1", "2"] {
        let out = dir.join(format!("t{threads}"));
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_anlage"))
            .args(["screen", model.to_str().unwrap(), "--replicates", "30", "-o", out.to_str().unwrap()])
            .env("RAYON_NUM_THREADS", threads)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        tables.push(std::fs::read_to_string(out.join("replicate_shifts.csv")).unwrap());
    }
    assert_eq!(tables[0], tables[1]);
    let mut rdr = csv::Reader::from_reader(tables[0].as_bytes());
    let header = rdr.headers().unwrap().clone();
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    let rows: Vec<csv::StringRecord> = rdr.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), 2);
    assert_eq!((&rows[0][col("mutant")], &rows[0][col("precision")]), ("short", "more precise"));
    assert_eq!((&rows[1][col("mutant")], &rows[1][col("precision")]), ("peak x2", "same"));
    let o = anlage(&["screen", model.to_str().unwrap(), "--replicates", "30", "-o", "-"]);
    assert_eq!(o.status.code(), Some(2), "{}", String::from_utf8_lossy(&o.stderr));
    // A later screen without replicates removes the old table.
    let out = dir.join("t1");
    let o = anlage(&["screen", model.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert!(o.status.success());
    assert!(!out.join("replicate_shifts.csv").exists());
}

/// `compare --replicates`: measured sds are scored against the spread over
/// replicate embryos. The threshold read-out's boundary spreads by λσ with
/// σ² = ln(1 + CV²) (error propagation, as above; 100 µm × 0.198 = 19.8 µm
/// = 3.3 % of 600 µm); a measured sd of 3.3 % over 30 embryos reads "same",
/// 10 % "measured wider" and 0.8 % "measured narrower" (F test for two
/// variances; Snedecor & Cochran 1989, from memory). Replicates of another
/// model are refused, naming the boundary that disagrees.
#[test]
fn compare_scores_measured_spreads_against_replicates() {
    let dir = temp_dir("compare-spread");
    let model = dir.join("m.toml");
    std::fs::write(&model, read_out(0.2, 200)).unwrap();
    let (run, reps) = (dir.join("run"), dir.join("reps"));
    for args in [
        vec!["run", model.to_str().unwrap(), "-o", run.to_str().unwrap(), "-q"],
        vec!["replicates", model.to_str().unwrap(), "-o", reps.to_str().unwrap()],
    ] {
        let o = anlage(&args);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let measured = dir.join("measured.csv");
    std::fs::write(
        &measured,
        "sample,gene,direction,position_pct,sd_pct,n\n\
         a,quill,falling,50,3.3,30\nb,quill,falling,50,10,30\nc,quill,falling,50,0.8,30\nd,quill,falling,50,3.3,\n",
    )
    .unwrap();
    let out = dir.join("cmp");
    let o = anlage(&[
        "compare",
        run.to_str().unwrap(),
        measured.to_str().unwrap(),
        "--replicates",
        reps.to_str().unwrap(),
        "-o",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let mut rdr = csv::Reader::from_path(out.join("comparison.csv")).unwrap();
    let header = rdr.headers().unwrap().clone();
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    let rows: Vec<csv::StringRecord> = rdr.records().map(Result::unwrap).collect();
    let spread: Vec<&str> = rows.iter().map(|r| &r[col("spread")]).collect();
    assert_eq!(spread, ["same", "measured wider", "measured narrower", ""], "{rows:?}");
    let predicted: f64 = rows[0][col("predicted_sd_pct")].parse().unwrap();
    let want = 100.0 / 600.0 * 100.0 * (1.04f64).ln().sqrt();
    // The sd of 200 embryos is within 4 × want/√(2·199) of the truth.
    assert!((predicted - want).abs() < 4.0 * want / (398f64).sqrt(), "{predicted} vs {want}");
    assert_eq!(&rows[0][col("predicted_embryos")], "200");
    assert!(rows[3][col("sd_ratio")].parse::<f64>().is_ok() && rows[3][col("sd_ratio_low")].is_empty());
    // Replicates of another model (a longer gradient) are refused.
    let other = dir.join("other.toml");
    std::fs::write(&other, read_out(0.2, 20).replace("decay_length_um = 100.0", "decay_length_um = 120.0")).unwrap();
    let reps2 = dir.join("reps2");
    assert!(anlage(&["replicates", other.to_str().unwrap(), "-o", reps2.to_str().unwrap()]).status.success());
    let o = anlage(&[
        "compare",
        run.to_str().unwrap(),
        measured.to_str().unwrap(),
        "--replicates",
        reps2.to_str().unwrap(),
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("replicates.json") && err.contains("another model"), "{err}");
    // Replicates of a mutant of the same model are refused too.
    let model_text = read_out(0.2, 20) + "[[mutant]]\nname = \"half\"\nscale = { \"cue.peak\" = 0.5 }\n";
    std::fs::write(&model, &model_text).unwrap();
    let run2 = dir.join("run2");
    assert!(anlage(&["run", model.to_str().unwrap(), "-o", run2.to_str().unwrap(), "-q"]).status.success());
    let reps3 = dir.join("reps3");
    let o = anlage(&["replicates", model.to_str().unwrap(), "--mutant", "half", "-o", reps3.to_str().unwrap()]);
    assert!(o.status.success());
    let o = anlage(&[
        "compare",
        run2.to_str().unwrap(),
        measured.to_str().unwrap(),
        "--replicates",
        reps3.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("mutant `half`"), "{}", String::from_utf8_lossy(&o.stderr));
}

/// `replicates --animate 3`: embryos.gif holds one frame per snapshot with
/// three panels on a grid of two columns (720 px: two 360-px panels), and
/// embryo 0's panel differs from embryo 1's (each has its own gradient peak);
/// a count outside 2..=9 is refused, and a later run without it removes the
/// old animation.
#[test]
fn replicate_embryos_animate_side_by_side() {
    let dir = temp_dir("replicates-gif");
    let model = dir.join("m.toml");
    std::fs::write(&model, read_out(0.3, 10)).unwrap();
    let out = dir.join("out");
    let o = anlage(&["replicates", model.to_str().unwrap(), "--animate", "3", "-o", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let mut opts = gif::DecodeOptions::new();
    opts.set_color_output(gif::ColorOutput::RGBA);
    let mut d = opts.read_info(std::fs::File::open(out.join("embryos.gif")).unwrap()).unwrap();
    let (w, h) = (d.width() as usize, d.height() as usize);
    assert_eq!(w, 720);
    let mut frames = Vec::new();
    while let Some(f) = d.read_next_frame().unwrap() {
        frames.push(f.buffer.to_vec());
    }
    assert_eq!(frames.len(), 2, "snapshots at 0 and 40 min");
    let last = frames.last().unwrap();
    // The left and right panels of the top row differ; the bottom-right cell is empty.
    let panel = |x0: usize, y0: usize| -> Vec<u8> {
        (y0..y0 + h / 2).flat_map(|y| last[4 * (y * w + x0)..4 * (y * w + x0 + w / 2)].to_vec()).collect()
    };
    assert_ne!(panel(0, 0), panel(w / 2, 0));
    let empty = panel(w / 2, h / 2);
    assert!(empty.chunks(4).all(|p| p == &empty[..4]), "the fourth cell is blank");
    for bad in ["1", "10"] {
        let o = anlage(&["replicates", model.to_str().unwrap(), "--animate", bad, "-o", out.to_str().unwrap()]);
        assert_eq!(o.status.code(), Some(2), "--animate {bad}");
    }
    assert!(anlage(&["replicates", model.to_str().unwrap(), "-o", out.to_str().unwrap()]).status.success());
    assert!(!out.join("embryos.gif").exists());
}

/// Strong intrinsic noise (5 molecules per unit, no diffusion, so every
/// nucleus flickers on its own) makes the boundary cross its level several
/// times in most embryos. Counted as they were, 40 % of the embryos — the
/// noisiest — dropped out of the spread; with the flickers merged every
/// embryo is counted, and the mean stays within 2 % of the length of the
/// noise-free boundary.
#[test]
fn ragged_boundaries_are_merged_not_dropped() {
    let text = read_out(0.1, 100).replace("[noise]\n", "[noise]\nmolecules_per_unit = 5.0\nstep_min = 0.05\n");
    let model = parse(&text);
    let r = replicates::run(&model, 100, &Sources::all(&model), &Silent, &mut |_, _| {}).unwrap();
    let b = r.final_boundaries().next().unwrap();
    assert_eq!(b.present_fraction, 1.0, "{b:?}");
    assert!(b.ragged_fraction > 0.5, "{b:?}");
    assert!((b.mean_pct - 100.0 * b.reference_um / r.length_um).abs() < 2.0, "{b:?}");
    assert!(b.sd_um > 10.0 && b.sd_um < 30.0, "{b:?}");
}

/// A model with every kind of noise source (initial levels, additive noise
/// with a fixed noise step, a varied gradient peak) and a mutant, for the
/// sharding checks below.
fn noisy_with_mutant() -> String {
    r#"
title = "noisy read-out"
[tissue]
nuclei = [60]
spacing_um = 2.0
[clock]
until_min = 12.0
step_min = 0.1
snapshot_every_min = 6.0
[[gradient]]
name = "cue"
shape = "exponential"
from = "left"
peak = 1.0
decay_length_um = 40.0
[[gene]]
name = "quill"
production = 1.0
decay = 1.0
initial = 0.5
initial_noise = 0.05
boundary_level = { absolute = 0.5 }
[circuit]
kinetics = "hill"
[[circuit.link]]
from = "cue"
to = "quill"
sign = "+"
threshold = 0.3
hill = 4
[noise]
additive = { quill = 0.01 }
step_min = 0.2
[[noise.vary]]
parameter = "cue.peak"
cv = 0.1
[[mutant]]
name = "peak x2"
scale = { "cue.peak" = 2.0 }
[[mutant]]
name = "short"
scale = { "cue.decay_length_um" = 0.5 }
"#
    .into()
}

/// A fresh test folder `name` holding [`noisy_with_mutant`] as `m.toml`.
fn noisy_model_in(name: &str) -> (std::path::PathBuf, std::path::PathBuf) {
    let dir = temp_dir(name);
    let model = dir.join("m.toml");
    std::fs::write(&model, noisy_with_mutant()).unwrap();
    (dir, model)
}

fn same_files(a: &std::path::Path, b: &std::path::Path, names: &[&str]) {
    for name in names {
        let (x, y) = (std::fs::read(a.join(name)), std::fs::read(b.join(name)));
        assert!(x.is_ok() && y.is_ok(), "{name} missing in {} or {}", a.display(), b.display());
        assert!(x.unwrap() == y.unwrap(), "{name} differs between {} and {}", a.display(), b.display());
    }
}

/// Replicates cut into shards (embryos as items) merge into the bytes of an
/// unsharded run, with every rerun they involve: each source alone
/// (--attribute), half the noise step (--check-step) and the wild type of a
/// mutant (--mutant). More shards than embryos are refused.
#[test]
fn replicates_sharded_in_three_merge_into_the_same_bytes() {
    let (dir, model) = noisy_model_in("replicates-shards");
    let m = model.to_str().unwrap();
    let run = |extra: &[&str], out: &std::path::Path| {
        let mut args = vec!["replicates", m, "-n", "24", "--attribute", "--check-step", "--mutant", "peak x2"];
        args.extend_from_slice(extra);
        args.extend_from_slice(&["-o", out.to_str().unwrap()]);
        let o = anlage(&args);
        assert!(o.status.success() || extra.contains(&"25/25"), "{args:?}: {}", String::from_utf8_lossy(&o.stderr));
        o
    };
    let (whole, sharded) = (dir.join("whole"), dir.join("sharded"));
    run(&[], &whole);
    for k in 1..=3 {
        run(&["--shard", &format!("{k}/3")], &sharded);
    }
    assert!(!sharded.join("precision.csv").exists(), "a shard writes only its shard file");
    run(&["--merge"], &sharded);
    same_files(
        &whole,
        &sharded,
        &[
            "precision.csv",
            "widths.csv",
            "decoding.csv",
            "embryo_boundaries.csv",
            "attribution.csv",
            "step_check.csv",
            "shift.csv",
            "replicates.json",
            "replicates.png",
            "boundary_bands.png",
        ],
    );
    let step_rows = std::fs::read_to_string(whole.join("step_check.csv")).unwrap();
    assert!(step_rows.lines().count() > 1, "the half-step rerun ran: {step_rows}");
    let o = run(&["--shard", "25/25"], &dir.join("too-many"));
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("24 items (embryos)"));
}

/// A screen with replicates cut into shards: each shard runs its mutants and
/// its embryos (of the wild type and every mutant); the merge gives the
/// bytes of an unsharded screen, and refuses, writing nothing, while an
/// embryo shard is missing.
#[test]
fn a_screen_with_replicates_sharded_in_three_merges_into_the_same_bytes() {
    let (dir, model) = noisy_model_in("screen-replicates-shards");
    let m = model.to_str().unwrap();
    let run = |extra: &[&str], out: &std::path::Path| {
        let mut args = vec!["screen", m, "--replicates", "20"];
        args.extend_from_slice(extra);
        args.extend_from_slice(&["-o", out.to_str().unwrap()]);
        anlage(&args)
    };
    let (whole, sharded) = (dir.join("whole"), dir.join("sharded"));
    assert!(run(&[], &whole).status.success());
    for k in 1..=3 {
        let o = run(&["--shard", &format!("{k}/3"), "--json"], &sharded);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let report: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        assert_eq!(report.as_array().map(Vec::len), Some(2), "{report}");
    }
    let embryos = sharded.join("shards/screen_embryos-2-of-3.json");
    let kept = std::fs::read(&embryos).unwrap();
    std::fs::remove_file(&embryos).unwrap();
    let o = run(&["--merge"], &sharded);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--shard 2/3"), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(!sharded.join("shifts.csv").exists(), "nothing is written while a shard is missing");
    std::fs::write(&embryos, kept).unwrap();
    let o = run(&["--merge"], &sharded);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    same_files(&whole, &sharded, &["shifts.csv", "replicate_shifts.csv", "shifts.png"]);
}

/// A knocked-out gene with additive noise fluctuates about zero; it keeps
/// its wild type's expression floor (5 % of p/d), so the noise is not read
/// as boundaries (before, a knock-out's floor was 0 and every wiggle of the
/// noise crossed "half of its maximum").
#[test]
fn a_knocked_out_gene_s_noise_is_not_read_as_boundaries() {
    let dir = temp_dir("replicates-knockout");
    let model = dir.join("m.toml");
    // The default boundary level, half of the gene's highest level: a fixed
    // absolute level would hide the problem.
    let text = noisy_with_mutant().replace("boundary_level = { absolute = 0.5 }\n", "");
    assert!(!text.contains("boundary_level"));
    std::fs::write(&model, text).unwrap();
    let m = model.to_str().unwrap();
    let rows = |extra: &[&str], out: &str| {
        let out = dir.join(out);
        let mut args = vec!["replicates", m, "-n", "12", "-o", out.to_str().unwrap()];
        args.extend_from_slice(extra);
        let o = anlage(&args);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        // Final rows only (the noisy initial levels have crossings of their own at t = 0).
        let text = std::fs::read_to_string(out.join("embryo_boundaries.csv")).unwrap();
        text.lines().skip(1).filter(|l| l.split(',').nth(1) == Some("12")).count()
    };
    assert!(rows(&[], "wild") >= 12, "the wild type has its boundary in every embryo");
    assert_eq!(rows(&["--mutant", "{ name = \"ko\", knock_out = [\"quill\"] }"], "ko"), 0);
}

/// Replicates and a run of the same model text that read different
/// `initial_file`s are not scored against each other: summary.json and
/// replicates.json record the digest of the model's inputs, and
/// `compare --replicates` checks it (the text alone would match).
#[test]
fn replicates_of_another_initial_file_are_refused_by_compare() {
    use ndarray_npy::WriteNpyExt;
    let dir = temp_dir("replicates-initial-file");
    let model = dir.join("m.toml");
    std::fs::write(
        &model,
        "[tissue]\nnuclei = [20]\nspacing_um = 5.0\n[clock]\nuntil_min = 5.0\nstep_min = 0.05\nsnapshot_every_min = 5.0\n\
         [[gene]]\nname = \"wren\"\nproduction = 1.0\ndecay = 1.0\ndiffusion = 1.0\ninitial_file = \"start.npy\"\n\
         initial_noise = 0.05\n",
    )
    .unwrap();
    let start = |peak: f64| {
        let v = ndarray::Array1::from_shape_fn(20, |i| peak * i as f64 / 19.0);
        v.write_npy(std::fs::File::create(dir.join("start.npy")).unwrap()).unwrap();
    };
    let m = model.to_str().unwrap();
    let (run, reps) = (dir.join("run"), dir.join("reps"));
    start(3.0);
    assert!(anlage(&["run", m, "-q", "-o", run.to_str().unwrap()]).status.success());
    assert!(anlage(&["replicates", m, "-n", "4", "-o", reps.to_str().unwrap()]).status.success());
    anlage::compare::spread::check_origin(&run, &reps).unwrap();
    start(5.0);
    assert!(anlage(&["replicates", m, "-n", "4", "-o", reps.to_str().unwrap()]).status.success());
    let err = anlage::compare::spread::check_origin(&run, &reps).unwrap_err().to_string();
    assert!(err.contains("other inputs"), "{err}");
}
