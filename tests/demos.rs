//! The bundled demos do what their files say.

use anlage::readout::boundaries_at;

use crate::common::{load, run};

/// Ribbon: exactly one boundary, where amber falls and cobalt rises at the same
/// place, sharp: the half-maximum crossing narrower than 3 nuclei
/// (width = max/|slope|; the criterion is the issue's, common practice, no source).
#[test]
fn ribbon_forms_one_sharp_boundary() {
    let model = load("patterns/ribbon.toml");
    let rec = run(&model).recording;
    let last = rec.times.len() - 1;
    let b = boundaries_at(&rec, last).unwrap();
    let amber: Vec<_> = b.iter().filter(|b| b.gene == "amber").collect();
    let cobalt: Vec<_> = b.iter().filter(|b| b.gene == "cobalt").collect();
    assert_eq!((amber.len(), cobalt.len()), (1, 1), "{b:#?}");
    assert_eq!((amber[0].direction, cobalt[0].direction), ("falling", "rising"));
    let h = model.grid.spacing_um;
    assert!((amber[0].position_um - cobalt[0].position_um).abs() < h);
    for x in [amber[0], cobalt[0]] {
        assert!(x.width_um < 3.0 * h, "{x:?}");
        assert!((20.0..80.0).contains(&x.position_pct), "{x:?}");
    }
}

/// Band: teal forms one stripe (a rising and a falling boundary) inside the row.
#[test]
fn band_forms_one_central_stripe() {
    let rec = run(&load("patterns/band.toml")).recording;
    let b = boundaries_at(&rec, rec.times.len() - 1).unwrap();
    let teal: Vec<_> = b.iter().filter(|b| b.gene == "teal").collect();
    assert_eq!(teal.len(), 2, "{b:#?}");
    assert_eq!((teal[0].direction, teal[1].direction), ("rising", "falling"));
    assert!(teal[0].position_pct > 20.0 && teal[1].position_pct < 80.0);
}

/// Sheet: a disc of amber around the central source in a field of cobalt,
/// with a circular boundary: every nucleus within 0.8 R of the centre is amber,
/// every nucleus beyond 1.2 R cobalt, R the radius where amber's level along the
/// middle row crosses half maximum; read along the axis, amber has one rise and one fall.
#[test]
fn sheet_forms_a_disc_around_the_source() {
    let model = load("patterns/sheet.toml");
    let rec = run(&model).recording;
    let fin = rec.final_state();
    let g = model.grid;
    let mid = g.ny / 2;
    let row: Vec<f64> = (0..g.nx).map(|ix| fin[[0, mid * g.nx + ix]]).collect();
    let crossings = anlage::readout::profile_boundaries(&row, g.spacing_um, false);
    assert_eq!(crossings.len(), 2, "{crossings:?}");
    let radius = (crossings[1].position_um - crossings[0].position_um) / 2.0;
    let (cx, cy) = (g.length_um() / 2.0, g.height_um() / 2.0);
    for iy in 0..g.ny {
        for ix in 0..g.nx {
            let r = (g.x_um(ix) - cx).hypot(g.y_um(iy) - cy);
            let (amber, cobalt) = (fin[[0, iy * g.nx + ix]], fin[[1, iy * g.nx + ix]]);
            if r < 0.8 * radius {
                assert!(amber > cobalt, "({ix}, {iy}) at r = {r:.1} µm");
            } else if r > 1.2 * radius {
                assert!(cobalt > amber, "({ix}, {iy}) at r = {r:.1} µm");
            }
        }
    }
    let b = boundaries_at(&rec, rec.times.len() - 1).unwrap();
    let amber: Vec<_> = b.iter().filter(|b| b.gene == "amber").map(|b| b.direction).collect();
    assert_eq!(amber, ["rising", "falling"]);
}

/// Source: the tissue makes its own gradient. `ember` is made at rate p in
/// x < a, diffuses (D) and decays (d); at steady state on a long sealed row
/// it is `B·e^(−(x−a)/λ)` beyond the source, λ = √(D/d), with
/// `B = (p/d)/(1 + coth(a/λ))` (matching value and flux at x = a of the
/// sealed-end solution `p/d + C·cosh(x/λ)` inside; the linear ODE of
/// Crank 1975, The Mathematics of Diffusion, ch. 14 on diffusion with
/// removal, solved here, no source for the matched form). `fern`'s boundary
/// is where ember = K: `x* = a + λ·ln(B/K)`. The demo's boundary lies there
/// to half a µm (grid 5 µm; the discrete decay length differs by h²/12λ²).
#[test]
fn source_makes_its_own_gradient() {
    let model = load("patterns/source.toml");
    let rec = run(&model).recording;
    let b = boundaries_at(&rec, rec.times.len() - 1).unwrap();
    let fern: Vec<_> = b.iter().filter(|b| b.gene == "fern").collect();
    assert_eq!(fern.len(), 1, "{b:#?}");
    let (p, d, big_d, a, k) = (1.0f64, 0.02f64, 100.0f64, 30.0f64, 3.0f64);
    let lambda = (big_d / d).sqrt();
    let coth = 1.0 / (a / lambda).tanh();
    let big_b = (p / d) / (1.0 + coth);
    let want = a + lambda * (big_b / k).ln();
    assert!((fern[0].position_um - want).abs() < 0.5, "fern at {} µm, analytic {want:.2} µm", fern[0].position_um);
}

/// The cycles demo: three divisions take the row from 24 to 192 nuclei
/// while it grows as L₀·e^{g t}, and trough's boundary refines from a broad
/// ramp (wider than 100 µm at 20 min) to a sharp boundary (narrower than
/// 20 µm, about two final spacings, at the end). Invented scenario.
#[test]
fn cycles_refine_a_broad_domain_into_a_sharp_boundary() {
    let model = load("patterns/cycles.toml");
    let run = anlage::growth::grow(&model, true).unwrap();
    let last = run.frames.last().unwrap();
    assert_eq!(last.grid.nx, 192);
    approx::assert_relative_eq!(last.grid.length_um(), 192.0 * (0.004f64 * 160.0).exp(), max_relative = 1e-12);
    let (boundaries, _) = run.readouts(&model).unwrap();
    let width = |t: f64| {
        let b: Vec<_> = boundaries.iter().filter(|b| b.gene == "trough" && b.time_min == t).collect();
        assert_eq!(b.len(), 1, "one trough boundary at {t} min");
        b[0].width_um
    };
    assert!(width(20.0) > 100.0, "{}", width(20.0));
    assert!(width(160.0) < 20.0, "{}", width(160.0));
}
