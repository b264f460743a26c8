//! Implicit diffusion: solves `(a₀ I − c ∇²) u = b` for each gene's field,
//! with `∇²` the cell-centred five-point (three-point in a row) Laplacian, µm⁻².
//!
//! - Sealed row: the system is symmetric tridiagonal; mirror ghost nuclei give
//!   `(∇²u)₀ = (u₁ − u₀)/h²`. Solved exactly by the Thomas algorithm, O(N),
//!   with the factorisation kept while `(a₀, c)` stays the same
//!   ([`super::row_solve`]).
//! - Sealed sheets: a cosine transform along x and tridiagonal sweeps along y
//!   ([`super::sheet_solve`]).
//! - Periodic rows and sheets: the Laplacian is diagonalised exactly by the
//!   discrete Fourier transform, with eigenvalues of `−∇²` along one axis
//!   `λ_p = (2 − 2 cos θ_p)/h²`, `θ_p = 2πp/n` (`πp/n` for the sealed
//!   cosine case) (Strang 1999, SIAM Review 41:135, "The discrete cosine
//!   transform").

use std::sync::Arc;

use ndarray::Array2;
use rayon::prelude::*;
use rustfft::num_complex::Complex64;
use rustfft::{Fft, FftPlanner};

use super::edges::laplacian;
use super::row_solve::{TriFactor, factor_held, sweep_genes};
use crate::model::{Edges, Grid};

/// Scratch blocks for row transforms; fixed so results never depend on thread count.
const BLOCKS: usize = 16;
/// Below this many nuclei per gene, genes are solved one after the other.
const PARALLEL_MIN: usize = 4096;

/// Exact spectral solve on a periodic row or sheet of `nx × ny` nuclei (the
/// discrete Fourier transform diagonalises the periodic Laplacian; sealed
/// sheets use [`super::sheet_solve::SheetSolver`]).
pub struct SpectralSolver {
    nx: usize,
    ny: usize,
    lam_x: Vec<f64>,
    lam_y: Vec<f64>,
    x: [Arc<dyn Fft<f64>>; 2],
    y: [Arc<dyn Fft<f64>>; 2],
    complex: Vec<Complex64>,
    complex_t: Vec<Complex64>,
    scratch: Vec<Vec<Complex64>>,
}

/// Eigenvalues of `−∇²` along one axis of `n` nuclei, µm⁻².
pub(super) fn axis_eigenvalues(n: usize, h: f64, edges: Edges) -> Vec<f64> {
    let period = match edges {
        Edges::Sealed => std::f64::consts::PI,
        Edges::Periodic => 2.0 * std::f64::consts::PI,
    };
    (0..n).map(|p| (2.0 - 2.0 * (period * p as f64 / n as f64).cos()) / (h * h)).collect()
}

/// Runs `f(row_index, row, scratch)` over the rows of `data`, in fixed blocks.
pub(super) fn for_rows<T: Send, S: Send>(
    data: &mut [T],
    row_len: usize,
    scratch: &mut [S],
    parallel: bool,
    f: impl Fn(usize, &mut [T], &mut S) + Sync,
) {
    let rows = data.len() / row_len;
    let per_block = rows.div_ceil(scratch.len()).max(1);
    let run = |(b, (block, s)): (usize, (&mut [T], &mut S))| {
        for (k, row) in block.chunks_exact_mut(row_len).enumerate() {
            f(b * per_block + k, row, s);
        }
    };
    if parallel {
        data.par_chunks_mut(per_block * row_len).zip(scratch.par_iter_mut()).enumerate().for_each(run);
    } else {
        data.chunks_mut(per_block * row_len).zip(scratch.iter_mut()).enumerate().for_each(run);
    }
}

/// `dst[c·rows + r] = src[r·cols + c]`.
fn transpose<T: Copy + Send + Sync>(src: &[T], dst: &mut [T], rows: usize, cols: usize, parallel: bool) {
    const TILE: usize = 32;
    let body = |(tile, out): (usize, &mut [T])| {
        let c0 = tile * TILE;
        let width = out.len() / rows;
        for r0 in (0..rows).step_by(TILE) {
            for r in r0..(r0 + TILE).min(rows) {
                let src_row = &src[r * cols + c0..r * cols + c0 + width];
                for (dc, v) in src_row.iter().enumerate() {
                    out[dc * rows + r] = *v;
                }
            }
        }
    };
    if parallel {
        dst.par_chunks_mut(TILE * rows).enumerate().for_each(body);
    } else {
        dst.chunks_mut(TILE * rows).enumerate().for_each(body);
    }
}

