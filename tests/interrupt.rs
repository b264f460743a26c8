//! A run killed with SIGKILL at any moment leaves, under every output name,
//! either the complete file of the previous run or the complete new one: no
//! truncated table, NPY, PNG, GIF or JSON (outputs are written under hidden
//! temporary names and renamed).

use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

use crate::common::root;

/// Checks that every visible file in `dir` is complete and well-formed.
fn check_complete(dir: &Path) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        if name.starts_with('.') {
            continue; // an unfinished temporary file, never a named output
        }
        let bytes = std::fs::read(&path).unwrap();
        match path.extension().and_then(|e| e.to_str()) {
            Some("csv") => {
                let text = String::from_utf8(bytes).unwrap();
                assert!(text.ends_with('\n'), "{name} is cut short");
                let fields = text.lines().next().unwrap().split(',').count();
                for (k, line) in text.lines().enumerate() {
                    assert_eq!(line.split(',').count(), fields, "{name} line {} is cut short", k + 1);
                }
            }
            Some("npy") => {
                use ndarray_npy::ReadNpyExt;
                ndarray::ArrayD::<f64>::read_npy(std::io::Cursor::new(bytes)).unwrap_or_else(|e| panic!("{name}: {e}"));
            }
            Some("png") => {
                image::load_from_memory(&bytes).unwrap_or_else(|e| panic!("{name}: {e}"));
            }
            Some("gif") => {
                let mut options = gif::DecodeOptions::new();
                options.set_color_output(gif::ColorOutput::RGBA);
                let mut decoder = options.read_info(std::io::Cursor::new(bytes)).unwrap();
                let mut frames = 0;
                while decoder.read_next_frame().unwrap_or_else(|e| panic!("{name}: {e}")).is_some() {
                    frames += 1;
                }
                assert!(frames > 1, "{name} has {frames} frames");
            }
            Some("json") => {
                serde_json::from_slice::<serde_json::Value>(&bytes).unwrap_or_else(|e| panic!("{name}: {e}"));
            }
            _ => {}
        }
    }
}

