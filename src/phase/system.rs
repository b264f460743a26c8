//! Autonomous systems du/dt = F(u), and one nucleus of a circuit as such a
//! system with its inputs frozen.

use crate::kinetics::Kinetics;

/// An autonomous system du/dt = F(u) of fixed dimension.
pub trait System: Sync {
    /// Dimension n.
    fn dim(&self) -> usize;
    /// F(u) into `out`.
    fn rates(&self, u: &[f64], out: &mut [f64]);
    /// ∂F_i/∂u_j into `jac[i·n + j]`.
    fn jacobian(&self, u: &[f64], jac: &mut [f64]);
}

/// One nucleus with its local inputs frozen (the "isolated nucleus"):
/// `F(u) = f(u, m) + q`, with `m` the gradient values and `q` an optional
/// frozen diffusion influx `D∇²u` of that moment, a.u./min.
pub struct Frozen<'a> {
    /// The circuit's rate law.
    pub kinetics: &'a dyn Kinetics,
    /// Gradient values, a.u.
    pub inputs: Vec<f64>,
    /// Frozen influx per gene, a.u./min (zeros for the plain isolated nucleus).
    pub influx: Vec<f64>,
}

impl System for Frozen<'_> {
    fn dim(&self) -> usize {
        self.influx.len()
    }
    fn rates(&self, u: &[f64], out: &mut [f64]) {
        self.kinetics.rates_one(u, &self.inputs, out);
        for (o, q) in out.iter_mut().zip(&self.influx) {
            *o += q;
        }
    }
    fn jacobian(&self, u: &[f64], jac: &mut [f64]) {
        self.kinetics.jacobian(u, &self.inputs, jac);
    }
}

/// A plane through a nucleus's phase space: genes `a` and `b` vary, every
/// other gene is held at its value in `base` (a slice, for circuits of more
/// than two genes).
pub struct Slice<'a> {
    /// The whole system.
    pub full: &'a dyn System,
    /// The point the slice passes through.
    pub base: Vec<f64>,
    /// First gene of the plane.
    pub a: usize,
    /// Second gene of the plane.
    pub b: usize,
}

impl Slice<'_> {
    fn lift(&self, u: &[f64]) -> Vec<f64> {
        let mut full = self.base.clone();
        full[self.a] = u[0];
        full[self.b] = u[1];
        full
    }
}

impl System for Slice<'_> {
    fn dim(&self) -> usize {
        2
    }
    fn rates(&self, u: &[f64], out: &mut [f64]) {
        let mut f = vec![0.0; self.full.dim()];
        self.full.rates(&self.lift(u), &mut f);
        out[0] = f[self.a];
        out[1] = f[self.b];
    }
    fn jacobian(&self, u: &[f64], jac: &mut [f64]) {
        let n = self.full.dim();
        let mut j = vec![0.0; n * n];
        self.full.jacobian(&self.lift(u), &mut j);
        jac.copy_from_slice(&[
            j[self.a * n + self.a],
            j[self.a * n + self.b],
            j[self.b * n + self.a],
            j[self.b * n + self.b],
        ]);
    }
}

/// A one-parameter family F(u, s), for continuation.
pub trait Family: Sync {
    /// Dimension n.
    fn dim(&self) -> usize;
    /// F(u, s).
    fn rates(&self, u: &[f64], s: f64, out: &mut [f64]);
    /// ∂F/∂u at (u, s), row-major.
    fn jacobian(&self, u: &[f64], s: f64, jac: &mut [f64]);
}

/// The family as a system at one parameter value.
pub struct AtParameter<'a, F: Family + ?Sized> {
    /// The family.
    pub family: &'a F,
    /// The parameter.
    pub s: f64,
}

impl<F: Family + ?Sized> System for AtParameter<'_, F> {
    fn dim(&self) -> usize {
        self.family.dim()
    }
    fn rates(&self, u: &[f64], out: &mut [f64]) {
        self.family.rates(u, self.s, out)
    }
    fn jacobian(&self, u: &[f64], jac: &mut [f64]) {
        self.family.jacobian(u, self.s, jac)
    }
}
