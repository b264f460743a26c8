//! Exact implicit diffusion on a sealed row: `(a₀ I − c ∇²) u = b`, a
//! symmetric tridiagonal system per gene, solved by kept LU factors (Thomas)
//! in a twisted form, several genes at a time.

use super::held_ends::HeldEnds;

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
    inv_w: Vec<f64>,
    /// off/w_i (0 for the last nucleus).
    up: Vec<f64>,
    m: Vec<f64>,
    /// Pivot of the middle nucleus in the twisted solve (see [`solve_together`]).
    gamma: f64,
    /// From this nucleus up to the middle, `m`, `inv_w` and `up` are each one
    /// repeated number (see [`factor_together`]).
    head: usize,
    /// The correction for ends that hold a level, if any ([`HeldEnds`]).
    ends: Option<Box<HeldEnds>>,
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
            ends: None,
        }
    }

    /// The same factor for a row whose left and/or right end holds a level
    /// (`held` = [left, right]): the matrix gains `2c/h²` on the diagonal
    /// there, solved by [`HeldEnds`]'s correction in [`sweep_genes`].
    pub fn with_held_ends(mut self, held: [bool; 2]) -> TriFactor {
        if held.iter().any(|&h| h) {
            self.ends = Some(Box::new(HeldEnds::new(self.m.len(), held)));
        }
        self
    }

    /// True if the factor is for `(a0, c)`.
    pub fn is_for(&self, a0: f64, c: f64) -> bool {
        self.a0 == a0 && self.c == c
    }

    /// Factors `a₀ I − c ∇²` (c in µm², so `c/h²` is dimensionless); no allocation.
    pub fn factor(&mut self, a0: f64, c: f64) {
        factor_together([self], a0, [c]);
    }

    /// Solves in place: `b ← (a₀ I − c ∇²)⁻¹ b` with sealed ends (held
    /// ends are corrected for by [`sweep_genes`]).
    ///
    /// # Panics
    /// If `b` is not as long as the row.
    pub fn solve(&self, b: &mut [f64]) {
        solve_together([self], [b]);
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
    for t in f.iter_mut() {
        if let Some(mut ends) = t.ends.take() {
            ends.refresh(t, t.c, t.h);
            t.ends = Some(ends);
        }
    }
}

/// Rows at least this long are solved by the twisted factorisation.
const TWIST_MIN: usize = 3;

