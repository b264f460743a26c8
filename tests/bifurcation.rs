//! Bifurcation diagrams in any model parameter, against published points:
//! the pitchfork of the symmetric toggle switch, the Hopf point of the
//! Brusselator with its period at onset, and the fold of a positive
//! autoregulation switch.

use anlage::phase::{DiagramRequest, Special, diagram};

use crate::common::parse;

/// A one-nucleus row with rate-expression genes `genes` ((name, rate)) and named constants.
fn nucleus(constants: &str, genes: &[(&str, &str)]) -> anlage::model::Model {
    let mut text = format!(
        "title = \"one nucleus\"\n[tissue]\nnuclei = [2]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\ntolerance = 1e-6\n\
         snapshot_every_min = 1.0\n[circuit]\nkinetics = \"rates\"\nparameters = {{ {constants} }}\n"
    );
    for (name, rate) in genes {
        text.push_str(&format!("[[gene]]\nname = \"{name}\"\nrate = \"{rate}\"\nproduction = 1.0\ndecay = 1.0\n"));
    }
    parse(&text)
}

fn request(model: &anlage::model::Model, name: &str, from: f64, to: f64) -> DiagramRequest {
    DiagramRequest { param: model.parse_param(name).unwrap(), from, to, x_pct: 50.0, t_min: 0.0 }
}

/// The symmetric toggle switch du/dt = a/(1 + v²) − u, dv/dt = a/(1 + u²) − v
/// has its pitchfork at a = 2 (u = v = 1) for n = 2 (Cherry & Adler 2000,
/// J. Theor. Biol. 203:117–133): found as a branch point to 1e-8 (once,
/// though both branches through it meet it), with the two asymmetric
/// states stable beyond it and the symmetric one a saddle.
#[test]
fn the_toggle_pitchfork_is_a_branch_point_at_two() {
    let model = nucleus("a = 1.0", &[("umber", "a / (1 + sable^2) - umber"), ("sable", "a / (1 + umber^2) - sable")]);
    let d = diagram(&model, &request(&model, "a", 1.0, 3.0)).unwrap();
    let special = d.special_points();
    let bp: Vec<_> = special.iter().filter(|p| p.kind == Special::BranchPoint).collect();
    assert_eq!(bp.len(), 1, "{special:?}");
    assert!((bp[0].s - 2.0).abs() < 1e-8, "branch point at a = {}", bp[0].s);
    assert!(bp[0].x.iter().all(|v| (v - 1.0).abs() < 1e-7), "{:?}", bp[0].x);
    assert!(special.iter().all(|p| p.kind != Special::Fold && p.kind != Special::Hopf), "{special:?}");
    // The asymmetric fixed points beyond it, stable at a = 3: subtracting
    // the two equations gives (u − v)(1 − uv) = 0, so uv = 1, and u + v = a.
    let ends: Vec<_> = d
        .branches
        .iter()
        .flat_map(|b| b.points.iter())
        .filter(|p| (p.s - 3.0).abs() < 1e-9 && (p.x[0] - p.x[1]).abs() > 0.1)
        .collect();
    assert_eq!(ends.len(), 2, "the two asymmetric states at a = 3");
    for end in ends {
        let (u, v) = (end.x[0], end.x[1]);
        assert!(end.kind.is_stable() && (u * v - 1.0).abs() < 1e-8 && (u + v - 3.0).abs() < 1e-8, "{end:?}");
    }
    let symmetric_end = d.branches[0].points.iter().max_by(|p, q| p.s.total_cmp(&q.s)).unwrap();
    assert_eq!(symmetric_end.kind, anlage::phase::Kind::Saddle, "{symmetric_end:?}");
}

/// The Brusselator du/dt = A − (B + 1)u + u²v, dv/dt = Bu − u²v has its Hopf
/// point at B = 1 + A² with frequency A at onset (Prigogine & Lefever 1968,
/// J. Chem. Phys. 48:1695–1700; the period follows from the linearisation at
/// (A, B/A): trace B − 1 − A², determinant A²).
#[test]
fn the_brusselator_hopf_point_and_period() {
    for a in [1.0, 1.5] {
        let model = nucleus(
            &format!("A = {a}, B = 1.0"),
            &[("umber", "A - (B + 1) * umber + umber^2 * sable"), ("sable", "B * umber - umber^2 * sable")],
        );
        let d = diagram(&model, &request(&model, "B", 1.0, 1.0 + a * a + 1.0)).unwrap();
        let hopf: Vec<_> = d.special_points().into_iter().filter(|p| p.kind == Special::Hopf).collect();
        assert_eq!(hopf.len(), 1, "{hopf:?}");
        let want = 1.0 + a * a;
        assert!((hopf[0].s - want).abs() < 1e-8, "Hopf at B = {} for A = {a}", hopf[0].s);
        let period = hopf[0].period_min.unwrap();
        let want_period = std::f64::consts::TAU / a;
        assert!((period - want_period).abs() < 1e-7 * want_period, "period {period} against {want_period}");
        assert!((hopf[0].x[0] - a).abs() < 1e-8 && (hopf[0].x[1] - want / a).abs() < 1e-8, "{:?}", hopf[0].x);
    }
}

