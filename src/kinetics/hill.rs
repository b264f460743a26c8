//! Hill kinetics: products of Hill functions.
//!
//! ```text
//! f_g = p_g · A_g · R_g − d_g · u_g
//! A_g = Π_a r_a/(1 + r_a)   (all-of)   or   Σ_a r_a/(1 + r_a)   (any-of);  1 without activators
//! R_g = Π_r 1/(1 + r_r),    r = (max(x, 0)/K)^n
//! ```
//! Hill (1910), J. Physiol. 40:iv; the activation/repression forms as in
//! Alon (2006), An Introduction to Systems Biology, ch. 2.

use ndarray::{ArrayView2, ArrayViewMut2};

use super::{CHUNK, Input, Kinetics};
use crate::model::{Combine, LinkEffect, Model};

#[derive(Debug, Clone, Copy)]
struct Term {
    input: Input,
    inv_k: f64,
    n: f64,
    n_int: Option<i32>,
}

impl Term {
    /// r = (max(x,0)/K)^n.
    #[inline(always)]
    fn ratio(&self, x: f64) -> f64 {
        let q = x.max(0.0) * self.inv_k;
        match self.n_int {
            Some(2) => q * q,
            Some(n) => q.powi(n),
            None => q.powf(self.n),
        }
    }
    /// dr/dx.
    fn ratio_slope(&self, x: f64) -> f64 {
        if x <= 0.0 { 0.0 } else { self.n * self.ratio(x) / x }
    }
}

#[derive(Debug, Clone)]
struct GeneLaw {
    gene: usize,
    p: f64,
    d: f64,
    combine: Combine,
    act: Vec<Term>,
    rep: Vec<Term>,
}

/// Hill kinetics for a whole circuit.
#[derive(Debug, Clone)]
pub struct HillKinetics {
    genes: Vec<GeneLaw>,
}

impl HillKinetics {
    /// Builds the rate law from a model (links must carry Hill parameters).
    pub fn new(model: &Model) -> HillKinetics {
        let mut genes: Vec<GeneLaw> = model
            .genes
            .iter()
            .enumerate()
            .map(|(gene, g)| GeneLaw {
                gene,
                p: g.production,
                d: g.decay,
                combine: g.combine,
                act: vec![],
                rep: vec![],
            })
            .collect();
        for link in &model.circuit.links {
            if let LinkEffect::Hill { activates, threshold, hill } = link.effect {
                let n_int = (hill.fract() == 0.0 && hill <= 64.0).then_some(hill as i32);
                let term = Term { input: link.from.into(), inv_k: 1.0 / threshold, n: hill, n_int };
                let law = &mut genes[link.to];
                if activates { law.act.push(term) } else { law.rep.push(term) }
            }
        }
        HillKinetics { genes }
    }
}

impl Term {
    /// `op(d, r)` for each destination `d` and ratio `r = (max(x,0)/K)^n` over
    /// a chunk, with the exponent resolved outside the loop so that each arm
    /// vectorises.
    #[inline(always)]
    fn apply<T>(&self, x: &[f64], dst: impl Iterator<Item = T>, op: impl Fn(T, f64)) {
        let k = self.inv_k;
        let pairs = dst.zip(x);
        match self.n_int {
            Some(1) => pairs.for_each(|(d, &v)| op(d, v.max(0.0) * k)),
            Some(2) => pairs.for_each(|(d, &v)| {
                let q = v.max(0.0) * k;
                op(d, q * q)
            }),
            Some(3) => pairs.for_each(|(d, &v)| {
                let q = v.max(0.0) * k;
                op(d, q * q * q)
            }),
            Some(4) => pairs.for_each(|(d, &v)| {
                let q = v.max(0.0) * k;
                let q2 = q * q;
                op(d, q2 * q2)
            }),
            _ => pairs.for_each(|(d, &v)| op(d, self.ratio(v))),
        }
    }
}

/// Per-chunk working rows of the fused form.
struct Scratch {
    num: [f64; CHUNK],
    den: [f64; CHUNK],
    sum: [f64; CHUNK],
}

impl HillKinetics {
    #[inline(always)]
    fn all_genes(&self, u: ArrayView2<f64>, m: ArrayView2<f64>, mut out: ArrayViewMut2<f64>, scratch: &mut Scratch) {
        for (law, mut row) in self.genes.iter().zip(out.outer_iter_mut()) {
            let dst = row.as_slice_mut().expect("contiguous gene row");
            if !self.fused_gene(law, &u, &m, dst, scratch) {
                self.careful_gene(law, &u, &m, dst);
            }
        }
    }

