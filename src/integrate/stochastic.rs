//! Stochastic runs (`[noise]` intrinsic or additive noise): IMEX
//! Euler–Maruyama with implicit diffusion,
//!
//! ```text
//! (I − k D∇²) u¹ = u⁰ + k f(u⁰) + √k · s(u⁰) ∘ ξ,    ξ ~ N(0, 1) per gene and nucleus,
//! ```
//! with the chemical Langevin amplitude s = √((P + d·u)/Ω) for a gene of
//! production P and linear decay d·u at Ω molecules per unit (Gillespie
//! 2000, J. Chem. Phys. 113:297, eq. 23; P is recovered as f + d·u), plus a
//! constant amplitude where `additive` gives one. Euler–Maruyama has strong
//! order ½ and weak order 1 (Kloeden & Platen 1992, Numerical Solution of
//! Stochastic Differential Equations, §9.1 and §14.1, from memory): halving
//! the step moves means and spreads by about as much as the step is small.
//!
//! Non-negativity: a level that a step takes below 0 is set to 0 (with
//! amplitude √(P + d·max(u, 0)) the noise vanishes at 0 for d·u, so only
//! levels within a few noise amplitudes of 0 are ever touched; a mean far
//! from 0 is not biased by it, see the tests). Steps are fixed
//! ([`crate::model::noise::Noise::step_min`]), the last before each snapshot
//! shortened to land on it. Noise is drawn in one order (gene, then
//! nucleus) from a PCG stream seeded by the embryo's seed, so the bytes do
//! not depend on the thread count.

use ndarray::Array2;
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};

use super::reactions::Reactions;
use super::{StepError, StepStats, forcing, initial_state};
use crate::kinetics::Kinetics;
use crate::model::Model;
use crate::tissue::{Diffusion, Tissue};

/// Salt of the noise stream (distinct from the initial-noise and factor streams).
const NOISE_SALT: u64 = 0x5EED_0000_7E57_0001;

/// Integrates `model` with its intrinsic noise from its initial state to
/// `clock.until_min`, calling `snapshot(t, state)` at t = 0 and at every
/// snapshot time.
///
/// # Errors
/// [`StepError`] when the state stops being finite.
pub fn integrate_stochastic(
    model: &Model,
    kinetics: &dyn Kinetics,
    tissue: &Tissue,
    parallel: bool,
    mut snapshot: impl FnMut(f64, &Array2<f64>),
) -> Result<StepStats, StepError> {
    let k_max = model.noise.step_min.expect("a stochastic model has a noise step (checked when loaded)");
    let names: Vec<String> = model.genes.iter().map(|g| g.name.clone()).collect();
    let forcing = forcing(model);
    let d: Vec<f64> = model.genes.iter().map(|g| g.diffusion).collect();
    let mut diffusion = Diffusion::new(&model.grid, &d, &forcing.held_edges);
    let mut reactions = Reactions::new(kinetics, tissue, names, parallel, 0.0, forcing);
    let mut u = initial_state(model);
    reactions.clamp(&mut u);
    let mut f = Array2::zeros(u.raw_dim());
    let mut rng = rand_pcg::Pcg64::seed_from_u64(model.seed ^ NOISE_SALT);
    let omega = model.noise.molecules_per_unit;
    let decay: Vec<f64> = model.genes.iter().map(|g| g.decay).collect();
    let held: Vec<bool> = model.clamps.iter().map(Option::is_some).collect();
    let times = model.clock.snapshot_times();
    snapshot(0.0, &u);
    let mut stats = StepStats::default();
    let mut t = 0.0;
    for &target in &times[1..] {
        while t < target * (1.0 - 1e-12) {
            let k = k_max.min(target - t);
            reactions.eval(t, &u, &mut f)?;
            let root_k = k.sqrt();
            for (g, (mut row, rates)) in u.outer_iter_mut().zip(f.outer_iter()).enumerate() {
                let additive = model.noise.additive[g];
                for (v, rate) in row.iter_mut().zip(rates.iter()) {
                    let z: f64 = StandardNormal.sample(&mut rng);
                    if held[g] {
                        continue;
                    }
                    let mut var = additive * additive;
                    if let Some(omega) = omega {
                        let level = v.max(0.0);
                        let production = (rate + decay[g] * *v).max(0.0);
                        var += (production + decay[g] * level) / omega;
                    }
                    *v += k * rate + root_k * var.sqrt() * z;
                }
            }
            diffusion.solve(&mut u, 1.0, k, parallel);
            u.mapv_inplace(|v| v.max(0.0));
            reactions.clamp(&mut u);
            stats.count(k);
            t += k;
        }
        t = target;
        snapshot(t, &u);
    }
    Ok(stats)
}
