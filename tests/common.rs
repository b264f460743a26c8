//! Helpers shared by the integration tests.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use anlage::model::{Model, Scheme, Stepping};
use anlage::{Run, RunOptions, simulate};

/// Repository root.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Loads a model relative to the repository root.
pub fn load(rel: &str) -> Model {
    Model::load(&root().join(rel)).unwrap_or_else(|e| panic!("{e}"))
}

/// Parses model text.
pub fn parse(text: &str) -> Model {
    Model::from_toml(text, Path::new("test.toml")).unwrap_or_else(|e| panic!("{e}\n{text}"))
}

/// Runs a model (parallel as a user would).
pub fn run(model: &Model) -> Run {
    simulate(model, &RunOptions::default()).unwrap_or_else(|e| panic!("{e}"))
}

/// The same model with a fixed step.
pub fn with_step(model: &Model, step_min: f64) -> Model {
    let mut m = model.clone();
    m.clock.stepping = Stepping::Fixed { step_min };
    m
}

/// The same model with error-controlled steps.
pub fn with_tolerance(model: &Model, tol: f64) -> Model {
    let mut m = model.clone();
    m.clock.stepping = Stepping::Adaptive { rtol: tol, atol: tol, max_step_min: m.clock.snapshot_every_min };
    m
}

/// The same model with `scheme`.
pub fn with_scheme(model: &Model, scheme: Scheme) -> Model {
    let mut m = model.clone();
    m.clock.scheme = scheme;
    m
}

/// Bisection on a monotone yes/no property: `below(lo)` holds, `below(hi)` does
/// not; returns the midpoint of the final bracket after `iterations` halvings.
pub fn bisect(mut lo: f64, mut hi: f64, iterations: usize, below: impl Fn(f64) -> bool) -> f64 {
    assert!(below(lo) && !below(hi), "the bracket must straddle the change");
    for _ in 0..iterations {
        let mid = 0.5 * (lo + hi);
        if below(mid) { lo = mid } else { hi = mid }
    }
    0.5 * (lo + hi)
}

/// Runs the `anlage` binary with `args`.
pub fn anlage(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_anlage")).args(args).output().expect("run anlage")
}

/// A fresh, empty test folder for this process.
pub fn temp_dir(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("anlage-test-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Runs a bundled model into `out` quietly with `threads` threads.
pub fn run_into(model: &str, out: &Path, threads: usize) {
    let model = root().join(model);
    let o =
        anlage(&["run", model.to_str().unwrap(), "-o", out.to_str().unwrap(), "--threads", &threads.to_string(), "-q"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}
