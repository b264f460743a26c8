//! Bad model files: each file in tests/bad_models/ starts with
//! `# expect: LINE:COLUMN: MESSAGE`, the exact error it must produce.

use std::path::Path;

use anlage::model::Model;

use crate::common::root;

#[test]
fn every_bad_model_gets_its_exact_error() {
    let dir = root().join("tests/bad_models");
    let mut checked = 0;
    let mut entries: Vec<_> = std::fs::read_dir(&dir).unwrap().map(|e| e.unwrap().path()).collect();
    entries.sort();
    for path in entries.iter().filter(|p| p.extension().is_some_and(|e| e == "toml")) {
        let text = std::fs::read_to_string(path).unwrap();
        let expect = text.lines().next().and_then(|l| l.strip_prefix("# expect: ")).unwrap_or_else(|| {
            panic!("{} must start with `# expect: `", path.display());
        });
        let name = Path::new("bad").join(path.file_name().unwrap());
        let err = match Model::from_toml(&text, &name) {
            Ok(_) => panic!("{} was accepted", path.display()),
            Err(e) => e.to_string(),
        };
        assert_eq!(err, format!("{}:{expect}", name.display()), "{}", path.display());
        checked += 1;
    }
    assert!(checked >= 50, "only {checked} bad models");
}

#[test]
fn unreadable_file_names_the_file() {
    let err = Model::load(Path::new("/nonexistent/model.toml")).unwrap_err();
    assert_eq!(err.to_string(), "cannot read model file /nonexistent/model.toml");
    let cause = std::error::Error::source(&err).expect("the I/O error is kept as the source").to_string();
    assert!(cause.contains("No such file"), "{cause}");
}

/// Every input the fuzzer (examples/fuzz_models.rs) ever saved is answered
/// without a panic; plus a fixed sample of mutants of the corpus, so the check
/// runs even while tests/fuzz_found/ holds none.
#[test]
fn fuzz_found_inputs_never_panic() {
    let dir = root().join("tests/fuzz_found");
    let mut texts: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .map(|p| std::fs::read_to_string(p).unwrap())
        .collect();
    let ribbon = std::fs::read_to_string(root().join("patterns/ribbon.toml")).unwrap();
    for (k, line) in ribbon.lines().enumerate() {
        for odd in ["nan", "-1", "1e308", "\"\"", "[]", "\"a - (b\""] {
            let mutated: Vec<String> = ribbon
                .lines()
                .enumerate()
                .map(|(j, l)| match l.split_once('=') {
                    Some((key, _)) if j == k => format!("{key}= {odd}"),
                    _ => l.to_string(),
                })
                .collect();
            texts.push(mutated.join("\n"));
        }
        let _ = line;
    }
    for text in &texts {
        let outcome = std::panic::catch_unwind(|| Model::from_toml(text, Path::new("fuzz.toml")).is_ok());
        assert!(outcome.is_ok(), "panicked on:\n{text}");
    }
}
