//! Mutant screens and sensitivity.

use anlage::model::{Edit, GradientParam, Model, Mutant, Param};
use anlage::readout::predicted_final_boundaries as final_boundaries;
use anlage::screen::{self, run_screen};
use approx::assert_relative_eq;

use crate::common::{load, parse};

/// A threshold read-out of an exponential gradient (the French-flag model):
/// `flag` is on where m(x) = peak·e^(−x/λ) exceeds K = 1, so its boundary sits
/// at x* = λ·ln(peak/K). λ = 50 µm, peak 8, 1 µm spacing, steep Hill (n = 8), no diffusion.
fn french_flag() -> Model {
    parse(
        "title = \"French flag\"\n[tissue]\nnuclei = [400]\nspacing_um = 1.0\n\
         [clock]\nuntil_min = 40.0\ntolerance = 1e-9\nsnapshot_every_min = 40.0\n\
         [[gradient]]\nname = \"morphogen\"\nshape = \"exponential\"\nfrom = \"left\"\npeak = 8.0\ndecay_length_um = 50.0\n\
         [[gene]]\nname = \"flag\"\nproduction = 1.0\ndecay = 1.0\n\
         [circuit]\nkinetics = \"hill\"\n\
         [[circuit.link]]\nfrom = \"morphogen\"\nto = \"flag\"\nsign = \"+\"\nthreshold = 1.0\nhill = 8\n",
    )
}

fn peak_times(f: f64) -> Mutant {
    Mutant { name: format!("peak x{f}"), edits: vec![Edit::Scale(Param::Gradient(0, GradientParam::Peak), f)] }
}

/// Doubling the gradient's peak moves the boundary λ·ln 2 away from the source;
/// halving moves it back by the same; within 1 %.
/// Source: Wolpert (1969), J. Theor. Biol. 25:1 (positional information, the
/// French-flag threshold model); x* = λ ln(peak/K) follows directly.
#[test]
fn dosage_shift_is_lambda_ln2_wolpert_1969() {
    let model = french_flag();
    let wt = final_boundaries(&model).unwrap();
    assert_eq!(wt.len(), 1);
    assert_relative_eq!(wt[0].position_um, 50.0 * 8f64.ln(), max_relative = 1e-3);
    let s = run_screen(&model, &[peak_times(2.0), peak_times(0.5)], true).unwrap();
    let want = 50.0 * 2f64.ln();
    assert_relative_eq!(s.shifts[0][0].shift_um.unwrap(), want, max_relative = 1e-2);
    assert_relative_eq!(s.shifts[1][0].shift_um.unwrap(), -want, max_relative = 1e-2);
    assert_eq!(s.shifts[0][0].status, "moved");
}

/// Sensitivity of a smooth boundary: d x*/d ln peak = λ and d x*/d ln K = −λ
/// (from x* = λ ln(peak/K)), d x*/d ln λ = x*; the French flag's read-out
/// is monostable, so its boundary moves smoothly and is reported as such.
#[test]
fn sensitivity_matches_analytic() {
    let model = french_flag();
    let rows = screen::sensitivity(&model, screen::SENSITIVITY_STEP, true).unwrap();
    let row = |name: &str| rows.iter().find(|r| r.parameter == name).unwrap();
    assert_relative_eq!(row("morphogen.peak").d_um_per_ln.unwrap(), 50.0, max_relative = 1e-2);
    assert_relative_eq!(row("morphogen->flag.threshold").d_um_per_ln.unwrap(), -50.0, max_relative = 1e-2);
    assert_relative_eq!(row("morphogen.decay_length_um").d_um_per_ln.unwrap(), 50.0 * 8f64.ln(), max_relative = 1e-2);
    assert!(rows.iter().filter(|r| r.d_um_per_ln.unwrap().abs() > 1.0).all(|r| r.kind == "smooth"), "{rows:#?}");
}

