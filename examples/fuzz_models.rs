//! A mutation fuzzer for the model parser, validator and rate-expression
//! parser (stable Rust; cargo-fuzz needs a nightly toolchain).
//!
//! `cargo run --release --example fuzz_models -- SECONDS [SEED]` mutates the
//! demo models and the bad-model corpus (byte flips, deleted, repeated and
//! swapped lines, odd numbers and expressions spliced into values) and feeds
//! every mutant to `Model::from_toml` (which parses, validates and compiles
//! rate expressions). A panic is a bug: the input is saved to
//! tests/fuzz_found/ and the regression test `fuzz_found_inputs_never_panic`
//! replays every file there.

use std::panic;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use rand::{Rng, RngExt, SeedableRng};

const ODD_VALUES: [&str; 16] = [
    "nan",
    "inf",
    "-inf",
    "-1",
    "0",
    "1e308",
    "-0.0",
    "\"\"",
    "[]",
    "{}",
    "18446744073709551616",
    "1e-320",
    "\"a - (b\"",
    "\"hill(a, 0, 0)\"",
    "\"((((((((((((((((((((((((((a))))))))))))))))))))))))))\"",
    "\"a^1e9\"",
];

fn corpus() -> Vec<String> {
    let mut texts = Vec::new();
    for dir in ["patterns", "tests/bad_models"] {
        let mut paths: Vec<PathBuf> =
            std::fs::read_dir(dir).into_iter().flatten().flatten().map(|e| e.path()).collect();
        paths.sort();
        for p in paths.iter().filter(|p| p.extension().is_some_and(|e| e == "toml")) {
            if let Ok(t) = std::fs::read_to_string(p) {
                texts.push(t);
            }
        }
    }
    texts
}

fn mutate(text: &str, rng: &mut impl Rng) -> String {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    for _ in 0..rng.random_range(1..4) {
        if lines.is_empty() {
            break;
        }
        let i = rng.random_range(0..lines.len());
        match rng.random_range(0..6) {
            0 => {
                lines.remove(i);
            }
            1 => {
                let copy = lines[i].clone();
                lines.insert(i, copy);
            }
            2 => {
                let j = rng.random_range(0..lines.len());
                lines.swap(i, j);
            }
            3 => {
                if let Some((key, _)) = lines[i].split_once('=') {
                    lines[i] = format!("{key}= {}", ODD_VALUES[rng.random_range(0..ODD_VALUES.len())]);
                }
            }
            4 => {
                let mut bytes = lines[i].clone().into_bytes();
                if !bytes.is_empty() {
                    let k = rng.random_range(0..bytes.len());
                    bytes[k] = rng.random_range(32..127);
                }
                lines[i] = String::from_utf8_lossy(&bytes).into_owned();
            }
            _ => {
                let cut = rng.random_range(0..=lines[i].len());
                if lines[i].is_char_boundary(cut) {
                    lines[i].truncate(cut);
                }
            }
        }
    }
    lines.join("\n")
}

fn main() {
    let mut args = std::env::args().skip(1);
    let seconds: f64 = args.next().and_then(|a| a.parse().ok()).unwrap_or(60.0);
    let seed: u64 = args.next().and_then(|a| a.parse().ok()).unwrap_or(1);
    let corpus = corpus();
    assert!(!corpus.is_empty(), "run from the repository root");
    let mut rng = rand_pcg::Pcg64::seed_from_u64(seed);
    panic::set_hook(Box::new(|_| {}));
    let found = Path::new("tests/fuzz_found");
    let deadline = Instant::now() + Duration::from_secs_f64(seconds);
    let (mut tried, mut accepted, mut panics) = (0u64, 0u64, 0u64);
    while Instant::now() < deadline {
        let base = &corpus[rng.random_range(0..corpus.len())];
        let text = mutate(base, &mut rng);
        tried += 1;
        match panic::catch_unwind(|| anlage::model::Model::from_toml(&text, Path::new("fuzz.toml")).is_ok()) {
            Ok(true) => accepted += 1,
            Ok(false) => {}
            Err(_) => {
                panics += 1;
                std::fs::create_dir_all(found).expect("tests/fuzz_found");
                let name = found.join(format!("panic_{seed}_{tried}.toml"));
                std::fs::write(&name, &text).expect("saving the input");
                eprintln!("panic: saved {}", name.display());
            }
        }
    }
    println!(
        "{tried} inputs in {seconds} s: {accepted} accepted, {} rejected with an error, {panics} panics",
        tried - accepted - panics
    );
    if panics > 0 {
        std::process::exit(1);
    }
}