    /// The fast form of one gene's rate: one division per nucleus,
    /// `p·Πr_a / (Π(1+r_a)·Π(1+r_r))` (all-of activators). Returns false if a
    /// product overflowed, in which case [`Self::careful_gene`] must redo it.
    #[inline(always)]
    fn fused_gene(
        &self,
        law: &GeneLaw,
        u: &ArrayView2<f64>,
        m: &ArrayView2<f64>,
        dst: &mut [f64],
        scratch: &mut Scratch,
    ) -> bool {
        let len = dst.len();
        let (num, den) = (&mut scratch.num[..len], &mut scratch.den[..len]);
        let p = law.p;
        // The first term writes the products instead of multiplying rows
        // filled with p and 1 (p·r and 1·(1 + r) = 1 + r are the same bits),
        // which saves two passes over the chunk.
        let mut den_set = false;
        match law.combine {
            Combine::All => {
                for (i, term) in law.act.iter().enumerate() {
                    let pairs = num.iter_mut().zip(den.iter_mut());
                    if i == 0 {
                        term.apply(term.input.row(u, m), pairs, |(n, d), r| {
                            *n = p * r;
                            *d = 1.0 + r;
                        });
                    } else {
                        term.apply(term.input.row(u, m), pairs, |(n, d), r| {
                            *n *= r;
                            *d *= 1.0 + r;
                        });
                    }
                }
                den_set = !law.act.is_empty();
                if law.act.is_empty() {
                    num.fill(p);
                }
            }
            Combine::Any => {
                num.fill(p);
                if !law.act.is_empty() {
                    let sum = &mut scratch.sum[..len];
                    sum.fill(0.0);
                    for term in &law.act {
                        term.apply(term.input.row(u, m), sum.iter_mut(), |s, r| *s += r / (1.0 + r));
                    }
                    num.iter_mut().zip(sum.iter()).for_each(|(n, s)| *n *= s);
                }
            }
        }
        for term in &law.rep {
            if den_set {
                term.apply(term.input.row(u, m), den.iter_mut(), |d, r| *d *= 1.0 + r);
            } else {
                term.apply(term.input.row(u, m), den.iter_mut(), |d, r| *d = 1.0 + r);
                den_set = true;
            }
        }
        if !den_set {
            den.fill(1.0);
        }
        let own = u.row(law.gene);
        let own = own.to_slice().expect("contiguous gene row");
        let d = law.d;
        let mut finite = true;
        for (((o, &n), &q), &x) in dst.iter_mut().zip(num.iter()).zip(den.iter()).zip(own) {
            finite &= q <= f64::MAX;
            *o = n / q - d * x;
        }
        finite || p == 0.0
    }

    /// One gene's rate term by term, `p·Π r_a/(1+r_a)·Π 1/(1+r_r)`: safe when
    /// the products of the fused form overflow.
    fn careful_gene(&self, law: &GeneLaw, u: &ArrayView2<f64>, m: &ArrayView2<f64>, dst: &mut [f64]) {
        let len = dst.len();
        let mut act = [0.0f64; CHUNK];
        let mut rep = [0.0f64; CHUNK];
        let (act, rep) = (&mut act[..len], &mut rep[..len]);
        act.fill(if law.act.is_empty() || law.combine == Combine::All { 1.0 } else { 0.0 });
        for term in &law.act {
            let x = term.input.row(u, m);
            for (a, &x) in act.iter_mut().zip(x) {
                let r = term.ratio(x);
                let h = if r.is_infinite() { 1.0 } else { r / (1.0 + r) };
                match law.combine {
                    Combine::All => *a *= h,
                    Combine::Any => *a += h,
                }
            }
        }
        rep.fill(1.0);
        for term in &law.rep {
            let x = term.input.row(u, m);
            rep.iter_mut().zip(x).for_each(|(q, &x)| *q /= 1.0 + term.ratio(x));
        }
        let own = Input::Gene(law.gene).row(u, m);
        for i in 0..len {
            dst[i] = law.p * act[i] * rep[i] - law.d * own[i];
        }
    }
}

impl Kinetics for HillKinetics {
    fn rates(&self, u: ArrayView2<f64>, m: ArrayView2<f64>, out: ArrayViewMut2<f64>) {
        debug_assert!(out.ncols() <= CHUNK);
        thread_local! {
            /// Kept per thread, so no chunk pays for clearing it.
            static SCRATCH: std::cell::RefCell<Scratch> =
                const { std::cell::RefCell::new(Scratch { num: [0.0; CHUNK], den: [0.0; CHUNK], sum: [0.0; CHUNK] }) };
        }
        SCRATCH.with_borrow_mut(|scratch| {
            crate::simd::with_avx2(
                #[inline(always)]
                || self.all_genes(u, m, out, scratch),
            )
        })
    }