/// Solves `K` rows at once, each with its own factor.
///
/// A twisted factorisation ("burn at both ends"; van der Vorst 1987,
/// Parallel Computing 5:45; Meurant 1992, SIAM J. Matrix Anal. Appl.
/// 13:707): elimination runs down from the first nucleus and up from the
/// last, meets at the middle nucleus `p = n/2`, which is solved first
/// (`x_p = (b_p − m_p y_{p−1} − m_q z_{p+1})/γ`), and back substitution runs
/// outwards from it. The matrix reads the same from either end, so the
/// elimination from the last nucleus uses the same coefficients, mirrored.
/// That gives 2K independent recurrences swept together, whose latencies
/// overlap; each row's arithmetic is the same however rows are grouped.
///
/// # Panics
/// If a row's length differs from its factor's.
fn solve_together<const K: usize>(f: [&TriFactor; K], b: [&mut [f64]; K]) {
    let n = f[0].m.len();
    for k in 0..K {
        assert!(b[k].len() == n && f[k].m.len() == n, "row length");
    }
    if n == 0 {
        return;
    }
    if n < TWIST_MIN {
        let mut prev: [f64; K] = std::array::from_fn(|k| b[k][0]);
        for i in 1..n {
            for k in 0..K {
                prev[k] = b[k][i] - f[k].m[i] * prev[k];
                b[k][i] = prev[k];
            }
        }
        let mut next = [0.0; K];
        for i in (0..n).rev() {
            for k in 0..K {
                next[k] = b[k][i] * f[k].inv_w[i] - f[k].up[i] * next[k];
                b[k][i] = next[k];
            }
        }
        return;
    }
    // Top end: nuclei 0..p; bottom end: nuclei n−1 down to p+1 (s = 0..q).
    let p = n / 2;
    let q = n - 1 - p;
    // From `h` on the coefficients are constants (no loads in the chains).
    let h = f.iter().map(|f| f.head).max().unwrap_or(0).clamp(1, q.max(1));
    let mut top: [f64; K] = std::array::from_fn(|k| b[k][0]);
    let mut bottom: [f64; K] = std::array::from_fn(|k| b[k][n - 1]);
    for s in 1..h {
        for k in 0..K {
            let m = f[k].m[s];
            top[k] = b[k][s] - m * top[k];
            b[k][s] = top[k];
            bottom[k] = b[k][n - 1 - s] - m * bottom[k];
            b[k][n - 1 - s] = bottom[k];
        }
    }
    let m: [f64; K] = std::array::from_fn(|k| f[k].m[h]);
    for s in h..q {
        for k in 0..K {
            top[k] = b[k][s] - m[k] * top[k];
            b[k][s] = top[k];
            bottom[k] = b[k][n - 1 - s] - m[k] * bottom[k];
            b[k][n - 1 - s] = bottom[k];
        }
    }
    for s in q..p {
        for k in 0..K {
            top[k] = b[k][s] - f[k].m[s] * top[k];
            b[k][s] = top[k];
        }
    }
    for k in 0..K {
        b[k][p] = (b[k][p] - f[k].m[p] * top[k] - f[k].m[q] * bottom[k]) / f[k].gamma;
        top[k] = b[k][p];
        bottom[k] = b[k][p];
    }
    for s in (q..p).rev() {
        for k in 0..K {
            top[k] = b[k][s] * f[k].inv_w[s] - f[k].up[s] * top[k];
            b[k][s] = top[k];
        }
    }
    let (inv, up): ([f64; K], [f64; K]) = (std::array::from_fn(|k| f[k].inv_w[h]), std::array::from_fn(|k| f[k].up[h]));
    for s in (h..q).rev() {
        for k in 0..K {
            top[k] = b[k][s] * inv[k] - up[k] * top[k];
            b[k][s] = top[k];
            bottom[k] = b[k][n - 1 - s] * inv[k] - up[k] * bottom[k];
            b[k][n - 1 - s] = bottom[k];
        }
    }
    for s in (0..h.min(q)).rev() {
        for k in 0..K {
            let (inv, up) = (f[k].inv_w[s], f[k].up[s]);
            top[k] = b[k][s] * inv - up * top[k];
            b[k][s] = top[k];
            bottom[k] = b[k][n - 1 - s] * inv - up * bottom[k];
            b[k][n - 1 - s] = bottom[k];
        }
    }
}

/// Sweeps the gene rows of `field` (`n` nuclei each) whose diffusion is not
/// zero, four at a time, with each gene's current factor (slot 0); no allocation.
pub(super) fn sweep_genes(field: &mut [f64], n: usize, factors: &[[TriFactor; 2]], d: &[f64]) {
    let mut held: [Option<(&TriFactor, &mut [f64])>; 4] = [None, None, None, None];
    let mut count = 0;
    let flush = |held: &mut [Option<(&TriFactor, &mut [f64])>; 4], count: usize| {
        let mut take = || held.iter_mut().find_map(Option::take).expect("held row");
        match count {
            4 => {
                let (a, b, c, d) = (take(), take(), take(), take());
                solve_together([a.0, b.0, c.0, d.0], [a.1, b.1, c.1, d.1]);
            }
            3 => {
                let (a, b, c) = (take(), take(), take());
                solve_together([a.0, b.0, c.0], [a.1, b.1, c.1]);
            }
            2 => {
                let (a, b) = (take(), take());
                solve_together([a.0, b.0], [a.1, b.1]);
            }
            1 => {
                let a = take();
                solve_together([a.0], [a.1]);
            }
            _ => {}
        }
    };
    for ((row, pair), dg) in field.chunks_exact_mut(n).zip(factors).zip(d) {
        if *dg != 0.0 {
            held[count] = Some((&pair[0], row));
            count += 1;
            if count == 4 {
                flush(&mut held, count);
                count = 0;
            }
        }
    }
    flush(&mut held, count);
    for ((row, pair), dg) in field.chunks_exact_mut(n).zip(factors).zip(d) {
        if let (Some(ends), true) = (&pair[0].ends, *dg != 0.0) {
            ends.correct(row);
        }
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
