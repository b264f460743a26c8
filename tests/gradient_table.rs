//! Gradients from measured tables: the ribbon's exponential gradient written
//! out as a table at the nuclei gives the same run; tables in the form
//! `measure` writes (several embryos and genes) are averaged and chosen by
//! gene; bad tables are refused with the file and the fix.

use crate::common::{root, run, temp_dir};

fn ribbon_with(gradient: &str, dir: &std::path::Path) -> anlage::model::Model {
    let text = std::fs::read_to_string(root().join("patterns/ribbon.toml")).unwrap();
    let old = "shape = \"exponential\"\nfrom = \"left\"\npeak = 1.0\ndecay_length_um = 150.0";
    assert!(text.contains(old));
    let path = dir.join("model.toml");
    std::fs::write(&path, text.replace(old, gradient)).unwrap();
    anlage::model::Model::load(&path).unwrap_or_else(|e| panic!("{e}"))
}

/// The exponential head gradient sampled at every nucleus centre (a table
/// in µm, full precision): linear interpolation returns the samples exactly,
/// so the run is the exponential's, boundary for boundary, to the bit.
#[test]
fn a_table_of_the_exponential_gives_the_same_run() {
    let dir = temp_dir("gradient-table");
    let mut csv = String::from("position_um,level\n");
    for ix in 0..100 {
        let x = (ix as f64 + 0.5) * 5.0;
        csv.push_str(&format!("{x:?},{:?}\n", (-x / 150.0).exp()));
    }
    std::fs::write(dir.join("head.csv"), csv).unwrap();
    let table = ribbon_with("shape = \"table\"\nfrom = \"left\"\npeak = 1.0\ntable = \"head.csv\"", &dir);
    let exponential = anlage::model::Model::load(&root().join("patterns/ribbon.toml")).unwrap();
    let (a, b) = (run(&table).recording, run(&exponential).recording);
    assert!(a.final_state() == b.final_state(), "the same final state to the bit");
    assert_ne!(table.inputs_sha256(), exponential.inputs_sha256());
}

/// A table as `measure` writes it (sample, embryo, gene, position_pct,
/// level): two embryos at the same positions are averaged; with two genes
/// in it, `table_gene` chooses, and leaving it out is refused.
#[test]
fn measured_tables_are_averaged_and_chosen_by_gene() {
    let dir = temp_dir("gradient-measured");
    let mut csv = String::from("sample,embryo,gene,position_pct,level,signal\n");
    for (embryo, lift) in [(1, 0.0), (2, 0.2)] {
        for pct in [0.0, 50.0, 100.0] {
            csv.push_str(&format!("s,{embryo},amber,{pct},{},0\n", 1.0 - pct / 100.0 + lift));
            csv.push_str(&format!("s,{embryo},cobalt,{pct},{},0\n", pct / 100.0));
        }
    }
    std::fs::write(dir.join("measured.csv"), csv).unwrap();
    let base = "shape = \"table\"\nfrom = \"left\"\npeak = 1.0\ntable = \"measured.csv\"";
    let model = ribbon_with(&format!("{base}\ntable_gene = \"amber\""), &dir);
    let tissue = anlage::tissue::Tissue::new(&model);
    let inputs = tissue.inputs_at(0.0);
    // Nucleus 50 sits at 50.5 % of the axis: mean level 0.6 at 50 %, 0.1 at 100 %.
    let want = 0.6 + (0.1 - 0.6) * (0.5 / 50.0);
    assert!((inputs[[0, 50]] - want).abs() < 1e-12, "{} against {want}", inputs[[0, 50]]);
    let path = dir.join("model.toml");
    let text = std::fs::read_to_string(&path).unwrap().replace("\ntable_gene = \"amber\"", "");
    std::fs::write(&path, text).unwrap();
    let err = anlage::model::Model::load(&path).unwrap_err().to_string();
    assert!(err.contains("table_gene") && err.contains("amber, cobalt"), "{err}");
}

