//! The command line: outputs, determinism across thread counts, exit codes.

use std::path::{Path, PathBuf};
use std::process::Command;

use crate::common::{anlage, root, run_into, temp_dir};

/// A fresh test folder `name` holding `file` with `text`; returns (folder, file).
fn model_in_temp(name: &str, file: &str, text: &str) -> (PathBuf, PathBuf) {
    let dir = temp_dir(name);
    let path = dir.join(file);
    std::fs::write(&path, text).unwrap();
    (dir, path)
}

fn summary(dir: &Path) -> serde_json::Value {
    serde_json::from_slice(&std::fs::read(dir.join("summary.json")).unwrap()).unwrap()
}

#[test]
fn run_writes_every_output_and_prints_boundaries() {
    let out = temp_dir("ribbon");
    let model = root().join("patterns/ribbon.toml");
    let o = anlage(&["run", model.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert!(o.status.success());
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("amber") && text.contains("falling") && text.contains("model prediction"), "{text}");
    for name in ["profiles.csv", "states.npy", "boundaries.csv", "domains.csv", "summary.json"] {
        assert!(out.join(name).is_file(), "{name} missing");
    }
    // No temporary files are left behind.
    let leftovers: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().starts_with('.'))
        .collect();
    assert!(leftovers.is_empty());
    let profiles = std::fs::read_to_string(out.join("profiles.csv")).unwrap();
    assert!(profiles.starts_with("time_min,nucleus,x_um,x_pct,amber,cobalt\n"));
    assert_eq!(profiles.lines().count(), 1 + 61 * 100);
    // The long table holds the same numbers, one gene per row.
    let long = std::fs::read_to_string(out.join("profiles_long.csv")).unwrap();
    assert!(long.starts_with("time_min,nucleus,x_um,x_pct,gene,level\n"));
    let wide: Vec<Vec<&str>> = profiles.lines().skip(1).map(|l| l.split(',').collect()).collect();
    let rows: Vec<Vec<&str>> = long.lines().skip(1).map(|l| l.split(',').collect()).collect();
    assert_eq!(rows.len(), 2 * wide.len());
    for (k, r) in rows.iter().enumerate() {
        let (w, g) = (&wide[k / 2], k % 2);
        assert_eq!(&r[..4], &w[..4]);
        assert_eq!((r[4], r[5]), (["amber", "cobalt"][g], w[4 + g]));
    }
    let boundaries = std::fs::read_to_string(out.join("boundaries.csv")).unwrap();
    assert!(boundaries.starts_with("time_min,gene,direction,position_um,position_pct,steepness_per_um,width_um\n"));
    let summary = summary(&out);
    assert_eq!(summary["final_time_min"], 240.0);
    assert_eq!(summary["final_boundaries"].as_array().unwrap().len(), 2);
}

/// The NPY file holds [snapshot, gene, nucleus] little-endian f64 (NumPy format
/// spec, "NEP 1 — A simple file format for NumPy arrays") and round-trips.
#[test]
fn states_npy_round_trips() {
    use ndarray_npy::ReadNpyExt;
    let out = temp_dir("npy");
    run_into("patterns/ribbon.toml", &out, 2);
    let bytes = std::fs::read(out.join("states.npy")).unwrap();
    assert_eq!(&bytes[..6], b"\x93NUMPY");
    let header = String::from_utf8_lossy(&bytes[10..128]);
    assert!(header.contains("'descr': '<f8'") && header.contains("'shape': (61, 2, 100)"), "{header}");
    let arr = ndarray::Array3::<f64>::read_npy(std::fs::File::open(out.join("states.npy")).unwrap()).unwrap();
    let profiles = std::fs::read_to_string(out.join("profiles.csv")).unwrap();
    let last = profiles.lines().last().unwrap();
    let cobalt: f64 = last.rsplit(',').next().unwrap().parse().unwrap();
    assert_eq!(arr[[60, 1, 99]], cobalt);
}