#[test]
fn killed_runs_leave_only_complete_outputs() {
    let dir = std::env::temp_dir().join(format!("anlage-test-{}-kill", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let model = root().join("patterns/sheet.toml");
    let run = || {
        Command::new(env!("CARGO_BIN_EXE_anlage"))
            .args(["run", model.to_str().unwrap(), "-q", "-o", dir.to_str().unwrap()])
            .spawn()
            .unwrap()
    };
    let start = Instant::now();
    assert!(run().wait().unwrap().success());
    let full = start.elapsed();
    check_complete(&dir);
    // Kill at fractions of a full run: during the simulation, the tables and the pictures.
    for fraction in [0.2, 0.5, 0.7, 0.8, 0.9, 0.95, 0.99] {
        let mut child = run();
        std::thread::sleep(Duration::from_secs_f64(full.as_secs_f64() * fraction));
        let _ = child.kill(); // SIGKILL on Unix
        let _ = child.wait();
        check_complete(&dir);
    }
    std::fs::remove_dir_all(&dir).unwrap();
}

/// A run saved with `--checkpoint-every 0s` (a checkpoint after every step),
/// killed with SIGKILL mid-simulation and continued with `--resume` writes the
/// same bytes as an uninterrupted run, for error-controlled (sheet) and fixed
/// (band) steps; the checkpoint is removed at the end. The sheet's cut run
/// streams its snapshots to disk, the uninterrupted one keeps them in memory.
#[test]
fn resumed_runs_write_the_same_bytes() {
    for (name, delay_ms) in [("sheet", 300), ("band", 150)] {
        let stream: &[&str] = if name == "sheet" { &["--stream"] } else { &[] };
        let model = root().join(format!("patterns/{name}.toml"));
        let base = std::env::temp_dir().join(format!("anlage-test-{}-resume-{name}", std::process::id()));
        let (full, cut) = (base.join("full"), base.join("cut"));
        let _ = std::fs::remove_dir_all(&base);
        let exe = env!("CARGO_BIN_EXE_anlage");
        let m = model.to_str().unwrap();
        assert!(Command::new(exe).args(["run", m, "-q", "-o", full.to_str().unwrap()]).status().unwrap().success());
        let mut child = Command::new(exe)
            .args(["run", m, "-q", "-o", cut.to_str().unwrap(), "--checkpoint-every", "0s"])
            .args(stream)
            .spawn()
            .unwrap();
        let start = Instant::now();
        while !cut.join("checkpoint.bin").exists() {
            assert!(start.elapsed() < Duration::from_secs(60), "no checkpoint written");
            std::thread::sleep(Duration::from_millis(5));
        }
        std::thread::sleep(Duration::from_millis(delay_ms));
        let _ = child.kill();
        let _ = child.wait();
        assert!(!cut.join("summary.json").exists(), "{name}: the run finished before it was killed");
        let o = Command::new(exe).args(["run", "--resume", cut.to_str().unwrap(), "-q"]).args(stream).output().unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        assert!(!cut.join("checkpoint.bin").exists(), "{name}: checkpoint left behind");
        for entry in std::fs::read_dir(&cut).unwrap() {
            let file = entry.unwrap().file_name();
            assert!(!file.to_string_lossy().starts_with('.'), "{name}: {file:?} left behind");
        }
        let mut names: Vec<_> = std::fs::read_dir(&full).unwrap().map(|e| e.unwrap().file_name()).collect();
        names.sort();
        assert!(names.len() >= 8);
        for file in &names {
            let (a, b) = (std::fs::read(full.join(file)).unwrap(), std::fs::read(cut.join(file)));
            assert!(b.is_ok_and(|b| a == b), "{name}: {} differs after resuming", file.to_string_lossy());
        }
        std::fs::remove_dir_all(&base).unwrap();
    }
}

/// Streaming the snapshots to disk as they are taken changes no output byte
/// and leaves no scratch file behind.
#[test]
fn streamed_runs_write_the_same_bytes() {
    let base = std::env::temp_dir().join(format!("anlage-test-{}-stream", std::process::id()));
    let _ = std::fs::remove_dir_all(&base);
    let exe = env!("CARGO_BIN_EXE_anlage");
    for name in ["band", "sheet"] {
        let model = root().join(format!("patterns/{name}.toml"));
        let (memory, disk) = (base.join(format!("{name}-memory")), base.join(format!("{name}-disk")));
        for (dir, extra) in [(&memory, &[][..]), (&disk, &["--stream"][..])] {
            let o = Command::new(exe)
                .args(["run", model.to_str().unwrap(), "-q", "-o", dir.to_str().unwrap()])
                .args(extra)
                .output()
                .unwrap();
            assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        }
        let names = |dir: &Path| {
            let mut n: Vec<_> = std::fs::read_dir(dir).unwrap().map(|e| e.unwrap().file_name()).collect();
            n.sort();
            n
        };
        assert_eq!(names(&memory), names(&disk), "{name}: the streamed run wrote other files");
        for file in names(&memory) {
            let (a, b) = (std::fs::read(memory.join(&file)).unwrap(), std::fs::read(disk.join(&file)).unwrap());
            assert!(a == b, "{name}: {} differs when streamed", file.to_string_lossy());
        }
    }
    std::fs::remove_dir_all(&base).unwrap();
}

/// Resuming from a folder without a checkpoint is bad input (exit 2) with a fix.
#[test]
fn resume_without_checkpoint_is_refused() {
    let dir = std::env::temp_dir().join(format!("anlage-test-{}-nocheckpoint", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let o =
        Command::new(env!("CARGO_BIN_EXE_anlage")).args(["run", "--resume", dir.to_str().unwrap()]).output().unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("checkpoint.bin: cannot be opened") && err.contains("--checkpoint-every"), "{err}");
}

/// SIGTERM (how a cluster's scheduler ends a job) with checkpoints on saves
/// the run at the next step and stops with exit 1 and a message saying how
/// to continue; `--resume` then writes the same bytes as an uninterrupted run.
#[test]
fn sigterm_saves_a_checkpoint_and_stops_cleanly() {
    let base = std::env::temp_dir().join(format!("anlage-test-{}-sigterm", std::process::id()));
    let (full, cut) = (base.join("full"), base.join("cut"));
    let _ = std::fs::remove_dir_all(&base);
    std::fs::create_dir_all(&base).unwrap();
    // The ribbon with tiny fixed steps: a run of a few seconds.
    let text = std::fs::read_to_string(root().join("patterns/ribbon.toml")).unwrap();
    let model = base.join("slow.toml");
    std::fs::write(&model, text.replace("tolerance = 1e-6 ", "step_min = 0.0001 ")).unwrap();
    let exe = env!("CARGO_BIN_EXE_anlage");
    let m = model.to_str().unwrap();
    assert!(Command::new(exe).args(["run", m, "-q", "-o", full.to_str().unwrap()]).status().unwrap().success());
    // Checkpoints every hour: the only one is the one the signal asks for.
    let child = Command::new(exe)
        .args(["run", m, "-q", "-o", cut.to_str().unwrap(), "--checkpoint-every", "1h"])
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    std::thread::sleep(Duration::from_millis(300));
    // While it runs, its folder is reserved: a second run into it is refused at once.
    let o = Command::new(exe).args(["run", m, "-q", "-o", cut.to_str().unwrap()]).output().unwrap();
    assert_eq!(o.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&o.stderr).contains(&format!("another anlage process (pid {})", child.id())));
    assert!(Command::new("kill").args(["-TERM", &child.id().to_string()]).status().unwrap().success());
    let o = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("on request (a signal)") && err.contains("--resume"), "{err}");
    assert!(cut.join("checkpoint.bin").exists() && !cut.join("summary.json").exists());
    let o = Command::new(exe).args(["run", "--resume", cut.to_str().unwrap(), "-q"]).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    for file in ["states.npy", "boundaries.csv", "summary.json"] {
        assert_eq!(std::fs::read(full.join(file)).unwrap(), std::fs::read(cut.join(file)).unwrap(), "{file}");
    }
    std::fs::remove_dir_all(&base).unwrap();
}
