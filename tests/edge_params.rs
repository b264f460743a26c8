//! Edge rules as parameters: an influx entering at an edge, or a level held
//! there, named `GENE.edge.SIDE.influx` / `.level`, in mutants, screens,
//! sweeps, sensitivity and fits, against the steady gradient of a
//! diffusing, decaying morphogen on a row of length L sealed at the far end:
//! with influx j at x = 0, C(x) = (jλ/D)·cosh((L−x)/λ)/sinh(L/λ); with a
//! level C₀ held there, C₀·cosh((L−x)/λ)/cosh(L/λ); λ = √(D/k) (Crick 1970,
//! Nature 225:420–422, for the long-domain source gradient; the finite-row
//! forms solve D C″ = kC with these ends, derived here). The gene's
//! boundary at level T then sits at x* = L − λ·acosh(T·D·sinh(L/λ)/(jλ)),
//! or L − λ·acosh(T·cosh(L/λ)/C₀).

use anlage::model::Model;
use anlage::screen;

use crate::common::{anlage, parse, temp_dir};

const D: f64 = 40.0;
const K: f64 = 0.1;
const L: f64 = 200.0;
const T: f64 = 0.05;

fn lambda() -> f64 {
    (D / K).sqrt()
}

/// A 200-nucleus row (1 µm apart) of one morphogen with an edge rule,
/// read at the absolute level T.
fn row(edge: &str, extra: &str) -> String {
    format!(
        r#"title = "edge source"
[tissue]
nuclei = [200]
spacing_um = 1.0
[clock]
until_min = 300.0
tolerance = 1e-9
snapshot_every_min = 300.0
[circuit]
kinetics = "rates"
[[gene]]
name = "tallow"
diffusion = {D}
rate = "-{K} * tallow"
boundary_level = {{ absolute = {T} }}
{edge}
{extra}"#
    )
}

/// x* for influx j at the left edge.
fn boundary_for_influx(j: f64) -> f64 {
    let lam = lambda();
    L - lam * (T * D * (L / lam).sinh() / (j * lam)).acosh()
}

/// dx*/d ln j for influx j (differentiating x* above).
fn slope_for_influx(j: f64) -> f64 {
    let lam = lambda();
    let a = T * D * (L / lam).sinh() / (j * lam);
    lam * a / (a * a - 1.0).sqrt()
}

/// x* for a level C₀ held at the left edge.
fn boundary_for_level(c0: f64) -> f64 {
    let lam = lambda();
    L - lam * (T * (L / lam).cosh() / c0).acosh()
}

/// Allowed error of a boundary, µm: the crossing is interpolated linearly
/// between nuclei 1 µm apart on a gradient of decay length 20 µm, off by
/// at most h²/(8λ) ≈ 0.006 µm, plus the grid's own error in the level
/// (relative (x/λ)(h/λ)²/24 + (h/λ)²/8, times λ: under 0.01 µm here; see
/// tests/edges.rs). 0.03 µm covers both with room (measured 0.009).
const TOL_UM: f64 = 0.03;

/// `--dosage` scales each non-zero edge rule ×0.25 … ×4, as it does a
/// gradient's peak, and each moves the boundary where the closed form says
/// (on a long row, by λ ln f; here the finite row's form).
#[test]
fn a_dosage_screen_scales_the_edge_source() {
    let model = parse(&row("edge.left = { influx = 0.5 }", ""));
    let mutants = screen::families(&model, false, false, true);
    let names: Vec<&str> = mutants.iter().map(|m| m.name.as_str()).collect();
    for f in ["x0.25", "x0.5", "x2", "x4"] {
        assert!(names.contains(&format!("tallow.edge.left.influx {f}").as_str()), "{names:?}");
    }
    let s = screen::run_screen(&model, &mutants, true).unwrap();
    let x0 = boundary_for_influx(0.5);
    for (m, shifts) in mutants.iter().zip(&s.shifts) {
        let f: f64 = m.name.rsplit_once('x').unwrap().1.parse().unwrap();
        let want = boundary_for_influx(0.5 * f) - x0;
        let got = shifts[0].shift_um.unwrap();
        assert!((got - want).abs() < 2.0 * TOL_UM, "{}: shift {got} µm, closed form {want}", m.name);
    }
}

