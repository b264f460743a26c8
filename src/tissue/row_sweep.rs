//! The twisted Thomas solve of a sealed row's gene fields (factors from
//! [`super::row_solve`]), swept block by block so that the work around the
//! solve is done while a block is in cache: the right-hand side of a block
//! is written just before its elimination, and each chunk of nuclei is
//! handed on as soon as its values are final (a time step evaluates the
//! rates there). The two ends of the row are independent until the middle
//! nucleus, so they run on two threads when asked.
//!
//! For gene `g`, with `m`, `1/w`, `up = off/w` the factor's coefficients
//! (see [`TriFactor`]), `p = n/2` and `q = n − 1 − p`:
//!
//! ```text
//! elimination   y_s = b_s − m_s·y_{s−1}              s = 1 … p−1   (top: nucleus s)
//!               z_s = b_s − m_s·z_{s−1}              s = 1 … q−1   (bottom: nucleus n−1−s)
//! middle        x_p = (b_p − m_p·y_{p−1} − m_q·z_{q−1}) / γ
//! substitution  x_s = y_s/w_s − up_s·x_{s+1}         s = p−1 … 0   (and mirrored from the bottom)
//! ```
//! Each value is formed by the same operations in the same order whatever
//! the blocks, the threads or the number of genes swept together.

use std::ops::Range;

use ndarray::{ArrayView2, ArrayViewMut2, Axis, s};

use super::row_solve::TriFactor;

/// Nuclei per block of a sweep: the block's rows of every gene, the
/// right-hand side's inputs and the rates stay in the first two cache levels.
const BLOCK: usize = 256;

/// Rows at least this long are solved by the twisted factorisation.
pub(super) const TWIST_MIN: usize = 3;

/// Work done around a sweep.
pub trait SweepWork: Sync {
    /// Writes the right-hand side of the nuclei `range` (global indices) into
    /// `b` (their columns, [gene, nucleus]); `companion` holds the same
    /// columns of the companion array (see [`SweepWork::done`]).
    fn fill(&self, range: Range<usize>, b: ArrayViewMut2<f64>, companion: ArrayView2<f64>);

    /// The nuclei `range`, one chunk of the grid of chunks given to the sweep,
    /// hold their final values `x`, which may be changed; their columns of the
    /// companion array (read by [`SweepWork::fill`] before) may be rewritten.
    fn done(&self, range: Range<usize>, x: ArrayViewMut2<f64>, companion: ArrayViewMut2<f64>);
}

/// No work: `b` already holds the right-hand side.
pub(super) struct Plain;

impl SweepWork for Plain {
    fn fill(&self, _: Range<usize>, _: ArrayViewMut2<f64>, _: ArrayView2<f64>) {}
    fn done(&self, _: Range<usize>, _: ArrayViewMut2<f64>, _: ArrayViewMut2<f64>) {}
}

/// The rows of a sweep: each gene's current factor (slot 0) and diffusion
/// coefficient (genes without diffusion are a division by `a0`).
#[derive(Clone, Copy)]
pub(super) struct Rows<'a> {
    pub(super) factors: &'a [[TriFactor; 2]],
    pub(super) d: &'a [f64],
    pub(super) a0: f64,
    /// Nuclei per chunk handed to [`SweepWork::done`] (chunks start at multiples of it).
    pub(super) chunk: usize,
}

/// One end of the row: its half of the field and of the companion, and the
/// chain value of each gene between blocks.
struct End<'v> {
    /// True for the top end (nuclei 0 … p−1, s = nucleus), false for the
    /// bottom one (nuclei p … n−1, local index `len − 1 − s`).
    top: bool,
    /// Global index of local column 0.
    offset: usize,
    b: ArrayViewMut2<'v, f64>,
    companion: ArrayViewMut2<'v, f64>,
    chain: &'v mut [f64],
}

