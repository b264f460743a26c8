//! Scoring a run against measured boundaries: honest error bars, genes the
//! model does not have, stage labels, and a head taken at the wrong end.
//! The runs are the bundled ribbon demo; the tables are written here.

use std::path::{Path, PathBuf};

use crate::common::{anlage, run_into, temp_dir};

/// The ribbon demo run once per test into a fresh folder.
fn ribbon(name: &str) -> PathBuf {
    let dir = temp_dir(name);
    run_into("patterns/ribbon.toml", &dir.join("run"), 2);
    dir
}

fn table(dir: &Path, name: &str, text: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.to_str().unwrap().to_string()
}

fn compare(dir: &Path, measured: &str, extra: &[&str]) -> (Option<i32>, String, String) {
    let run = dir.join("run");
    let mut args = vec!["compare", run.to_str().unwrap(), measured];
    args.extend_from_slice(extra);
    let o = anlage(&args);
    (o.status.code(), String::from_utf8_lossy(&o.stdout).into_owned(), String::from_utf8_lossy(&o.stderr).into_owned())
}

fn comparison_rows(dir: &Path) -> Vec<csv::StringRecord> {
    let text = std::fs::read_to_string(dir.join("run/comparison.csv")).unwrap();
    csv::Reader::from_reader(text.as_bytes()).records().map(|r| r.unwrap()).collect()
}

/// The ribbon's final boundaries (model prediction): amber falling at
/// 47.81 %, cobalt rising at 48.04 % (README, set-up).
const AMBER: f64 = 47.81;

/// An sd far below what an image resolves (0.0023 %, a fraction of a pixel)
/// and an sd of 0 are raised to the floor (0.5 % by default, or the row's
/// resolution where larger), so a 0.13 % difference is not called z = 55.7.
#[test]
fn issue_18_tiny_and_zero_sds_are_floored() {
    let dir = ribbon("cmp-floor");
    let t = table(
        &dir,
        "m.csv",
        &format!(
            "sample,gene,direction,position_pct,sd_pct,n,resolution_pct\n\
             a,amber,falling,{},0.0023,10,\nb,amber,falling,{},0,3,\nc,amber,falling,{},0.1,3,0.8\n",
            AMBER + 0.13,
            AMBER + 0.13,
            AMBER + 0.13
        ),
    );
    let (code, out, err) = compare(&dir, &t, &[]);
    assert_eq!(code, Some(0), "{err}");
    assert!(out.contains("3 sd(s) below the resolution or the floor"), "{out}");
    let rows = comparison_rows(&dir);
    let get = |sample: &str, col: usize| -> f64 {
        rows.iter().find(|r| &r[0] == sample && !r[4].is_empty()).unwrap()[col].parse().unwrap()
    };
    // Columns: sample, time_min, gene, direction, measured_pct, sd_pct, sd_used_pct, simulated_pct, difference_pct, z.
    assert_eq!(get("a", 6), 0.5);
    assert_eq!(get("b", 6), 0.5);
    assert_eq!(get("c", 6), 0.8);
    for (sample, sd) in [("a", 0.5), ("b", 0.5), ("c", 0.8)] {
        let (d, z) = (get(sample, 8), get(sample, 9));
        assert!((z - d / sd).abs() < 1e-9 && z.abs() < 0.4, "{sample}: z {z}");
    }
    // A floor set by the user.
    let (code, _, _) = compare(&dir, &t, &["--sd-floor", "1.0"]);
    assert_eq!(code, Some(0));
    assert_eq!(
        comparison_rows(&dir).iter().find(|r| &r[0] == "a" && !r[4].is_empty()).unwrap()[6].parse::<f64>().unwrap(),
        1.0
    );
}

/// A gene the model does not have is refused (exit 2), naming the gene,
/// the table's line and the model's genes.
#[test]
fn issue_18_unknown_gene_is_refused() {
    let dir = ribbon("cmp-gene");
    let t = table(&dir, "m.csv", "sample,gene,direction,position_pct\na,amber,falling,47\na,plum,rising,30\n");
    let (code, _, err) = compare(&dir, &t, &[]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("m.csv:3: gene `plum` is not in the model (its genes: amber, cobalt)"), "{err}");
}

/// `compare --json`: the rows of comparison.csv and the notes, on standard output.
#[test]
fn compare_json_matches_the_table() {
    let dir = ribbon("cmp-json");
    let t = table(
        &dir,
        "m.csv",
        "sample,gene,direction,position_pct,sd_pct\na,amber,falling,47.9,0.0\na,cobalt,rising,48.1,1.0\n",
    );
    let (code, out, err) = compare(&dir, &t, &["--json"]);
    assert_eq!(code, Some(0), "{err}");
    let doc: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!((doc["kind"].as_str(), doc["model_prediction"].as_bool()), (Some("compare"), Some(true)));
    let rows = comparison_rows(&dir);
    assert_eq!(doc["rows"].as_array().unwrap().len(), rows.len());
    assert_eq!(doc["matched"].as_u64(), Some(2));
    assert_eq!(doc["raised_sds"].as_u64(), Some(1));
}

