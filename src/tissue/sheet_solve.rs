//! Exact implicit diffusion on a sealed sheet: `(a₀ I − c ∇²) u = b` with a
//! cosine transform along x and a tridiagonal solve along y.
//!
//! The type-II DCT along each row diagonalises the x part of the cell-centred
//! no-flux Laplacian, with eigenvalues `λ_p = (2 − 2 cos(πp/nx))/h²`
//! (Strang 1999, SIAM Review 41:135). Each x mode p then leaves the symmetric
//! tridiagonal system `(a₀ + cλ_p) I − c ∇²_y` along y, solved exactly by LU
//! (Thomas) sweeps that run along y and vectorise across the modes. This is
//! the matrix-decomposition form of a fast Poisson solver (Buzbee, Golub &
//! Nielson 1970, SIAM J. Numer. Anal. 7:627): half the transforms of a 2D DCT
//! solve and no transposes, for the same exact answer up to round-off.

use ndarray::{ArrayView2, ArrayViewMut2, Axis};
use rayon::prelude::*;

use super::cosine::{CosineRows, RowScratch};

/// Scratch blocks for row transforms; fixed so results never depend on thread count.
const BLOCKS: usize = 16;
/// Columns per strip of the y sweeps (one task each).
const STRIP: usize = 128;

/// LU factors of `(a₀ + cλ_p) I − c ∇²_y` for every mode p, stored `[row, p]`.
///
/// The interior rows of each mode's matrix are all alike, so its pivots tend
/// to a fixed point; once a whole row of pivots repeats exactly, every later
/// interior row is the same numbers. Only rows `0..head` are stored, then
/// the last row (`head`): the sweeps read a few rows of factors from cache
/// instead of two full-size arrays, with the same bits.
struct ModeFactors {
    a0: f64,
    c: f64,
    m: Vec<f64>,
    inv_w: Vec<f64>,
    /// Stored interior rows; rows `head − 1 ..= ny − 2` share row `head − 1`.
    head: usize,
    /// Working row of pivots `w` (kept to avoid allocating per factorisation).
    pivots: Vec<f64>,
}

impl ModeFactors {
    /// Stored row holding the factors of row `iy` of `ny`.
    #[inline(always)]
    fn row_of(&self, iy: usize, ny: usize) -> usize {
        if iy + 1 == ny { self.head } else { iy.min(self.head - 1) }
    }
}

/// The solver for one sealed sheet of `nx × ny` nuclei (ny > 1).
pub struct SheetSolver {
    nx: usize,
    ny: usize,
    h: f64,
    lam_x: Vec<f64>,
    rows: CosineRows,
    scratch: Vec<RowScratch>,
    /// Two kept factorisations per gene (a fixed-step run alternates between at most two).
    factors: Vec<[ModeFactors; 2]>,
}

impl SheetSolver {
    /// Plans the transform for `nx × ny` nuclei `h` µm apart, for `genes` genes.
    pub fn new(nx: usize, ny: usize, h: f64, genes: usize) -> SheetSolver {
        let rows = CosineRows::new(nx);
        let lam_x =
            (0..nx).map(|p| (2.0 - 2.0 * (std::f64::consts::PI * p as f64 / nx as f64).cos()) / (h * h)).collect();
        let empty =
            || ModeFactors { a0: f64::NAN, c: f64::NAN, m: Vec::new(), inv_w: Vec::new(), head: 1, pivots: Vec::new() };
        SheetSolver {
            nx,
            ny,
            h,
            lam_x,
            scratch: (0..BLOCKS).map(|_| rows.scratch()).collect(),
            rows,
            factors: (0..genes).map(|_| [empty(), empty()]).collect(),
        }
    }

    /// Solves `(a₀ I − c ∇²) u = b` in place for gene `gene`'s field (row-major,
    /// `iy·nx + ix`); with `rhs`, `b` is first built row by row from it
    /// (values from the given offset on).
    pub fn solve_from(
        &mut self,
        gene: usize,
        field: &mut [f64],
        rhs: Option<(&super::diffusion::Rhs, usize)>,
        a0: f64,
        c: f64,
        parallel: bool,
    ) {
        let (nx, ny) = (self.nx, self.ny);
        let pair = &mut self.factors[gene];
        if !(pair[0].a0 == a0 && pair[0].c == c) {
            pair.swap(0, 1);
            if !(pair[0].a0 == a0 && pair[0].c == c) {
                factor(&mut pair[0], &self.lam_x, ny, self.h, a0, c);
            }
        }
        let f = &pair[0];
        let stored = f.head + 1;
        let rows = &self.rows;
        super::diffusion::for_rows(field, nx, &mut self.scratch, parallel, |iy, row, s| {
            if let Some((rhs, offset)) = rhs {
                rhs.fill(offset + iy * nx, row);
            }
            rows.forward(row, s)
        });
        let off = -c / (self.h * self.h);
        let mut view = ArrayViewMut2::from_shape((ny, nx), &mut *field).expect("field is ny x nx");
        let m = ArrayView2::from_shape((stored, nx), &f.m).expect("factor rows x nx");
        let inv_w = ArrayView2::from_shape((stored, nx), &f.inv_w).expect("factor rows x nx");
        let strips = view
            .axis_chunks_iter_mut(Axis(1), STRIP)
            .into_par_iter()
            .zip(m.axis_chunks_iter(Axis(1), STRIP).into_par_iter().zip(inv_w.axis_chunks_iter(Axis(1), STRIP)));
        let row_of = |iy: usize| f.row_of(iy, ny);
        let sweep =
            |(b, (m, w)): (ArrayViewMut2<f64>, (ArrayView2<f64>, ArrayView2<f64>))| sweep_strip(b, m, w, off, &row_of);
        if parallel {
            strips.for_each(sweep);
        } else {
            view.axis_chunks_iter_mut(Axis(1), STRIP)
                .zip(m.axis_chunks_iter(Axis(1), STRIP).zip(inv_w.axis_chunks_iter(Axis(1), STRIP)))
                .for_each(sweep);
        }
        super::diffusion::for_rows(field, nx, &mut self.scratch, parallel, |_, row, s| rows.inverse(row, s));
    }
}

