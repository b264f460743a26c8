//! Rate expressions as a rate law: each gene with `rate = "…"` gets its
//! reaction rate from its compiled expression and its Jacobian row from the
//! compiled symbolic derivatives; the other genes keep the circuit's Hill or
//! sigmoid law.

use ndarray::{ArrayView2, ArrayViewMut2};

use super::expr::{self, Expr, Names, Program};
use super::{Input, Kinetics};
use crate::model::{Gene, Gradient, Model};

/// Names an expression may use: genes (levels), gradients (values) and parameters (constants).
pub struct ModelNames<'a> {
    /// Genes.
    pub genes: &'a [Gene],
    /// Gradients.
    pub gradients: &'a [Gradient],
    /// Parameters.
    pub parameters: &'a [(String, f64)],
}

impl Names for ModelNames<'_> {
    fn resolve(&self, name: &str) -> Option<Expr> {
        if let Some(g) = self.genes.iter().position(|g| g.name == name) {
            return Some(Expr::Gene(g));
        }
        if let Some(k) = self.gradients.iter().position(|g| g.name == name) {
            return Some(Expr::Input(k));
        }
        if let Some((_, v)) = self.parameters.iter().find(|(n, _)| n == name) {
            return Some(Expr::Num(*v));
        }
        match name {
            "x" => Some(Expr::Input(self.gradients.len())),
            "t" => Some(Expr::Input(self.gradients.len() + 1)),
            _ => None,
        }
    }
    fn known(&self) -> String {
        let mut all: Vec<&str> = self.genes.iter().map(|g| g.name.as_str()).collect();
        all.extend(self.gradients.iter().map(|g| g.name.as_str()));
        all.extend(self.parameters.iter().map(|(n, _)| n.as_str()));
        all.extend(["x", "t"]);
        all.join(", ")
    }
    fn neighbour(&self, gene: usize) -> Option<Expr> {
        Some(Expr::Input(self.gradients.len() + 2 + gene))
    }
}

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