/// Issue 19, item 3: on a row of discrete nuclei the ribbon's bistable
/// boundary is pinned and moves in jumps of one nucleus (5 µm), so a 1 %
/// central difference was 0 or ~50 % per unit ln p depending on the step.
/// Now it is reported as pinned, with a secant over several jumps that
/// agrees with the screen's ×2 and ×0.5 (their secant, about 30 %), and the
/// jump values are real: just below and just above each, the boundary is a
/// nucleus apart.
#[test]
fn issue_19_pinned_boundaries_get_a_secant_and_their_jumps() {
    let ribbon = load("patterns/ribbon.toml");
    let rows = screen::sensitivity(&ribbon, screen::SENSITIVITY_STEP, true).unwrap();
    let peak = rows.iter().find(|r| r.parameter == "head.peak" && r.gene == "amber").unwrap();
    assert_eq!(peak.kind, "pinned");
    let s = run_screen(&ribbon, &[peak_times(2.0), peak_times(0.5)], true).unwrap();
    let amber = |k: usize| s.shifts[k].iter().find(|r| r.gene == "amber").unwrap().mutant_pct.unwrap();
    let screen_secant = (amber(0) - amber(1)) / (2.0 * 2f64.ln());
    assert!((peak.d_pct_per_ln.unwrap() - screen_secant).abs() < 0.1 * screen_secant, "{peak:?} vs {screen_secant}");
    let jumps: Vec<f64> = peak.jumps_at.split(';').map(|v| v.parse().unwrap()).collect();
    assert!(jumps.len() >= 2, "{peak:?}");
    let x = |f: f64| {
        let m = ribbon.with_mutant(&peak_times(f));
        final_boundaries(&m).unwrap().iter().find(|b| b.gene == "amber").unwrap().position_um
    };
    for j in jumps.iter().take(3).map(|v| v / peak.value) {
        let step = x(j * 1.001) - x(j * 0.999);
        assert!((step.abs() - 5.0).abs() < 0.5, "jump at {j}: {step} µm");
    }
}

/// Knocking out amber (the repressor of cobalt) leaves no boundary at all;
/// knocking out a gene that no link reads changes no other boundary.
#[test]
fn knock_outs_remove_or_keep_boundaries() {
    let ribbon = load("patterns/ribbon.toml");
    let with_bystander = parse(&format!(
        "{}\n[[gene]]\nname = \"jade\"\nproduction = 1.0\ndecay = 0.1\n\
         [[circuit.link]]\nfrom = \"head\"\nto = \"jade\"\nsign = \"+\"\nthreshold = 0.3\nhill = 4\n",
        ribbon.text
    ));
    assert!(with_bystander.gene_index("jade").is_some());
    let s = run_screen(&with_bystander, &screen::families(&with_bystander, true, false, false), false).unwrap();
    let ko = |name: &str| &s.shifts[s.mutants.iter().position(|m| m == name).unwrap()];
    let amber_ko = ko("ko:amber");
    let gone = [screen::outcome::GENE_LOST, screen::outcome::GENE_FILLS];
    assert!(amber_ko.iter().filter(|r| r.gene != "jade").all(|r| gone.contains(&r.status.as_str())), "{amber_ko:#?}");
    let jade_ko = ko("ko:jade");
    // Unchanged to within the integration error: with error-controlled steps
    // the knocked-out gene changes the step sequence, so not bit for bit.
    for r in jade_ko.iter().filter(|r| r.gene != "jade") {
        assert_eq!(r.status, screen::outcome::UNCHANGED, "{r:?}");
        assert!(r.shift_um.unwrap().abs() < 1e-6, "{r:?}");
    }
    assert!(jade_ko.iter().any(|r| r.gene == "jade" && r.status == screen::outcome::GENE_LOST));
}

/// Ectopic amber in the tail (70–90 % of the axis, at a rate that keeps it
/// below the head domain's level, so both count under the half-maximum rule)
/// gains an amber stripe there and leaves the head boundary in place.
#[test]
fn ectopic_expression_gains_a_stripe() {
    let ribbon = load("patterns/ribbon.toml");
    let m = ribbon
        .parse_mutant(
            r#"{ name = "tail amber", ectopic = [{ gene = "amber", from_pct = 70, to_pct = 90, rate = 0.5 }] }"#,
        )
        .unwrap();
    let s = run_screen(&ribbon, &[m], false).unwrap();
    let gained: Vec<f64> = s.shifts[0]
        .iter()
        .filter(|r| r.status == screen::outcome::NEW && r.gene == "amber")
        .map(|r| r.mutant_pct.unwrap())
        .collect();
    assert_eq!(gained.len(), 2, "{:#?}", s.shifts[0]);
    assert!((gained[0] - 70.0).abs() < 3.0 && (gained[1] - 90.0).abs() < 3.0, "{gained:?}");
    let head = s.shifts[0].iter().find(|r| r.gene == "amber" && r.wild_type_pct.is_some()).unwrap();
    assert!(head.shift_pct.unwrap().abs() < 1.0, "{head:?}");
}