/// A declared mutant may scale an edge rule by name; naming the other kind
/// of rule, or an edge that has none, is refused saying what is there.
#[test]
fn mutants_name_edge_rules_and_wrong_names_are_explained() {
    let ok = row(
        "edge.left = { influx = 0.5 }",
        "[[mutant]]\nname = \"weak source\"\nscale = { \"tallow.edge.left.influx\" = 0.5 }\n",
    );
    let model = parse(&ok);
    let mutant = model.with_mutant(&model.mutants[0]);
    let x = anlage::readout::predicted_final_boundaries(&mutant).unwrap();
    assert!((x[0].position_um - boundary_for_influx(0.25)).abs() < TOL_UM, "{x:?}");

    let wrong_kind =
        row("edge.left = { influx = 0.5 }", "[[mutant]]\nname = \"w\"\nscale = { \"tallow.edge.left.level\" = 0.5 }\n");
    let err = Model::from_toml(&wrong_kind, std::path::Path::new("wrong.toml")).unwrap_err().to_string();
    assert!(err.contains("has an influx at its left edge") && err.contains("tallow.edge.left.influx"), "{err}");
    let sealed =
        row("edge.left = { influx = 0.5 }", "[[mutant]]\nname = \"w\"\nscale = { \"tallow.edge.right.influx\" = 2 }\n");
    let err = Model::from_toml(&sealed, std::path::Path::new("sealed.toml")).unwrap_err().to_string();
    assert!(err.contains("no rule at its right edge"), "{err}");
}

