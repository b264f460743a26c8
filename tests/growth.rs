//! Growing and dividing rows ([growth]), against closed forms: dilution,
//! conservation of amount across divisions and refinements, the decay of a
//! cosine mode on a growing row, production paused during mitosis, and the
//! positions of a gradient read on a stretching row.

use anlage::growth::{EventKind, grow};
use anlage::model::Model;

fn model(text: &str) -> Model {
    Model::from_toml(text, "growth.toml".as_ref()).unwrap()
}

/// A uniform level with no production is diluted as e^{−g t} (the dilution
/// term −g·u of uniform growth: Crampin, Gaffney & Maini 1999, Bull. Math.
/// Biol. 61:1093, eq. 2.5, from memory), through two divisions, and the
/// row's length is L₀·e^{g t} at every snapshot.
#[test]
fn a_uniform_level_is_diluted_as_exp_minus_gt() {
    let m = model(
        r#"
[tissue]
nuclei = [30]
spacing_um = 4.0
[clock]
until_min = 60.0
tolerance = 1e-10
snapshot_every_min = 5.0
[growth]
rate_per_min = 0.02
divide_at_min = [20.0, 40.0]
[[gene]]
name = "ember"
production = 0.0
decay = 0.0
initial = 2.0
"#,
    );
    let run = grow(&m, false).unwrap();
    assert_eq!(run.frames.len(), 13);
    let divisions: Vec<f64> = run.events.iter().filter(|e| e.kind == EventKind::Division).map(|e| e.time_min).collect();
    assert_eq!(divisions, [20.0, 40.0]);
    for f in &run.frames {
        let expected = 2.0 * (-0.02 * f.time_min).exp();
        for &v in &f.state {
            approx::assert_relative_eq!(v, expected, max_relative = 1e-6);
        }
        approx::assert_relative_eq!(f.grid.length_um(), 120.0 * (0.02 * f.time_min).exp(), max_relative = 1e-12);
    }
    assert_eq!(run.frames.last().unwrap().grid.nx, 120);
}

/// With diffusion only (no production, no decay) and sealed ends, the
/// amount ∫u dx of every gene is constant on a growing row: dilution
/// (−g·u) exactly balances the stretching of dx (ibid.). Checked through
/// divisions (daughters inherit) and, on a second row, through refinements
/// (limited linear split); both keep each mother's amount Σ u·h. A wrong
/// dilution rate or a division that made or lost material would change the
/// amount by a factor, not by the integration error allowed here.
#[test]
fn amount_is_conserved_through_growth_divisions_and_refinements() {
    for (divisions, refinements) in [("divide_at_min = [15.0, 35.0]", 0), ("", 2)] {
        let m = model(&format!(
            r#"
[tissue]
nuclei = [40]
spacing_um = 3.0
[clock]
until_min = 60.0
tolerance = 1e-10
snapshot_every_min = 2.5
[growth]
rate_per_min = 0.03
{divisions}
[[gene]]
name = "drift"
production = 0.0
decay = 0.0
diffusion = 4.0
initial_formula = "1 + cos(pi * x / L) + 2 * step(0.3 * L - x)"
[[gene]]
name = "still"
production = 0.0
decay = 0.0
initial_formula = "x / L"
"#
        ));
        let run = grow(&m, false).unwrap();
        let refined = run.events.iter().filter(|e| e.kind == EventKind::Refinement).count();
        assert_eq!(refined, refinements, "{divisions}");
        let start = run.amounts(0);
        for s in 0..run.frames.len() {
            for (a, a0) in run.amounts(s).iter().zip(&start) {
                // Time-integration error only: about the number of steps
                // times the tolerance (2·10⁻⁷ at the end, checked).
                approx::assert_relative_eq!(*a, *a0, max_relative = 1e-6);
            }
        }
        // The gene that does not diffuse keeps its material profile, only
        // diluted: after divisions each nucleus has its first ancestor's
        // level (a staircase); after refinements, the ramp itself (a
        // limited linear split reproduces a straight line away from the ends).
        let last = run.frames.last().unwrap();
        let dilution = (-0.03 * last.time_min).exp();
        let n = last.grid.nx;
        let doublings = (n / 40).trailing_zeros();
        for i in [n / 10, n / 2, 9 * n / 10] {
            let x_frac =
                if refinements == 0 { ((i >> doublings) as f64 + 0.5) / 40.0 } else { (i as f64 + 0.5) / n as f64 };
            approx::assert_relative_eq!(last.state[[1, i]], x_frac * dilution, max_relative = 1e-6);
        }
    }
}

