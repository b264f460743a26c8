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
    let b = boundaries_at(&rec, last);
    let amber: Vec<_> = b.iter().filter(|b| b.gene == "amber").collect();
    let cobalt: Vec<_> = b.iter().filter(|b| b.gene == "cobalt").collect();
    assert_eq!((amber.len(), cobalt.len()), (1, 1), "{b:#?}");
    assert_eq!(
        (amber[0].direction, cobalt[0].direction),
        ("falling", "rising")
    );
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
    let b = boundaries_at(&rec, rec.times.len() - 1);
    let teal: Vec<_> = b.iter().filter(|b| b.gene == "teal").collect();
    assert_eq!(teal.len(), 2, "{b:#?}");
    assert_eq!(
        (teal[0].direction, teal[1].direction),
        ("rising", "falling")
    );
    assert!(teal[0].position_pct > 20.0 && teal[1].position_pct < 80.0);
}

/// Sheet: the toggle boundary runs across the sheet; every row of nuclei has
/// amber high at the head end and cobalt high at the tail end.
#[test]
fn sheet_splits_into_head_and_tail() {
    let model = load("patterns/sheet.toml");
    let rec = run(&model).recording;
    let fin = rec.final_state();
    let (nx, ny) = (model.grid.nx, model.grid.ny);
    for iy in 0..ny {
        let head = iy * nx;
        let tail = iy * nx + nx - 1;
        assert!(
            fin[[0, head]] > fin[[1, head]] && fin[[1, tail]] > fin[[0, tail]],
            "row {iy}"
        );
    }
    let b = boundaries_at(&rec, rec.times.len() - 1);
    assert_eq!(b.iter().filter(|b| b.gene == "amber").count(), 1, "{b:#?}");
}