/// Solves `(a₀ I − c_g ∇²) x_g = b_g` in place for every gene row of `b` (at
/// least [`TWIST_MIN`] nuclei), with `work` filling each block first and
/// finishing each chunk; `chains` holds two numbers per gene.
pub(super) fn sweep<W: SweepWork>(
    mut b: ArrayViewMut2<f64>,
    mut companion: ArrayViewMut2<f64>,
    rows: Rows,
    chains: &mut [f64],
    work: &W,
    parallel: bool,
) {
    let (genes, n) = b.dim();
    assert!(n >= TWIST_MIN && chains.len() == 2 * genes, "row length or chain storage");
    let (p, q) = (n / 2, n - 1 - n / 2);
    let (top_chain, bottom_chain) = chains.split_at_mut(genes);
    {
        let (bt, bb) = b.view_mut().split_at(Axis(1), p);
        let (ct, cb) = companion.view_mut().split_at(Axis(1), p);
        let mut top = End { top: true, offset: 0, b: bt, companion: ct, chain: top_chain };
        let mut bottom = End { top: false, offset: p, b: bb, companion: cb, chain: bottom_chain };
        let (t, bo) = (&mut top, &mut bottom);
        if parallel {
            rayon::join(|| t.eliminate(rows, p, q, work), || bo.eliminate(rows, q, q, work));
        } else {
            t.eliminate(rows, p, q, work);
            bo.eliminate(rows, q, q, work);
        }
        // The middle nucleus p (local column 0 of the bottom half).
        work.fill(p..p + 1, bottom.b.slice_mut(s![.., 0..1]), bottom.companion.slice(s![.., 0..1]));
        for (g, ((mut row, pair), dg)) in bottom.b.outer_iter_mut().zip(rows.factors).zip(rows.d).enumerate() {
            if *dg == 0.0 {
                row[0] /= rows.a0;
            } else {
                let f = &pair[0];
                row[0] = (row[0] - f.m[p] * top.chain[g] - f.m[q] * bottom.chain[g]) / f.gamma;
                (top.chain[g], bottom.chain[g]) = (row[0], row[0]);
            }
        }
        let (t, bo) = (&mut top, &mut bottom);
        if parallel {
            rayon::join(|| t.substitute(rows, p, q, work), || bo.substitute(rows, q, q, work));
        } else {
            t.substitute(rows, p, q, work);
            bo.substitute(rows, q, q, work);
        }
    }
    // The chunk holding the middle nucleus spans both halves.
    let c = p / rows.chunk * rows.chunk;
    let range = c..(c + rows.chunk).min(n);
    work.done(range.clone(), b.slice_mut(s![.., range.clone()]), companion.slice_mut(s![.., range]));
}

/// Calls `each(genes, count)` for the diffusing genes in groups of up to
/// four (`genes[..count]`), in gene order; their chains are swept together.
fn for_groups(d: &[f64], mut each: impl FnMut([usize; 4], usize)) {
    let (mut genes, mut count) = ([0; 4], 0);
    for (g, _) in d.iter().enumerate().filter(|(_, dg)| **dg != 0.0) {
        genes[count] = g;
        count += 1;
        if count == 4 {
            each(genes, 4);
            count = 0;
        }
    }
    if count > 0 {
        each(genes, count);
    }
}

/// Runs `body::<K>(genes[..K])` with K = `count` (1 to 4) known when compiling.
macro_rules! by_count {
    ($count:expr, $genes:expr, $body:ident ( $($arg:expr),* )) => {
        match $count {
            4 => $body::<4>([$genes[0], $genes[1], $genes[2], $genes[3]] $(, $arg)*),
            3 => $body::<3>([$genes[0], $genes[1], $genes[2]] $(, $arg)*),
            2 => $body::<2>([$genes[0], $genes[1]] $(, $arg)*),
            _ => $body::<1>([$genes[0]] $(, $arg)*),
        }
    };
}

/// The rows `genes` (increasing) of `b`, restricted to the columns `cols`.
fn pick<'a, const K: usize>(
    b: &'a mut ArrayViewMut2<f64>,
    genes: &[usize; K],
    cols: Range<usize>,
) -> [&'a mut [f64]; K] {
    let mut rows = b
        .outer_iter_mut()
        .enumerate()
        .filter(|(g, _)| genes.contains(g))
        .map(|(_, r)| &mut r.into_slice().expect("contiguous gene row")[cols.clone()]);
    std::array::from_fn(|_| rows.next().expect("a picked row"))
}