impl SpectralSolver {
    /// Plans the transforms for a periodic grid.
    pub fn new(grid: &Grid) -> SpectralSolver {
        let (nx, ny) = (grid.nx, grid.ny);
        let mut planner = FftPlanner::new();
        let x = [planner.plan_fft_forward(nx), planner.plan_fft_inverse(nx)];
        let y = [planner.plan_fft_forward(ny), planner.plan_fft_inverse(ny)];
        let len = x.iter().chain(y.iter()).map(|p| p.get_inplace_scratch_len()).max().unwrap_or(0);
        let n = nx * ny;
        SpectralSolver {
            nx,
            ny,
            lam_x: axis_eigenvalues(nx, grid.spacing_um, Edges::Periodic),
            lam_y: axis_eigenvalues(ny, grid.spacing_um, Edges::Periodic),
            x,
            y,
            complex: vec![Complex64::default(); n],
            complex_t: if ny == 1 { Vec::new() } else { vec![Complex64::default(); n] },
            scratch: (0..BLOCKS).map(|_| vec![Complex64::default(); len]).collect(),
        }
    }

    /// Solves `(a₀ I − c ∇²) u = b` in place on one field (row-major, `iy·nx + ix`).
    pub fn solve(&mut self, field: &mut [f64], a0: f64, c: f64, parallel: bool) {
        let (nx, ny) = (self.nx, self.ny);
        let (lx, ly) = (&self.lam_x, &self.lam_y);
        let (x, y) = (&self.x, &self.y);
        let norm = 1.0 / (nx * ny) as f64;
        let scratch = &mut self.scratch;
        for (z, v) in self.complex.iter_mut().zip(field.iter()) {
            *z = Complex64::new(*v, 0.0);
        }
        for_rows(&mut self.complex, nx, scratch, parallel, |_, row, s| x[0].process_with_scratch(row, s));
        if ny > 1 {
            transpose(&self.complex, &mut self.complex_t, ny, nx, parallel);
            for_rows(&mut self.complex_t, ny, scratch, parallel, |ix, row, s| {
                y[0].process_with_scratch(row, s);
                for (v, l) in row.iter_mut().zip(ly) {
                    *v *= norm / (a0 + c * (lx[ix] + l));
                }
                y[1].process_with_scratch(row, s);
            });
            transpose(&self.complex_t, &mut self.complex, nx, ny, parallel);
        } else {
            for (v, l) in self.complex.iter_mut().zip(lx) {
                *v *= norm / (a0 + c * l);
            }
        }
        for_rows(&mut self.complex, nx, scratch, parallel, |_, row, s| x[1].process_with_scratch(row, s));
        for (v, z) in field.iter_mut().zip(self.complex.iter()) {
            *v = z.re;
        }
    }
}

enum Solver {
    /// One pair of kept factors per gene (a fixed-step run alternates between at most two).
    Thomas(Vec<[TriFactor; 2]>),
    /// Sealed sheets.
    Sheet(Box<super::sheet_solve::SheetSolver>),
    /// Periodic rows and sheets.
    Spectral(Box<SpectralSolver>),
}

/// The SBDF2 right-hand side `cu·u − cu1·u1 + kf·(cf·f − cf1·f1)` over the
/// flattened `[gene, nucleus]` arrays, computed where a solve first reads it
/// (saving a pass over memory) with the same operations in the same order.
pub struct Rhs<'a> {
    /// State.
    pub u: &'a [f64],
    /// Previous state; `None` when the output array already holds it (it is
    /// then overwritten value by value, which keeps one array fewer in cache).
    pub u1: Option<&'a [f64]>,
    /// Rates.
    pub f: &'a [f64],
    /// Previous rates.
    pub f1: &'a [f64],
    /// Coefficients `[cu, cu1, kf, cf, cf1]`.
    pub c: [f64; 5],
}