/// Refused with the field and a fix: no level column, a negative level,
/// one position only, and `table` on an exponential gradient.
#[test]
fn bad_tables_are_refused() {
    let dir = temp_dir("gradient-bad");
    let cases = [
        ("position_pct,value\n0,1\n100,0\n", "no `level` column"),
        ("position_pct,level\n0,1\n100,-0.5\n", "below 0"),
        ("position_pct,level\n10,1\n10,2\n", "fewer than two positions"),
    ];
    for (k, (csv, want)) in cases.iter().enumerate() {
        std::fs::write(dir.join(format!("t{k}.csv")), csv).unwrap();
        let text = std::fs::read_to_string(root().join("patterns/ribbon.toml")).unwrap().replace(
            "shape = \"exponential\"\nfrom = \"left\"\npeak = 1.0\ndecay_length_um = 150.0",
            &format!("shape = \"table\"\nfrom = \"left\"\npeak = 1.0\ntable = \"t{k}.csv\""),
        );
        let path = dir.join(format!("m{k}.toml"));
        std::fs::write(&path, text).unwrap();
        let err = anlage::model::Model::load(&path).unwrap_err().to_string();
        assert!(err.contains("table") && err.contains(want), "{want}: {err}");
    }
    let text = std::fs::read_to_string(root().join("patterns/ribbon.toml"))
        .unwrap()
        .replace("decay_length_um = 150.0", "decay_length_um = 150.0\ntable = \"t0.csv\"");
    let path = dir.join("both.toml");
    std::fs::write(&path, text).unwrap();
    let err = anlage::model::Model::load(&path).unwrap_err().to_string();
    assert!(err.contains("`table`") || err.contains("table"), "{err}");
}

/// Percentages are of the extent the distance runs along: the sheet's height
/// for a source at the top, the axis length for one at the right. A linear
/// table 1 → 0 over 0–100 % reads 1 − d/extent at every nucleus of a
/// 20 × 10 sheet (100 × 50 µm), not of the axis length for both.
#[test]
fn percentages_follow_the_side_of_the_source() {
    let dir = temp_dir("gradient-sides");
    std::fs::write(dir.join("ramp.csv"), "position_pct,level\n0,1\n100,0\n").unwrap();
    let text = "[tissue]\nnuclei = [20, 10]\nspacing_um = 5.0\n\
         [clock]\nuntil_min = 1.0\nstep_min = 0.5\nsnapshot_every_min = 1.0\n\
         [[gradient]]\nname = \"top\"\nshape = \"table\"\nfrom = \"top\"\npeak = 1.0\ntable = \"ramp.csv\"\n\
         [[gradient]]\nname = \"right\"\nshape = \"table\"\nfrom = \"right\"\npeak = 1.0\ntable = \"ramp.csv\"\n\
         [[gene]]\nname = \"a\"\nproduction = 1.0\ndecay = 1.0\n";
    let path = dir.join("m.toml");
    std::fs::write(&path, text).unwrap();
    let model = anlage::model::Model::load(&path).unwrap();
    let inputs = anlage::tissue::Tissue::new(&model).inputs_at(0.0);
    for iy in 0..10 {
        for ix in 0..20 {
            let (x, y) = ((ix as f64 + 0.5) * 5.0, (iy as f64 + 0.5) * 5.0);
            let i = iy * 20 + ix;
            assert!((inputs[[0, i]] - (1.0 - (50.0 - y) / 50.0)).abs() < 1e-12, "top at ({x}, {y})");
            assert!((inputs[[1, i]] - (1.0 - (100.0 - x) / 100.0)).abs() < 1e-12, "right at ({x}, {y})");
        }
    }
}