    fn jacobian(&self, u: &[f64], m: &[f64], jac: &mut [f64]) {
        let n = self.genes.len();
        jac.fill(0.0);
        for (g, law) in self.genes.iter().enumerate() {
            let a_vals: Vec<f64> = law
                .act
                .iter()
                .map(|t| {
                    let r = t.ratio(t.input.value(u, m));
                    r / (1.0 + r)
                })
                .collect();
            let q_vals: Vec<f64> = law.rep.iter().map(|t| 1.0 / (1.0 + t.ratio(t.input.value(u, m)))).collect();
            let a_total: f64 = match (law.act.is_empty(), law.combine) {
                (true, _) => 1.0,
                (false, Combine::All) => a_vals.iter().product(),
                (false, Combine::Any) => a_vals.iter().sum(),
            };
            let r_total: f64 = q_vals.iter().product();
            let others = |vals: &[f64], skip: usize| -> f64 {
                vals.iter().enumerate().filter(|(k, _)| *k != skip).map(|(_, v)| v).product()
            };
            for (k, t) in law.act.iter().enumerate() {
                if let Input::Gene(j) = t.input {
                    let r = t.ratio(u[j]);
                    let da = t.ratio_slope(u[j]) / ((1.0 + r) * (1.0 + r));
                    let d_a_total = match law.combine {
                        Combine::All => others(&a_vals, k) * da,
                        Combine::Any => da,
                    };
                    jac[g * n + j] += law.p * d_a_total * r_total;
                }
            }
            for (k, t) in law.rep.iter().enumerate() {
                if let Input::Gene(j) = t.input {
                    let r = t.ratio(u[j]);
                    let dq = -t.ratio_slope(u[j]) / ((1.0 + r) * (1.0 + r));
                    jac[g * n + j] += law.p * a_total * others(&q_vals, k) * dq;
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
shape = "exponential"
from = "left"
peak = 1.0
decay_length_um = 2.0
[[gene]]
name = "a"
production = 2.0
decay = 0.5
[[gene]]
name = "b"
production = 1.5
decay = 0.7
combine = "any"
[circuit]
kinetics = "hill"
[[circuit.link]]
from = "m"
to = "a"
sign = "+"
threshold = 0.4
hill = 2
[[circuit.link]]
from = "b"
to = "a"
sign = "-"
threshold = 0.3
hill = 2.5
[[circuit.link]]
from = "a"
to = "b"
sign = "+"
threshold = 0.6
hill = 3
[[circuit.link]]
from = "m"
to = "b"
sign = "+"
threshold = 0.2
hill = 1
[[circuit.link]]
from = "b"
to = "b"
sign = "-"
threshold = 1.1
hill = 4
"#;

    #[test]
    fn rates_follow_the_hill_formula() {
        let model = Model::from_toml(&format!("{HEADER}{CIRCUIT}"), Path::new("t.toml")).unwrap();
        let k = HillKinetics::new(&model);
        let (a, b, m) = (0.8, 0.5, 0.3);
        let mut out = [0.0; 2];
        k.rates_one(&[a, b], &[m], &mut out);
        let hill_up = |x: f64, kk: f64, n: f64| (x / kk).powf(n) / (1.0 + (x / kk).powf(n));
        let hill_dn = |x: f64, kk: f64, n: f64| 1.0 / (1.0 + (x / kk).powf(n));
        let fa = 2.0 * hill_up(m, 0.4, 2.0) * hill_dn(b, 0.3, 2.5) - 0.5 * a;
        let fb = 1.5 * (hill_up(a, 0.6, 3.0) + hill_up(m, 0.2, 1.0)) * hill_dn(b, 1.1, 4.0) - 0.7 * b;
        assert_relative_eq!(out[0], fa, max_relative = 1e-14);
        assert_relative_eq!(out[1], fb, max_relative = 1e-14);
    }

    #[test]
    fn jacobian_matches_finite_differences() {
        let model = Model::from_toml(&format!("{HEADER}{CIRCUIT}"), Path::new("t.toml")).unwrap();
        let k = HillKinetics::new(&model);
        jacobian_matches_differences(&k, &[0.8, 0.5], &[0.3]);
        jacobian_matches_differences(&k, &[0.05, 2.0], &[0.9]);
    }
}
