//! A long run of the fuzzer (stable Rust; cargo-fuzz needs a nightly
//! toolchain): `cargo run --release --example fuzz_models -- SECONDS [SEED]`.
//! Mutated models and random rate expressions (see tests/fuzz_core.rs) are
//! fed to the parser, validator and compiler; a panic is a bug, its input is
//! saved to tests/fuzz_found/ and `validation::fuzz_found_inputs_never_panic`
//! replays every file there.

use std::panic;
use std::time::{Duration, Instant};

use rand::{RngExt, SeedableRng};

#[path = "../tests/fuzz_core.rs"]
mod fuzz_core;

fn main() {
    let mut args = std::env::args().skip(1);
    let seconds: f64 = args.next().and_then(|a| a.parse().ok()).unwrap_or(60.0);
    let seed: u64 = args.next().and_then(|a| a.parse().ok()).unwrap_or(1);
    let corpus = fuzz_core::corpus();
    assert!(!corpus.is_empty(), "run from the repository root");
    let mut rng = rand_pcg::Pcg64::seed_from_u64(seed);
    panic::set_hook(Box::new(|_| {}));
    let deadline = Instant::now() + Duration::from_secs_f64(seconds);
    let (mut tried, mut accepted, mut panics) = (0u64, 0u64, 0u64);
    while Instant::now() < deadline {
        let text = if rng.random_range(0..2) == 0 {
            fuzz_core::mutate(&corpus[rng.random_range(0..corpus.len())], &mut rng)
        } else {
            fuzz_core::expression_model(&mut rng)
        };
        tried += 1;
        match panic::catch_unwind(|| fuzz_core::exercise(&text)) {
            Ok(true) => accepted += 1,
            Ok(false) => {}
            Err(_) => {
                panics += 1;
                let path = fuzz_core::save(&text, &format!("panic_{seed}_{tried}.toml"));
                eprintln!("panic: saved {}", path.display());
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