/// A screen run in parallel and serially gives identical tables.
#[test]
fn parallel_and_serial_screens_agree() {
    let ribbon = load("patterns/ribbon.toml");
    let fam = screen::families(&ribbon, true, true, true);
    assert_eq!(fam.len(), 2 + 3 + 2 * 2 + 4);
    let a = run_screen(&ribbon, &fam, true).unwrap();
    let b = run_screen(&ribbon, &fam, false).unwrap();
    assert_eq!(a.shifts, b.shifts);
}

/// Mutants from the command line name what they change; unknown names are errors.
#[test]
fn command_line_mutants_are_checked() {
    let ribbon = load("patterns/ribbon.toml");
    let ok = ribbon.parse_mutant(r#"{ name = "het", scale = { "amber.production" = 0.5, "cobalt->amber.threshold" = 2 }, remove_link = ["amber -> cobalt"], clamp = { cobalt = 0.0 }, source = { head = "right" } }"#).unwrap();
    assert_eq!(ok.edits.len(), 5);
    let m = ribbon.with_mutant(&ok);
    assert_eq!(m.genes[0].production, 0.5);
    assert_eq!(m.circuit.links.len(), 2);
    assert_eq!(m.clamps[1], Some(0.0));
    for (text, want) in [
        (r#"{ name = "x", knock_out = ["plum"] }"#, "names unknown gene `plum`; known: amber, cobalt"),
        (
            r#"{ name = "x", scale = { "amber.speed" = 2 } }"#,
            "genes have production, decay, diffusion or bias, not `speed`",
        ),
        (r#"{ name = "x", remove_link = ["head -> cobalt"] }"#, "names no link `head -> cobalt`"),
        (r#"{ name = "x", scale = { "amber.production" = -1 } }"#, "factor for `amber.production` is -1"),
        (r#"{ name = "x" }"#, "changes nothing"),
        (r#"{ name = "x", knockout = ["amber"] }"#, "unknown field `knockout`"),
    ] {
        let err = ribbon.parse_mutant(text).unwrap_err().to_string();
        assert!(err.starts_with("--mutant:1:") && err.contains(want), "{text}: {err}");
    }
}

/// The French flag with its morphogen made by a gene written as a rate
/// expression, `dm/dt = s·e^(−x/λ) − k·m` (no diffusion): at steady state
/// m = (s/k)·e^(−x/λ), so the flag's boundary sits at x* = λ·ln(s/(k·K)).
fn french_flag_by_rate() -> Model {
    parse(
        "title = \"French flag, morphogen by rate\"\n[tissue]\nnuclei = [400]\nspacing_um = 1.0\n\
         [clock]\nuntil_min = 60.0\ntolerance = 1e-9\nsnapshot_every_min = 60.0\n\
         [[gene]]\nname = \"morph\"\nrate = \"s * exp(-x / 50) - k * morph\"\n\
         [[gene]]\nname = \"flag\"\nrate = \"morph^8 / (1 + morph^8) - flag\"\n\
         [circuit]\nkinetics = \"rates\"\nparameters = { s = 8.0, k = 1.0, unused = 3.0 }\n",
    )
}

/// Issue 19, item 1: mutants of genes written as rate expressions.
/// - A knock-out holds the gene at zero: the flag, which needs the morphogen, is lost.
/// - A named constant can be scaled: k × 2 moves the flag's boundary by −λ ln 2
///   (from x* = λ ln(s/(kK)); Wolpert 1969), within 1 %.
/// - Scaling a field the expression does not use is refused, naming field and gene.
/// - Sensitivity lists the constants and not the unused fields.
#[test]
fn issue_19_mutants_of_rate_law_genes() {
    let model = french_flag_by_rate();
    let wt = final_boundaries(&model).unwrap();
    let flag = wt.iter().find(|b| b.gene == "flag").unwrap();
    assert_relative_eq!(flag.position_um, 50.0 * 8f64.ln(), max_relative = 2e-3);
    let ko = screen::families(&model, true, false, false);
    let s = run_screen(&model, &ko, true).unwrap();
    let ko_morph = &s.shifts[0];
    assert!(ko_morph.iter().all(|r| r.status != "moved"), "{ko_morph:?}");
    assert!(ko_morph.iter().any(|r| r.gene == "flag" && r.mutant_um.is_none()), "{ko_morph:?}");
    let k2 = model.parse_mutant(r#"{ name = "k x2", scale = { k = 2.0 } }"#).unwrap();
    let s = run_screen(&model, &[k2], true).unwrap();
    let shift = s.shifts[0].iter().find(|r| r.gene == "flag").unwrap().shift_um.unwrap();
    assert_relative_eq!(shift, -50.0 * 2f64.ln(), max_relative = 1e-2);
    for (text, want) in [
        (
            r#"{ name = "a", scale = { "morph.decay" = 2.0 } }"#,
            "`morph.decay` has no effect: `morph` is written as a rate expression",
        ),
        (r#"{ name = "b", scale = { "morph.production" = 2.0 } }"#, "scale the constants it uses instead (s, k)"),
        (r#"{ name = "c", scale = { unused = 2.0 } }"#, "no rate expression uses the constant `unused`"),
    ] {
        let err = model.parse_mutant(text).unwrap_err().to_string();
        assert!(err.contains(want), "{text}: {err}");
    }
    let names: Vec<String> = model.parameters().iter().map(|p| model.param_name(*p)).collect();
    assert!(names.contains(&"s".to_string()) && names.contains(&"k".to_string()), "{names:?}");
    assert!(!names.iter().any(|n| n.ends_with(".production") || n.ends_with(".decay") || n == "unused"), "{names:?}");
    // In a Hill circuit, bias (a sigmoid parameter) changes nothing either.
    let err = french_flag().parse_mutant(r#"{ name = "d", scale = { "flag.bias" = 2.0 } }"#).unwrap_err().to_string();
    assert!(err.contains("bias belongs to sigmoid kinetics"), "{err}");
}

/// Issue 19, item 4: the level that defines a boundary can be chosen. A
/// read-out gene (Hill, n = 4, K = 0.5) of an exponential gradient (peak 1,
/// λ = 50 µm) doubled in amplitude: read at half of its capacity p/d — where the
/// Hill term is ½, i.e. m = K — its boundary moves by exactly λ ln 2 = 34.66
/// µm (Wolpert 1969; x* = λ ln(peak/K)). Read at half of its own maximum
/// (the default) it moves less, because that maximum grows with the dose too.
#[test]
fn issue_19_boundary_levels_threshold_readout() {
    let text = |level: &str| {
        format!(
            "title = \"read-out\"\n[tissue]\nnuclei = [600]\nspacing_um = 1.0\n\
             [clock]\nuntil_min = 60.0\ntolerance = 1e-9\nsnapshot_every_min = 60.0\n\
             [[gradient]]\nname = \"morphogen\"\nshape = \"exponential\"\nfrom = \"left\"\npeak = 1.0\ndecay_length_um = 50.0\n\
             [[gene]]\nname = \"flag\"\nproduction = 1.0\ndecay = 1.0\n{level}\n\
             [circuit]\nkinetics = \"hill\"\n\
             [[circuit.link]]\nfrom = \"morphogen\"\nto = \"flag\"\nsign = \"+\"\nthreshold = 0.5\nhill = 4\n"
        )
    };
    let shift = |model: &Model| {
        let s = run_screen(model, &[peak_times(2.0)], true).unwrap();
        s.shifts[0][0].shift_um.unwrap()
    };
    let by_capacity = parse(&text("boundary_level = { of_capacity = 0.5 }"));
    let wt = final_boundaries(&by_capacity).unwrap();
    assert_relative_eq!(wt[0].position_um, 50.0 * 2f64.ln(), max_relative = 5e-3);
    assert_relative_eq!(shift(&by_capacity), 50.0 * 2f64.ln(), max_relative = 5e-3);
    let half_max = shift(&parse(&text("")));
    assert!((half_max - 50.0 * 2f64.ln()).abs() > 0.5, "{half_max}");
    // The same level set from outside (as `run --boundary-level flag=capacity:0.5` does).
    let mut by_option = parse(&text(""));
    by_option.set_boundary_level("flag=capacity:0.5").unwrap();
    assert_relative_eq!(shift(&by_option), shift(&by_capacity), max_relative = 1e-12);
    let mut absolute = parse(&text(""));
    absolute.set_boundary_level("*=level:0.5").unwrap();
    assert_relative_eq!(shift(&absolute), 50.0 * 2f64.ln(), max_relative = 5e-3);
    assert!(parse(&text("")).set_boundary_level("plum=max:0.3").unwrap_err().contains("no gene `plum`"));
}

/// Issue 19, item 5: screen outcomes say what happened. On the ribbon a
/// knock-out of amber loses amber everywhere and lets cobalt fill the
/// embryo (not two identical "lost"); ectopic amber in the tail leaves the
/// head boundary unchanged (not "moved 0.00") and makes new boundaries;
/// a mutant whose run fails says so, with the reason in its own column.
#[test]
fn issue_19_screen_outcomes_in_words() {
    let ribbon = load("patterns/ribbon.toml");
    let ko = screen::families(&ribbon, true, false, false);
    let s = run_screen(&ribbon, &ko, true).unwrap();
    let status = |m: usize, gene: &str| s.shifts[m].iter().find(|r| r.gene == gene).unwrap().status.clone();
    assert_eq!(status(0, "amber"), screen::outcome::GENE_LOST);
    assert_eq!(status(0, "cobalt"), screen::outcome::GENE_FILLS);
    let tail = ribbon.mutants.iter().find(|m| m.name == "amber in the tail").unwrap().clone();
    let s = run_screen(&ribbon, &[tail], true).unwrap();
    assert!(s.shifts[0].iter().filter(|r| r.wild_type_pct.is_some()).all(|r| r.status == screen::outcome::UNCHANGED));
    assert!(s.shifts[0].iter().any(|r| r.status == screen::outcome::NEW));
    // Fixed steps of 0.05 min, and a mutant whose amber decays 1000 times faster: the step is unsafe.
    let mut fixed = ribbon.clone();
    fixed.clock.stepping = anlage::model::Stepping::Fixed { step_min: 0.05 };
    let fast = fixed.parse_mutant(r#"{ name = "fast", scale = { "amber.decay" = 1000.0 } }"#).unwrap();
    let s = run_screen(&fixed, &[fast], true).unwrap();
    assert_eq!(s.shifts[0][0].status, screen::outcome::FAILED);
    assert!(s.shifts[0][0].reason.as_deref().unwrap().contains("too long for this model"), "{:?}", s.shifts[0][0]);
    // Dosage covers genes as well as gradients.
    let names: Vec<String> = screen::families(&ribbon, false, false, true).iter().map(|m| m.name.clone()).collect();
    assert!(names.contains(&"amber.production x0.5".to_string()) && names.contains(&"head.peak x2".to_string()));
}

/// Issue 19 (a trial's finding): a smooth boundary that happens to move
/// about one nucleus spacing per scan step (0.025 in ln p) sits near whole
/// spacings at every scan point, and was called pinned. Here r = s·m(x)/k at
/// steady state with m = e^(−x/λ), read at the absolute level 1: x* =
/// λ·ln(s/k), so dx*/d ln s = λ = 100 µm = 40 spacings per unit ln p,
/// exactly one spacing per scan step (x* follows from the steady state
/// directly; Wolpert 1969, J. Theor. Biol. 25:1, for the threshold reading).
#[test]
fn issue_19_a_smooth_boundary_moving_a_spacing_per_scan_step_is_smooth() {
    let m = parse(
        "title = \"one spacing per step\"\n[tissue]\nnuclei = [200]\nspacing_um = 2.5\n\
         [clock]\nuntil_min = 300.0\ntolerance = 1e-9\nsnapshot_every_min = 300.0\n\
         [[gradient]]\nname = \"head\"\nshape = \"exponential\"\nfrom = \"left\"\npeak = 1.0\ndecay_length_um = 100.0\n\
         [[gene]]\nname = \"russet\"\nrate = \"s * head - k * russet\"\nboundary_level = { absolute = 1.0 }\n\
         [circuit]\nkinetics = \"rates\"\nparameters = { s = 4.0, k = 0.2 }\n",
    );
    let rows = screen::sensitivity(&m, screen::SENSITIVITY_STEP, true).unwrap();
    let s = rows.iter().find(|r| r.parameter == "s").unwrap();
    assert_eq!(s.kind, "smooth", "{rows:#?}");
    assert_relative_eq!(s.d_um_per_ln.unwrap(), 100.0, max_relative = 2e-2);
    let k = rows.iter().find(|r| r.parameter == "k").unwrap();
    assert_eq!(k.kind, "smooth", "{rows:#?}");
    assert_relative_eq!(k.d_um_per_ln.unwrap(), -100.0, max_relative = 2e-2);
    // A hundredfold less synthesis: russet peaks at 0.2, below its absolute
    // level everywhere, which the screen says in those words (not "boundary lost").
    let low = m.parse_mutant(r#"{ name = "low", scale = { "s" = 0.01 } }"#).unwrap();
    let s = run_screen(&m, &[low], true).unwrap();
    assert_eq!(s.shifts[0][0].status, screen::outcome::GENE_BELOW, "{:?}", s.shifts[0]);
}

/// Crosses in a threshold read-out of an exponential gradient, x* =
/// λ·ln(c₀/K) (the exponential profile): doubling the peak twice (two
/// declared doses) moves the boundary by λ·ln 4, and so does doubling the
/// peak and halving the threshold; the shifts add, so the epistasis is 0.
/// A cross with a knock-out loses the boundary and says so.
#[test]
fn crosses_of_log_additive_mutants_have_no_epistasis() {
    let dir = crate::common::temp_dir("crosses");
    let model = dir.join("m.toml");
    // The read-out of tests/replicates.rs (its [noise] section plays no part
    // in a screen), with the threshold lowered so that λ·ln 4 fits the row.
    let text = crate::replicates::read_out(0.1, 2).replace("threshold = 0.05", "threshold = 0.02")
        + "[[mutant]]\nname = \"dose a\"\nscale = { \"cue.peak\" = 2.0 }\n"
        + "[[mutant]]\nname = \"dose b\"\nscale = { \"cue.peak\" = 2.0 }\n"
        + "[[mutant]]\nname = \"lower threshold\"\nscale = { \"cue->quill.threshold\" = 0.5 }\n"
        + "[[mutant]]\nname = \"ko\"\nknock_out = [\"quill\"]\n";
    std::fs::write(&model, text).unwrap();
    let out = dir.join("out");
    let o = crate::common::anlage(&["screen", model.to_str().unwrap(), "--crosses", "2", "-o", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let mut rdr = csv::Reader::from_path(out.join("epistasis.csv")).unwrap();
    let header = rdr.headers().unwrap().clone();
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    let rows: Vec<csv::StringRecord> = rdr.records().map(Result::unwrap).collect();
    let row = |cross: &str| rows.iter().find(|r| &r[col("cross")] == cross).unwrap_or_else(|| panic!("{cross}"));
    let length = 600.0;
    let ln4_pct = 100.0 * 4f64.ln() / length * 100.0;
    for cross in ["dose a + dose b", "dose a + lower threshold", "dose b + lower threshold"] {
        let r = row(cross);
        assert_eq!(&r[col("status")], "ok");
        let shift: f64 = r[col("cross_pct")].parse().unwrap();
        let epi: f64 = r[col("epistasis_pct")].parse().unwrap();
        assert!((shift - ln4_pct).abs() < 0.01, "{cross}: {shift} vs λ ln 4 = {ln4_pct} %");
        assert!(epi.abs() < 0.01, "{cross}: epistasis {epi}");
    }
    assert_eq!(&row("dose a + ko")[col("status")], "lost in ko");
    // A mutant given twice under one name is refused (the sums would take one for the other).
    let o = crate::common::anlage(&[
        "screen",
        model.to_str().unwrap(),
        "--mutant",
        r#"{ name = "dose a", scale = { "cue.peak" = 3.0 } }"#,
        "--crosses",
        "2",
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", String::from_utf8_lossy(&o.stderr));
    // Pairs need two mutants; 4 is not a cross size.
    let o = crate::common::anlage(&["screen", model.to_str().unwrap(), "--crosses", "4", "-o", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
}

/// Sharding a screen with crosses: 3 shards run by hand and merged give the
/// bytes of the whole screen (shifts, epistasis, picture); a merge with a
/// shard missing names the command that runs it and writes nothing.
#[test]
fn a_screen_with_crosses_sharded_in_three_merges_into_the_same_bytes() {
    let dir = crate::common::temp_dir("screen-shards");
    let model = dir.join("m.toml");
    let text = crate::replicates::read_out(0.1, 2).replace("threshold = 0.05", "threshold = 0.02")
        + "[[mutant]]\nname = \"dose a\"\nscale = { \"cue.peak\" = 2.0 }\n"
        + "[[mutant]]\nname = \"lower threshold\"\nscale = { \"cue->quill.threshold\" = 0.5 }\n"
        + "[[mutant]]\nname = \"ko\"\nknock_out = [\"quill\"]\n";
    std::fs::write(&model, text).unwrap();
    let m = model.to_str().unwrap();
    let (whole, sharded) = (dir.join("whole"), dir.join("sharded"));
    let run = |extra: &[&str], out: &std::path::Path| {
        let mut args = vec!["screen", m, "--crosses", "2"];
        args.extend_from_slice(extra);
        args.extend_from_slice(&["-o", out.to_str().unwrap()]);
        crate::common::anlage(&args)
    };
    let o = run(&[], &whole);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    for k in [1, 3] {
        let o = run(&["--shard", &format!("{k}/3")], &sharded);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let o = run(&["--merge"], &sharded);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("--shard 2/3"), "{err}");
    assert!(!sharded.join("shifts.csv").exists(), "nothing is written while a shard is missing");
    assert!(run(&["--shard", "2/3"], &sharded).status.success());
    let o = run(&["--merge"], &sharded);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let mut names: Vec<String> = std::fs::read_dir(&whole)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".csv") || n.ends_with(".png"))
        .collect();
    names.sort();
    assert!(names.iter().any(|n| n == "epistasis.csv") && names.iter().any(|n| n == "shifts.csv"), "{names:?}");
    for name in &names {
        assert!(
            std::fs::read(whole.join(name)).unwrap() == std::fs::read(sharded.join(name)).unwrap(),
            "{name} differs between the whole screen and the merged shards"
        );
    }
    // A screen of other mutants refuses these shards.
    let o = crate::common::anlage(&["screen", m, "--crosses", "3", "--merge", "-o", sharded.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2), "{}", String::from_utf8_lossy(&o.stderr));
}

/// Sharding the sensitivity: 4 shards (some parameters each) merged give
/// the bytes of the whole table and picture; shards of another step are
/// refused.
#[test]
fn sensitivity_sharded_in_four_merges_into_the_same_bytes() {
    let dir = crate::common::temp_dir("sensitivity-shards");
    let model = dir.join("m.toml");
    std::fs::write(&model, crate::replicates::read_out(0.1, 2)).unwrap();
    let m = model.to_str().unwrap();
    let (whole, sharded) = (dir.join("whole"), dir.join("sharded"));
    let run = |extra: &[&str], out: &std::path::Path| {
        let mut args = vec!["sensitivity", m];
        args.extend_from_slice(extra);
        args.extend_from_slice(&["-o", out.to_str().unwrap()]);
        crate::common::anlage(&args)
    };
    assert!(run(&[], &whole).status.success());
    for k in 1..=4 {
        let o = run(&["--shard", &format!("{k}/4")], &sharded);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let o = run(&["--merge"], &sharded);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    for name in ["sensitivity.csv", "sensitivity.png"] {
        assert!(
            std::fs::read(whole.join(name)).unwrap() == std::fs::read(sharded.join(name)).unwrap(),
            "{name} differs between the whole sensitivity and the merged shards"
        );
    }
    let rows = std::fs::read_to_string(whole.join("sensitivity.csv")).unwrap().lines().count();
    assert!(rows > 4, "every parameter has rows: {rows}");
    let o = run(&["--merge", "--step", "0.02"], &sharded);
    assert_eq!(o.status.code(), Some(2), "{}", String::from_utf8_lossy(&o.stderr));
}

/// A mutant that has not settled by the end of the run is said to be so, in
/// its rows, in the report and in --json, and a sweep calls such a point
/// "changing". Reference: for du/dt = p·H − d·u from u = 0 (no diffusion),
/// u(T) = (pH/d)(1 − e^(−dT)) and du/dt = pH·e^(−dT), so the rule "|du/dt|
/// above 1 % of the largest level per decay time 1/d" reads e^(−dT)/(1 −
/// e^(−dT)) > 0.01, i.e. d·T < ln 101 = 4.615 (the exponential approach of a
/// linear production–decay gene; any textbook ODE). With T = 40 min: decay
/// 0.1/min (dT = 4) has not settled, 0.125/min (dT = 5) has. Snapshots every
/// 40 min (one interval from the start) must not make a settled run look
/// unsettled.
#[test]
fn unsettled_mutants_and_sweep_points_are_named_by_the_exponential_approach() {
    let dir = crate::common::temp_dir("unsettled");
    let model = dir.join("m.toml");
    let text = crate::replicates::read_out(0.1, 2)
        + "[[mutant]]\nname = \"decay x0.1\"\nscale = { \"quill.decay\" = 0.1 }\n"
        + "[[mutant]]\nname = \"decay x0.125\"\nscale = { \"quill.decay\" = 0.125 }\n";
    assert!(text.contains("until_min = 40.0") && text.contains("snapshot_every_min = 40.0"));
    std::fs::write(&model, text).unwrap();
    let m = model.to_str().unwrap();
    let out = dir.join("out");
    let o = crate::common::anlage(&["screen", m, "--json", "-o", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["not_settled_mutants"], serde_json::json!(["decay x0.1"]), "{v}");
    assert_eq!(v["wild_type_not_settled"], serde_json::Value::Null);
    let text = std::fs::read_to_string(out.join("shifts.csv")).unwrap();
    let slow: Vec<&str> = text.lines().filter(|l| l.starts_with("decay x0.1,")).collect();
    assert!(!slow.is_empty() && slow.iter().all(|l| l.contains("not settled: quill")), "{text}");
    assert!(text.lines().filter(|l| l.starts_with("decay x0.125,")).all(|l| !l.contains("not settled")), "{text}");
    let o = crate::common::anlage(&["screen", m, "-o", out.to_str().unwrap()]);
    let report = String::from_utf8_lossy(&o.stdout);
    assert!(report.contains("NOT SETTLED: 1 mutant still change") && report.contains("decay x0.1"), "{report}");
    // The same rule in a sweep over the decay rate.
    let sweep = dir.join("sweep");
    let o = crate::common::anlage(&["sweep", m, "--axis", "quill.decay=0.1:0.125:2", "-o", sweep.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let table = std::fs::read_to_string(sweep.join("sweep.csv")).unwrap();
    let classes: Vec<&str> = table.lines().skip(1).map(|l| l.split(',').nth(2).unwrap()).collect();
    assert_eq!(classes, ["changing", "boundary"], "{table}");
}

/// A pinned boundary whose jumps come closer together than the scan's
/// points: the ribbon's boundary against amber.production jumps about every
/// 0.0085 in ln p, so it never rests between two scan points and central
/// differences at 0.01 and 0.02 disagree. Its sensitivity is the secant over
/// the scan, checked against an independent estimate: the least-squares
/// slope of the boundary's position over 81 runs spread across the same
/// ±0.1 in ln p (the staircase's average slope; ordinary least squares,
/// textbook).
#[test]
fn a_boundary_jumping_more_often_than_the_scan_is_pinned_with_the_staircase_slope() {
    let ribbon = load("patterns/ribbon.toml");
    let p = ribbon.parameters().into_iter().find(|&p| ribbon.param_name(p) == "amber.production").unwrap();
    let rows = screen::sensitivity(&ribbon, screen::SENSITIVITY_STEP, true).unwrap();
    let row = rows.iter().find(|r| r.parameter == "amber.production" && r.gene == "amber").unwrap();
    assert_eq!(row.kind, "pinned", "{row:?}");
    let wt = final_boundaries(&ribbon).unwrap();
    let x0 = wt.iter().find(|b| b.gene == "amber").unwrap().position_um;
    let (us, xs): (Vec<f64>, Vec<f64>) = (0..81)
        .map(|k| {
            let u = -0.1 + 0.2 * k as f64 / 80.0;
            let m = Mutant { name: "s".into(), edits: vec![Edit::Scale(p, u.exp())] };
            let bs = final_boundaries(&ribbon.with_mutant(&m)).unwrap();
            let x = bs
                .iter()
                .filter(|b| b.gene == "amber")
                .map(|b| b.position_um)
                .min_by(|a, b| (a - x0).abs().total_cmp(&(b - x0).abs()))
                .unwrap();
            (u, x)
        })
        .unzip();
    let (mu, mx) = (us.iter().sum::<f64>() / 81.0, xs.iter().sum::<f64>() / 81.0);
    let slope = us.iter().zip(&xs).map(|(u, x)| (u - mu) * (x - mx)).sum::<f64>()
        / us.iter().map(|u| (u - mu) * (u - mu)).sum::<f64>();
    let steps = xs.windows(2).filter(|w| (w[1] - w[0]).abs() > 0.5 * ribbon.grid.spacing_um).count();
    assert!(steps >= 10, "the boundary jumps often across the scan ({steps} jumps)");
    let secant = row.d_um_per_ln.unwrap();
    assert!((secant - slope).abs() <= 0.08 * slope.abs(), "secant {secant} against least squares {slope}");
}

/// From a user trial: a knocked-out gene decaying from a noisy start
/// (`initial_noise`) is below its expression floor everywhere at the end and
/// is not reported as still changing; the noisy sheet's knock-outs settle.
#[test]
fn knocked_out_genes_below_the_floor_are_settled() {
    let model = load("patterns/sheet.toml");
    assert!(model.genes.iter().any(|g| g.initial_noise > 0.0), "the case needs a noisy start");
    let mutants = screen::families(&model, true, false, false);
    let s = run_screen(&model, &mutants, false).unwrap();
    for rows in &s.shifts {
        for r in rows {
            let reason = r.reason.as_deref().unwrap_or("");
            assert!(!reason.contains("not settled"), "{}: {reason}", r.mutant);
        }
    }
}
