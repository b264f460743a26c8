//! Parameter sweeps: pattern classes against a published bifurcation point,
//! axes, tables and determinism.

use anlage::progress::Silent;
use anlage::sweep::{Axis, PatternClass, run_sweep};

use crate::common::{anlage, parse, temp_dir};

/// The symmetric toggle du/dt = a/(1 + v²) − u, dv/dt = a/(1 + u²) − v in
/// ten nuclei that do not exchange anything, started from a step. Below the
/// pitchfork at a_c = 2 (for Hill exponent 2; Cherry & Adler 2000, J. Theor.
/// Biol. 203:117–133; Gardner, Cantor & Collins 2000, Nature 403:339–342,
/// from memory) the only steady state is symmetric, u = v with u(1 + u²) = a,
/// and the step decays; above it each nucleus keeps its side. The boundary
/// level is that symmetric state at the pitchfork, u = 1.
pub(crate) fn toggle() -> String {
    r#"
title = "symmetric toggle"
[tissue]
nuclei = [10]
spacing_um = 10.0
[clock]
until_min = 10000.0
tolerance = 1e-8
snapshot_every_min = 500.0
[[gene]]
name = "wren"
rate = "a / (1 + lark^2) - k * wren"
production = 2.0
decay = 1.0
boundary_level = { absolute = 1.0 }
initial_profile = [3, 3, 3, 3, 3, 0, 0, 0, 0, 0]
[[gene]]
name = "lark"
rate = "a / (1 + wren^2) - k * lark"
production = 2.0
decay = 1.0
boundary_level = { absolute = 1.0 }
initial_profile = [0, 0, 0, 0, 0, 3, 3, 3, 3, 3]
[circuit]
kinetics = "rates"
parameters = { a = 2.0, k = 1.0 }
"#
    .to_string()
}

#[test]
fn the_toggle_s_classes_change_at_the_pitchfork() {
    let model = parse(&toggle());
    // a = 1.81, 1.83, …, 2.19: 20 points, none at a_c itself (where the
    // approach to the symmetric state is algebraic, not exponential, and
    // within 0.005 of it the step decays too slowly to finish in the run).
    let axis = Axis::parse(&model, "a=1.81:2.19:20").unwrap();
    let s = run_sweep(&model, &[axis], true, &Silent);
    for p in &s.points {
        let want = if p.values[0] < 2.0 { PatternClass::NoBoundary } else { PatternClass::Boundary };
        assert_eq!(p.class, want, "a = {}", p.values[0]);
    }
}

/// Axes: linear and log spacing end exactly at the given values, log steps
/// have one ratio; bad axes are refused with the reason.
#[test]
fn axes_are_spaced_as_asked_and_bad_ones_refused() {
    let model = parse(&toggle());
    let lin = Axis::parse(&model, "k=0.5:1.5:5").unwrap();
    assert_eq!(lin.values, vec![0.5, 0.75, 1.0, 1.25, 1.5]);
    let log = Axis::parse(&model, "k = 0.1 : 10 : 5 : log").unwrap();
    assert_eq!((log.values[0], log.values[4]), (0.1, 10.0));
    for w in log.values.windows(2) {
        assert!((w[1] / w[0] - 10f64.sqrt()).abs() < 1e-12, "{:?}", log.values);
    }
    for (bad, says) in [
        ("wren.diffusion=-1:1:5", "must stay >= 0"),
        ("wren.diffusion=0:1e12:3", "D/h²"),
        ("a=0:1:5:log", "log axis"),
        ("owl.decay=1:2:3", "no gene or gradient"),
        ("k=1:2", "fields"),
        ("k=1:2:1", "POINTS"),
        ("k=1:1:3", "FROM equals TO"),
        ("k 1:2:3", "no `=`"),
    ] {
        let e = Axis::parse(&model, bad).unwrap_err().to_string();
        assert!(e.contains(says), "{bad}: {e}");
    }
    // A constant of the rate expressions may cross zero.
    assert!(Axis::parse(&model, "a=-1:1:3").is_ok());
    // A parameter that cannot act, or one swept twice, is refused.
    assert!(Axis::parse(&model, "wren.decay=1:2:3").unwrap_err().to_string().contains("no effect"));
    let twice = [Axis::parse(&model, "a=1:2:2").unwrap(), Axis::parse(&model, "a=1:4:2").unwrap()];
    assert!(anlage::sweep::check_axes(&twice).unwrap_err().to_string().contains("swept twice"));
}

