//! Readouts made for sheets: contours, domains, the dominant wavelength and
//! the pattern class, on fields from generators unlike the demos (formulas
//! of plane waves, random waves) and on simulated sheets.

use std::f64::consts::PI;

use anlage::readout::sheet::{SheetField, read_field, sheet_at};
use rand::{RngExt, SeedableRng};

use crate::common::{parse, root, run};

/// Levels of a formula f(x, y) at the nucleus centres of an nx × ny sheet.
fn sheet(nx: usize, ny: usize, h: f64, f: impl Fn(f64, f64) -> f64) -> Vec<f64> {
    (0..nx * ny).map(|k| f(((k % nx) as f64 + 0.5) * h, ((k / nx) as f64 + 0.5) * h)).collect()
}

fn field(values: &[f64], nx: usize, ny: usize, h: f64) -> SheetField<'_> {
    SheetField { values, nx, ny, spacing_um: h, periodic: false }
}

/// Hexagonal spots, the sum of three plane waves at 120° (the standard form
/// of a hexagonal planform; Murray, Mathematical Biology II, 3rd ed. 2003,
/// ch. 2; from memory), tilted by 10°: spots, with the waves' wavelength,
/// about one spot per hexagonal cell of area (2/√3)·λ²; the same field
/// upside down gives spots of low level (holes).
#[test]
fn hexagonal_spots_and_holes() {
    let (n, h, lambda) = (180, 1.0, 15.0);
    let q = 2.0 * PI / lambda;
    let hex = |x: f64, y: f64| {
        (0..3)
            .map(|k| {
                let a = (10.0 + 120.0 * k as f64).to_radians();
                (q * (a.cos() * x + a.sin() * y)).cos()
            })
            .sum::<f64>()
    };
    let v = sheet(n, n, h, |x, y| 2.0 + hex(x, y));
    let max = v.iter().copied().fold(f64::MIN, f64::max);
    let r = read_field(&field(&v, n, n, h), max / 2.0 + 1.0);
    assert_eq!(r.class, "spots");
    assert!(r.minority_high);
    let got = r.wavelength_um.unwrap();
    assert!((got / lambda - 1.0).abs() < 0.02, "wavelength {got}");
    let cells = (n as f64 * h).powi(2) / (2.0 / 3f64.sqrt() * lambda * lambda);
    assert!((r.spots as f64 / cells - 1.0).abs() < 0.12, "{} spots for {cells:.0} cells", r.spots);
    let v = sheet(n, n, h, |x, y| 4.0 - hex(x, y));
    let r = read_field(&field(&v, n, n, h), 4.0 - 1.5);
    assert_eq!(r.class, "spots");
    assert!(!r.minority_high, "holes are spots of low level");
}

/// Wavy parallel stripes: stripes, each high stripe counted once, with the
/// wavelength across them; a straight ramp's boundary is exactly straight.
#[test]
fn wavy_stripes_and_a_tilted_straight_boundary() {
    let (nx, ny, h, lambda) = (210, 150, 1.0, 21.0);
    let v = sheet(nx, ny, h, |x, y| 1.0 + (2.0 * PI * x / lambda + 0.8 * (2.0 * PI * y / 150.0).sin()).cos());
    let r = read_field(&field(&v, nx, ny, h), 1.0);
    assert_eq!(r.class, "stripes", "orientation order {}", r.orientation_order);
    assert!(r.orientation_order > 0.8);
    let got = r.wavelength_um.unwrap();
    assert!((got / lambda - 1.0).abs() < 0.03, "wavelength {got}");
    // 210/21 = 10 periods: 10 high stripes (the first and last cut by the walls).
    assert!((10..=11).contains(&r.stripes), "{} stripes", r.stripes);
    // A linear ramp at 30° to the axis: one contour, its points on the line
    // c·x + s·y = 120 (linear interpolation is exact for a linear field),
    // except the two carried on to the walls, which meet them at right angles
    // as a level with no flux through the wall would.
    let (c, s) = (30f64.to_radians().cos(), 30f64.to_radians().sin());
    let v = sheet(nx, ny, h, |x, y| x * c + y * s);
    let r = read_field(&field(&v, nx, ny, h), 120.0);
    assert_eq!(r.contours.len(), 1);
    let p = &r.contours[0].points;
    for q in &p[1..p.len() - 1] {
        assert!((q[0] * c + q[1] * s - 120.0).abs() < 1e-9, "{q:?} off the line");
    }
    let (a, b) = (p[0], p[p.len() - 1]);
    assert!(a[1] == 0.0 || a[1] == ny as f64 * h || a[0] == 0.0 || a[0] == nx as f64 * h, "{a:?} not on a wall");
    assert!(b[1] == 0.0 || b[1] == ny as f64 * h || b[0] == 0.0 || b[0] == nx as f64 * h, "{b:?} not on a wall");
}

/// A random wave field (sixty plane waves of one wavelength in random
/// directions, random phases; a generator unlike any model) is a maze:
/// labyrinth, with the waves' wavelength.
#[test]
fn random_waves_are_a_labyrinth() {
    let (n, h, lambda) = (200, 1.0, 16.0);
    let mut rng = rand_pcg::Pcg64::seed_from_u64(3);
    let waves: Vec<(f64, f64)> = (0..60).map(|_| (rng.random::<f64>() * PI, rng.random::<f64>() * 2.0 * PI)).collect();
    let q = 2.0 * PI / lambda;
    let v = sheet(n, n, h, |x, y| waves.iter().map(|(a, p)| (q * (a.cos() * x + a.sin() * y) + p).cos()).sum());
    let r = read_field(&field(&v, n, n, h), 0.0);
    assert_eq!(r.class, "labyrinth", "order {}, {} spots", r.orientation_order, r.spots);
    let got = r.wavelength_um.unwrap();
    assert!((got / lambda - 1.0).abs() < 0.05, "wavelength {got}");
}

