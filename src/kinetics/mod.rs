//! Rate laws: `du/dt = f(u, m)` in every nucleus, with `u` the gene levels and
//! `m` the local gradient values; and the Jacobian `∂f/∂u`.
//!
//! A rate law works on a chunk of nuclei at a time: gene-major views
//! `u[[g, i]]`, `m[[k, i]]`, `out[[g, i]]`, each gene's row contiguous, so the
//! inner loops run over contiguous slices. A new family (e.g. free rate
//! expressions) implements [`Kinetics`] and is chosen in [`build`].

mod hill;
mod program;
mod rates;
mod sigmoid;

use ndarray::{ArrayView2, ArrayViewMut2};

pub use hill::HillKinetics;
pub use program::Program;
pub use rates::RatesKinetics;
pub use sigmoid::SigmoidKinetics;

use crate::model::{KineticsKind, Model, Regulator};

/// Largest chunk of nuclei a rate law is handed at once.
pub const CHUNK: usize = 256;

/// A circuit's rate law.
pub trait Kinetics: Send + Sync {
    /// Writes `f(u, m)` for a chunk of at most [`CHUNK`] nuclei, a.u./min.
    fn rates(&self, u: ArrayView2<f64>, m: ArrayView2<f64>, out: ArrayViewMut2<f64>);

    /// True if the rates read the time row of the inputs (else the
    /// integrator need not refill it every step).
    fn reads_time(&self) -> bool {
        false
    }

    /// Writes `∂f_g/∂u_j` for one nucleus into `jac[g·G + j]`, 1/min.
    fn jacobian(&self, u: &[f64], m: &[f64], jac: &mut [f64]);

    /// Rates of one nucleus (convenience for phase-space work).
    fn rates_one(&self, u: &[f64], m: &[f64], out: &mut [f64]) {
        let uv = ArrayView2::from_shape((u.len(), 1), u).expect("column");
        let mv = ArrayView2::from_shape((m.len(), 1), m).expect("column");
        let ov = ArrayViewMut2::from_shape((out.len(), 1), out).expect("column");
        self.rates(uv, mv, ov);
    }
}

/// Where a term reads its regulator: a gene row or a gradient row.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Input {
    Gene(usize),
    Gradient(usize),
}

impl From<Regulator> for Input {
    fn from(r: Regulator) -> Self {
        match r {
            Regulator::Gene(g) => Input::Gene(g),
            Regulator::Gradient(k) => Input::Gradient(k),
        }
    }
}

impl Input {
    /// The regulator's values over a chunk.
    pub(crate) fn row<'a>(self, u: &'a ArrayView2<f64>, m: &'a ArrayView2<f64>) -> &'a [f64] {
        let view = match self {
            Input::Gene(g) => u.row(g),
            Input::Gradient(k) => m.row(k),
        };
        view.to_slice().expect("gene-major rows of a chunk are contiguous")
    }

    /// The regulator's value in one nucleus.
    pub(crate) fn value(self, u: &[f64], m: &[f64]) -> f64 {
        match self {
            Input::Gene(g) => u[g],
            Input::Gradient(k) => m[k],
        }
    }
}

/// Builds the rate law of a model.
pub fn build(model: &Model) -> Box<dyn Kinetics> {
    let circuit = build_circuit(model);
    match &model.growth {
        Some(g) if g.rate_per_min > 0.0 => Box::new(Diluted { inner: circuit, rate_per_min: g.rate_per_min }),
        _ => circuit,
    }
}

/// The circuit's own rates, without dilution by growth.
fn build_circuit(model: &Model) -> Box<dyn Kinetics> {
    let builtin: Option<Box<dyn Kinetics>> = match model.circuit.kinetics {
        KineticsKind::Hill => Some(Box::new(HillKinetics::new(model))),
        KineticsKind::Sigmoid => Some(Box::new(SigmoidKinetics::new(model))),
        KineticsKind::Rates => None,
    };
    if model.genes.iter().any(|g| g.rate.is_some()) {
        Box::new(RatesKinetics::new(model, builtin))
    } else {
        builtin.expect("hill or sigmoid when no gene has a rate expression")
    }
}

/// A circuit in a row growing at relative rate g: every level is diluted,
/// `f_g(u, m) − g·u_g` (see [`crate::model::growth`]).
struct Diluted {
    inner: Box<dyn Kinetics>,
    /// g, 1/min.
    rate_per_min: f64,
}

impl Kinetics for Diluted {
    fn rates(&self, u: ArrayView2<f64>, m: ArrayView2<f64>, mut out: ArrayViewMut2<f64>) {
        self.inner.rates(u, m, out.view_mut());
        out.zip_mut_with(&u, |o, &u| *o -= self.rate_per_min * u);
    }

    fn reads_time(&self) -> bool {
        self.inner.reads_time()
    }

    fn jacobian(&self, u: &[f64], m: &[f64], jac: &mut [f64]) {
        self.inner.jacobian(u, m, jac);
        let g = u.len();
        for i in 0..g {
            jac[i * g + i] -= self.rate_per_min;
        }
    }
}

#[cfg(test)]
pub(crate) mod testing {
    use super::Kinetics;
    use approx::assert_relative_eq;

    /// Tissue and clock for rate-law tests (a tiny row; only the circuit matters).
    pub const HEADER: &str = "[tissue]\nnuclei = [4]\nspacing_um = 1.0\n\
        [clock]\nuntil_min = 1.0\nstep_min = 0.1\nsnapshot_every_min = 1.0\n";

    /// Checks the analytic Jacobian against central differences.
    pub fn jacobian_matches_differences(k: &dyn Kinetics, u: &[f64], m: &[f64]) {
        let g = u.len();
        let mut jac = vec![0.0; g * g];
        k.jacobian(u, m, &mut jac);
        for j in 0..g {
            let step = 1e-6 * u[j].abs().max(1e-3);
            let (mut up, mut dn) = (u.to_vec(), u.to_vec());
            up[j] += step;
            dn[j] -= step;
            let (mut fu, mut fd) = (vec![0.0; g], vec![0.0; g]);
            k.rates_one(&up, m, &mut fu);
            k.rates_one(&dn, m, &mut fd);
            for i in 0..g {
                let fdiff = (fu[i] - fd[i]) / (2.0 * step);
                assert_relative_eq!(jac[i * g + j], fdiff, epsilon = 1e-6, max_relative = 1e-5);
            }
        }
    }
}
