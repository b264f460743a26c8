//! Edges as modellers write them: an influx (a source outside the tissue)
//! or a level held at an edge, per gene, against the steady gradients of a
//! diffusing, decaying morphogen (Crick 1970, Nature 225:420–422: a source
//! of flux j at x = 0 and first-order decay k give C(x) = (jλ/D)e^{−x/λ},
//! λ = √(D/k), on a long domain; on a row of length L sealed at the far
//! end, (jλ/D)·cosh((L−x)/λ)/sinh(L/λ). A level C₀ held at x = 0 gives
//! C₀·cosh((L−x)/λ)/cosh(L/λ): the textbook solution of D C″ = kC with
//! these ends, derived here). Edges lie half a spacing beyond the outer
//! nuclei; x is measured from the edge.

use anlage::model::Scheme;

use crate::common::{parse, run, with_scheme, with_step};

const D: f64 = 40.0;
const K: f64 = 0.1;
const NUCLEI: usize = 200;
const H: f64 = 1.0;

/// A row of one diffusing, decaying gene with `edge` lines in its table.
fn row(edge: &str, until_min: f64) -> String {
    format!(
        r#"title = "edges"
[tissue]
nuclei = [{NUCLEI}]
spacing_um = {H}
[clock]
until_min = {until_min}
tolerance = 1e-9
snapshot_every_min = {until_min}
[circuit]
kinetics = "rates"
[[gene]]
name = "tallow"
diffusion = {D}
rate = "-{K} * tallow"
production = 0.25
decay = {K}
{edge}
"#
    )
}

fn lambda() -> f64 {
    (D / K).sqrt()
}

/// Largest relative difference from `want(x)` over the nuclei (x in µm
/// from the left edge), as a fraction of the grid's error there. The
/// discrete decay per spacing differs from e^{−h/λ} by (h/λ)³/24 in the
/// exponent (Taylor expansion of ρ + 1/ρ − 2 = (h/λ)², derived here), so
/// the relative error grows as (x/λ)(h/λ)²/24; at the edge, a held level
/// is the mean of the nucleus and its ghost, off by (h/2)²C″/2, a relative
/// (h/λ)²/8 (both derived here). Allowed: 1.5 times their sum (a result
/// below 1 passes; measured 0.5 to 0.66).
fn worst(levels: ndarray::ArrayView1<f64>, want: impl Fn(f64) -> f64) -> f64 {
    let lam = lambda();
    levels
        .iter()
        .enumerate()
        .map(|(i, &u)| {
            let x = (i as f64 + 0.5) * H;
            let allowed = 1.5 * ((x / lam) * (H / lam).powi(2) / 24.0 + (H / lam).powi(2) / 8.0);
            (u - want(x)).abs() / want(x) / allowed
        })
        .fold(0.0, f64::max)
}

/// Influx j at the left edge: the steady state is Crick's gradient, within
/// the grid's error (see [`worst`]), for every scheme; from the right edge
/// it is the mirror image.
#[test]
fn an_influx_makes_the_source_gradient() {
    let j = 0.5;
    let l = NUCLEI as f64 * H;
    let lam = lambda();
    let want = |x: f64| j * lam / D * ((l - x) / lam).cosh() / (l / lam).sinh();
    let model = parse(&row(&format!("edge.left = {{ influx = {j} }}"), 300.0));
    for scheme in Scheme::ALL {
        let state = run(&with_scheme(&model, scheme)).recording.final_state().clone();
        let err = worst(state.row(0), want);
        assert!(err < 1.0, "{scheme:?}: worst error {err:.2} of the grid's");
    }
    // The long-domain form at the source end (L = 10 λ: e^{−20} apart).
    let state = run(&model).recording.final_state().clone();
    let near = (j * lam / D) * (-0.5 * H / lam).exp();
    assert!((state[[0, 0]] - near).abs() / near < 1e-3, "{} against {near}", state[[0, 0]]);
    let mirrored =
        run(&parse(&row(&format!("edge.right = {{ influx = {j} }}"), 300.0))).recording.final_state().clone();
    for i in 0..NUCLEI {
        let (a, b) = (state[[0, i]], mirrored[[0, NUCLEI - 1 - i]]);
        assert!((a - b).abs() <= 1e-9 * a.abs(), "nucleus {i}: {a} and {b}");
    }
}

