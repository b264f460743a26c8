//! One embryo: its seed, its noise sources and parameter factors, and what
//! is read from it; and where a set of embryos' readouts come from
//! ([`Embryos`]): simulated here, or saved by shards and merged.

use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};

use super::{ReplicateError, for_each_embryo};
use crate::model::Model;
use crate::model::noise::{Law, Variation};
use crate::readout::{self, Boundary, Domain};
use crate::{RunOptions, StepError, simulate};

/// SplitMix64's output function (Steele, Lea & Flood 2014).
pub fn splitmix64(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The seed of embryo `i` of a model with seed `seed`.
pub fn embryo_seed(seed: u64, i: usize) -> u64 {
    splitmix64(seed ^ splitmix64(i as u64 + 1))
}

/// Which noise sources are on.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Sources {
    /// Each gene's `initial_noise`.
    pub initial: bool,
    /// Chemical Langevin and additive noise.
    pub intrinsic: bool,
    /// Each `[[noise.vary]]` entry, in order.
    pub vary: Vec<bool>,
}

impl Sources {
    /// Every source the model declares.
    pub fn all(model: &Model) -> Sources {
        Sources { initial: true, intrinsic: true, vary: vec![true; model.noise.vary.len()] }
    }

    /// No noise at all: the reference embryo.
    pub fn none(model: &Model) -> Sources {
        Sources { initial: false, intrinsic: false, vary: vec![false; model.noise.vary.len()] }
    }

    /// Each source the model declares, alone, with its name.
    pub fn each(model: &Model) -> Vec<(String, Sources)> {
        let mut out = Vec::new();
        if model.genes.iter().any(|g| g.initial_noise > 0.0) {
            out.push(("initial levels".to_string(), Sources { initial: true, ..Sources::none(model) }));
        }
        if model.noise.is_stochastic() {
            out.push(("intrinsic".to_string(), Sources { intrinsic: true, ..Sources::none(model) }));
        }
        for (k, v) in model.noise.vary.iter().enumerate() {
            let mut s = Sources::none(model);
            s.vary[k] = true;
            out.push((format!("vary {}", v.name), s));
        }
        out
    }
}

/// The factor a varied parameter is multiplied by in one embryo: mean 1,
/// coefficient of variation `cv` (see [`Law`]).
fn factor(v: &Variation, rng: &mut rand_pcg::Pcg64) -> f64 {
    match v.law {
        Law::Lognormal => {
            let s2 = (1.0 + v.cv * v.cv).ln();
            let z: f64 = StandardNormal.sample(rng);
            (s2.sqrt() * z - 0.5 * s2).exp()
        }
        Law::Normal => loop {
            let z: f64 = StandardNormal.sample(rng);
            let f = 1.0 + v.cv * z;
            if f > 0.0 {
                break f;
            }
        },
    }
}

/// Embryo `i`: the model with its own seed and, for the sources that are on,
/// its own parameter factors. Every factor is drawn whether or not its source
/// is on, so an embryo has the same factor for a parameter in every
/// combination of sources.
pub fn embryo(model: &Model, i: usize, sources: &Sources) -> Model {
    let mut m = model.clone();
    m.seed = embryo_seed(model.seed, i);
    if !sources.initial {
        m.genes.iter_mut().for_each(|g| g.initial_noise = 0.0);
    }
    if !sources.intrinsic {
        m.noise.molecules_per_unit = None;
        m.noise.additive.iter_mut().for_each(|a| *a = 0.0);
    }
    let mut rng = rand_pcg::Pcg64::seed_from_u64(m.seed ^ 0x5EED_FAC7_0000_0001);
    for (k, v) in model.noise.vary.iter().enumerate() {
        let f = factor(v, &mut rng);
        if sources.vary[k]
            && let Some(p) = m.param_mut(v.param)
        {
            *p *= f;
        }
    }
    m
}

/// What one embryo gives.
#[derive(Debug, Clone, PartialEq)]
pub struct Readout {
    /// Boundaries at every snapshot, as found.
    pub boundaries: Vec<Boundary>,
    /// Domains at the last snapshot.
    pub domains: Vec<Domain>,
    /// Final profiles along the axis, `[gene][nucleus]`.
    pub profiles: Vec<Vec<f64>>,
}

/// Runs one embryo's model (made by [`embryo`]) and reads it.
///
/// # Errors
/// The [`StepError`] of a run that fails.
pub fn read_one(model: &Model) -> Result<Readout, StepError> {
    let run = simulate(model, &RunOptions { parallel: false, stochastic: true, ..RunOptions::default() })?;
    let rec = &run.recording;
    let last = rec.len() - 1;
    Ok(Readout {
        boundaries: readout::find_boundaries(rec)?,
        domains: readout::final_domains(rec),
        profiles: rec.axis_profiles(last, 0..rec.genes.len())?,
    })
}