/// One thread and two threads write identical bytes, summary.json included;
/// with either scheme (the sheet also with ARK4 error control).
#[test]
fn one_and_two_threads_write_identical_bytes() {
    let text = std::fs::read_to_string(root().join("patterns/sheet.toml"))
        .unwrap()
        .replace("[clock]", "[clock]\nscheme = \"ark4\"");
    let (_dir, ark_sheet) = model_in_temp("ark-sheet", "sheet.toml", &text);
    for model in ["patterns/ribbon.toml", "patterns/sheet.toml", ark_sheet.to_str().unwrap()] {
        let (a, b) = (temp_dir("t1"), temp_dir("t2"));
        run_into(model, &a, 1);
        run_into(model, &b, 2);
        let mut names: Vec<String> =
            std::fs::read_dir(&a).unwrap().map(|e| e.unwrap().file_name().to_string_lossy().into_owned()).collect();
        names.sort();
        assert!(names.len() >= 5, "{names:?}");
        assert!(names.iter().any(|n| n == "summary.json"));
        for name in &names {
            assert!(
                std::fs::read(a.join(name)).unwrap() == std::fs::read(b.join(name)).unwrap(),
                "{model}: {name} differs"
            );
        }
    }
}

#[test]
fn check_describes_the_model() {
    let o = anlage(&["check", root().join("patterns/band.toml").to_str().unwrap()]);
    assert!(o.status.success());
    let text = String::from_utf8_lossy(&o.stdout);
    for want in
        ["is valid", "row of 120", "plum", "teal", "head -> teal: activates (K = 0.15, n = 4)", "1800", "memory"]
    {
        assert!(text.contains(want), "missing `{want}` in\n{text}");
    }
    assert!(!text.contains("noise"), "no noise line without a [noise] section:\n{text}");
    let o = anlage(&["check", root().join("patterns/precision.toml").to_str().unwrap()]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains(
            "noise     intrinsic, vary head.peak, vary tail.peak (200 embryos by default, stochastic steps of 0.2 min)"
        ),
        "{text}"
    );
}

