//! Property tests (proptest): invariants over random inputs.

use anlage::readout::profile_boundaries;
use anlage::reference;
use proptest::prelude::*;

use anlage::model::Scheme;

use crate::common::{parse, run, with_scheme};

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    /// With sealed edges and no reactions the total amount is conserved to
    /// rounding, for any profile, diffusion coefficient, step, row or sheet,
    /// with every scheme (common practice, no source). Tolerance: SBDF2
    /// 1e-12; ARK4 1e-11, as its rounding drifts about 2 ulp a step (five
    /// stage derivatives read off solves; see tests/analytic.rs) over up to
    /// 200 steps here.
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
        for scheme in Scheme::ALL {
            let tol = match scheme {
                Scheme::Sbdf2 => 1e-12,
                Scheme::Ark4 => 1e-11,
            };
            let fin = run(&with_scheme(&model, scheme)).recording.final_state().sum();
            prop_assert!((fin - total).abs() <= tol * total.max(1.0), "{scheme:?}: {fin} vs {total}");
        }
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

    /// Non-negative kinetics keep levels non-negative: random two-gene Hill
    /// circuits (production ≥ 0, first-order decay, repression both ways) on a
    /// row under a gradient, from non-negative noisy starts, with fixed steps
    /// k·d ≤ 1/4. For pure decay the SBDF2 amplification roots are real and
    /// non-negative for k·d ≤ 1/2 (roots of 3ξ² − 4(1 − kd)ξ + (1 − 2kd);
    /// derived here, no source), so no sign change is expected.
    #[test]
    fn hill_levels_stay_non_negative(
        p in prop::collection::vec(0.0f64..5.0, 2),
        d in prop::collection::vec(0.01f64..2.0, 2),
        k in prop::collection::vec(0.05f64..3.0, 3),
        n in prop::collection::vec(1u32..5, 3),
        diffusion in 0.0f64..20.0,
        seed in 0u64..1000,
    ) {
        let dmax = d[0].max(d[1]);
        let step = (0.25 / dmax).min(1.0);
        let steps = 40usize;
        let until = step * steps as f64;
        let every = step * 4.0;
        let text = format!(
            "seed = {seed}\n[tissue]\nnuclei = [30]\nspacing_um = 2.0\n\
             [clock]\nuntil_min = {until:?}\nstep_min = {step:?}\nsnapshot_every_min = {every:?}\n\
             [[gradient]]\nname = \"m\"\nshape = \"exponential\"\nfrom = \"left\"\npeak = 1.0\ndecay_length_um = 15.0\n\
             [[gene]]\nname = \"a\"\nproduction = {:?}\ndecay = {:?}\ndiffusion = {diffusion:?}\ninitial_noise = 0.5\n\
             [[gene]]\nname = \"b\"\nproduction = {:?}\ndecay = {:?}\ndiffusion = {diffusion:?}\ninitial_noise = 0.5\n\
             [circuit]\nkinetics = \"hill\"\n\
             [[circuit.link]]\nfrom = \"m\"\nto = \"a\"\nsign = \"+\"\nthreshold = {:?}\nhill = {}\n\
             [[circuit.link]]\nfrom = \"b\"\nto = \"a\"\nsign = \"-\"\nthreshold = {:?}\nhill = {}\n\
             [[circuit.link]]\nfrom = \"a\"\nto = \"b\"\nsign = \"-\"\nthreshold = {:?}\nhill = {}\n",
            p[0], d[0], p[1], d[1], k[0], n[0], k[1], n[1], k[2], n[2]
        );
        let r = run(&parse(&text));
        prop_assert_eq!(r.recording.len(), 11);
        let lowest = r.recording.states().map(|s| s.unwrap().iter().copied().fold(f64::INFINITY, f64::min)).fold(f64::INFINITY, f64::min);
        prop_assert!(lowest >= 0.0, "lowest level {lowest}");
    }
}