/// Where a set of embryos' readouts come from: simulated here
/// ([`Simulated`]), or saved by shards and merged
/// ([`super::shard::Saved`]). `pass` names the set of embryos (every source
/// on, one source alone, half the step, the wild type of a pairing, a
/// mutant), so that a saved readout is found again under the same name.
pub trait Embryos: Sync {
    /// The readout of embryo `i` of `pass`, whose model (made by
    /// [`embryo`]) is `model`; the error says why it failed.
    ///
    /// # Errors
    /// Why the embryo failed.
    fn read(&self, pass: &str, i: usize, model: &Model) -> Result<Readout, String>;
}

/// Embryos simulated as they are asked for.
#[derive(Debug, Clone, Copy, Default)]
pub struct Simulated;

impl Embryos for Simulated {
    fn read(&self, _: &str, _: usize, model: &Model) -> Result<Readout, String> {
        read_one(model).map_err(|e| e.to_string())
    }
}

/// The full recordings of embryos 0..k, with every noise source on: the
/// same embryos as the first k of a replicate run (rows `embryo` 0..k of
/// `embryo_boundaries.csv`), run in parallel.
///
/// # Errors
/// [`ReplicateError::Embryos`] if any of them fails.
pub fn recordings(model: &Model, k: usize) -> Result<Vec<crate::Recording>, ReplicateError> {
    let options = RunOptions { parallel: false, stochastic: true, ..RunOptions::default() };
    let mut out = Vec::with_capacity(k);
    for_each_embryo(
        k,
        |i| simulate(&embryo(model, i, &Sources::all(model)), &options).map_err(|e| e.to_string()),
        |_, run| out.push(run.recording),
    )?;
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::replicates::Running;

    fn variation(cv: f64, law: Law) -> Variation {
        Variation { name: "cue.peak".into(), param: crate::model::Param::Constant(0), cv, law }
    }

    /// The lognormal factor: ln f is normal with mean −σ²/2 and sd σ,
    /// σ² = ln(1 + cv²), so f has mean 1 and the given CV (lognormal moments,
    /// textbook; e.g. Johnson, Kotz & Balakrishnan 1994, Continuous
    /// Univariate Distributions vol. 1, ch. 14, from memory). Checked to 4
    /// standard errors over 10⁵ draws.
    #[test]
    fn lognormal_factors_have_mean_one_and_the_asked_cv() {
        let cv = 0.5;
        let v = variation(cv, Law::Lognormal);
        let mut rng = rand_pcg::Pcg64::seed_from_u64(7);
        let (mut logs, mut fs) = (Running::default(), Running::default());
        for _ in 0..100_000 {
            let f = factor(&v, &mut rng);
            logs.push(f.ln());
            fs.push(f);
        }
        let s = (1.0f64 + cv * cv).ln().sqrt();
        let n = 1e5f64;
        assert!((logs.mean() + 0.5 * s * s).abs() < 4.0 * s / n.sqrt(), "{}", logs.mean());
        assert!((logs.sd() - s).abs() < 4.0 * s / (2.0 * n).sqrt(), "{}", logs.sd());
        assert!((fs.mean() - 1.0).abs() < 4.0 * cv / n.sqrt(), "{}", fs.mean());
    }

    /// The normal factor: 1 + cv·z, never ≤ 0; for cv = 0.1 the truncation
    /// (at z = −10) changes nothing measurable.
    #[test]
    fn normal_factors_are_positive_with_the_asked_cv() {
        let v = variation(0.1, Law::Normal);
        let mut rng = rand_pcg::Pcg64::seed_from_u64(11);
        let mut fs = Running::default();
        for _ in 0..100_000 {
            let f = factor(&v, &mut rng);
            assert!(f > 0.0);
            fs.push(f);
        }
        assert!((fs.mean() - 1.0).abs() < 4.0 * 0.1 / 1e5f64.sqrt());
        assert!((fs.sd() - 0.1).abs() < 4.0 * 0.1 / 2e5f64.sqrt());
    }

    /// Embryo seeds differ between embryos and between model seeds.
    #[test]
    fn embryo_seeds_are_distinct() {
        let seeds: std::collections::HashSet<u64> =
            (0..1000).flat_map(|i| [embryo_seed(0, i), embryo_seed(1, i)]).collect();
        assert_eq!(seeds.len(), 2000);
    }
}