/// A cosine mode on a growing row: in material coordinates ∂u/∂t =
/// D·e^{−2gt}·∂²u/∂ξ² − g·u (ibid.), so on n nuclei of starting spacing h₀
/// the mode cos(π(i+½)/n) decays as
/// ln A(t)/A₀ = −g·t − D·μ·(1 − e^{−2gt})/(2g), with μ = (4/h₀²)·sin²(π/2n)
/// the discrete Laplacian's eigenvalue (derived here from the equation).
/// Before the first refinement (spacing below 2·h₀).
#[test]
fn a_cosine_mode_decays_as_on_a_growing_domain() {
    let (n, h0, d, g) = (32usize, 2.0f64, 3.0f64, 0.01f64);
    let m = model(&format!(
        r#"
[tissue]
nuclei = [{n}]
spacing_um = {h0}
[clock]
until_min = 60.0
tolerance = 1e-9
snapshot_every_min = 10.0
[growth]
rate_per_min = {g}
[[gene]]
name = "wave"
production = 0.0
decay = 0.0
diffusion = {d}
initial_formula = "1 + cos(pi * x / L)"
"#
    ));
    let run = grow(&m, false).unwrap();
    assert!(run.events.is_empty(), "no refinement before the spacing doubles");
    let mu = 4.0 / (h0 * h0) * (std::f64::consts::PI / (2.0 * n as f64)).sin().powi(2);
    for f in &run.frames {
        let t = f.time_min;
        let amplitude: f64 =
            (0..n).map(|i| f.state[[0, i]] * (std::f64::consts::PI * (i as f64 + 0.5) / n as f64).cos()).sum::<f64>()
                * 2.0
                / n as f64;
        let expected = (-g * t - d * mu * (1.0 - (-2.0 * g * t).exp()) / (2.0 * g)).exp();
        approx::assert_relative_eq!(amplitude, expected, max_relative = 2e-5);
        let mean = f.state.row(0).mean().unwrap();
        approx::assert_relative_eq!(mean, (-g * t).exp(), max_relative = 1e-6);
    }
}

/// Production pauses in the mitosis window [t_d − w, t_d): a gene made at
/// p and lost at d rises as (p/d)(1 − e^{−d t}) and then decays as
/// e^{−d(t − t_d + w)} in the window (the linear ODE's solution), and
/// resumes after the division.
#[test]
fn production_pauses_during_mitosis() {
    let m = model(
        r#"
[tissue]
nuclei = [8]
spacing_um = 5.0
[clock]
until_min = 30.0
tolerance = 1e-9
snapshot_every_min = 1.0
[growth]
divide_at_min = [20.0]
mitosis_min = 4.0
[[gene]]
name = "pulse"
production = 3.0
decay = 0.2
"#,
    );
    let run = grow(&m, false).unwrap();
    let (p, d) = (3.0, 0.2);
    let at_16 = p / d * (1.0 - (-d * 16.0f64).exp());
    let at_20 = at_16 * (-d * 4.0f64).exp();
    for f in &run.frames {
        let t = f.time_min;
        let expected = if t <= 16.0 {
            p / d * (1.0 - (-d * t).exp())
        } else if t <= 20.0 {
            at_16 * (-d * (t - 16.0)).exp()
        } else {
            p / d + (at_20 - p / d) * (-d * (t - 20.0)).exp()
        };
        approx::assert_relative_eq!(f.state[[0, 0]], expected, max_relative = 1e-6);
        assert_eq!(f.mitosis, t >= 16.0 && t < 20.0, "t = {t}");
        assert_eq!(f.grid.nx, if t < 20.0 + 1e-9 { 8 } else { 16 }, "t = {t}");
    }
}