/// One disc is a few domains, not a repeating pattern; a sheet with 1 %
/// noise about a level is uniform.
#[test]
fn one_disc_is_domains_and_noise_is_uniform() {
    let (n, h) = (100, 2.0);
    let v = sheet(n, n, h, |x, y| if (x - 90.0).hypot(y - 110.0) < 50.0 { 3.0 } else { 0.5 });
    let r = read_field(&field(&v, n, n, h), 1.5);
    assert_eq!(r.class, "domains", "wavelength {:?}", r.wavelength_um);
    assert_eq!(r.contours.len(), 1);
    let l = r.contours[0].length_um();
    assert!((l / (2.0 * PI * 50.0) - 1.0).abs() < 0.1, "circumference {l}");
    let mut rng = rand_pcg::Pcg64::seed_from_u64(9);
    let v: Vec<f64> = (0..n * n).map(|_| 1.0 + 0.01 * (rng.random::<f64>() - 0.5)).collect();
    let r = read_field(&field(&v, n, n, h), 0.999);
    assert_eq!(r.class, "uniform");
    assert!(r.contours.is_empty());
}

/// A Turing pattern just above onset, simulated on a sealed sheet: its
/// dominant wavelength is within 5 % of the fastest-growing mode of linear
/// theory. Schnakenberg (1979), J. Theor. Biol. 81:389; the dispersion
/// relation of Murray, Mathematical Biology II (3rd ed. 2003), ch. 2 (from
/// memory); the fastest-growing wavelength computed by SciPy in
/// tests/reference/turing_sheet.py (stored in turing_sheet.json).
#[test]
fn turing_sheet_near_onset_has_the_fastest_growing_wavelength_murray_2003() {
    let text = std::fs::read_to_string(root().join("tests/reference/turing_sheet.json")).unwrap();
    let reference: serde_json::Value = serde_json::from_str(&text).unwrap();
    let want = reference["fastest_wavelength_um"].as_f64().unwrap();
    let (dv, h) = (reference["dv"].as_f64().unwrap(), reference["spacing_um"].as_f64().unwrap());
    // 512 × 512 nuclei at 0.5 µm: 23 wavelengths across, so that one ring
    // of the spectrum is 2 % in wavelength (on half this sheet a ring of
    // noisy starting levels can pull the peak by a whole ring, 4 %).
    let model = parse(&format!(
        "seed = 4\n[tissue]\nnuclei = [512, 512]\nspacing_um = {h}\nedges = \"sealed\"\n\
         [clock]\nuntil_min = 600.0\ntolerance = 1e-5\nsnapshot_every_min = 50.0\n\
         [[gene]]\nname = \"u\"\nrate = \"a - u + u^2 * v\"\ndiffusion = 1.0\ninitial = 1.0\ninitial_noise = 0.01\n\
         [[gene]]\nname = \"v\"\nrate = \"b - u^2 * v\"\ndiffusion = {dv}\ninitial = 0.9\ninitial_noise = 0.01\n\
         [circuit]\nkinetics = \"rates\"\nparameters = {{ a = 0.1, b = 0.9 }}\n"
    ));
    let rec = run(&model).recording;
    let patterns = anlage::readout::sheet::sheet_patterns(&rec, &anlage::readout::sheet::final_sheet(&rec)).unwrap();
    let u: Vec<_> = patterns.iter().filter(|p| p.gene == "u" && p.class != "uniform").collect();
    assert!(u.len() >= 5, "no pattern grew");
    for p in &u {
        let got = p.wavelength_um.unwrap();
        eprintln!(
            "Turing sheet near onset, t = {} min: {} with wavelength {got:.3} µm vs linear theory {want:.3} µm",
            p.time_min, p.class
        );
        assert!((got / want - 1.0).abs() < 0.05, "t = {}: wavelength {got} vs {want}", p.time_min);
    }
}

/// A boundary across a simulated sheet, set by a gradient along the axis:
/// one contour per gene, straight across (zero spread along the axis), the
/// sheet's height long, at the midline readout's position.
#[test]
fn a_simulated_boundary_across_a_sheet_is_straight() {
    let model = parse(
        "[tissue]\nnuclei = [60, 20]\nspacing_um = 3.0\nedges = \"sealed\"\n\
         [clock]\nuntil_min = 200.0\ntolerance = 1e-6\nsnapshot_every_min = 100.0\n\
         [[gradient]]\nname = \"m\"\nshape = \"exponential\"\nfrom = \"left\"\npeak = 1.0\ndecay_length_um = 50.0\n\
         [[gene]]\nname = \"g\"\nproduction = 1.0\ndecay = 0.1\ndiffusion = 1.0\n\
         [circuit]\nkinetics = \"hill\"\n\
         [[circuit.link]]\nfrom = \"m\"\nto = \"g\"\nsign = \"+\"\nthreshold = 0.3\nhill = 4\n",
    );
    let rec = run(&model).recording;
    let read = sheet_at(&rec, rec.len() - 1).unwrap();
    assert_eq!(read.contours.len(), 1);
    let c = &read.contours[0];
    assert!(c.x_sd_um < 1e-9 && c.line_rms_um < 1e-9, "sd {} rms {}", c.x_sd_um, c.line_rms_um);
    assert!((c.length_um - 60.0).abs() < 1e-9);
    let midline = anlage::readout::final_boundaries(&rec);
    assert_eq!(midline.len(), 1);
    assert!((c.mean_x_um - midline[0].position_um).abs() < 1e-9);
    assert_eq!(read.patterns[0].class, "domains");
}
