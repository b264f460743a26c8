//! Property tests (proptest): invariants over random inputs.

use anlage::readout::profile_boundaries;
use anlage::reference;
use proptest::prelude::*;

use crate::common::{parse, run};

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    /// With sealed edges and no reactions the total amount is conserved to
    /// rounding, for any profile, diffusion coefficient, step, row or sheet.
    #[test]
    fn sealed_diffusion_conserves_mass(
        values in prop::collection::vec(0.0f64..10.0, 6..60),
        d in 0.01f64..50.0,
        dt in prop::sample::select(vec![0.01f64, 0.05, 0.1, 0.5]),
        sheet in any::<bool>(),
    ) {
        let n = values.len();
        let dims = if sheet && n % 2 == 0 { vec![n / 2, 2] } else { vec![n] };
        let model = parse(&reference::pure_diffusion(&dims, "sealed", d, &values, dt, 2.0));
        let total: f64 = values.iter().sum();
        let fin = run(&model).recording.final_state().sum();
        prop_assert!((fin - total).abs() <= 1e-12 * total.max(1.0), "{fin} vs {total}");
    }

    /// Reflecting a profile reflects its boundaries: position x → L − x,
    /// rising ↔ falling, in reverse order (exact up to rounding).
    #[test]
    fn boundaries_reflect_with_the_axis(values in prop::collection::vec(0.0f64..5.0, 3..50), h in 0.5f64..10.0) {
        let forward = profile_boundaries(&values, h, false);
        let reversed: Vec<f64> = values.iter().rev().copied().collect();
        let backward = profile_boundaries(&reversed, h, false);
        prop_assert_eq!(forward.len(), backward.len());
        let length = values.len() as f64 * h;
        for (f, b) in forward.iter().zip(backward.iter().rev()) {
            prop_assert!((f.position_um - (length - b.position_um)).abs() <= 1e-9 * length);
            prop_assert_eq!(f.rising, !b.rising);
            prop_assert!((f.steepness_per_um - b.steepness_per_um).abs() <= 1e-9 * f.steepness_per_um.max(1e-12));
        }
    }
}
