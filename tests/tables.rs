//! `-o -`: `measure`, `compare`, `screen` and `sensitivity` write their main
//! table to standard output, the same bytes as the file they write otherwise,
//! and nothing to disk.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use crate::common::{anlage, root, run_into, temp_dir};

/// Runs the `anlage` binary with `args` in the folder `cwd`.
fn anlage_in(cwd: &Path, args: &[&str]) -> Output {
    let o = Command::new(env!("CARGO_BIN_EXE_anlage")).args(args).current_dir(cwd).output().expect("run anlage");
    assert!(o.status.success(), "{args:?}: {}", String::from_utf8_lossy(&o.stderr));
    o
}

/// Every file under `dir`, with its size, sorted.
fn files_under(dir: &Path) -> Vec<(PathBuf, u64)> {
    let mut out = Vec::new();
    for entry in std::fs::read_dir(dir).unwrap().flatten() {
        let path = entry.path();
        if path.is_dir() {
            out.extend(files_under(&path));
        } else {
            out.push((path.clone(), entry.metadata().unwrap().len()));
        }
    }
    out.sort();
    out
}

/// Runs `args` with `-o -` from an empty folder inside `dir` and checks that
/// no file under `dir` appeared or changed size; returns standard output.
fn table_on_stdout(dir: &Path, args: &[&str]) -> Output {
    let cwd = dir.join("cwd");
    std::fs::create_dir_all(&cwd).unwrap();
    let before = files_under(dir);
    let o = anlage_in(&cwd, &[args, &["-o", "-"]].concat());
    assert_eq!(files_under(dir), before, "{args:?} -o - wrote to disk");
    o
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// `measure` of the synthetic images in `imgs`.
fn measure_args(imgs: &Path) -> [&str; 8] {
    ["measure", s(imgs), "--channel", "0=amber", "--channel", "1=cobalt", "--head-high", "amber"]
}

/// Each verb's table on standard output is byte for byte its file; a
/// mutant name with a comma and quotes reads back whole; the reports of
/// `measure` and `compare` go to standard error; `--json` with `-o -` is refused.
#[test]
fn dash_out_writes_the_main_table_to_standard_output_only() {
    let dir = temp_dir("dash-out");
    let model = root().join("patterns/ribbon.toml");
    let run = dir.join("run");
    run_into("patterns/ribbon.toml", &run, 2);
    for copy in ["a", "b"] {
        let imgs = dir.join(copy).join("stained");
        anlage_in(&dir, &["synthesize", s(&run), "-o", s(&imgs), "--count", "2"]);
    }
    let files = dir.join("files");
    std::fs::create_dir_all(&files).unwrap();

    // measure: the table of a folder (mean and sd per boundary).
    anlage_in(&dir, &measure_args(&dir.join("a/stained")));
    let measured = std::fs::read(dir.join("a/stained/measured.csv")).unwrap();
    let o = table_on_stdout(&dir, &measure_args(&dir.join("b/stained")));
    assert_eq!(o.stdout, measured, "{}", String::from_utf8_lossy(&o.stdout));
    assert!(String::from_utf8_lossy(&o.stderr).contains("embryos measured in 2 of 2 images"));

    // compare: comparison.csv, the report on standard error.
    let table = s(&dir.join("a/stained/measured.csv")).to_string();
    anlage_in(&dir, &["compare", s(&run), &table, "-o", s(&files)]);
    let o = table_on_stdout(&dir, &["compare", s(&run), &table]);
    assert_eq!(o.stdout, std::fs::read(files.join("comparison.csv")).unwrap());
    assert!(String::from_utf8_lossy(&o.stderr).contains("root-mean-square difference"));
    let refused = anlage(&["compare", s(&run), &table, "-o", "-", "--json"]);
    assert_eq!(refused.status.code(), Some(2));
    assert!(refused.stdout.is_empty());

    // screen: shifts.csv, a name that needs quoting included.
    let mutant = r#"{ name = "het, \"weak\"", scale = { "amber.production" = 0.7 } }"#;
    anlage_in(&dir, &["screen", s(&model), "--mutant", mutant, "-o", s(&files)]);
    let o = table_on_stdout(&dir, &["screen", s(&model), "--mutant", mutant]);
    assert_eq!(o.stdout, std::fs::read(files.join("shifts.csv")).unwrap());
    let mut reader = csv::Reader::from_reader(o.stdout.as_slice());
    assert_eq!(&reader.headers().unwrap()[0], "mutant");
    let names: Vec<String> = reader.records().map(|r| r.unwrap()[0].to_string()).collect();
    assert!(names.iter().any(|n| n == "het, \"weak\""), "{names:?}");
    assert!(o.stderr.is_empty(), "{}", String::from_utf8_lossy(&o.stderr));
    let refused = anlage(&["screen", s(&model), "--animate", "head x2", "-o", "-"]);
    assert_eq!(refused.status.code(), Some(2));

    // sensitivity: sensitivity.csv.
    anlage_in(&dir, &["sensitivity", s(&model), "-o", s(&files)]);
    let o = table_on_stdout(&dir, &["sensitivity", s(&model)]);
    assert_eq!(o.stdout, std::fs::read(files.join("sensitivity.csv")).unwrap());
    let refused = anlage(&["sensitivity", s(&model), "-o", "-", "--json"]);
    assert_eq!(refused.status.code(), Some(2));
    std::fs::remove_dir_all(&dir).unwrap();
}