/// A gradient of fixed decay length stays put in µm while the row grows
/// under it: a gene that decays fast and is made wherever the gradient is
/// above its threshold keeps its boundary at x* = λ·ln(peak/K) µm from the
/// source, so at % of the length it moves towards the source as e^{−g t}.
/// The boundary lags by about v/d = g·x*/d (the nuclei move at g·x through
/// a profile that relaxes at rate d; estimate derived here).
#[test]
fn a_fixed_gradient_is_read_at_the_stretched_positions() {
    let m = model(
        r#"
[tissue]
nuclei = [100]
spacing_um = 2.0
[clock]
until_min = 60.0
tolerance = 1e-8
snapshot_every_min = 20.0
[growth]
rate_per_min = 0.01
[[gradient]]
name = "beacon"
shape = "exponential"
from = "left"
peak = 10.0
decay_length_um = 40.0
[[gene]]
name = "reader"
production = 2.0
decay = 2.0
[circuit]
kinetics = "hill"
[[circuit.link]]
from = "beacon"
to = "reader"
sign = "+"
threshold = 2.0
hill = 8.0
"#,
    );
    let run = grow(&m, false).unwrap();
    let (boundaries, _) = run.readouts(&m).unwrap();
    let x_star = 40.0 * (10.0f64 / 2.0).ln();
    for t in [20.0, 40.0, 60.0] {
        let b: Vec<_> = boundaries.iter().filter(|b| b.time_min == t).collect();
        assert_eq!(b.len(), 1, "one boundary at t = {t}");
        let lag = 0.01 * x_star / (2.0 + 0.01);
        approx::assert_abs_diff_eq!(b[0].position_um, x_star, epsilon = 2.0 * lag + 0.2);
        let length = 200.0 * (0.01 * t).exp();
        approx::assert_relative_eq!(b[0].position_pct, 100.0 * b[0].position_um / length, max_relative = 1e-12);
    }
}

/// Growth is refused where it would be wrong or ill-defined, each with the
/// field named: sheets, fixed steps, rate expressions with a mitosis
/// window, divisions outside the run; and verbs that run rows of fixed size
/// refuse a growing row instead of ignoring its growth.
#[test]
fn growth_is_refused_where_it_does_not_apply() {
    let base = |tissue: &str, clock: &str, growth: &str, gene: &str| {
        format!(
            "[tissue]\n{tissue}\nspacing_um = 2.0\n[clock]\nuntil_min = 10.0\n{clock}\nsnapshot_every_min = 1.0\n\
             [growth]\n{growth}\n[[gene]]\nname = \"solo\"\n{gene}\n"
        )
    };
    let ok_gene = "production = 1.0\ndecay = 1.0";
    let cases = [
        (base("nuclei = [8, 8]", "tolerance = 1e-6", "rate_per_min = 0.01", ok_gene), "growth.rate_per_min", "rows"),
        (base("nuclei = [8]", "step_min = 0.1", "rate_per_min = 0.01", ok_gene), "growth.rate_per_min", "tolerance"),
        (
            base("nuclei = [8]", "tolerance = 1e-6", "divide_at_min = [5.0]\nmitosis_min = 1.0", "rate = \"1 - solo\""),
            "growth.mitosis_min",
            "rate expression",
        ),
        (base("nuclei = [8]", "tolerance = 1e-6", "divide_at_min = [12.0]", ok_gene), "growth.divide_at_min", "inside"),
        (base("nuclei = [8]", "tolerance = 1e-6", "", ok_gene), "growth.rate_per_min", "nothing grows"),
        (base("nuclei = [8]", "tolerance = 1e-6", "rate_per_min = 2.0", ok_gene), "growth.rate_per_min", "fold"),
        (
            base("nuclei = [8]", "tolerance = 1e-6", "rate_per_min = 0.01\nmitosis_min = 2.0", ok_gene),
            "growth.mitosis_min",
            "no division",
        ),
        (
            base(
                "nuclei = [8]",
                "tolerance = 1e-6",
                "rate_per_min = 0.01\nrefine = true",
                "rate = \"neighbours(solo) - solo\"",
            ),
            "growth.refine",
            "neighbours",
        ),
        (
            base("nuclei = [2000000]", "tolerance = 1e-6", "divide_at_min = [1, 2, 3, 4, 5, 6, 7, 8, 9]", ok_gene),
            "growth.divide_at_min",
            "GiB",
        ),
    ];
    for (text, field, words) in cases {
        let e = Model::from_toml(&text, "g.toml".as_ref()).unwrap_err().to_string();
        assert!(e.contains(field) && e.contains(words), "{e}");
        assert!(e.starts_with("g.toml:"), "{e}");
    }
    let m = model(&base("nuclei = [8]", "tolerance = 1e-6", "rate_per_min = 0.01", ok_gene));
    let e = anlage::simulate(&m, &anlage::RunOptions::default()).unwrap_err();
    assert!(e.to_string().contains("the model grows"), "{e}");
}

