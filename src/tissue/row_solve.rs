//! Exact implicit diffusion on a sealed row: `(a₀ I − c ∇²) u = b`, a
//! symmetric tridiagonal system per gene, solved by kept LU factors (Thomas)
//! in a twisted form, several genes at a time ([`super::row_sweep`]).

use ndarray::ArrayViewMut2;

use super::row_sweep::{Plain, Rows, TWIST_MIN, sweep};

/// A kept factorisation of the symmetric tridiagonal matrix `a₀ I − c ∇²` on a sealed row.
///
/// LU without pivoting (the matrix is diagonally dominant): `m_i = off/w_{i−1}`,
/// `w_i = diag_i − m_i·off`. The back substitution is stored as
/// `x_i = y_i/w_i − (off/w_i)·x_{i+1}`, so both sweeps are one multiply–add
/// per value, and up to four rows are swept together to hide the latency.
#[derive(Debug, Clone)]
pub struct TriFactor {
    a0: f64,
    c: f64,
    h: f64,
    pub(super) inv_w: Vec<f64>,
    /// off/w_i (0 for the last nucleus).
    pub(super) up: Vec<f64>,
    pub(super) m: Vec<f64>,
    /// Pivot of the middle nucleus in the twisted solve (see [`super::row_sweep`]).
    pub(super) gamma: f64,
    /// From this nucleus up to the middle, `m`, `inv_w` and `up` are each one
    /// repeated number (see [`factor_together`]).
    pub(super) head: usize,
}

impl TriFactor {
    /// An empty factor for a row of `n` nuclei with spacing `h` µm.
    pub fn new(n: usize, h: f64) -> TriFactor {
        TriFactor {
            a0: f64::NAN,
            c: f64::NAN,
            h,
            inv_w: vec![0.0; n],
            up: vec![0.0; n],
            m: vec![0.0; n],
            gamma: 0.0,
            head: n,
        }
    }

    /// True if the factor is for `(a0, c)`.
    pub fn is_for(&self, a0: f64, c: f64) -> bool {
        self.a0 == a0 && self.c == c
    }

    /// Factors `a₀ I − c ∇²` (c in µm², so `c/h²` is dimensionless); no allocation.
    pub fn factor(&mut self, a0: f64, c: f64) {
        factor_together([self], a0, [c]);
    }

    /// Solves in place: `b ← (a₀ I − c ∇²)⁻¹ b`.
    ///
    /// # Panics
    /// If `b` is not as long as the row.
    pub fn solve(&self, b: &mut [f64]) {
        let n = self.m.len();
        assert_eq!(b.len(), n, "row length");
        if n < TWIST_MIN {
            return solve_short(self, b);
        }
        let mut chains = [0.0; 2];
        let pair = [self.clone(), self.clone()];
        let rows = Rows { factors: std::slice::from_ref(&pair), d: &[1.0], a0: self.a0, chunk: n };
        let b = ArrayViewMut2::from_shape((1, n), b).expect("one row");
        let none = ArrayViewMut2::from_shape((0, n), &mut [][..]).expect("no rows");
        sweep(b, none, rows, &mut chains, &Plain, false);
    }
}

/// Factors the held rows (up to four, each with its `c`) together and empties the slots.
pub(super) fn factor_held(held: &mut [Option<(&mut TriFactor, f64)>; 4], a0: f64) {
    let mut take = || held.iter_mut().find_map(Option::take);
    match (take(), take(), take(), take()) {
        (Some(a), Some(b), Some(c), Some(d)) => factor_together([a.0, b.0, c.0, d.0], a0, [a.1, b.1, c.1, d.1]),
        (Some(a), Some(b), Some(c), None) => factor_together([a.0, b.0, c.0], a0, [a.1, b.1, c.1]),
        (Some(a), Some(b), None, None) => factor_together([a.0, b.0], a0, [a.1, b.1]),
        (Some(a), None, None, None) => factor_together([a.0], a0, [a.1]),
        _ => {}
    }
}