/// One end's chains over `steps` (in the order given): `x_k ← step(k, s,
/// b, x_k)` with `b` the value of row `k` at step `s` (local index `s −
/// base`, or counted from the rows' far end with `REV`), which it replaces.
#[inline(always)]
fn chains<const K: usize, const REV: bool>(
    rows: &mut [&mut [f64]; K],
    x: &mut [f64; K],
    steps: impl Iterator<Item = usize>,
    base: usize,
    step: impl Fn(usize, usize, f64, f64) -> f64,
) {
    let len = rows[0].len();
    for s in steps {
        let i = if REV { len - 1 - (s - base) } else { s - base };
        for k in 0..K {
            x[k] = step(k, s, rows[k][i], x[k]);
            rows[k][i] = x[k];
        }
    }
}

/// The steps of a block `lo..hi` cut where the coefficients become one
/// repeated number (`h`) and where they stop being so (`q`): `[lo, a)`,
/// `[a, b)` (constant) and `[b, hi)`.
fn cuts(lo: usize, hi: usize, h: usize, q: usize) -> [Range<usize>; 3] {
    let (a, b) = (h.clamp(lo, hi), q.clamp(lo, hi).max(h.clamp(lo, hi)));
    [lo..a, a..b, b..hi]
}

impl End<'_> {
    /// Local columns of the steps `s0..s1`.
    fn columns(&self, s0: usize, s1: usize) -> Range<usize> {
        if self.top { s0..s1 } else { self.b.ncols() - s1..self.b.ncols() - s0 }
    }

    /// Global nuclei of local columns.
    fn global(&self, cols: &Range<usize>) -> Range<usize> {
        self.offset + cols.start..self.offset + cols.end
    }

    /// Eliminates steps `0..last` block by block (`q`: where the bottom end stops).
    fn eliminate<W: SweepWork>(&mut self, rows: Rows, last: usize, q: usize, work: &W) {
        for s0 in (0..last).step_by(BLOCK) {
            let s1 = (s0 + BLOCK).min(last);
            let cols = self.columns(s0, s1);
            let range = self.global(&cols);
            work.fill(range, self.b.slice_mut(s![.., cols.clone()]), self.companion.slice(s![.., cols.clone()]));
            for (mut row, dg) in self.b.outer_iter_mut().zip(rows.d) {
                if *dg == 0.0 {
                    row.slice_mut(s![cols.clone()]).iter_mut().for_each(|v| *v /= rows.a0);
                }
            }
            for_groups(rows.d, |genes, count| by_count!(count, genes, eliminate_group(self, rows, s0..s1, q)));
        }
    }

    /// Substitutes steps `last − 1` down to 0 block by block, handing on each
    /// chunk of this end's half as it is finished.
    fn substitute<W: SweepWork>(&mut self, rows: Rows, last: usize, q: usize, work: &W) {
        let c = rows.chunk;
        let middle = (if self.top { self.b.ncols() } else { self.offset }) / c;
        let mut next = if self.top { middle } else { middle + 1 };
        let ends = last.div_ceil(BLOCK);
        for block in (0..ends).rev() {
            let (s0, s1) = (block * BLOCK, ((block + 1) * BLOCK).min(last));
            for_groups(rows.d, |genes, count| by_count!(count, genes, substitute_group(self, rows, s0..s1, q)));
            // Finished: the top's nuclei from s0 up to the middle; the bottom's up to n − 1 − s0.
            if self.top {
                while next > 0 && (next - 1) * c >= s0 {
                    next -= 1;
                    self.hand_on(next * c..(next + 1) * c, work);
                }
            } else {
                let n = self.offset + self.b.ncols();
                while next * c < n && ((next + 1) * c).min(n) <= n - s0 {
                    self.hand_on(next * c..((next + 1) * c).min(n), work);
                    next += 1;
                }
            }
        }
    }

    fn hand_on<W: SweepWork>(&mut self, range: Range<usize>, work: &W) {
        let cols = range.start - self.offset..range.end - self.offset;
        work.done(range, self.b.slice_mut(s![.., cols.clone()]), self.companion.slice_mut(s![.., cols]));
    }
}