/// A level held at the left edge: C₀·cosh((L−x)/λ)/cosh(L/λ), for every
/// scheme and with fixed steps.
#[test]
fn a_held_level_makes_the_cosh_profile() {
    let c0 = 2.0;
    let l = NUCLEI as f64 * H;
    let lam = lambda();
    let want = |x: f64| c0 * ((l - x) / lam).cosh() / (l / lam).cosh();
    let model = parse(&row(&format!("edge.left = {{ level = {c0} }}"), 300.0));
    for scheme in Scheme::ALL {
        let state = run(&with_scheme(&model, scheme)).recording.final_state().clone();
        let err = worst(state.row(0), want);
        assert!(err < 1.0, "{scheme:?}: worst error {err:.2} of the grid's");
    }
    let state = run(&with_step(&model, 0.5)).recording.final_state().clone();
    let err = worst(state.row(0), want);
    assert!(err < 1.0, "fixed steps: worst error {err:.2} of the grid's");
}

/// Both ends held at different levels with no decay: the steady state is
/// the straight line between them (D C″ = 0), to round-off once settled.
#[test]
fn two_held_levels_make_a_straight_line() {
    let text = row("edge.left = { level = 3.0 }\nedge.right = { level = 1.0 }", 3000.0)
        .replace(&format!("rate = \"-{K} * tallow\""), "rate = \"0 * tallow\"");
    let state = run(&parse(&text)).recording.final_state().clone();
    let l = NUCLEI as f64 * H;
    for (i, &u) in state.row(0).iter().enumerate() {
        let x = (i as f64 + 0.5) * H;
        let want = 3.0 + (1.0 - 3.0) * x / l;
        assert!((u - want).abs() < 1e-3, "nucleus {i}: {u} against {want}");
    }
}

/// Nothing is lost or made but what enters: with no decay, the amount on a
/// row grows by j per minute and on a sheet by j times the edge's length.
#[test]
fn an_influx_adds_exactly_its_amount() {
    let j = 0.3;
    let minutes = 50.0;
    let text = row(&format!("edge.left = {{ influx = {j} }}"), minutes)
        .replace(&format!("rate = \"-{K} * tallow\""), "rate = \"0 * tallow\"");
    let state = run(&parse(&text)).recording.final_state().clone();
    let amount: f64 = state.row(0).sum() * H;
    assert!((amount - j * minutes).abs() < 1e-9 * j * minutes, "{amount} against {}", j * minutes);
    let sheet = text
        .replace(&format!("nuclei = [{NUCLEI}]"), "nuclei = [12, 9]")
        .replace("spacing_um = 1", "spacing_um = 2.5")
        .replace("edge.left", "edge.bottom");
    let state = run(&parse(&sheet)).recording.final_state().clone();
    let amount: f64 = state.row(0).sum() * 2.5 * 2.5;
    let want = j * (12.0 * 2.5) * minutes;
    assert!((amount - want).abs() < 1e-9 * want, "{amount} against {want}");
    // Uniform along the edge, decreasing away from it.
    let s = state.row(0);
    assert!((s[0] - s[11]).abs() < 1e-12 && s[0] > s[12 * 8], "{} {} {}", s[0], s[11], s[12 * 8]);
}

/// Bad edge rules are refused with the gene's field, its line and a fix.
#[test]
fn bad_edge_rules_are_refused() {
    let cases = [
        ("edge.left = { influx = 1.0, level = 2.0 }", "", "both an influx and a level"),
        ("edge.left = { }", "", "neither an influx nor a level"),
        ("edge.left = { influx = -1.0 }", "", "finite number >= 0"),
        ("edge.top = { influx = 1.0 }", "", "only a left and a right edge"),
        ("edge.left = { influx = 1.0 }", "periodic", "periodic"),
        ("edge.left = { level = 1.0 }", "sheet", "rows only"),
        ("edge.left = { influx = 1.0 }", "still", "does not diffuse"),
        ("edge.left = { flux = 1.0 }", "", "flux"),
    ];
    for (edge, change, want) in cases {
        let mut text = row(edge, 10.0);
        match change {
            "periodic" => text = text.replace("spacing_um = 1\n", "spacing_um = 1\nedges = \"periodic\"\n"),
            "sheet" => text = text.replace(&format!("nuclei = [{NUCLEI}]"), "nuclei = [10, 10]"),
            "still" => text = text.replace(&format!("diffusion = {D}"), "diffusion = 0"),
            _ => {}
        }
        assert!(text.contains(edge));
        let err = anlage::model::Model::from_toml(&text, std::path::Path::new("m.toml")).unwrap_err().to_string();
        assert!(err.contains(want), "{edge} ({change}): {err}");
        assert!(err.contains("m.toml:"), "{edge}: names the file and line: {err}");
        if want != "flux" {
            assert!(err.contains("edge."), "{edge}: names the field: {err}");
        }
    }
}