/// A sweep over the level held at the edge reads the boundary where
/// C₀·cosh((L−x)/λ)/cosh(L/λ) = T at every point.
#[test]
fn a_sweep_over_a_held_level_follows_the_closed_form() {
    let dir = temp_dir("edge-sweep");
    let file = dir.join("held.toml");
    std::fs::write(&file, row("edge.left = { level = 0.5 }", "")).unwrap();
    let out = dir.join("sweep");
    let o = anlage(&[
        "sweep",
        file.to_str().unwrap(),
        "--axis",
        "tallow.edge.left.level=0.1:1.0:4",
        "-o",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let table = std::fs::read_to_string(out.join("sweep_boundaries.csv")).unwrap();
    let rows: Vec<Vec<&str>> = table.lines().skip(1).map(|l| l.split(',').collect()).collect();
    assert_eq!(rows.len(), 4, "{table}");
    for r in rows {
        let (c0, x): (f64, f64) = (r[1].parse().unwrap(), r[4].parse().unwrap());
        assert!(
            (x - boundary_for_level(c0)).abs() < TOL_UM,
            "level {c0}: {x} µm, closed form {}",
            boundary_for_level(c0)
        );
    }
    // The range must stay where the model file allows a level (>= 0).
    let o = anlage(&["sweep", file.to_str().unwrap(), "--axis", "tallow.edge.left.level=-1:1:3"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("must stay >= 0"));
}

/// Sensitivity lists the influx with dx*/d ln j as differentiated above,
/// within the slope error of a crossing interpolated linearly between
/// nuclei: the interpolated crossing moves h·T/(u_i − u_{i+1}) per unit
/// ln j, which is λ·(1 ± h/2λ) on an exponential, ±2.5 % here (derived
/// here); allowed 3 %.
#[test]
fn sensitivity_to_an_edge_influx() {
    let model = parse(&row("edge.left = { influx = 0.5 }", ""));
    let rows = screen::sensitivity(&model, screen::SENSITIVITY_STEP, true).unwrap();
    let r = rows.iter().find(|r| r.parameter == "tallow.edge.left.influx").expect("edge influx listed");
    let got = r.d_um_per_ln.unwrap();
    let want = slope_for_influx(0.5);
    assert!((got / want - 1.0).abs() < 0.03, "{got} µm per unit ln j, closed form {want}");
}

/// A fit recovers the influx from a boundary put where the closed form
/// says, writes it back into `fitted.toml` under the gene's `edge.left`,
/// and its profile interval is the closed form's: ±1.96σ/slope in ln j.
/// A bound below what the model file allows is refused.
#[test]
fn a_fit_recovers_an_edge_influx_and_writes_it_back() {
    let dir = temp_dir("edge-fit");
    let (truth, sd_pct, n): (f64, f64, f64) = (0.7, 1.0, 8.0);
    let x_pct = boundary_for_influx(truth) / L * 100.0;
    std::fs::write(
        dir.join("measured.csv"),
        format!("sample,time,gene,direction,position_pct,sd_pct,n\nmean,,tallow,falling,{x_pct},{sd_pct},{n}\n"),
    )
    .unwrap();
    let fit = |min: f64| {
        format!(
            "[fit]\nseed = 1\nevaluations = 300\n[[fit.parameter]]\nname = \"tallow.edge.left.influx\"\n\
             min = {min}\nmax = 2.0\n[[fit.data]]\ntable = \"measured.csv\"\n"
        )
    };
    let file = dir.join("fit.toml");
    std::fs::write(&file, row("edge.left = { influx = 0.5 }", &fit(0.1))).unwrap();
    let out = dir.join("out");
    let o = anlage(&["fit", file.to_str().unwrap(), "-o", out.to_str().unwrap(), "--json"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let json: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let p = &json["parameters"][0];
    let value = p["value"].as_f64().unwrap();
    assert!((value / truth - 1.0).abs() < 5e-3, "fitted {value}, truth {truth}");
    let half = 1.96 * (sd_pct / n.sqrt() * L / 100.0) / slope_for_influx(truth);
    let (lo, hi) = (p["profile_interval"][0].as_f64().unwrap(), p["profile_interval"][1].as_f64().unwrap());
    assert!((lo / (truth * (-half).exp()) - 1.0).abs() < 5e-3, "low end {lo}");
    assert!((hi / (truth * half.exp()) - 1.0).abs() < 5e-3, "high end {hi}");
    let fitted = std::fs::read_to_string(out.join("fitted.toml")).unwrap();
    let back = Model::from_toml(&fitted, &out.join("fitted.toml")).unwrap();
    let param = back.parse_param("tallow.edge.left.influx").unwrap();
    assert_eq!(back.param_value(param), Some(value));

    std::fs::write(&file, row("edge.left = { influx = 0.5 }", &fit(-0.5))).unwrap();
    let o = anlage(&["fit", file.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(String::from_utf8_lossy(&o.stderr).contains("must stay >= 0"));
}

/// An edge rule acts through diffusion: an isolated nucleus's bifurcation
/// diagram cannot be continued in it (exit 2, saying why).
#[test]
fn a_diagram_in_an_edge_rule_is_refused() {
    let dir = temp_dir("edge-bifurcation");
    let file = dir.join("m.toml");
    std::fs::write(&file, row("edge.left = { influx = 0.5 }", "")).unwrap();
    let o = anlage(&[
        "bifurcation",
        file.to_str().unwrap(),
        "--parameter",
        "tallow.edge.left.influx",
        "--from",
        "0.1",
        "--to",
        "1",
        "-o",
        dir.join("b").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("is an edge rule"));
}

/// Knocking out a gene (Hill kinetics, not a rate expression) also stops
/// what its edge rule lets in: the knock-out of a morphogen fed only from
/// the edge loses it everywhere (before, the influx kept the gradient and
/// the boundary, unmoved, with exit 0).
#[test]
fn a_knock_out_stops_the_edge_influx() {
    let model = parse(
        r#"title = "edge source, hill"
[tissue]
nuclei = [200]
spacing_um = 1.0
[clock]
until_min = 300.0
tolerance = 1e-8
snapshot_every_min = 300.0
[circuit]
kinetics = "hill"
[[gene]]
name = "tallow"
production = 0.0
decay = 0.1
diffusion = 40.0
boundary_level = { absolute = 0.05 }
edge.left = { influx = 0.5 }
"#,
    );
    let wt = anlage::readout::predicted_final_boundaries(&model).unwrap();
    assert!((wt[0].position_um - boundary_for_influx(0.5)).abs() < TOL_UM, "{wt:?}");
    let ko = screen::families(&model, true, false, false);
    let s = screen::run_screen(&model, &ko, true).unwrap();
    assert_eq!(s.shifts[0][0].status, "gene lost everywhere", "{:?}", s.shifts[0]);
}