#[test]
fn bad_model_exits_2_with_location() {
    let text =
        std::fs::read_to_string(root().join("patterns/ribbon.toml")).unwrap().replace("decay = 0.1 ", "decay = -0.1 ");
    let line = 1 + text.lines().position(|l| l.starts_with("decay = -0.1")).unwrap();
    let (dir, path) = model_in_temp("bad", "bad.toml", &text);
    let o = anlage(&["run", path.to_str().unwrap(), "-o", dir.join("out").to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains(&format!("bad.toml:{line}:1:")) && err.contains("decay") && err.contains(">= 0"), "{err}");
    assert!(!dir.join("out").exists(), "no output for a bad model");
}

#[test]
fn blow_up_exits_1_with_time_nucleus_and_gene() {
    // Self-activation with n = 1 and no saturation in reach of decay: explosive growth.
    let (dir, path) = model_in_temp(
        "blowup",
        "blowup.toml",
        "[tissue]\nnuclei = [5]\nspacing_um = 1.0\n[clock]\nuntil_min = 100.0\nstep_min = 1.0\nsnapshot_every_min = 10.0\n\
         [[gene]]\nname = \"runaway\"\nproduction = 1.0\ndecay = 0.0\ndiffusion = 1000000.0\ninitial_profile = [1.0, 0.0, 0.0, 0.0, 1.0]\n\
         [[gene]]\nname = \"fuel\"\nproduction = 1e300\ndecay = 0.0\n[circuit]\nkinetics = \"sigmoid\"\n\
         [[circuit.link]]\nfrom = \"fuel\"\nto = \"fuel\"\nweight = 1.0\n",
    );
    let o = anlage(&["run", path.to_str().unwrap(), "-o", dir.join("out").to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "{}", String::from_utf8_lossy(&o.stderr));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("blew up at t =") && err.contains("gene `fuel`") && err.contains("nucleus 0"), "{err}");
}

/// `anlage basins` on a run folder writes its tables and pictures; every table
/// row says what was frozen; the landscape lists the fold.
#[test]
fn basins_and_portrait_from_a_run_folder() {
    let out = temp_dir("basins");
    run_into("patterns/ribbon.toml", &out, 2);
    assert!(out.join("model.toml").is_file(), "runs keep a copy of their model");
    let o = anlage(&["basins", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("isolated nucleus") && text.contains("fold at 78.6"), "{text}");
    let basins = std::fs::read_to_string(out.join("basins.csv")).unwrap();
    assert!(basins.starts_with("frozen_at_min,frozen_inputs,nucleus,x_um,x_pct,attractor,fate,distance,period_min\n"));
    assert_eq!(basins.lines().count(), 1 + 61 * 100);
    assert!(basins.lines().skip(1).all(|l| l.split(',').nth(1) == Some("gradients")));
    let commitment = std::fs::read_to_string(out.join("commitment.csv")).unwrap();
    assert_eq!(commitment.lines().count(), 101);
    let landscape = std::fs::read_to_string(out.join("landscape.csv")).unwrap();
    assert_eq!(landscape.lines().filter(|l| l.contains(",fold,")).count(), 1);
    for name in ["attractors.csv", "basins.png", "landscape.png"] {
        assert!(out.join(name).is_file(), "{name}");
    }
    // Fewer snapshots (issue 19.6): every 20th and the last, or those nearest given times.
    let o = anlage(&["basins", out.to_str().unwrap(), "--every", "20"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let times = |text: &str| {
        let mut t: Vec<String> = text.lines().skip(1).map(|l| l.split(',').next().unwrap().to_string()).collect();
        t.dedup();
        t
    };
    assert_eq!(times(&std::fs::read_to_string(out.join("basins.csv")).unwrap()), ["0", "80", "160", "240"]);
    let o = anlage(&["basins", out.to_str().unwrap(), "--at", "101,239"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(times(&std::fs::read_to_string(out.join("basins.csv")).unwrap()), ["100", "240"]);
    // --json: the same counts and commitments as the tables, one document on standard output.
    let o = anlage(&["basins", out.to_str().unwrap(), "--at", "101,239", "--json"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!((doc["kind"].as_str(), doc["model_prediction"].as_bool()), (Some("basins"), Some(true)));
    assert_eq!(doc["times_min"], serde_json::json!([100.0, 240.0]));
    let commitment = std::fs::read_to_string(out.join("commitment.csv")).unwrap();
    assert_eq!(doc["commitment"].as_array().unwrap().len(), commitment.lines().count() - 1);
    let at_end: u64 = doc["attractors"].as_array().unwrap().iter().map(|a| a["nuclei_at_end"].as_u64().unwrap()).sum();
    assert_eq!(at_end, 100, "every nucleus ends in one attractor");
    let fold = doc["folds"][0]["position_pct"].as_f64().unwrap();
    assert!((78.6..78.8).contains(&fold), "the fold the report prints: {fold}");
    let o = anlage(&["basins", out.to_str().unwrap(), "--every", "0"]);
    assert_eq!(o.status.code(), Some(2));
    let pic = out.join("p.png");
    let o = anlage(&[
        "portrait",
        out.to_str().unwrap(),
        "--nucleus",
        "40",
        "--genes",
        "amber,cobalt",
        "--time",
        "8",
        "-o",
        pic.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = String::from_utf8_lossy(&o.stdout);
    assert_eq!(text.matches("stable node").count(), 2, "{text}");
    assert_eq!(text.matches("saddle").count(), 1, "{text}");
    assert!(image::open(&pic).is_ok());
    for bad in
        [vec!["--genes", "amber,plum"], vec!["--genes", "amber"], vec!["--nucleus", "100", "--genes", "amber,cobalt"]]
    {
        let mut args = vec!["portrait", out.to_str().unwrap()];
        if !bad.contains(&"--nucleus") {
            args.extend(["--nucleus", "3"]);
        }
        args.extend(bad.iter().copied());
        let o = anlage(&args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", String::from_utf8_lossy(&o.stderr));
    }
}

/// `anlage screen` runs the declared and generated mutants and writes its
/// table and chart; `anlage sensitivity` its table and heat map; bad mutants exit 2.
#[test]
fn screen_and_sensitivity_write_their_outputs() {
    let out = temp_dir("screen");
    let model = root().join("patterns/ribbon.toml");
    let m = model.to_str().unwrap();
    let o = anlage(&[
        "screen",
        m,
        "--knockouts",
        "--mutant",
        r#"{ name = "no feedback", remove_link = ["amber -> cobalt"] }"#,
        "--animate",
        "head x2",
        "-o",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("7 mutants screened (model predictions)"), "{text}");
    let shifts = std::fs::read_to_string(out.join("shifts.csv")).unwrap();
    assert!(shifts.starts_with(
        "mutant,gene,direction,wild_type_um,wild_type_pct,mutant_um,mutant_pct,shift_um,shift_pct,status,reason\n"
    ));
    assert!(
        shifts.lines().any(|l| l.starts_with("ko:amber,amber,falling,") && l.ends_with(",gene lost everywhere,")),
        "{shifts}"
    );
    assert!(shifts.lines().any(|l| l.starts_with("no feedback,")), "{shifts}");
    for name in ["shifts.png", "pair_head_x2.gif"] {
        assert!(out.join(name).is_file(), "{name}");
    }
    let o = anlage(&["sensitivity", m, "-o", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let sens = std::fs::read_to_string(out.join("sensitivity.csv")).unwrap();
    assert_eq!(sens.lines().count(), 1 + 14 * 2, "14 parameters x 2 boundaries");
    assert!(out.join("sensitivity.png").is_file());
    // --json: the same rows as the tables, one document on standard output.
    let o = anlage(&["sensitivity", m, "-o", out.to_str().unwrap(), "--json"]);
    let doc: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!((doc["kind"].as_str(), doc["model_prediction"].as_bool()), (Some("sensitivity"), Some(true)));
    assert_eq!(doc["rows"].as_array().unwrap().len(), 14 * 2);
    let o = anlage(&["screen", m, "--knockouts", "-o", out.join("ko").to_str().unwrap(), "--json"]);
    let doc: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let csv = std::fs::read_to_string(out.join("ko/shifts.csv")).unwrap();
    let rows: usize = doc["mutants"].as_array().unwrap().iter().map(|m| m["shifts"].as_array().unwrap().len()).sum();
    assert_eq!(rows, csv.lines().count() - 1);
    let amber = doc["mutants"].as_array().unwrap().iter().find(|m| m["name"] == "ko:amber").unwrap();
    assert_eq!(amber["shifts"][0]["status"], "gene lost everywhere");
    let o = anlage(&["screen", m, "--mutant", r#"{ name = "x", knock_out = ["plum"] }"#]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("unknown gene `plum`"));
}

/// From a run to synthetic stained images (invented data), measured back, and
/// scored against the run: the score is small and the files are there.
#[test]
fn synthesize_measure_compare_round_trip() {
    let out = temp_dir("stain");
    run_into("patterns/ribbon.toml", &out, 2);
    let imgs = out.join("stained");
    let o = anlage(&["synthesize", out.to_str().unwrap(), "-o", imgs.to_str().unwrap(), "--count", "2"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(std::fs::read_to_string(imgs.join("README.txt")).unwrap().starts_with("INVENTED DATA"));
    let o =
        anlage(&["measure", imgs.to_str().unwrap(), "--channel", "0=amber", "--channel", "1=cobalt", "--time", "240"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(imgs.join("embryo_01_check.png").is_file());
    let table = std::fs::read_to_string(imgs.join("measured.csv")).unwrap();
    // --json: the same rows as measured.csv on standard output, the report on standard error.
    let o = anlage(&[
        "measure",
        imgs.to_str().unwrap(),
        "--channel",
        "0=amber",
        "--channel",
        "1=cobalt",
        "--time",
        "240",
        "--json",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&o.stdout).expect("one JSON document");
    assert_eq!((doc["kind"].as_str(), doc["model_prediction"].as_bool()), (Some("measure"), Some(false)));
    assert_eq!(doc["boundaries"].as_array().unwrap().len(), table.lines().count() - 1);
    assert_eq!(doc["embryos"], 2);
    assert!(String::from_utf8_lossy(&o.stderr).contains("embryos measured"));
    assert_eq!(table.lines().count(), 3, "{table}");
    let o = anlage(&["compare", out.to_str().unwrap(), imgs.join("measured.csv").to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = String::from_utf8_lossy(&o.stdout);
    let rmse: f64 =
        text.split("root-mean-square difference: ").nth(1).unwrap().split(' ').next().unwrap().parse().unwrap();
    assert!(rmse < 0.5, "{text}");
    assert!(out.join("comparison.csv").is_file() && out.join("comparison.png").is_file());
    let o = anlage(&["measure", imgs.join("embryo_01.png").to_str().unwrap(), "--channel", "7=amber"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("channel 7 does not exist"));
}

/// `run --timing` prints one JSON line whose checksum is the sum of the final
/// state in states.npy; `--repeat` solves again and reports the same checksum
/// (the fastest solve's time); `--repeat` without `--timing` is refused.
#[test]
fn timing_line_and_repeat() {
    let out = temp_dir("timing");
    let model = root().join("patterns/band.toml");
    let line = |extra: &[&str]| -> serde_json::Value {
        let mut args = vec!["run", model.to_str().unwrap(), "--no-pictures", "--timing", "-o", out.to_str().unwrap()];
        args.extend_from_slice(extra);
        let o = anlage(&args);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        serde_json::from_slice(&o.stdout).expect("one JSON line")
    };
    let (once, thrice) = (line(&[]), line(&["--repeat", "3"]));
    assert_eq!(once["checksum"], thrice["checksum"]);
    assert!(thrice["solve_seconds"].as_f64().unwrap() > 0.0);
    let npy = std::fs::read(out.join("states.npy")).unwrap();
    let header = 10 + u16::from_le_bytes([npy[8], npy[9]]) as usize;
    let (g, n) = (once["genes"].as_u64().unwrap() as usize, once["nuclei"].as_u64().unwrap() as usize);
    let last = &npy[npy.len() - g * n * 8..];
    assert!(npy.len() > header + g * n * 8);
    let sum: f64 = last.chunks_exact(8).map(|c| f64::from_le_bytes(c.try_into().unwrap())).sum();
    assert_eq!(sum, once["checksum"].as_f64().unwrap());
    let o = anlage(&["run", model.to_str().unwrap(), "--repeat", "2", "-o", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    std::fs::remove_dir_all(&out).unwrap();
}

/// A recording too large for the memory budget is streamed to disk, so the
/// model is accepted and runs, and its states.npy is complete; a model whose
/// working arrays alone pass the budget is still refused (exit 2). 50,000
/// nuclei, 1 gene, 101 snapshots: a 40 MB recording and about 5 MB of
/// working arrays.
#[test]
fn small_budget_streams_the_recording_instead_of_refusing() {
    let (dir, model) = model_in_temp(
        "budget",
        "long_row.toml",
        "[tissue]\nnuclei = [50000]\nspacing_um = 1.0\n[clock]\nuntil_min = 100.0\nstep_min = 0.5\n\
         snapshot_every_min = 1.0\n[[gradient]]\nname = \"head\"\nshape = \"exponential\"\nfrom = \"left\"\n\
         peak = 1.0\ndecay_length_um = 5000.0\n[[gene]]\nname = \"amber\"\nproduction = 1.0\ndecay = 0.1\n\
         diffusion = 1.0\n[circuit]\nkinetics = \"hill\"\n[[circuit.link]]\nfrom = \"head\"\nto = \"amber\"\n\
         sign = \"+\"\nthreshold = 0.5\nhill = 2\n",
    );
    let out = dir.join("run");
    let run = |gib: &str| {
        Command::new(env!("CARGO_BIN_EXE_anlage"))
            .args(["run", model.to_str().unwrap(), "--no-pictures", "-q", "-o", out.to_str().unwrap()])
            .env("ANLAGE_MEMORY_GIB", gib)
            .output()
            .unwrap()
    };
    // 30 MiB: the whole recording (40 MB) would not fit, the streamed run does.
    let o = run("0.03");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let npy = std::fs::read(out.join("states.npy")).unwrap();
    assert!(npy.len() > 101 * 50_000 * 8, "states.npy holds {} bytes", npy.len());
    // 4 MiB: the working arrays alone do not fit.
    let o = run("0.004");
    assert_eq!(o.status.code(), Some(2), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(
        String::from_utf8_lossy(&o.stderr).contains("over the 4 MiB budget"),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

/// A blow-up met inside a step: SBDF2 finds it in the rates at the new state
/// (t = 1 min), ARK4 in its second stage (t + ½k = 0.5 min); either way the
/// run stops with exit code 1, the time, nucleus and gene, and no summary.
#[test]
fn blow_up_inside_a_step_names_where_it_was_met() {
    for (scheme, when) in [("sbdf2", "t = 1.000000 min"), ("ark4", "t = 0.500000 min")] {
        let (dir, path) = model_in_temp(
            &format!("blowup-{scheme}"),
            "blowup.toml",
            &format!(
                "[tissue]\nnuclei = [5]\nspacing_um = 1.0\n[clock]\nscheme = \"{scheme}\"\nuntil_min = 100.0\n\
                 step_min = 1.0\nsnapshot_every_min = 10.0\n[[gene]]\nname = \"fuel\"\nrate = \"1e30 * fuel^4\"\n\
                 diffusion = 1.0\ninitial = 1.0\n[circuit]\nkinetics = \"rates\"\n"
            ),
        );
        let o = anlage(&["run", path.to_str().unwrap(), "-o", dir.join("out").to_str().unwrap()]);
        assert_eq!(o.status.code(), Some(1), "{}", String::from_utf8_lossy(&o.stderr));
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains(&format!("blew up at {when}")) && err.contains("gene `fuel`"), "{scheme}: {err}");
        assert!(!dir.join("out").join("summary.json").exists(), "{scheme}: no summary for a run that blew up");
    }
}

/// Issue 20: a run marks its output set complete with a manifest written
/// last; readers refuse a folder whose manifest is missing or whose states
/// changed; an earlier run's outputs of another kind are removed; an
/// unwritable output folder is found before anything is simulated.
#[test]
fn issue_20_run_folders_are_complete_or_refused() {
    let out = temp_dir("manifest");
    run_into("patterns/sheet.toml", &out, 2);
    assert!(out.join("final_sheet.csv").is_file() && out.join("manifest.json").is_file());
    run_into("patterns/ribbon.toml", &out, 2);
    assert!(!out.join("final_sheet.csv").exists(), "a sheet's table stays beside a row's outputs");
    let render = || anlage(&["render", out.to_str().unwrap(), "--kind", "profiles"]);
    assert!(render().status.success());
    // Redrawn pictures stay part of the set.
    assert!(render().status.success());
    let mut states = std::fs::read(out.join("states.npy")).unwrap();
    let last = states.len() - 1;
    states[last] ^= 1;
    std::fs::write(out.join("states.npy"), &states).unwrap();
    let o = render();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("states.npy has changed since the run wrote it"));
    std::fs::remove_file(out.join("manifest.json")).unwrap();
    let o = anlage(&["basins", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        String::from_utf8_lossy(&o.stderr).contains("has no manifest.json"),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    // A folder that cannot be created (its parent is a file): refused before simulating.
    let blocker = out.join("a_file");
    std::fs::write(&blocker, "x").unwrap();
    let model = root().join("patterns/ribbon.toml");
    let start = std::time::Instant::now();
    let o = anlage(&["run", model.to_str().unwrap(), "-q", "-o", blocker.join("run").to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&o.stderr).contains("cannot write"), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(start.elapsed() < std::time::Duration::from_secs(5));
}

/// Shell completions and the manual page come from the argument definitions:
/// every verb is in them.
#[test]
fn completions_and_manual_name_every_verb() {
    let bash = anlage(&["completions", "bash"]);
    assert!(bash.status.success());
    let text = String::from_utf8_lossy(&bash.stdout);
    for verb in ["run", "check", "render", "screen", "sensitivity", "fit", "measure", "compare", "basins", "portrait"] {
        assert!(text.contains(verb), "{verb} missing from the bash completions");
    }
    let man = anlage(&["manual"]);
    assert!(man.status.success());
    let roff = String::from_utf8_lossy(&man.stdout);
    assert!(roff.contains(".TH anlage 1") && roff.contains("sensitivity"), "{roff}");
    let bad = anlage(&["completions", "cmd"]);
    assert_eq!(bad.status.code(), Some(2));
}

/// Picture options that would do nothing on a verb are refused (exit 2),
/// naming the option and the verb, instead of being ignored; where the verb
/// uses them (an animation) they are taken.
#[test]
fn picture_options_that_do_nothing_are_refused() {
    let model = root().join("patterns/ribbon.toml");
    let m = model.to_str().unwrap();
    let dir = std::env::temp_dir().join(format!("anlage-test-{}-unused-look", std::process::id()));
    let out = dir.to_str().unwrap();
    for args in [
        vec!["sensitivity", m, "--fps", "5", "-o", out],
        vec!["sweep", m, "--axis", "amber.production=0.5:2:3", "--heatmap", "--genes", "amber", "-o", out],
        vec!["screen", m, "--knockouts", "--from", "10", "-o", out],
        vec!["basins", m, "--fps", "12", "-o", out],
        vec!["replicates", m, "-n", "3", "--to", "30", "-o", out],
    ] {
        let o = anlage(&args);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains("does nothing on `") && err.contains(args[0]), "{args:?}: {err}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}
