//! Sigmoid (weighted-sum) kinetics:
//!
//! ```text
//! f_g = p_g · σ(Σ_j w_gj u_j + Σ_k e_gk m_k + h_g) − d_g · u_g,   σ(s) = 1/(1 + e^(−s))
//! ```
//! Mjolsness, Sharp & Reinitz (1991), J. Theor. Biol. 152:429 (gene-circuit
//! form); the logistic σ as in Wilson & Cowan (1972), Biophys. J. 12:1.

use ndarray::{ArrayView2, ArrayViewMut2};

use super::{CHUNK, Input, Kinetics};
use crate::model::{LinkEffect, Model};

#[derive(Debug, Clone)]
struct GeneLaw {
    p: f64,
    d: f64,
    bias: f64,
    weights: Vec<(Input, f64)>,
}

/// Sigmoid kinetics for a whole circuit.
#[derive(Debug, Clone)]
pub struct SigmoidKinetics {
    genes: Vec<GeneLaw>,
}

/// Logistic function σ(s) = 1/(1 + e^(−s)).
#[inline(always)]
pub fn logistic(s: f64) -> f64 {
    1.0 / (1.0 + (-s).exp())
}

impl SigmoidKinetics {
    /// Builds the rate law from a model (links must carry weights).
    pub fn new(model: &Model) -> SigmoidKinetics {
        let mut genes: Vec<GeneLaw> = model
            .genes
            .iter()
            .map(|g| GeneLaw { p: g.production, d: g.decay, bias: g.bias, weights: vec![] })
            .collect();
        for link in &model.circuit.links {
            if let LinkEffect::Weight(w) = link.effect {
                genes[link.to].weights.push((link.from.into(), w));
            }
        }
        SigmoidKinetics { genes }
    }

    fn argument(&self, g: usize, u: &[f64], m: &[f64]) -> f64 {
        let law = &self.genes[g];
        law.bias + law.weights.iter().map(|(i, w)| w * i.value(u, m)).sum::<f64>()
    }
}

impl Kinetics for SigmoidKinetics {
    fn rates(&self, u: ArrayView2<f64>, m: ArrayView2<f64>, mut out: ArrayViewMut2<f64>) {
        let len = out.ncols();
        let mut s = [0.0f64; CHUNK];
        for (g, law) in self.genes.iter().enumerate() {
            let s = &mut s[..len];
            s.fill(law.bias);
            for (input, w) in &law.weights {
                let x = input.row(&u, &m);
                s.iter_mut().zip(x).for_each(|(s, x)| *s += w * x);
            }
            let own = Input::Gene(g).row(&u, &m);
            let mut row = out.row_mut(g);
            let dst = row.as_slice_mut().expect("contiguous gene row");
            for i in 0..len {
                dst[i] = law.p * logistic(s[i]) - law.d * own[i];
            }
        }
    }

    fn jacobian(&self, u: &[f64], m: &[f64], jac: &mut [f64]) {
        let n = self.genes.len();
        jac.fill(0.0);
        for (g, law) in self.genes.iter().enumerate() {
            let sig = logistic(self.argument(g, u, m));
            for (input, w) in &law.weights {
                if let Input::Gene(j) = input {
                    jac[g * n + j] += law.p * sig * (1.0 - sig) * w;
                }
            }
            jac[g * n + g] -= law.d;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinetics::testing::{HEADER, jacobian_matches_differences};
    use approx::assert_relative_eq;
    use std::path::Path;

    const CIRCUIT: &str = r#"
[[gradient]]
name = "m"
shape = "linear"
from = "right"
peak = 2.0
length_um = 3.0
[[gene]]
name = "a"
production = 2.0
decay = 0.5
bias = -1.0
[[gene]]
name = "b"
production = 1.5
decay = 0.7
[circuit]
kinetics = "sigmoid"
[[circuit.link]]
from = "m"
to = "a"
weight = 3.0
[[circuit.link]]
from = "b"
to = "a"
weight = -2.0
[[circuit.link]]
from = "a"
to = "b"
weight = 1.5
[[circuit.link]]
from = "b"
to = "b"
weight = 0.5
"#;

    #[test]
    fn rates_follow_the_weighted_sum_formula() {
        let model = Model::from_toml(&format!("{HEADER}{CIRCUIT}"), Path::new("t.toml")).unwrap();
        let k = SigmoidKinetics::new(&model);
        let mut out = [0.0; 2];
        k.rates_one(&[0.4, 0.9], &[0.7], &mut out);
        let fa = 2.0 / (1.0 + (-(-1.0 + 3.0 * 0.7 - 2.0 * 0.9f64)).exp()) - 0.5 * 0.4;
        let fb = 1.5 / (1.0 + (-(1.5 * 0.4 + 0.5 * 0.9f64)).exp()) - 0.7 * 0.9;
        assert_relative_eq!(out[0], fa, max_relative = 1e-14);
        assert_relative_eq!(out[1], fb, max_relative = 1e-14);
    }

    #[test]
    fn jacobian_matches_finite_differences() {
        let model = Model::from_toml(&format!("{HEADER}{CIRCUIT}"), Path::new("t.toml")).unwrap();
        let k = SigmoidKinetics::new(&model);
        jacobian_matches_differences(&k, &[0.4, 0.9], &[0.7]);
    }
}
