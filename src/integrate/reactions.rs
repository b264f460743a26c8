//! The explicit part of every scheme: the reaction rates `f(u, m(t))` of the
//! circuit at each nucleus, with a mutant's clamps and ectopic sources, and a
//! check that every level and rate is finite.

use ndarray::{Array2, Axis};
use rayon::prelude::*;

use super::StepError;
use crate::kinetics::{CHUNK, Kinetics};
use crate::simd::with_avx2;
use crate::tissue::Tissue;

/// |u| above this counts as a blow-up, a.u.
const BLOW_UP: f64 = 1e100;

/// True if every value is finite and below [`BLOW_UP`] in size (a
/// branch-free scan over each contiguous row, so it vectorises).
fn all_bounded(v: ndarray::ArrayView2<f64>) -> bool {
    with_avx2(
        #[inline(always)]
        || {
            v.outer_iter().all(|row| {
                let row = row.to_slice().expect("gene-major rows are contiguous");
                row.iter().fold(true, |ok, x| ok & (x.abs() <= BLOW_UP))
            })
        },
    )
}

/// Rate evaluation for one run; its working arrays are allocated once.
pub(super) struct Reactions<'a> {
    kinetics: &'a dyn Kinetics,
    tissue: &'a Tissue,
    gene_names: Vec<String>,
    pub(super) parallel: bool,
    /// Gradients, position, time and neighbour levels [input, nucleus].
    inputs: Array2<f64>,
    /// Genes held at a level.
    clamps: Vec<Option<f64>>,
    /// Extra production per gene and nucleus (ectopic expression), a.u./min.
    source: Option<Array2<f64>>,
}

impl<'a> Reactions<'a> {
    pub(super) fn new(
        kinetics: &'a dyn Kinetics,
        tissue: &'a Tissue,
        gene_names: Vec<String>,
        parallel: bool,
        t0: f64,
        forcing: super::Forcing,
    ) -> Reactions<'a> {
        Reactions {
            kinetics,
            tissue,
            gene_names,
            parallel,
            inputs: tissue.inputs_at(t0),
            clamps: forcing.clamps,
            source: forcing.source,
        }
    }

    /// Genes held at a level, with the level.
    pub(super) fn clamps(&self) -> impl Iterator<Item = (usize, f64)> + '_ {
        self.clamps.iter().enumerate().filter_map(|(g, c)| c.map(|level| (g, level)))
    }

    /// Sets the rows of held genes to their levels.
    pub(super) fn clamp(&self, u: &mut Array2<f64>) {
        for (g, level) in self.clamps() {
            u.row_mut(g).fill(level);
        }
    }

    /// True if the rates of a nucleus depend on nothing but its levels (no
    /// neighbour means, no time, no gradient that changes): they may then be
    /// evaluated chunk by chunk as soon as a step has finished each chunk
    /// ([`Self::eval_chunk`]).
    pub(super) fn local(&self) -> bool {
        !self.tissue.uses_neighbours() && !self.tissue.time_varying() && !self.kinetics.reads_time()
    }

    /// `f ← f(u, m(t))` (zero for held genes, plus any ectopic source), checking every value.
    ///
    /// # Errors
    /// [`StepError::NonFinite`] naming the first nucleus whose level or rate is not finite.
    pub(super) fn eval(&mut self, t: f64, u: &Array2<f64>, f: &mut Array2<f64>) -> Result<(), StepError> {
        if self.tissue.time_varying() {
            self.tissue.fill_inputs(t, &mut self.inputs);
        } else if self.kinetics.reads_time() {
            self.tissue.fill_time(t, &mut self.inputs);
        }
        self.tissue.fill_neighbours(u, &mut self.inputs);
        let ax = Axis(1);
        type Chunk<'v> = (usize, (ndarray::ArrayViewMut2<'v, f64>, ndarray::ArrayView2<'v, f64>));
        let chunk = |(c, (out, u)): Chunk| if self.rates_of(c * CHUNK, u, out) { None } else { Some(c) };
        let outs = f.axis_chunks_iter_mut(ax, CHUNK);
        let us = u.axis_chunks_iter(ax, CHUNK);
        let first_bad = if self.parallel {
            outs.into_par_iter().zip(us.into_par_iter()).enumerate().filter_map(chunk).min()
        } else {
            outs.zip(us).enumerate().filter_map(chunk).min()
        };
        self.force(0, f.view_mut());
        self.verdict(t, u, f, first_bad)
    }

    /// Rates of the chunk of nuclei `range` (at most [`CHUNK`], starting at a
    /// multiple of it) from its levels `u`, which are first reset where genes
    /// are held: `f ← f(u, m)`, then the ectopic source added and held genes'
    /// rates zeroed. Inputs must be current ([`Self::local`] rates only).
    /// Returns false if a level or a rate is not bounded (see [`Self::verdict`]).
    pub(super) fn eval_chunk(
        &self,
        start: usize,
        mut u: ndarray::ArrayViewMut2<f64>,
        mut f: ndarray::ArrayViewMut2<f64>,
    ) -> bool {
        for (g, level) in self.clamps() {
            u.row_mut(g).fill(level);
        }
        let ok = self.rates_of(start, u.view(), f.view_mut());
        self.force(start, f);
        ok
    }

    /// `f ← f(u, m)` over the nuclei `start..start + f.ncols()`; false if a
    /// level or rate is not bounded.
    fn rates_of(&self, start: usize, u: ndarray::ArrayView2<f64>, mut f: ndarray::ArrayViewMut2<f64>) -> bool {
        let m = self.inputs.slice(ndarray::s![.., start..start + f.ncols()]);
        self.kinetics.rates(u, m, f.view_mut());
        all_bounded(u) && all_bounded(f.view())
    }

    /// Adds the ectopic source to the rates of the nuclei `start..start +
    /// f.ncols()` and zeroes those of held genes.
    fn force(&self, start: usize, mut f: ndarray::ArrayViewMut2<f64>) {
        if let Some(src) = &self.source {
            f += &src.slice(ndarray::s![.., start..start + f.ncols()]);
        }
        for (g, _) in self.clamps() {
            f.row_mut(g).fill(0.0);
        }
    }

    /// `Ok` if no chunk was found unbounded, else the error naming the first
    /// unbounded value from the chunk `first_bad` on.
    ///
    /// # Errors
    /// [`StepError::NonFinite`] naming the first nucleus whose level or rate is not finite.
    pub(super) fn verdict(
        &self,
        t: f64,
        u: &Array2<f64>,
        f: &Array2<f64>,
        first_bad: Option<usize>,
    ) -> Result<(), StepError> {
        match first_bad {
            None => Ok(()),
            Some(c) => Err(self.locate_bad(t, u, f, c * CHUNK)),
        }
    }

    fn locate_bad(&self, t: f64, u: &Array2<f64>, f: &Array2<f64>, from: usize) -> StepError {
        for i in from..u.ncols() {
            for (g, name) in self.gene_names.iter().enumerate() {
                for (value, what) in [(u[[g, i]], "level"), (f[[g, i]], "rate")] {
                    if !(value.abs() <= BLOW_UP) {
                        return StepError::NonFinite {
                            t_min: t,
                            nucleus: i,
                            gene: name.clone(),
                            what: what.into(),
                            value,
                        };
                    }
                }
            }
        }
        unreachable!("a chunk flagged as bad holds a bad value")
    }
}
