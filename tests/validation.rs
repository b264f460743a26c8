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