impl Rhs<'_> {
    /// Writes the right-hand side of values `offset..offset + out.len()`
    /// (AVX2 vectors where the CPU has them; same bits).
    #[inline]
    pub fn fill(&self, offset: usize, out: &mut [f64]) {
        crate::simd::with_avx2(
            #[inline(always)]
            || self.fill_plain(offset, out),
        )
    }

    #[inline(always)]
    fn fill_plain(&self, offset: usize, out: &mut [f64]) {
        let [cu, cu1, kf, cf, cf1] = self.c;
        let end = offset + out.len();
        let (u, f, f1) = (&self.u[offset..end], &self.f[offset..end], &self.f1[offset..end]);
        let value = |u: f64, u1: f64, f: f64, f1: f64| cu * u - cu1 * u1 + kf * (cf * f - cf1 * f1);
        match self.u1 {
            Some(u1) => {
                let u1 = &u1[offset..end];
                for ((((r, &u), &u1), &f), &f1) in out.iter_mut().zip(u).zip(u1).zip(f).zip(f1) {
                    *r = value(u, u1, f, f1);
                }
            }
            None => {
                for (((r, &u), &f), &f1) in out.iter_mut().zip(u).zip(f).zip(f1) {
                    *r = value(u, *r, f, f1);
                }
            }
        }
    }
}

/// Implicit diffusion for all genes of a tissue.
pub struct Diffusion {
    grid: Grid,
    /// Coefficients in use, µm²/min: [`Self::base`] times the last scale.
    d: Vec<f64>,
    /// Coefficients as given, µm²/min.
    base: Vec<f64>,
    /// Per gene, the edges holding a level (left, right, bottom, top).
    held: Vec<[bool; 4]>,
    solver: Solver,
}

impl Diffusion {
    /// Prepares solves on `grid` for genes with diffusion coefficients `d`
    /// (µm²/min) whose edges (left, right, bottom, top) hold a level where
    /// `held` says so (no entry: all sealed). Held edges are for rows.
    ///
    /// # Panics
    /// If a sheet or a periodic row has a held edge (the model refuses them).
    pub fn new(grid: &Grid, d: &[f64], held: &[[bool; 4]]) -> Diffusion {
        let held: Vec<[bool; 4]> = (0..d.len()).map(|g| held.get(g).copied().unwrap_or_default()).collect();
        assert!(
            held.iter().all(|h| !h.contains(&true)) || (!grid.is_sheet() && grid.edges == Edges::Sealed),
            "levels held at an edge are for sealed rows"
        );
        let solver = if !grid.is_sheet() && grid.edges == Edges::Sealed {
            let factor = |h: &[bool; 4]| TriFactor::new(grid.nx, grid.spacing_um).with_held_ends([h[0], h[1]]);
            Solver::Thomas(held.iter().map(|h| [factor(h), factor(h)]).collect())
        } else if grid.edges == Edges::Sealed {
            Solver::Sheet(Box::new(super::sheet_solve::SheetSolver::new(grid.nx, grid.ny, grid.spacing_um, d.len())))
        } else {
            Solver::Spectral(Box::new(SpectralSolver::new(grid)))
        };
        Diffusion { grid: *grid, d: d.to_vec(), base: d.to_vec(), held, solver }
    }

    /// Uses `scale`·D_g for every gene from now on (a growing row's grid
    /// stretched by e: scale = e⁻²); factors are rebuilt as needed.
    pub fn scale_to(&mut self, scale: f64) {
        for (d, b) in self.d.iter_mut().zip(&self.base) {
            *d = b * scale;
        }
    }

    /// `out_g ← D_g ∇²u_g` for every gene g (rows), explicitly, a.u./min
    /// (the linear part: a held edge's level is a source with the reactions).
    pub fn apply(&self, u: &Array2<f64>, out: &mut Array2<f64>) {
        for (((mut out, row), dg), held) in out.outer_iter_mut().zip(u.outer_iter()).zip(&self.d).zip(&self.held) {
            let out = out.as_slice_mut().expect("standard layout");
            if *dg == 0.0 {
                out.fill(0.0);
            } else {
                laplacian(&self.grid, *held, row.as_slice().expect("standard layout"), out);
                out.iter_mut().for_each(|v| *v *= dg);
            }
        }
    }