/// n = 0 embryos is refused with the row (a trial found it taken as one embryo).
#[test]
fn zero_embryos_are_refused() {
    let dir = ribbon("cmp-n0");
    let t = table(&dir, "m.csv", "sample,gene,direction,position_pct,sd_pct,n\na,amber,falling,47,1.0,0\n");
    let (code, _, err) = compare(&dir, &t, &[]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("m.csv:2") && err.contains("give the number of embryos (1 or more)"), "{err}");
}

/// A row whose time and mapped stage disagree, and a ragged row, are refused
/// with the line and plain words (a trial found the first silently taken at
/// the time and the second reported as a parser's message).
#[test]
fn conflicting_times_and_ragged_rows_are_refused() {
    let dir = ribbon("cmp-conflict");
    let t = table(&dir, "m.csv", "sample,time_min,stage,gene,direction,position_pct\na,120,late,amber,falling,47\n");
    let (code, _, err) = compare(&dir, &t, &["--stage", "late=240"]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("m.csv:2") && err.contains("stage `late` is mapped to 240 min"), "{err}");
    let t = table(&dir, "r.csv", "sample,gene,direction,position_pct\na,amber,falling,47\nb,amber,47\n");
    let (code, _, err) = compare(&dir, &t, &[]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("r.csv:3: the row has 3 fields where the header has 4"), "{err}");
}

/// A stage label is kept in the table and must be mapped to minutes: without
/// `--stage` the comparison is refused (never silently made at the last
/// snapshot); with it, the row is compared at that time.
#[test]
fn issue_18_stage_labels_need_a_time() {
    let dir = ribbon("cmp-stage");
    let t = table(&dir, "m.csv", "sample,stage,gene,direction,position_pct\na,st14,amber,falling,47\n");
    let (code, _, err) = compare(&dir, &t, &[]);
    assert_eq!(code, Some(2), "{err}");
    assert!(
        err.contains("m.csv:2: column `stage` is `st14`; map this stage label to minutes (--stage LABEL=MINUTES)"),
        "{err}"
    );
    let (code, out, err) = compare(&dir, &t, &["--stage", "st14=120"]);
    assert_eq!(code, Some(0), "{err}");
    assert!(out.contains("t = 120"), "{out}");
    assert!(!out.contains("compared at the last snapshot"), "{out}");
    // A row without any time says where it was compared.
    let t = table(&dir, "n.csv", "sample,gene,direction,position_pct\na,amber,falling,47\n");
    let (_, out, _) = compare(&dir, &t, &[]);
    assert!(out.contains("1 row(s) give no time and were compared at the last snapshot, t = 240 min"), "{out}");
}

/// An embryo measured from the wrong end: its boundaries, mirrored, match
/// the run, so compare says so instead of listing them as one-sided only.
/// A genuinely shifted embryo raises no such warning.
#[test]
fn issue_18_a_flipped_embryo_is_suspected() {
    let dir = ribbon("cmp-flip");
    let flipped = table(
        &dir,
        "flip.csv",
        &format!(
            "sample,gene,direction,position_pct\nf,amber,rising,{}\nf,cobalt,falling,{}\n",
            100.0 - AMBER,
            100.0 - 48.04
        ),
    );
    let (code, out, _) = compare(&dir, &flipped, &[]);
    assert_eq!(code, Some(0));
    assert!(out.contains("warning: f (t = 240 min) matches much better read the other way round"), "{out}");
    let shifted =
        table(&dir, "shift.csv", "sample,gene,direction,position_pct\ns,amber,falling,44\ns,cobalt,rising,45\n");
    let (_, out, _) = compare(&dir, &shifted, &[]);
    assert!(!out.contains("other way round"), "{out}");
}

/// Times after the run ends, a repeated stage, and a zero sd floor are
/// refused (exit 2) instead of being compared at the last snapshot or giving
/// z = ∞.
#[test]
fn issue_18_times_outside_the_run_and_a_zero_floor_are_refused() {
    let dir = ribbon("cmp-times");
    let late = table(&dir, "late.csv", "sample,time_min,gene,direction,position_pct\na,9999,amber,falling,47\n");
    let (code, _, err) = compare(&dir, &late, &[]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("late.csv:2: column `time_min` is `9999`; the run ends at 240 min"), "{err}");
    let staged = table(&dir, "st.csv", "sample,stage,gene,direction,position_pct\na,st14,amber,falling,47\n");
    let (code, _, err) = compare(&dir, &staged, &["--stage", "st14=1e6"]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("column `stage` is `st14 (= 1000000 min)`"), "{err}");
    let (code, _, err) = compare(&dir, &staged, &["--stage", "st14=100", "--stage", "st14=200"]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("map each stage label once"), "{err}");
    let (code, _, err) = compare(&dir, &staged, &["--stage", "st14=100", "--sd-floor", "0"]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("give a number > 0"), "{err}");
}