/// The phase-space verbs ask their question of the growing row as it stands
/// at the time asked: the nucleus at x % of the length sits at x %·L₀·e^{g t}
/// µm, where the gradient is read, and its levels are diluted. For a gene
/// made at the gradient's level and lost at rate d, the fixed point is
/// u* = P·e^{−x/λ}/(d + g) along the whole branch in the peak P (the
/// linear equation's steady state).
#[test]
fn a_bifurcation_diagram_reads_the_row_as_it_stands_then() {
    let m = model(
        r#"
[tissue]
nuclei = [50]
spacing_um = 4.0
[clock]
until_min = 100.0
tolerance = 1e-6
snapshot_every_min = 10.0
[growth]
rate_per_min = 0.005
[[gradient]]
name = "beacon"
shape = "exponential"
from = "left"
peak = 3.0
decay_length_um = 50.0
[[gene]]
name = "gauge"
rate = "beacon - 0.2 * gauge"
[circuit]
kinetics = "rates"
"#,
    );
    let param = m.parse_param("beacon.peak").unwrap();
    let request = anlage::phase::DiagramRequest { param, from: 1.0, to: 5.0, x_pct: 30.0, t_min: 80.0 };
    let d = anlage::phase::diagram(&m, &request).unwrap();
    let x = 0.3 * 200.0 * (0.005f64 * 80.0).exp();
    let mut checked = 0;
    for p in d.branches.iter().flat_map(|b| &b.points) {
        approx::assert_relative_eq!(p.x[0], p.s * (-x / 50.0).exp() / (0.2 + 0.005), max_relative = 1e-8);
        checked += 1;
    }
    assert!(checked > 10, "{checked} points");
}

