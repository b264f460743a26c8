//! The fuzzer's core, shared by the bounded run in the tests
//! (`hostile::fuzzing_finds_no_panic`) and the long run
//! (`cargo run --release --example fuzz_models -- SECONDS [SEED]`):
//! mutations of the bundled and bad models, and random rate expressions
//! from the grammar (numbers, names, + − × ÷ ^, unary signs, parentheses,
//! functions), each fed to the parser, validator and compiler, and — when
//! accepted — its rates and Jacobian evaluated once.

use std::path::{Path, PathBuf};

use rand::{Rng, RngExt};

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

pub fn corpus() -> Vec<String> {
    corpus_from(Path::new("."))
}

/// The bundled and bad models under `root`.
pub fn corpus_from(root: &Path) -> Vec<String> {
    let mut texts = Vec::new();
    for dir in ["patterns", "tests/bad_models"] {
        let mut paths: Vec<PathBuf> =
            std::fs::read_dir(root.join(dir)).into_iter().flatten().flatten().map(|e| e.path()).collect();
        paths.sort();
        for p in paths.iter().filter(|p| p.extension().is_some_and(|e| e == "toml")) {
            if let Ok(t) = std::fs::read_to_string(p) {
                texts.push(t);
            }
        }
    }
    texts
}

pub fn mutate(text: &str, rng: &mut impl Rng) -> String {
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

/// A random rate expression over genes `a`, `b`, the gradient-free names
/// `x`, `t` and constant `k`, at most `depth` deep.
pub fn expression(rng: &mut impl Rng, depth: usize) -> String {
    let leaf = |rng: &mut dyn rand::Rng| -> String {
        let r: u32 = rng.random_range(0..9);
        match r {
            0 => "a".into(),
            1 => "b".into(),
            2 => "x".into(),
            3 => "t".into(),
            4 => "k".into(),
            5 => format!("{}", rng.random_range(-3.0..3.0f64)),
            6 => ["0", "1e308", "1e-320", "0.0"][rng.random_range(0..4)].into(),
            7 => "neighbours(a)".into(),
            _ => format!("{}", rng.random_range(0..5)),
        }
    };
    if depth == 0 || rng.random_range(0..4) == 0 {
        return leaf(rng);
    }
    match rng.random_range(0..7) {
        0..=2 => {
            let op = ["+", "-", "*", "/", "^"][rng.random_range(0..5)];
            format!("{} {op} {}", expression(rng, depth - 1), expression(rng, depth - 1))
        }
        3 => format!("-{}", expression(rng, depth - 1)),
        4 => format!("({})", expression(rng, depth - 1)),
        5 => {
            let f = ["exp", "ln", "sqrt", "abs"][rng.random_range(0..4)];
            format!("{f}({})", expression(rng, depth - 1))
        }
        _ => {
            let f = ["min", "max"][rng.random_range(0..2)];
            format!("{f}({}, {})", expression(rng, depth - 1), expression(rng, depth - 1))
        }
    }
}

/// A small model whose two genes have random rate expressions.
pub fn expression_model(rng: &mut impl Rng) -> String {
    format!(
        "[tissue]\nnuclei = [3]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\nsnapshot_every_min = 1.0\nstep_min = 0.5\n\
         [[gene]]\nname = \"a\"\nrate = \"{}\"\n[[gene]]\nname = \"b\"\nrate = \"{}\"\n\
         [circuit]\nkinetics = \"rates\"\nparameters = {{ k = 2.0 }}\n",
        expression(rng, 6),
        expression(rng, 6)
    )
}

/// Parses, validates and compiles `text`; when accepted, evaluates its rates
/// and Jacobian at the initial state of the first nucleus. Returns whether
/// the model was accepted (a panic propagates).
pub fn exercise(text: &str) -> bool {
    let Ok(model) = anlage::model::Model::from_toml(text, Path::new("fuzz.toml")) else { return false };
    if model.grid.len() > 100_000 || model.genes.len() > 64 {
        return true;
    }
    let kinetics = anlage::kinetics::build(&model);
    let tissue = anlage::tissue::Tissue::new(&model);
    let u = anlage::integrate::initial_state(&model);
    let m = tissue.inputs_with_state(0.0, &u);
    let (g, n) = (model.genes.len(), u.ncols().min(1));
    if n == 0 {
        return true;
    }
    let ui: Vec<f64> = u.column(0).to_vec();
    let mi: Vec<f64> = m.column(0).to_vec();
    let mut out = vec![0.0; g];
    kinetics.rates_one(&ui, &mi, &mut out);
    let mut jac = vec![0.0; g * g];
    kinetics.jacobian(&ui, &mi, &mut jac);
    let _ = anlage::integrate::least_steps(&model);
    true
}

/// Saves an input that panicked into tests/fuzz_found/, for the replay test.
pub fn save(text: &str, name: &str) -> PathBuf {
    let found = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fuzz_found");
    std::fs::create_dir_all(&found).expect("tests/fuzz_found");
    let path = found.join(name);
    std::fs::write(&path, text).expect("saving the input");
    path
}