    /// [`Self::solve`] with `b` given by `rhs` (built inside the row
    /// transforms on sealed sheets, beforehand otherwise).
    pub fn solve_rhs(&mut self, b: &mut Array2<f64>, rhs: &Rhs, a0: f64, k: f64, parallel: bool) {
        let n = b.ncols();
        if let Solver::Sheet(sheet) = &mut self.solver {
            for (g, (mut row, dg)) in b.outer_iter_mut().zip(&self.d).enumerate() {
                let row = row.as_slice_mut().expect("standard layout");
                if *dg == 0.0 {
                    rhs.fill(g * n, row);
                    row.iter_mut().for_each(|v| *v /= a0);
                } else {
                    sheet.solve_from(g, row, Some((rhs, g * n)), a0, k * dg, parallel);
                }
            }
            return;
        }
        let flat = b.as_slice_mut().expect("standard layout");
        const BLOCK: usize = 4096;
        if parallel && flat.len() >= 2 * BLOCK {
            flat.par_chunks_mut(BLOCK).enumerate().for_each(|(i, c)| rhs.fill(i * BLOCK, c));
        } else {
            rhs.fill(0, flat);
        }
        self.solve(b, a0, k, parallel);
    }

    /// Solves `(a₀ I − k·D_g ∇²) u_g = b_g` in place for every gene g (rows of `b`).
    pub fn solve(&mut self, b: &mut Array2<f64>, a0: f64, k: f64, parallel: bool) {
        let d = &self.d;
        match &mut self.solver {
            Solver::Thomas(factors) => {
                // Make sure slot 0 of each diffusing gene holds its factor, then
                // sweep (genes without diffusion are a division), in two halves
                // of the genes when parallel.
                let n = b.ncols();
                let mut stale: [Option<(&mut TriFactor, f64)>; 4] = [None, None, None, None];
                let mut count = 0;
                for ((mut row, pair), dg) in b.outer_iter_mut().zip(factors.iter_mut()).zip(d) {
                    let c = k * dg;
                    if *dg == 0.0 {
                        row.iter_mut().for_each(|v| *v /= a0);
                    } else if !pair[0].is_for(a0, c) {
                        pair.swap(0, 1);
                        if !pair[0].is_for(a0, c) {
                            stale[count] = Some((&mut pair[0], c));
                            count += 1;
                            if count == 4 {
                                factor_held(&mut stale, a0);
                                count = 0;
                            }
                        }
                    }
                }
                factor_held(&mut stale, a0);
                let field = b.as_slice_mut().expect("standard layout");
                let genes = d.len();
                if parallel && genes > 1 && n >= PARALLEL_MIN {
                    let half = genes.div_ceil(2);
                    let (first, second) = field.split_at_mut(half * n);
                    rayon::join(
                        || sweep_genes(first, n, &factors[..half], &d[..half]),
                        || sweep_genes(second, n, &factors[half..], &d[half..]),
                    );
                } else {
                    sweep_genes(field, n, factors, d);
                }
            }
            Solver::Sheet(sheet) => {
                for (g, (mut row, dg)) in b.outer_iter_mut().zip(d).enumerate() {
                    let row = row.as_slice_mut().expect("standard layout");
                    if *dg == 0.0 {
                        row.iter_mut().for_each(|v| *v /= a0);
                    } else {
                        sheet.solve_from(g, row, None, a0, k * dg, parallel);
                    }
                }
            }
            Solver::Spectral(spectral) => {
                for (mut row, dg) in b.outer_iter_mut().zip(d) {
                    let row = row.as_slice_mut().expect("standard layout");
                    if *dg == 0.0 {
                        row.iter_mut().for_each(|v| *v /= a0);
                    } else {
                        spectral.solve(row, a0, k * dg, parallel);
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Applies `a₀ I − c ∇²` with the library's explicit Laplacian.
    fn apply(grid: &Grid, u: &[f64], a0: f64, c: f64) -> Vec<f64> {
        let mut lap = vec![0.0; u.len()];
        laplacian(grid, [false; 4], u, &mut lap);
        u.iter().zip(&lap).map(|(u, l)| a0 * u - c * l).collect()
    }

    fn check_inverse(nx: usize, ny: usize, edges: Edges) {
        let grid = Grid { nx, ny, spacing_um: 1.5, edges };
        let u: Vec<f64> = (0..nx * ny).map(|i| ((i * 7919) % 101) as f64 / 10.0).collect();
        let b = apply(&grid, &u, 3.0, 2.5);
        let mut arr = Array2::from_shape_vec((1, nx * ny), b).unwrap();
        let mut diffusion = Diffusion::new(&grid, &[1.0], &[]);
        for parallel in [false, true] {
            let mut x = arr.clone();
            diffusion.solve(&mut x, 3.0, 2.5, parallel);
            for (got, want) in x.iter().zip(&u) {
                assert_relative_eq!(*got, *want, epsilon = 1e-10, max_relative = 1e-10);
            }
        }
        arr.fill(0.0);
    }

    /// Rows whose ends hold a level: the rank-two correction inverts the
    /// explicit operator with the ghost `−u₀` (one end, the other, both; a
    /// single nucleus; weak to strong coupling).
    #[test]
    fn thomas_inverts_rows_with_held_ends() {
        for held in [[true, false, false, false], [false, true, false, false], [true, true, false, false]] {
            for n in [1usize, 2, 3, 37, 501] {
                for c in [1e-4, 2.5, 400.0] {
                    let grid = Grid { nx: n, ny: 1, spacing_um: 1.5, edges: Edges::Sealed };
                    let u: Vec<f64> = (0..n).map(|i| ((i * 7919) % 101) as f64 / 10.0).collect();
                    let mut lap = vec![0.0; n];
                    laplacian(&grid, held, &u, &mut lap);
                    let b: Vec<f64> = u.iter().zip(&lap).map(|(u, l)| 3.0 * u - c * l).collect();
                    let mut x = Array2::from_shape_vec((2, n), [b.clone(), b].concat()).unwrap();
                    let mut diffusion = Diffusion::new(&grid, &[1.0, 1.0], &[held, held]);
                    // Twice: the second solve reuses the kept factors and columns.
                    for _ in 0..2 {
                        let mut y = x.clone();
                        diffusion.solve(&mut y, 3.0, c, false);
                        for (got, want) in y.iter().zip(u.iter().chain(&u)) {
                            assert_relative_eq!(*got, *want, epsilon = 1e-9, max_relative = 1e-9);
                        }
                    }
                    x.fill(0.0);
                }
            }
        }
    }

    #[test]
    fn thomas_inverts_sealed_row() {
        check_inverse(2, 1, Edges::Sealed);
        check_inverse(37, 1, Edges::Sealed);
    }

    /// Long rows whose pivots settle at once, part-way or not before the
    /// middle (see `row_solve`'s tests), so the solve's constant tail is
    /// whole, partial or empty.
    #[test]
    fn thomas_inverts_long_rows_with_weak_and_strong_coupling() {
        for c in [1e-4, 0.05, 400.0, 1e5] {
            let grid = Grid { nx: 501, ny: 1, spacing_um: 1.5, edges: Edges::Sealed };
            let u: Vec<f64> = (0..501).map(|i| ((i * 7919) % 101) as f64 / 10.0).collect();
            let b = apply(&grid, &u, 3.0, c);
            let mut x = Array2::from_shape_vec((1, 501), b).unwrap();
            Diffusion::new(&grid, &[1.0], &[]).solve(&mut x, 3.0, c, false);
            for (got, want) in x.iter().zip(&u) {
                assert_relative_eq!(*got, *want, epsilon = 1e-10, max_relative = 1e-10);
            }
        }
    }

    #[test]
    fn fourier_inverts_periodic_row() {
        check_inverse(2, 1, Edges::Periodic);
        check_inverse(30, 1, Edges::Periodic);
    }

    #[test]
    fn cosine_inverts_sealed_sheet() {
        check_inverse(12, 7, Edges::Sealed);
        check_inverse(64, 33, Edges::Sealed);
        check_inverse(9, 6, Edges::Sealed);
    }

    #[test]
    fn fourier_inverts_periodic_sheet() {
        check_inverse(9, 16, Edges::Periodic);
    }

    #[test]
    fn transpose_round_trips() {
        let src: Vec<f64> = (0..70 * 45).map(|i| i as f64).collect();
        let mut t = vec![0.0; src.len()];
        let mut back = vec![0.0; src.len()];
        transpose(&src, &mut t, 70, 45, true);
        assert_eq!(t[3 * 70 + 5], src[5 * 45 + 3]);
        transpose(&t, &mut back, 45, 70, false);
        assert_eq!(src, back);
    }
}