/// LU factors for every x mode: `m_iy = off/w_{iy−1}`, `w_iy = diag_iy − m_iy·off`,
/// computed row by row until a row of pivots repeats exactly (see [`ModeFactors`]).
/// Allocates only when the sheet's first factorisation grows the rows.
fn factor(f: &mut ModeFactors, lam_x: &[f64], ny: usize, h: f64, a0: f64, c: f64) {
    debug_assert!(ny > 1, "a sheet has more than one row");
    let r = c / (h * h);
    let diag = |lam: f64, iy: usize| a0 + c * lam + r * if iy == 0 || iy == ny - 1 { 1.0 } else { 2.0 };
    let ModeFactors { m, inv_w, pivots: w, .. } = f;
    m.clear();
    inv_w.clear();
    w.clear();
    // Row 0.
    w.extend(lam_x.iter().map(|&lam| diag(lam, 0)));
    m.extend(std::iter::repeat_n(0.0, lam_x.len()));
    inv_w.extend(w.iter().map(|w| 1.0 / w));
    // Interior rows, then the last row (its own diagonal).
    let mut head = ny - 1;
    let mut iy = 1;
    while iy < ny {
        let mut same = true;
        for (wp, &lam) in w.iter_mut().zip(lam_x) {
            let mi = -r / *wp;
            let next = diag(lam, iy) + mi * r;
            same &= next == *wp;
            *wp = next;
            m.push(mi);
        }
        inv_w.extend(w.iter().map(|w| 1.0 / w));
        iy = if same && iy + 2 < ny {
            // w_iy = w_{iy−1} makes m_{iy+1} = −r/w_iy = m_iy and so
            // w_{iy+1} = w_iy: rows iy ..= ny − 2 are all this row. On to the last.
            head = iy + 1;
            ny - 1
        } else {
            iy + 1
        };
    }
    (f.head, f.a0, f.c) = (head, a0, c);
}

/// Forward and back sweeps along y for a strip of columns (modes).
/// `row_of(iy)` is the stored factor row of row iy.
fn sweep_strip(
    b: ArrayViewMut2<f64>,
    m: ArrayView2<f64>,
    inv_w: ArrayView2<f64>,
    off: f64,
    row_of: &dyn Fn(usize) -> usize,
) {
    crate::simd::with_avx2(
        #[inline(always)]
        || sweep_strip_body(b, m, inv_w, off, row_of),
    )
}

#[inline(always)]
fn sweep_strip_body(
    mut b: ArrayViewMut2<f64>,
    m: ArrayView2<f64>,
    inv_w: ArrayView2<f64>,
    off: f64,
    row_of: &dyn Fn(usize) -> usize,
) {
    // The running row is carried in a local buffer: rows of the field are a
    // multiple of 4 KiB apart, and reading the row just written would alias
    // in the cache's store buffer.
    let ny = b.nrows();
    let width = b.ncols();
    let mut carry = [0.0f64; STRIP];
    let carry = &mut carry[..width];
    for iy in 0..ny {
        let mut row = b.row_mut(iy);
        let row = row.as_slice_mut().expect("contiguous strip row");
        let m = m.row(row_of(iy));
        let m = m.to_slice().expect("contiguous strip row");
        if iy == 0 {
            carry.copy_from_slice(row);
        } else {
            for ((v, c), &m) in row.iter_mut().zip(carry.iter_mut()).zip(m) {
                *c = *v - m * *c;
                *v = *c;
            }
        }
    }
    for iy in (0..ny).rev() {
        let mut row = b.row_mut(iy);
        let row = row.as_slice_mut().expect("contiguous strip row");
        let w = inv_w.row(row_of(iy));
        let w = w.to_slice().expect("contiguous strip row");
        if iy == ny - 1 {
            for ((v, c), &w) in row.iter_mut().zip(carry.iter_mut()).zip(w) {
                *c = *v * w;
                *v = *c;
            }
        } else {
            for ((v, c), &w) in row.iter_mut().zip(carry.iter_mut()).zip(w) {
                *c = (*v - off * *c) * w;
                *v = *c;
            }
        }
    }
}