/// `anlage run` on a growing row writes its own set of outputs (and no
/// `states.npy`, since its snapshots differ in size); verbs that read such
/// folders or simulate rows of fixed size refuse it with a message and a
/// failing exit code instead of answering for a row that does not grow.
#[test]
fn the_command_line_runs_a_growing_row_and_refuses_it_elsewhere() {
    use crate::common::{anlage, root, temp_dir};
    let out = temp_dir("cycles_cli");
    let model = root().join("patterns/cycles.toml");
    let o = anlage(&["run", model.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("from 24 to 192 nuclei") && text.contains("model prediction"), "{text}");
    for name in ["boundaries.csv", "growth_frames.csv", "growth_events.csv", "growth_profiles.csv", "kymograph.png"] {
        assert!(out.join(name).is_file(), "{name} missing");
    }
    assert!(!out.join("states.npy").exists());
    let summary: serde_json::Value = serde_json::from_slice(&std::fs::read(out.join("summary.json")).unwrap()).unwrap();
    assert_eq!(summary["kind"], "growing row");
    assert_eq!(summary["nuclei"][1], 192);
    let o = anlage(&["render", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("growing row"));
    let sweep_out = temp_dir("cycles_sweep");
    let o = anlage(&[
        "sweep",
        model.to_str().unwrap(),
        "--axis",
        "crest.production=0.2:1:3",
        "-o",
        sweep_out.join("s").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2), "the input's fault");
    assert!(String::from_utf8_lossy(&o.stderr).contains("`sweep`: the model grows"));
    assert!(!sweep_out.join("s").exists(), "nothing written");
    // A run of a fixed row into the same folder removes the growing row's tables.
    let ribbon = root().join("patterns/ribbon.toml");
    assert!(anlage(&["run", ribbon.to_str().unwrap(), "-q", "-o", out.to_str().unwrap()]).status.success());
    assert!(!out.join("growth_frames.csv").exists() && out.join("states.npy").is_file());
}

/// A circuit that reads neighbours is a lattice of cells: its grid is not
/// refined as the row grows (new cells would change the pattern's period),
/// so the cells grow instead and the count changes only at divisions.
#[test]
fn contact_circuits_keep_their_cells_as_the_row_grows() {
    let m = model(
        r#"
[tissue]
nuclei = [16]
spacing_um = 8.0
[clock]
until_min = 200.0
tolerance = 1e-6
snapshot_every_min = 50.0
[growth]
rate_per_min = 0.01
[[gene]]
name = "spark"
rate = "1 / (1 + (neighbours(spark) / 0.2)^4) - 0.5 * spark"
initial_formula = "1.5 * step(cos(pi * (x - 4) / 8))"
[circuit]
kinetics = "rates"
"#,
    );
    let run = grow(&m, false).unwrap();
    assert!(run.events.is_empty(), "{:?}", run.events);
    let last = run.frames.last().unwrap();
    assert_eq!(last.grid.nx, 16);
    approx::assert_relative_eq!(last.grid.spacing_um, 8.0 * 2f64.exp(), max_relative = 1e-12);
    let high = last.state.row(0).iter().filter(|&&v| v > 1.0).count();
    assert_eq!(high, 8, "alternating cells stay alternating: {:?}", last.state.row(0));
}

/// Inside a mitosis window the phase-space verbs see the circuit as it is
/// then: production paused, so a gene made at p and lost at d (plus
/// dilution g) rests at 0 instead of p/(d + g) (the linear equation's
/// steady state).
#[test]
fn a_diagram_inside_mitosis_sees_production_paused() {
    let m = model(
        r#"
[tissue]
nuclei = [10]
spacing_um = 4.0
[clock]
until_min = 60.0
tolerance = 1e-6
snapshot_every_min = 10.0
[growth]
rate_per_min = 0.01
divide_at_min = [30.0]
mitosis_min = 5.0
[[gene]]
name = "pulse"
production = 2.0
decay = 0.5
"#,
    );
    let param = m.parse_param("pulse.decay").unwrap();
    for (t, paused) in [(20.0, false), (27.0, true), (31.0, false)] {
        let request = anlage::phase::DiagramRequest { param, from: 0.4, to: 0.6, x_pct: 50.0, t_min: t };
        let d = anlage::phase::diagram(&m, &request).unwrap();
        let points: Vec<_> = d.branches.iter().flat_map(|b| &b.points).collect();
        assert!(points.len() > 5);
        for p in points {
            let want = if paused { 0.0 } else { 2.0 / (p.s + 0.01) };
            approx::assert_abs_diff_eq!(p.x[0], want, epsilon = 1e-8);
        }
    }
}
