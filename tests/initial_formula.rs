//! Initial levels as a formula of the position: evaluated at every
//! nucleus's centre, checked against the same values written out, and run.

use anlage::model::{Initial, Model};
use approx::assert_relative_eq;

use crate::common::{parse, run};

/// Pure diffusion on a sealed 24 × 16 sheet (spacing 1 µm) from `start`,
/// given either as a formula or as the written-out values.
fn sheet(start: &str) -> String {
    format!(
        "[tissue]\nnuclei = [24, 16]\nspacing_um = 1.0\nedges = \"sealed\"\n\
         [clock]\nuntil_min = 10.0\nstep_min = 0.01\nsnapshot_every_min = 10.0\n\
         [[gene]]\nname = \"solute\"\nproduction = 0.0\ndecay = 0.0\ndiffusion = 1.0\n{start}\n"
    )
}

fn profile(m: &Model) -> Vec<f64> {
    match &m.genes[0].initial {
        Initial::Profile(p) => p.clone(),
        Initial::Uniform(v) => vec![*v; m.grid.len()],
    }
}

/// `1 + 0.5·cos(2πx/L)·cos(πy/W)` at the centres x = (ix + ½)h, y = (iy + ½)h
/// is the (2, 1) cosine mode of the sealed sheet, row by row, to rounding;
/// run, it decays at D·(λ₂ + λ₁), λ_p = 2 − 2cos(πp/n) (Crank 1975, The
/// Mathematics of Diffusion, ch. 4; the discrete eigenvalues: Strang 1999,
/// SIAM Review 41:135), as the written-out start does in `analytic.rs`.
#[test]
fn a_cosine_formula_is_the_sheet_mode_and_decays_at_its_rate() {
    let model = parse(&sheet("initial_formula = \"1 + 0.5 * cos(2 * pi * x / L) * cos(pi * y / W)\""));
    let (nx, ny) = (24usize, 16usize);
    let pi = std::f64::consts::PI;
    let mode = |k: usize| {
        let (ix, iy) = ((k % nx) as f64, (k / nx) as f64);
        (2.0 * pi * (ix + 0.5) / nx as f64).cos() * (pi * (iy + 0.5) / ny as f64).cos()
    };
    let got = profile(&model);
    for (k, v) in got.iter().enumerate() {
        assert_relative_eq!(*v, 1.0 + 0.5 * mode(k), max_relative = 1e-14);
    }
    let fin = run(&model).recording.final_state().row(0).to_vec();
    let norm: f64 = (0..nx * ny).map(|k| mode(k).powi(2)).sum();
    let amp = (0..nx * ny).map(|k| (fin[k] - 1.0) * mode(k)).sum::<f64>() / norm;
    let rate = -(amp / 0.5).ln() / 10.0;
    let lam = |p: f64, n: f64| 2.0 - 2.0 * (pi * p / n).cos();
    assert_relative_eq!(rate, lam(2.0, 24.0) + lam(1.0, 16.0), max_relative = 1e-5);
}

/// A step start: 2 where x ≤ 0.3·L, else 0, exactly, with a named constant.
#[test]
fn a_step_formula_with_a_constant() {
    let text = sheet("initial_formula = \"high * step(0.3 * L - x)\"")
        .replace("[[gene]]", "[circuit]\nkinetics = \"hill\"\nparameters = { high = 2.0 }\n[[gene]]");
    let model = parse(&text);
    let got = profile(&model);
    for (k, v) in got.iter().enumerate() {
        let x = (k % 24) as f64 + 0.5;
        assert_eq!(*v, if x <= 0.3 * 24.0 { 2.0 } else { 0.0 }, "nucleus {k}");
    }
}

/// Refused, naming the field and what to do: a formula below zero (with the
/// nucleus and its position), an unknown name (with the names there are),
/// a formula given with `initial`; and a constant that sets a start cannot
/// be varied, since the start would not follow.
#[test]
fn bad_formulas_are_refused() {
    let fails = |start: &str, want: &[&str]| {
        let err = Model::from_toml(&sheet(start), std::path::Path::new("f.toml")).unwrap_err().to_string();
        for w in want {
            assert!(err.contains(w), "`{start}`: {err}");
        }
    };
    fails("initial_formula = \"x - 3\"", &["initial_formula", "nucleus 0", "x = 0.5 µm", "max(0"]);
    fails("initial_formula = \"z * 2\"", &["unknown name `z`", "x, y, L, W, pi"]);
    fails("initial = 1.0\ninitial_formula = \"1\"", &["initial", "together with `initial_formula`"]);
    let text = sheet("initial_formula = \"k\"\nrate = \"k - solute\"")
        .replace("[[gene]]", "[circuit]\nkinetics = \"hill\"\nparameters = { k = 1.5 }\n[[gene]]");
    let model = parse(&text);
    let p = model.parse_param("k").unwrap();
    let why = model.no_effect(p).expect("refused");
    assert!(why.contains("initial levels") && why.contains("solute"), "{why}");
}

/// `pi` is a name in rate expressions too, as in initial formulas.
#[test]
fn pi_is_known_in_rates() {
    let text = sheet("rate = \"0.1 * (1 + cos(2 * pi * t / 5)) - solute\"")
        .replace("[[gene]]", "[circuit]\nkinetics = \"rates\"\n[[gene]]");
    let model = parse(&text);
    assert!(model.genes[0].rate.as_deref().unwrap().contains("pi"));
}

/// `check` says how each gene starts: the formula with the range it gives,
/// a uniform level, and the noise on top.
#[test]
fn check_describes_the_start() {
    let dir = crate::common::temp_dir("check-start");
    let path = dir.join("m.toml");
    let text = sheet("initial_formula = \"2 * step(0.3 * L - x)\"\ninitial_noise = 0.1");
    std::fs::write(&path, text).unwrap();
    let o = crate::common::anlage(&["check", path.to_str().unwrap()]);
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(out.contains("starts at 2 * step(0.3 * L - x) (0.0000–2.0000) ± 0.1"), "{out}");
}
