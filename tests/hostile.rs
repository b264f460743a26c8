//! Issue 20: inputs that made anlage crash (a panic, a stack overflow, an
//! allocation abort) are answered with exit 2 and a message; the
//! expression grammar and model mutations are fuzzed, bounded and seeded.

use std::path::PathBuf;

use crate::common::{anlage, temp_dir};

/// The two-nucleus header of the trial that found these crashes.
const HEADER: &str = "[tissue]\nnuclei = [2]\nspacing_um = 1.0\n\
    [clock]\nuntil_min = 1.0\nsnapshot_every_min = 1.0\nstep_min = 1.0\n";

fn model(dir: &std::path::Path, name: &str, body: &str) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, format!("{HEADER}{body}")).unwrap();
    path
}

fn rate_gene(rate: &str) -> String {
    format!("[[gene]]\nname = \"a\"\nrate = \"{rate}\"\n[circuit]\nkinetics = \"rates\"\n")
}

/// Each input is refused with exit 2 and a message containing `want`, by
/// `check` and by `run` (never exit 101 or a signal).
#[test]
fn issue_20_crashes_are_answered() {
    let dir = temp_dir("hostile");
    let deep = |open: &str, close: &str, n: usize| format!("{}a{}", open.repeat(n), close.repeat(n));
    let cases: Vec<(&str, String, &str)> = vec![
        (
            "noise",
            "[[gene]]\nname = \"a\"\nproduction = 1.0\ndecay = 1.0\ninitial_noise = 1e308\n".into(),
            "beyond any level",
        ),
        ("tower", rate_gene(&vec!["a"; 23].join("^")), "intermediate values"),
        ("parens", rate_gene(&deep("(", ")", 8200)), "nests more than 64 levels"),
        ("minus", rate_gene(&format!("{}a", "-".repeat(13_000))), "nests more than 64 levels"),
        ("exp", rate_gene(&deep("exp(", ")", 8200)), "nests more than 64 levels"),
        ("long", rate_gene(&"a+".repeat(2_500_000)), "more than 4000000"),
        (
            "diffusion",
            "[[gene]]\nname = \"a\"\nproduction = 1.0\ndecay = 1.0\ndiffusion = 1e25\n".into(),
            "check the units",
        ),
    ];
    for (name, body, want) in cases {
        let path = model(&dir, &format!("{name}.toml"), &body);
        for verb in [&["check"][..], &["run", "-q", "--no-pictures"][..]] {
            let mut args = verb.to_vec();
            let p = path.to_str().unwrap();
            args.push(p);
            let out = dir.join(format!("{name}_out"));
            if verb[0] == "run" {
                args.extend(["-o", out.to_str().unwrap()]);
            }
            let o = anlage(&args);
            let err = String::from_utf8_lossy(&o.stderr);
            assert_eq!(o.status.code(), Some(2), "{name} ({}): {err}", verb[0]);
            assert!(err.contains(want), "{name}: {err}");
        }
    }
    // An NPY whose header claims 10¹² values.
    let header = "{'descr': '<f8', 'fortran_order': False, 'shape': (1000000000000,), }";
    let pad = 64 - (10 + header.len() + 1) % 64;
    let mut npy = b"\x93NUMPY\x01\x00".to_vec();
    npy.extend_from_slice(&((header.len() + pad + 1) as u16).to_le_bytes());
    npy.extend_from_slice(header.as_bytes());
    npy.extend(std::iter::repeat_n(b' ', pad));
    npy.push(b'\n');
    npy.extend_from_slice(&[0u8; 16]);
    std::fs::write(dir.join("huge.npy"), npy).unwrap();
    let path =
        model(&dir, "npy.toml", "[[gene]]\nname = \"a\"\nproduction = 1.0\ndecay = 1.0\ninitial_file = \"huge.npy\"\n");
    let o = anlage(&["check", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("has shape [1000000000000]"));
    // A model path that never ends.
    let o = anlage(&["check", "/dev/zero"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("more than 64 MiB"));
}

/// A bounded, seeded fuzzing run in the test suite (the long one is
/// `cargo run --release --example fuzz_models -- SECONDS SEED`): 3,000
/// mutated models and 3,000 models with random rate expressions, none of
/// which may panic.
#[test]
fn issue_20_fuzzing_finds_no_panic() {
    use rand::{RngExt, SeedableRng};
    let corpus = crate::fuzz_core::corpus_from(&crate::common::root());
    let mut rng = rand_pcg::Pcg64::seed_from_u64(2026);
    let mut failures = Vec::new();
    for k in 0..6000 {
        let text = if k % 2 == 0 {
            crate::fuzz_core::mutate(&corpus[rng.random_range(0..corpus.len())], &mut rng)
        } else {
            crate::fuzz_core::expression_model(&mut rng)
        };
        if std::panic::catch_unwind(|| crate::fuzz_core::exercise(&text)).is_err() {
            failures.push(text);
        }
    }
    assert!(failures.is_empty(), "{} inputs panicked; the first:\n{}", failures.len(), failures[0]);
}