/// Positive autoregulation du/dt = p·u²/(1 + u²) − u (Hill kinetics, K = 1,
/// n = 2, d = 1), continued in the gene's production p: besides u = 0, the
/// fixed points solve u² − pu + 1 = 0, which has real roots from p = 2
/// (u = 1) on: a fold at p = 2, to 1e-8 (closed form, derived here); and
/// in the link's threshold K at p = 3, where u² − 3u + K² = 0 has real
/// roots up to K = 3/2 (u = 3/2).
#[test]
fn the_autoregulation_fold_in_a_gene_and_a_link_parameter() {
    let text = "title = \"switch\"\n[tissue]\nnuclei = [2]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\n\
                tolerance = 1e-6\nsnapshot_every_min = 1.0\n[circuit]\nkinetics = \"hill\"\n\
                [[circuit.link]]\nfrom = \"umber\"\nto = \"umber\"\nsign = \"+\"\nthreshold = 1.0\nhill = 2\n\
                [[gene]]\nname = \"umber\"\nproduction = 3.0\ndecay = 1.0\n";
    let model = parse(text);
    let d = diagram(&model, &request(&model, "umber.production", 1.0, 4.0)).unwrap();
    let folds: Vec<_> = d.special_points().into_iter().filter(|p| p.kind == Special::Fold).collect();
    assert_eq!(folds.len(), 1, "{folds:?}");
    assert!((folds[0].s - 2.0).abs() < 1e-8 && (folds[0].x[0] - 1.0).abs() < 1e-6, "{:?}", folds[0]);
    let d = diagram(&model, &request(&model, "umber->umber.threshold", 0.5, 2.5)).unwrap();
    let folds: Vec<_> = d.special_points().into_iter().filter(|p| p.kind == Special::Fold).collect();
    assert_eq!(folds.len(), 1, "{folds:?}");
    assert!((folds[0].s - 1.5).abs() < 1e-8 && (folds[0].x[0] - 1.5).abs() < 1e-6, "{:?}", folds[0]);
    // Diffusion does not act on one nucleus, and a bad range is refused.
    let err = diagram(&model, &request(&model, "umber.production", 2.0, 1.0)).unwrap_err().to_string();
    assert!(err.contains("--from < --to"), "{err}");
}

/// The verb end to end: the tables hold every branch point by point and the
/// special point (read back and checked against the closed form), the
/// picture is written, and --json says it is a model prediction of an
/// isolated nucleus; a parameter that cannot act is refused.
#[test]
fn the_bifurcation_verb_writes_tables_a_picture_and_json() {
    let dir = crate::common::temp_dir("bifurcation-verb");
    let model = dir.join("switch.toml");
    std::fs::write(
        &model,
        "title = \"switch\"\n[tissue]\nnuclei = [2]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\ntolerance = 1e-6\n\
         snapshot_every_min = 1.0\n[circuit]\nkinetics = \"hill\"\n[[circuit.link]]\nfrom = \"umber\"\nto = \"umber\"\n\
         sign = \"+\"\nthreshold = 1.0\nhill = 2\n[[gene]]\nname = \"umber\"\nproduction = 3.0\ndecay = 1.0\ndiffusion = 1.0\n",
    )
    .unwrap();
    let out = dir.join("out");
    let args = ["bifurcation", model.to_str().unwrap(), "--parameter", "umber.production", "--from", "1", "--to", "4"];
    let o = crate::common::anlage(&[&args[..], &["-o", out.to_str().unwrap(), "--json"]].concat());
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(doc["model_prediction"], true);
    assert_eq!(doc["special_points"][0]["point"], "fold");
    let points = std::fs::read_to_string(out.join("bifurcation_points.csv")).unwrap();
    let mut rows = points.lines();
    assert_eq!(rows.next().unwrap(), "parameter,x_pct,frozen_at_min,point,branch,value,period_min,umber");
    let fold: Vec<&str> = rows.next().unwrap().split(',').collect();
    assert_eq!(fold[3], "fold");
    assert!((fold[5].parse::<f64>().unwrap() - 2.0).abs() < 1e-8, "{fold:?}");
    let branches = std::fs::read_to_string(out.join("bifurcation_branches.csv")).unwrap();
    // Every point of every branch is a fixed point: p·u²/(1 + u²) = u.
    let mut count = 0;
    for line in branches.lines().skip(1) {
        let cells: Vec<&str> = line.split(',').collect();
        let (p, u): (f64, f64) = (cells[5].parse().unwrap(), cells[7].parse().unwrap());
        assert!((p * u * u / (1.0 + u * u) - u).abs() < 1e-8, "{line}");
        count += 1;
    }
    assert!(count > 50, "{count} points");
    assert!(std::fs::metadata(out.join("bifurcation.png")).unwrap().len() > 1000);
    let o = crate::common::anlage(&[
        "bifurcation",
        model.to_str().unwrap(),
        "--parameter",
        "umber.diffusion",
        "--from",
        "0",
        "--to",
        "1",
    ]);
    assert!(!o.status.success() && String::from_utf8_lossy(&o.stderr).contains("isolated nucleus"));
}
