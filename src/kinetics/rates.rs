//! Rate expressions as a rate law: each gene with `rate = "…"` gets its
//! reaction rate from its compiled expression and its Jacobian row from the
//! compiled symbolic derivatives; the other genes keep the circuit's Hill or
//! sigmoid law.

use ndarray::{ArrayView2, ArrayViewMut2};

use super::Program;
use super::{Input, Kinetics};
use crate::model::Model;
use crate::model::expr::{self, Expr, ModelNames};

struct GeneRate {
    gene: usize,
    rate: Program,
    /// ∂rate/∂u_j for each gene j.
    jacobian: Vec<Program>,
}

/// A circuit where some or all genes have rate expressions.
pub struct RatesKinetics {
    inner: Option<Box<dyn Kinetics>>,
    rates: Vec<GeneRate>,
    n: usize,
    reads_time: bool,
}

impl RatesKinetics {
    /// Builds from a model whose rate expressions were checked at load.
    ///
    /// # Panics
    /// If an expression no longer parses or needs too deep a stack (a broken invariant).
    pub fn new(model: &Model, inner: Option<Box<dyn Kinetics>>) -> RatesKinetics {
        let names =
            ModelNames { genes: &model.genes, gradients: &model.gradients, parameters: &model.circuit.parameters };
        let n = model.genes.len();
        let time = model.gradients.len() + 1;
        let mut reads_time = false;
        let rates = model
            .genes
            .iter()
            .enumerate()
            .filter_map(|(g, gene)| gene.rate.as_ref().map(|t| (g, t)))
            .map(|(gene, text)| {
                let e = expr::simplify(expr::parse(text, &names).expect("checked when the model was loaded"));
                reads_time |= e.reads_input(&|k| k == time);
                let compile = |e: &Expr| Program::compile(e).expect("expression within the stack limit");
                GeneRate { gene, rate: compile(&e), jacobian: (0..n).map(|j| compile(&e.derivative(j))).collect() }
            })
            .collect();
        RatesKinetics { inner, rates, n, reads_time }
    }
}

impl Kinetics for RatesKinetics {
    fn rates(&self, u: ArrayView2<f64>, m: ArrayView2<f64>, mut out: ArrayViewMut2<f64>) {
        let len = out.ncols();
        if let Some(inner) = &self.inner {
            inner.rates(u.view(), m.view(), out.view_mut());
        }
        for r in &self.rates {
            let gene = |g: usize| Input::Gene(g).row(&u, &m);
            let input = |k: usize| Input::Gradient(k).row(&u, &m);
            let mut row = out.row_mut(r.gene);
            r.rate.run(&gene, &input, len, row.as_slice_mut().expect("contiguous gene row"));
        }
    }

    fn reads_time(&self) -> bool {
        self.reads_time
    }

    fn jacobian(&self, u: &[f64], m: &[f64], jac: &mut [f64]) {
        match &self.inner {
            Some(inner) => inner.jacobian(u, m, jac),
            None => jac.fill(0.0),
        }
        for r in &self.rates {
            for (j, d) in r.jacobian.iter().enumerate() {
                jac[r.gene * self.n + j] = d.eval(u, m);
            }
        }
    }
}