/// Profiles measured at several times, in the tidy form (a `time_min`
/// column) and the wide form (one `level_<T>min` column per time), give the
/// same inputs, linear in time between the profiles and held after the
/// last. A gene that only accumulates the gradient (du/dt = m) then holds
/// ∫m dt exactly: 30·(m₀ + m₁) at 60 min for profiles at 0 and 60 min
/// (the trapezoid rule is exact for a linear integrand), plus 30·m₁ by 90
/// min (elementary calculus).
#[test]
fn profiles_at_several_times_are_read_in_time() {
    let dir = temp_dir("gradient-timed");
    let at = |t: f64, pct: f64| if t == 0.0 { 2.0 * (1.0 - pct / 100.0) } else { 1.0 + pct / 100.0 };
    let pcts = [0.0, 25.0, 50.0, 75.0, 100.0];
    let mut tidy = String::from("time_min,position_pct,level\n");
    let mut wide = String::from("position_pct,level_60min,level_0min\n");
    for pct in pcts {
        for t in [60.0, 0.0] {
            tidy.push_str(&format!("{t},{pct},{}\n", at(t, pct)));
        }
        wide.push_str(&format!("{pct},{},{}\n", at(60.0, pct), at(0.0, pct)));
    }
    std::fs::write(dir.join("tidy.csv"), tidy).unwrap();
    std::fs::write(dir.join("wide.csv"), wide).unwrap();
    let model = |table: &str| {
        let text = format!(
            "[tissue]\nnuclei = [20]\nspacing_um = 5.0\n[clock]\nuntil_min = 90.0\ntolerance = 1e-9\n\
             snapshot_every_min = 30.0\n[[gradient]]\nname = \"cue\"\nshape = \"table\"\nfrom = \"left\"\n\
             peak = 1.0\ntable = \"{table}\"\n[[gene]]\nname = \"tally\"\nrate = \"cue\"\n\
             [circuit]\nkinetics = \"rates\"\n"
        );
        let path = dir.join(format!("{table}.toml"));
        std::fs::write(&path, text).unwrap();
        anlage::model::Model::load(&path).unwrap_or_else(|e| panic!("{e}"))
    };
    let (tidy, wide) = (model("tidy.csv"), model("wide.csv"));
    let (a, b) = (anlage::tissue::Tissue::new(&tidy), anlage::tissue::Tissue::new(&wide));
    for t in [0.0, 20.0, 60.0, 75.0] {
        let (ia, ib) = (a.inputs_at(t), b.inputs_at(t));
        assert_eq!(ia.row(0), ib.row(0), "t = {t}");
        for i in 0..20 {
            let pct = (i as f64 + 0.5) * 5.0;
            let w = (t / 60.0f64).min(1.0);
            let want = (1.0 - w) * at(0.0, pct) + w * at(60.0, pct);
            approx::assert_relative_eq!(ia[[0, i]], want, max_relative = 1e-12);
        }
    }
    let rec = run(&tidy).recording;
    for (s, t) in rec.times.iter().enumerate() {
        let state = rec.state(s).unwrap();
        for i in 0..20 {
            let pct = (i as f64 + 0.5) * 5.0;
            let (m0, m1) = (at(0.0, pct), at(60.0, pct));
            let want = if *t <= 60.0 { t * m0 + (m1 - m0) * t * t / 120.0 } else { 30.0 * (m0 + m1) + (t - 60.0) * m1 };
            approx::assert_relative_eq!(state[[0, i]], want, max_relative = 1e-7, epsilon = 1e-12);
        }
    }
}

/// An amplitude time course with a kink between snapshots: steps land on
/// the kink and start afresh there. Before they did, SBDF2 stepped from 60
/// to 90 min in one step built on the rising rates before the kink, and its
/// error estimate, built on the same history, saw nothing: 6 % off with
/// exit 0. du/dt = a(t) with a rising from 0 at 10 min to 1 at 40 min and
/// held: u = (t − 10)²/60 on the rise, 15 + (t − 40) after (calculus).
#[test]
fn steps_start_afresh_at_a_kink_of_an_amplitude() {
    let text = "[tissue]\nnuclei = [4]\nspacing_um = 5.0\n[clock]\nuntil_min = 90.0\ntolerance = 1e-8\n\
                snapshot_every_min = 30.0\n[[gradient]]\nname = \"cue\"\nshape = \"linear\"\nfrom = \"left\"\n\
                peak = 1.0\nbaseline = 1.0\nlength_um = 100.0\namplitude = [[10.0, 0.0], [40.0, 1.0]]\n\
                [[gene]]\nname = \"tally\"\nrate = \"cue\"\n[circuit]\nkinetics = \"rates\"\n";
    let model = crate::common::parse(text);
    let rec = run(&model).recording;
    for (s, &t) in rec.times.iter().enumerate() {
        let want = if t <= 10.0 {
            0.0
        } else if t <= 40.0 {
            (t - 10.0) * (t - 10.0) / 60.0
        } else {
            15.0 + (t - 40.0)
        };
        approx::assert_abs_diff_eq!(rec.state(s).unwrap()[[0, 0]], want, epsilon = 1e-6 * want.max(1.0));
    }
}