/// A run that ends before its levels settle (the toggle stopped after 3 of
/// its 1-minute decay times, snapshots every 0.5 min) is "changing", not a
/// steady class: levels still move by several per cent of their maximum per
/// decay time.
#[test]
fn an_unfinished_run_is_changing() {
    let text = toggle()
        .replace("until_min = 10000.0", "until_min = 3.0")
        .replace("snapshot_every_min = 500.0", "snapshot_every_min = 0.5");
    let model = parse(&text);
    let s = run_sweep(&model, &[Axis::parse(&model, "a=2.5:3:2").unwrap()], false, &Silent);
    assert!(
        s.points.iter().all(|p| p.class == PatternClass::Changing),
        "{:?}",
        s.points.iter().map(|p| p.class).collect::<Vec<_>>()
    );
}

/// The command line: a two-axis sweep writes the same bytes with 1 and 2
/// threads; a travelling front reads "changing"; `-o -` prints sweep.csv;
/// a bad axis exits with 2.
#[test]
fn sweeps_from_the_command_line() {
    let dir = temp_dir("sweep");
    let model = dir.join("toggle.toml");
    std::fs::write(&model, toggle()).unwrap();
    let mut tables = Vec::new();
    for threads in ["1", "2"] {
        let out = dir.join(format!("t{threads}"));
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_anlage"))
            .args(["sweep", model.to_str().unwrap(), "--axis", "a=1.5:2.5:5", "--axis", "k=0.8:1.2:3"])
            .args(["-o", out.to_str().unwrap()])
            .env("RAYON_NUM_THREADS", threads)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let csv = std::fs::read(out.join("sweep.csv")).unwrap();
        let b = std::fs::read(out.join("sweep_boundaries.csv")).unwrap();
        tables.push((csv, b));
        assert!(out.join("sweep.png").exists());
    }
    assert!(tables[0] == tables[1], "the tables differ between 1 and 2 threads");
    let text = String::from_utf8(tables[0].0.clone()).unwrap();
    assert!(text.starts_with("point,a,k,class,boundaries,failure,domains_wren,domains_lark\n"), "{text}");
    assert_eq!(text.lines().count(), 16);
    let o = anlage(&["sweep", model.to_str().unwrap(), "--axis", "a=1.5:2.5:5", "-o", "-"]);
    assert!(o.status.success());
    assert!(String::from_utf8_lossy(&o.stdout).lines().nth(5).unwrap().contains(",boundary,"));
    let o = anlage(&["sweep", model.to_str().unwrap(), "--axis", "a=1.5:2.5"]);
    assert_eq!(o.status.code(), Some(2));
    // A front still travelling when the run ends.
    let front = crate::common::root().join("patterns/front.toml");
    let out = dir.join("front");
    let o = anlage(&["sweep", front.to_str().unwrap(), "--axis", "r=0.2:0.4:2", "-o", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(out.join("sweep.csv")).unwrap();
    assert!(text.lines().skip(1).all(|l| l.contains(",changing,")), "{text}");
}

/// Sharding: a 2-parameter sweep run whole and as 7 shards by hand merges
/// into the same bytes (tables and picture); a merge with a shard missing
/// names it and the command that runs it, exits 2, and writes nothing; a
/// shard already complete is not run again.
#[test]
fn seven_shards_merge_into_the_bytes_of_one_run() {
    let dir = temp_dir("sweep-shards");
    let model = dir.join("toggle.toml");
    std::fs::write(&model, toggle()).unwrap();
    let m = model.to_str().unwrap();
    let axes = ["--axis", "a=1.5:2.5:6", "--axis", "k=0.8:1.2:4:log"];
    let (whole, sharded) = (dir.join("whole"), dir.join("sharded"));
    let run = |extra: &[&str], out: &std::path::Path| {
        let mut args = vec!["sweep", m];
        args.extend_from_slice(&axes);
        args.extend_from_slice(extra);
        args.extend_from_slice(&["-o", out.to_str().unwrap()]);
        anlage(&args)
    };
    assert!(run(&[], &whole).status.success());
    for k in [1, 2, 3, 5, 6, 7] {
        let o = run(&["--shard", &format!("{k}/7")], &sharded);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let o = run(&["--merge"], &sharded);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("1 of 7 shards") && err.contains("--shard 4/7"), "{err}");
    assert!(!sharded.join("sweep.csv").exists(), "nothing is written while a shard is missing");
    assert!(run(&["--shard", "4/7"], &sharded).status.success());
    let again = run(&["--shard", "4/7"], &sharded);
    assert!(String::from_utf8_lossy(&again.stdout).contains("already complete"));
    let o = run(&["--merge"], &sharded);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    for name in ["sweep.csv", "sweep_boundaries.csv", "sweep.png"] {
        assert!(
            std::fs::read(whole.join(name)).unwrap() == std::fs::read(sharded.join(name)).unwrap(),
            "{name} differs between the whole sweep and the merged shards"
        );
    }
    // Shards of other axes are refused, saying which setting differs.
    let o = anlage(&["sweep", m, "--axis", "a=1.5:2.5:5", "--merge", "-o", sharded.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("made with other settings: `a=1.5:2.5:6`"));
    // The same axes spelled otherwise are the same job.
    let respelled = ["--axis", "a=1.50:2.5:6", "--axis", "k=0.80:1.2:4:log", "--merge", "-o"];
    let o = anlage(&[&["sweep", m][..], &respelled[..], &[sharded.to_str().unwrap()]].concat());
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // More shards than points are refused; a shard's report can be JSON.
    let o = run(&["--shard", "25/25"], &dir.join("too-many"));
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("at most 24 shards"), "{}", String::from_utf8_lossy(&o.stderr));
    let o = run(&["--shard", "4/7", "--json"], &sharded);
    let report: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!((report["shard"].as_str(), report["status"].as_str()), (Some("4/7"), Some("already complete")));
}

/// A shard killed outright (SIGKILL: no handler runs) has saved most of what
/// it finished while running, and the same command run again completes it:
/// the merged outputs are the bytes of an unsharded sweep.
#[test]
fn a_shard_killed_outright_keeps_what_it_saved_while_running() {
    use std::process::{Command, Stdio};
    let (dir, args) = toggle_sweep("sweep-sigkill", ["a=1.5:2.5:30", "k=0.8:1.2:30:log"]);
    let (whole, sharded) = (dir.join("whole"), dir.join("sharded"));
    let mut child = Command::new(env!("CARGO_BIN_EXE_anlage"))
        .args(args(&["--shard", "1/1"], &sharded))
        .env("RAYON_NUM_THREADS", "1")
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let file = sharded.join("shards/sweep-1-of-1.json");
    let start = std::time::Instant::now();
    while !file.exists() {
        assert!(start.elapsed().as_secs() < 60, "no shard file saved within 60 s of running");
        assert!(child.try_wait().unwrap().is_none(), "the shard finished before it could be killed; make it longer");
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    child.kill().unwrap();
    child.wait().unwrap();
    let saved: serde_json::Value = serde_json::from_slice(&std::fs::read(&file).unwrap()).unwrap();
    assert_eq!(saved["complete"], false);
    let done = saved["items"].as_array().unwrap().len();
    assert!(done > 0 && done < 900, "{done}");
    let run = |extra: &[&str], out: &std::path::Path| {
        anlage(&args(extra, out).iter().map(String::as_str).collect::<Vec<_>>())
    };
    let o = run(&["--merge"], &sharded);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains(&format!("incomplete, {done} of 900 items")));
    assert!(run(&["--shard", "1/1"], &sharded).status.success());
    assert!(run(&["--merge"], &sharded).status.success());
    assert!(run(&[], &whole).status.success());
    for name in ["sweep.csv", "sweep_boundaries.csv", "sweep.png"] {
        assert!(std::fs::read(whole.join(name)).unwrap() == std::fs::read(sharded.join(name)).unwrap(), "{name}");
    }
}

/// A fresh test folder `name` holding the toggle model, and the arguments of
/// a sweep of it over `axes` with `extra` options into `out`.
fn toggle_sweep(
    name: &str,
    axes: [&'static str; 2],
) -> (std::path::PathBuf, impl Fn(&[&str], &std::path::Path) -> Vec<String>) {
    let dir = temp_dir(name);
    let model = dir.join("toggle.toml");
    std::fs::write(&model, toggle()).unwrap();
    let args = move |extra: &[&str], out: &std::path::Path| {
        let mut args: Vec<String> = vec!["sweep".into(), model.to_str().unwrap().into()];
        args.extend(axes.iter().flat_map(|a| ["--axis".to_string(), a.to_string()]));
        args.extend(extra.iter().map(|s| s.to_string()));
        args.extend(["-o".to_string(), out.to_str().unwrap().to_string()]);
        args
    };
    (dir, args)
}

/// SIGTERM (a scheduler's time limit or preemption) stops a shard cleanly:
/// it saves the points it finished, marked incomplete, exits 1 saying how
/// to finish, the merge counts it as missing, and the same command run again
/// runs only the rest and completes the set: the merged outputs are the
/// bytes of an unsharded sweep.
#[test]
fn a_shard_stopped_by_sigterm_saves_its_points_and_finishes_when_run_again() {
    use std::process::{Command, Stdio};
    let (dir, args) = toggle_sweep("sweep-sigterm", ["a=1.5:2.5:24", "k=0.8:1.2:25:log"]);
    let (whole, sharded) = (dir.join("whole"), dir.join("sharded"));
    let child = Command::new(env!("CARGO_BIN_EXE_anlage"))
        .args(args(&["--shard", "1/1"], &sharded))
        .env("RAYON_NUM_THREADS", "1")
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    // Wait until the handler is installed (SIGTERM, bit 15, in SigCgt), then a little more.
    let status = format!("/proc/{}/status", child.id());
    let start = std::time::Instant::now();
    loop {
        let text = std::fs::read_to_string(&status).unwrap_or_default();
        let caught =
            text.lines().find_map(|l| l.strip_prefix("SigCgt:")).map(|h| u64::from_str_radix(h.trim(), 16).unwrap());
        if caught.is_some_and(|mask| mask & (1 << 14) != 0) {
            break;
        }
        assert!(start.elapsed().as_secs() < 30, "no SIGTERM handler after 30 s");
        std::thread::sleep(std::time::Duration::from_millis(5));
    }
    std::thread::sleep(std::time::Duration::from_millis(300));
    assert_eq!(unsafe { libc::kill(child.id() as i32, libc::SIGTERM) }, 0);
    let o = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("stopped by a signal") && err.contains("of 600 items saved"), "{err}");
    let file = sharded.join("shards/sweep-1-of-1.json");
    let saved: serde_json::Value = serde_json::from_slice(&std::fs::read(&file).unwrap()).unwrap();
    assert_eq!(saved["complete"], false);
    let done = saved["items"].as_array().unwrap().len();
    assert!(done < 600, "{done}");
    let o = anlage(&args(&["--merge"], &sharded).iter().map(String::as_str).collect::<Vec<_>>());
    assert_eq!(o.status.code(), Some(2), "an incomplete shard is missing to the merge");
    let o = anlage(&args(&["--shard", "1/1"], &sharded).iter().map(String::as_str).collect::<Vec<_>>());
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = anlage(&args(&["--merge"], &sharded).iter().map(String::as_str).collect::<Vec<_>>());
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = anlage(&args(&[], &whole).iter().map(String::as_str).collect::<Vec<_>>());
    assert!(o.status.success());
    for name in ["sweep.csv", "sweep_boundaries.csv", "sweep.png"] {
        assert!(std::fs::read(whole.join(name)).unwrap() == std::fs::read(sharded.join(name)).unwrap(), "{name}");
    }
}

/// A shard's identity covers what the model reads from other files: shards
/// run before and after an `initial_file` changed are not merged (the merge
/// would mix two models), and a complete shard is run again for the new file.
#[test]
fn shards_of_another_initial_file_are_refused() {
    use ndarray_npy::WriteNpyExt;
    let dir = temp_dir("sweep-initial-file");
    let model = dir.join("m.toml");
    std::fs::write(
        &model,
        "[tissue]\nnuclei = [20]\nspacing_um = 5.0\n[clock]\nuntil_min = 5.0\nstep_min = 0.05\nsnapshot_every_min = 5.0\n\
         [[gene]]\nname = \"wren\"\nproduction = 1.0\ndecay = 1.0\ndiffusion = 1.0\ninitial_file = \"start.npy\"\n",
    )
    .unwrap();
    let start = |peak: f64| {
        let v = ndarray::Array1::from_shape_fn(20, |i| peak * i as f64 / 19.0);
        v.write_npy(std::fs::File::create(dir.join("start.npy")).unwrap()).unwrap();
    };
    let out = dir.join("out");
    let run = |extra: &str| {
        anlage(&["sweep", model.to_str().unwrap(), "--axis", "wren.decay=0.5:2:4", extra, "-o", out.to_str().unwrap()])
    };
    start(3.0);
    assert!(run("--shard=1/2").status.success());
    start(5.0);
    assert!(run("--shard=2/2").status.success());
    let o = run("--merge");
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("initial_file"), "{}", String::from_utf8_lossy(&o.stderr));
    let again = run("--shard=1/2");
    assert!(!String::from_utf8_lossy(&again.stdout).contains("already complete"), "the shard ran again");
    assert!(run("--merge").status.success());
}

/// A sweep of a sheet classes the whole sheet: the Schnakenberg system
/// (Schnakenberg 1979, J. Theor. Biol. 81:389) on a 48 × 48 sheet stays
/// uniform below the critical diffusion ratio d_c = 8.569 (computed by SciPy
/// in tests/reference/turing.py) and makes spots above it. Rate-expression
/// genes have no decay constant; a uniform state that has settled to within
/// the integrator's tolerance must not be called "changing".
#[test]
fn a_sheet_sweep_classes_spots_across_the_turing_onset() {
    let model = parse(
        "seed = 2\n[tissue]\nnuclei = [48, 48]\nspacing_um = 1.0\nedges = \"sealed\"\n\
         [clock]\nuntil_min = 3000.0\ntolerance = 1e-5\nsnapshot_every_min = 1000.0\n\
         [[gene]]\nname = \"u\"\nrate = \"a - u + u^2 * v\"\ndiffusion = 1.0\ninitial = 1.0\ninitial_noise = 0.01\n\
         [[gene]]\nname = \"v\"\nrate = \"b - u^2 * v\"\ndiffusion = 20.0\ninitial = 0.9\ninitial_noise = 0.01\n\
         [circuit]\nkinetics = \"rates\"\nparameters = { a = 0.1, b = 0.9 }\n",
    );
    // Ratios 4 and 8 below the onset, 12 and 16 above it.
    let axis = Axis::parse(&model, "v.diffusion=4:16:4").unwrap();
    let s = run_sweep(&model, &[axis], true, &Silent);
    let classes: Vec<PatternClass> = s.points.iter().map(|p| p.class).collect();
    assert_eq!(classes, [PatternClass::NoBoundary, PatternClass::NoBoundary, PatternClass::Spots, PatternClass::Spots]);
}

/// On a sheet a repeating pattern's point carries its dominant wavelength,
/// in `sweep.csv` (`pattern_gene`, `wavelength_um`) and in the picture's
/// lines. A gene relaxing to 1.5 + cos(2πx/w) settles into parallel stripes
/// of wavelength w exactly: on a sealed 120 µm sheet with nuclei at
/// x = (i + ½)h, cos(2πx/w) is the orthonormal DCT-II mode k = 2L/w, so the
/// power spectrum peaks on that one mode (the cosine series, e.g. Strang
/// 1999, SIAM Review 41:135, from memory). Swept over w = 20, 30, 40 µm.
/// A row's table keeps its columns (no wavelength columns).
#[test]
fn a_sheet_sweep_reads_the_dominant_wavelength() {
    let model = parse(
        r#"title = "swept stripes"
[tissue]
nuclei = [60, 20]
spacing_um = 2.0
[clock]
until_min = 60.0
tolerance = 1e-8
snapshot_every_min = 60.0
[circuit]
kinetics = "rates"
parameters = { w = 30.0 }
[[gene]]
name = "quill"
rate = "1.5 + cos(2 * pi * x / w) - quill"
initial = 1.5
"#,
    );
    let s = run_sweep(&model, &[Axis::parse(&model, "w=20:40:3").unwrap()], false, &Silent);
    assert!(s.sheet);
    for p in &s.points {
        assert_eq!(p.class, PatternClass::ParallelStripes, "w = {}", p.values[0]);
        let w = p.wavelength.as_ref().expect("a wavelength");
        assert_eq!(w.gene, "quill");
        assert!((w.wavelength_um / p.values[0] - 1.0).abs() < 1e-6, "w = {}: read {}", p.values[0], w.wavelength_um);
    }
    let mut table = Vec::new();
    anlage::export::write_sweep_to(&s, &mut table).unwrap();
    let table = String::from_utf8(table).unwrap();
    assert!(table.lines().next().unwrap().ends_with("pattern_gene,wavelength_um"), "{table}");
    assert!(table.lines().nth(2).unwrap().ends_with(",quill,30"), "{table}");

    let row = parse(&toggle());
    let s = run_sweep(&row, &[Axis::parse(&row, "a=2.5:3:2").unwrap()], false, &Silent);
    let mut table = Vec::new();
    anlage::export::write_sweep_to(&s, &mut table).unwrap();
    let header = String::from_utf8(table).unwrap().lines().next().unwrap().to_string();
    assert_eq!(header, "point,a,class,boundaries,failure,domains_wren,domains_lark");
}
