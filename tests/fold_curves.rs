//! Fold curves in two parameters against SciPy (tests/reference/cusp.py,
//! values in cusp.json): positive autoregulation with basal production b
//! and maximal rate p, du/dt = b + p·u³/(1 + u³) − u, has two fold curves
//! in (p, b) that meet at a cusp; the cusp is where F = F_u = F_uu = 0.

use anlage::phase::{FoldCurveRequest, ParameterFamily, Second, fold_curves, seed_lines, stable_counts};

use crate::common::parse;

fn reference() -> serde_json::Value {
    let text = std::fs::read_to_string(crate::common::root().join("tests/reference/cusp.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// A one-nucleus row whose only gene follows `rate`, with constants `b` and `p`.
fn switch(rate: &str) -> anlage::model::Model {
    parse(&format!(
        "title = \"switch\"\n[tissue]\nnuclei = [2]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\ntolerance = 1e-6\n\
         snapshot_every_min = 1.0\n[circuit]\nkinetics = \"rates\"\nparameters = {{ b = 0.3, p = 2.0 }}\n\
         [[gene]]\nname = \"umber\"\nrate = \"{rate}\"\nproduction = 3.0\ndecay = 1.0\n"
    ))
}

#[test]
fn the_fold_curves_of_the_autoregulation_switch_meet_at_the_cusp() {
    let r = reference();
    let model = switch("b + p * umber^3 / (1 + umber^3) - umber");
    let (p, b) = (model.parse_param("p").unwrap(), model.parse_param("b").unwrap());
    let fam = ParameterFamily::new(&model, p, 50.0, 0.0).with_second(Second::Param(b), 0.3);
    let req = FoldCurveRequest { p: (1.0, 3.2), q: (0.0, 0.6), seed_lines: 7 };
    let seeds = seed_lines(&fam, "p", &req);
    let curves = fold_curves(&fam, &seeds, &req);
    let cusps: Vec<_> = curves.iter().flat_map(|c| c.cusps.iter()).collect();
    assert_eq!(cusps.len(), 1, "{cusps:?}");
    let want = &r["cusp"];
    let (cu, cp, cb) = (want["u"].as_f64().unwrap(), want["p"].as_f64().unwrap(), want["b"].as_f64().unwrap());
    assert!((cusps[0].p - cp).abs() < 1e-6, "cusp at p = {} against {cp}", cusps[0].p);
    assert!((cusps[0].q - cb).abs() < 1e-6, "cusp at b = {} against {cb}", cusps[0].q);
    assert!((cusps[0].x[0] - cu).abs() < 1e-5, "cusp at u = {} against {cu}", cusps[0].x[0]);
    // One curve through the cusp; every point a fold: F = 0 and F_u = 0.
    assert_eq!(curves.len(), 1, "{} curves", curves.len());
    for pt in &curves[0].points {
        let (u, p, b) = (pt.x[0], pt.p, pt.q);
        let f = b + p * u.powi(3) / (1.0 + u.powi(3)) - u;
        let fu = p * 3.0 * u * u / (1.0 + u.powi(3)).powi(2) - 1.0;
        assert!(f.abs() < 1e-8 && fu.abs() < 1e-6, "{pt:?}: F = {f}, F_u = {fu}");
    }
    // At p = 1.5, 2 and 3, the curve passes through SciPy's folds (those inside the box).
    for fold in r["folds"].as_array().unwrap() {
        let (fp, fb) = (fold["p"].as_f64().unwrap(), fold["b"].as_f64().unwrap());
        if !(0.0..=0.6).contains(&fb) {
            continue;
        }
        let near = curves[0].points.windows(2).find(|w| {
            (w[0].p - fp) * (w[1].p - fp) <= 0.0 && {
                let mid = 0.5 * (w[0].q + w[1].q);
                (mid - fb).abs() < 0.05
            }
        });
        let w = near.unwrap_or_else(|| panic!("no point of the curve near p = {fp}, b = {fb}"));
        let f = (fp - w[0].p) / (w[1].p - w[0].p);
        let b_here = w[0].q + f * (w[1].q - w[0].q);
        assert!((b_here - fb).abs() < 2e-3, "fold at p = {fp}: b = {b_here} against {fb}");
    }
}

/// The same switch with its basal rate made by a gradient, b = 0.6·e^{−x/100 µm}
/// on a 400 µm row: continued in p and the position, the cusp sits where
/// the gradient's value is SciPy's cusp b, x = 100 ln(0.6/b).
#[test]
fn fold_curves_along_the_axis_find_where_the_row_is_bistable() {
    let r = reference();
    let mut model = switch("0.6 * exp(-x / 100) + p * umber^3 / (1 + umber^3) - umber");
    model.grid = parse(
        "title = \"row\"\n[tissue]\nnuclei = [401]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\ntolerance = 1e-6\n\
         snapshot_every_min = 1.0\n[[gene]]\nname = \"umber\"\nproduction = 1.0\ndecay = 1.0\n",
    )
    .grid;
    let p = model.parse_param("p").unwrap();
    let fam = ParameterFamily::new(&model, p, 50.0, 0.0).with_second(Second::Position, 50.0);
    let req = FoldCurveRequest { p: (1.0, 3.2), q: (0.0, 100.0), seed_lines: 9 };
    let curves = fold_curves(&fam, &seed_lines(&fam, "p", &req), &req);
    let cusps: Vec<_> = curves.iter().flat_map(|c| c.cusps.iter()).collect();
    assert_eq!(cusps.len(), 1, "{cusps:?}");
    let (cp, cb) = (r["cusp"]["p"].as_f64().unwrap(), r["cusp"]["b"].as_f64().unwrap());
    let length = model.grid.length_um();
    let want_pct = 100.0 * (100.0 * (0.6 / cb).ln()) / length;
    assert!((cusps[0].p - cp).abs() < 1e-6, "cusp at p = {} against {cp}", cusps[0].p);
    assert!((cusps[0].q - want_pct).abs() < 1e-5, "cusp at {} % against {want_pct} %", cusps[0].q);
}

/// The verb end to end: `bifurcation --second` writes the fold curves and
/// the cusp (read back against SciPy), the picture, and refuses a bad
/// second range or the same parameter twice.
#[test]
fn the_verb_writes_fold_curves_and_cusps() {
    let dir = crate::common::temp_dir("fold-curves-verb");
    let model = dir.join("switch.toml");
    std::fs::write(
        &model,
        "title = \"switch\"\n[tissue]\nnuclei = [2]\nspacing_um = 1.0\n[clock]\nuntil_min = 1.0\ntolerance = 1e-6\n\
         snapshot_every_min = 1.0\n[circuit]\nkinetics = \"rates\"\nparameters = { b = 0.3, p = 2.0 }\n\
         [[gene]]\nname = \"umber\"\nrate = \"b + p * umber^3 / (1 + umber^3) - umber\"\nproduction = 3.0\ndecay = 1.0\n",
    )
    .unwrap();
    let out = dir.join("out");
    let m = model.to_str().unwrap();
    let base = ["bifurcation", m, "--parameter", "p", "--from", "1", "--to", "3.2", "--second", "b"];
    let o = crate::common::anlage(
        &[&base[..], &["--second-from", "0", "--second-to", "0.6", "-o", out.to_str().unwrap(), "--json"]].concat(),
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(doc["model_prediction"], true);
    let cusps = std::fs::read_to_string(out.join("fold_cusps.csv")).unwrap();
    let mut rows = cusps.lines();
    assert_eq!(rows.next().unwrap(), "curve,parameter,value,second,second_value,umber");
    let cells: Vec<f64> = rows.next().unwrap().split(',').filter_map(|c| c.parse().ok()).collect();
    let r = reference();
    assert!((cells[1] - r["cusp"]["p"].as_f64().unwrap()).abs() < 1e-6, "{cells:?}");
    assert!((cells[2] - r["cusp"]["b"].as_f64().unwrap()).abs() < 1e-6, "{cells:?}");
    // Every point inside the box.
    let curves = std::fs::read_to_string(out.join("fold_curves.csv")).unwrap();
    for line in curves.lines().skip(1) {
        let c: Vec<f64> = line.split(',').filter_map(|c| c.parse().ok()).collect();
        assert!((1.0..=3.2).contains(&c[1]) && (0.0..=0.6).contains(&c[2]), "{line}");
    }
    assert!(std::fs::metadata(out.join("fold_curves.png")).unwrap().len() > 1000);
    let o = crate::common::anlage(&[&base[..], &["--second-from", "0.6", "--second-to", "0"]].concat());
    assert!(!o.status.success() && String::from_utf8_lossy(&o.stderr).contains("--second-from < --second-to"));
    let mut same = base.to_vec();
    same[9] = "p";
    let o = crate::common::anlage(&[&same[..], &["--second-from", "1", "--second-to", "2"]].concat());
    assert!(!o.status.success() && String::from_utf8_lossy(&o.stderr).contains("same parameter"));
}

/// The count of stable states behind the picture does not depend on a
/// capacity the rate expression ignores (production 0.2 here, far below
/// the high state near 2.5): every cell of the grid against a brute-force
/// count of the downward zero crossings of F(u) on 0 ≤ u ≤ 10 (a
/// fine scan, no Newton, common practice).
#[test]
fn stable_counts_find_states_above_a_capacity_the_rate_law_ignores() {
    let mut model = switch("b + p * umber^3 / (1 + umber^3) - umber");
    model.genes[0].production = 0.2;
    let (p, b) = (model.parse_param("p").unwrap(), model.parse_param("b").unwrap());
    let fam = ParameterFamily::new(&model, p, 50.0, 0.0).with_second(Second::Param(b), 0.3);
    let req = FoldCurveRequest { p: (0.5, 4.0), q: (0.0, 1.0), seed_lines: 11 };
    let grid = (24, 16);
    let counts = stable_counts(&fam, &seed_lines(&fam, "p", &req), &req, grid);
    let mut bistable = 0;
    for (k, &n) in counts.iter().enumerate() {
        let (i, j) = (k % grid.0, k / grid.0);
        let pv = 0.5 + 3.5 * (i as f64 + 0.5) / grid.0 as f64;
        let bv = (j as f64 + 0.5) / grid.1 as f64;
        let f = |u: f64| bv + pv * u.powi(3) / (1.0 + u.powi(3)) - u;
        let mut want = 0;
        let steps = 20_000;
        for s in 0..steps {
            let (u0, u1) = (10.0 * s as f64 / steps as f64, 10.0 * (s + 1) as f64 / steps as f64);
            if f(u0) > 0.0 && f(u1) <= 0.0 {
                want += 1;
            }
        }
        assert_eq!(n as usize, want, "p = {pv}, b = {bv}");
        bistable += usize::from(want >= 2);
    }
    assert!(bistable > 20, "only {bistable} bistable cells: the test would not see a miss");
}