/// Factors `K` rows at once, row k for `a₀ I − c_k ∇²` (interleaved: the
/// `K` pivot recurrences are independent, so their division latencies
/// overlap); each row's arithmetic is the same as alone.
///
/// Only the pivots the solve reads are formed: up to the middle nucleus for
/// the twisted solve. Away from the ends the recurrence `w ← d − off²/w` has
/// the same input every time, so once a pivot repeats exactly every later one
/// is the same number: the rest is filled in, bit-identical to forming it and
/// free of the division chain (with small `c/h²`, as on error-controlled rows
/// whose step keeps changing, that happens within a few nuclei).
///
/// # Panics
/// If the rows differ in length.
fn factor_together<const K: usize>(mut f: [&mut TriFactor; K], a0: f64, c: [f64; K]) {
    let n = f[0].m.len();
    assert!(f.iter().all(|f| f.m.len() == n), "row length");
    if n == 0 {
        return;
    }
    let r: [f64; K] = std::array::from_fn(|k| c[k] / (f[k].h * f[k].h));
    let off = r.map(|r| -r);
    // Diagonal: a₀ + r·(number of neighbours).
    let edge = r.map(|r| a0 + r * if n == 1 { 0.0 } else { 1.0 });
    let inner = r.map(|r| a0 + r * 2.0);
    // Last pivot the solve reads: the middle one when twisted (n ≥ 3, so it
    // is an inner nucleus), else the last nucleus.
    let last = if n >= TWIST_MIN { n / 2 } else { n - 1 };
    let mut w = edge;
    for k in 0..K {
        f[k].inv_w[0] = 1.0 / w[k];
        f[k].m[0] = 0.0;
        f[k].up[0] = if n > 1 { off[k] * f[k].inv_w[0] } else { 0.0 };
    }
    for t in f.iter_mut() {
        t.head = last + 1;
    }
    let mut i = 1;
    while i <= last {
        let d = if i == n - 1 { edge } else { inner };
        let mut repeated = i < n - 1;
        for k in 0..K {
            let m = off[k] / w[k];
            let next = d[k] - m * off[k];
            repeated &= next == w[k];
            w[k] = next;
            let t = &mut *f[k];
            t.m[i] = m;
            t.inv_w[i] = 1.0 / next;
            t.up[i] = if i + 1 < n { off[k] * t.inv_w[i] } else { 0.0 };
        }
        i += 1;
        if repeated {
            // Inner nuclei only here (i ≤ last ≤ n − 2 when twisted), so
            // every later pivot equals this one.
            for t in f.iter_mut() {
                let (m, inv, up) = (t.m[i - 1], t.inv_w[i - 1], t.up[i - 1]);
                t.m[i..=last].fill(m);
                t.inv_w[i..=last].fill(inv);
                t.up[i..=last].fill(up);
                t.head = i - 1;
            }
            break;
        }
    }
    for k in 0..K {
        let t = &mut *f[k];
        (t.a0, t.c) = (a0, c[k]);
        if n >= TWIST_MIN {
            // Both ends eliminated up to the middle p = n/2: its pivot is its
            // diagonal less both neighbours' eliminations.
            let (p, q) = (n / 2, n - 1 - n / 2);
            t.gamma = inner[k] - t.m[p] * off[k] - t.m[q] * off[k];
        }
    }
}

/// Solves a row of fewer than [`TWIST_MIN`] nuclei: elimination downwards,
/// substitution upwards.
pub(super) fn solve_short(f: &TriFactor, b: &mut [f64]) {
    let n = b.len();
    if n == 0 {
        return;
    }
    let mut prev = b[0];
    for i in 1..n {
        prev = b[i] - f.m[i] * prev;
        b[i] = prev;
    }
    let mut next = 0.0;
    for i in (0..n).rev() {
        next = b[i] * f.inv_w[i] - f.up[i] * next;
        b[i] = next;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The pivots filled in once they repeat are the very numbers the full
    /// recurrence gives (bit for bit), for rows that converge early, late or
    /// not before the middle, factored one or three at a time.
    #[test]
    fn filled_pivots_equal_the_full_recurrence() {
        for n in [1usize, 2, 3, 4, 5, 40, 1001] {
            let h = 1.5;
            let cs = [1e-3, 0.7, 60.0];
            let mut together: Vec<TriFactor> = cs.iter().map(|_| TriFactor::new(n, h)).collect();
            let [a, b, c] = &mut together[..] else { unreachable!() };
            factor_together([a, b, c], 3.0, cs);
            for (t, &c) in together.iter().zip(&cs) {
                let mut alone = TriFactor::new(n, h);
                alone.factor(3.0, c);
                // The plain recurrence over every nucleus.
                let r = c / (h * h);
                let diag = |i: usize| {
                    3.0 + r * if n == 1 {
                        0.0
                    } else if i == 0 || i == n - 1 {
                        1.0
                    } else {
                        2.0
                    }
                };
                let mut w = diag(0);
                let used = if n >= TWIST_MIN { n / 2 } else { n - 1 };
                for i in 0..=used {
                    if i > 0 {
                        let m = -r / w;
                        w = diag(i) - m * -r;
                        assert_eq!(t.m[i].to_bits(), m.to_bits(), "n {n} c {c} m[{i}]");
                    }
                    assert_eq!(t.inv_w[i].to_bits(), (1.0 / w).to_bits(), "n {n} c {c} inv_w[{i}]");
                    let up = if i + 1 < n { -r * (1.0 / w) } else { 0.0 };
                    assert_eq!(t.up[i].to_bits(), up.to_bits(), "n {n} c {c} up[{i}]");
                    for (x, y) in [(t.m[i], alone.m[i]), (t.inv_w[i], alone.inv_w[i]), (t.up[i], alone.up[i])] {
                        assert_eq!(x.to_bits(), y.to_bits(), "grouped and alone differ");
                    }
                }
            }
        }
    }

    #[test]
    fn pivots_settle_at_once_part_way_or_not_before_the_middle() {
        let heads: Vec<usize> = [1e-4, 400.0, 1e5]
            .iter()
            .map(|&c| {
                let mut t = TriFactor::new(501, 1.5);
                t.factor(3.0, c);
                t.head
            })
            .collect();
        assert!(heads[0] < 10 && heads[1] > 10 && heads[1] < 249 && heads[2] > 250, "heads {heads:?}");
    }
}