/// The factors, rows (restricted to the block `steps`) and chain values of
/// one group at one end, and the step from which its coefficients repeat.
fn group<'e, 'r, const K: usize>(
    genes: &[usize; K],
    end: &'e mut End<'_>,
    rows: Rows<'r>,
    steps: &Range<usize>,
    q: usize,
) -> ([&'r TriFactor; K], [&'e mut [f64]; K], [f64; K], usize) {
    let f: [&TriFactor; K] = genes.map(|g| &rows.factors[g][0]);
    let x = genes.map(|g| end.chain[g]);
    let h = f.iter().map(|f| f.head).max().unwrap_or(0).clamp(1, q.max(1));
    let cols = end.columns(steps.start, steps.end);
    (f, pick(&mut end.b, genes, cols), x, h)
}

/// [`End::eliminate`] of one group over the steps of a block.
fn eliminate_group<const K: usize>(genes: [usize; K], end: &mut End, rows: Rows, steps: Range<usize>, q: usize) {
    let top = end.top;
    let mut x;
    {
        let (f, mut r, chain, h) = group(&genes, end, rows, &steps, q);
        let base = steps.start;
        let from = if base == 0 {
            // The first nucleus of each end is not eliminated.
            let i = if top { 0 } else { r[0].len() - 1 };
            x = std::array::from_fn(|k| r[k][i]);
            1
        } else {
            x = chain;
            base
        };
        let m: [f64; K] = f.map(|f| f.m[h]);
        let plain = |k: usize, s: usize, b: f64, x: f64| b - f[k].m[s] * x;
        let constant = |k: usize, _: usize, b: f64, x: f64| b - m[k] * x;
        let [a, c, z] = cuts(from, steps.end.max(from), h, q);
        if top {
            chains::<K, false>(&mut r, &mut x, a, base, plain);
            chains::<K, false>(&mut r, &mut x, c, base, constant);
            chains::<K, false>(&mut r, &mut x, z, base, plain);
        } else {
            chains::<K, true>(&mut r, &mut x, a, base, plain);
            chains::<K, true>(&mut r, &mut x, c, base, constant);
            chains::<K, true>(&mut r, &mut x, z, base, plain);
        }
    }
    for (k, g) in genes.into_iter().enumerate() {
        end.chain[g] = x[k];
    }
}

/// [`End::substitute`] of one group over the steps of a block, downwards.
fn substitute_group<const K: usize>(genes: [usize; K], end: &mut End, rows: Rows, steps: Range<usize>, q: usize) {
    let top = end.top;
    let mut x;
    {
        let (f, mut r, chain, h) = group(&genes, end, rows, &steps, q);
        x = chain;
        let base = steps.start;
        let (inv, up): ([f64; K], [f64; K]) = (f.map(|f| f.inv_w[h]), f.map(|f| f.up[h]));
        let plain = |k: usize, s: usize, b: f64, x: f64| b * f[k].inv_w[s] - f[k].up[s] * x;
        let constant = |k: usize, _: usize, b: f64, x: f64| b * inv[k] - up[k] * x;
        let [a, c, z] = cuts(steps.start, steps.end, h, q);
        if top {
            chains::<K, false>(&mut r, &mut x, z.rev(), base, plain);
            chains::<K, false>(&mut r, &mut x, c.rev(), base, constant);
            chains::<K, false>(&mut r, &mut x, a.rev(), base, plain);
        } else {
            chains::<K, true>(&mut r, &mut x, z.rev(), base, plain);
            chains::<K, true>(&mut r, &mut x, c.rev(), base, constant);
            chains::<K, true>(&mut r, &mut x, a.rev(), base, plain);
        }
    }
    for (k, g) in genes.into_iter().enumerate() {
        end.chain[g] = x[k];
    }
}
