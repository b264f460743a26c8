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
        let kinetics = self.kinetics;
        let ax = Axis(1);
        type Chunk<'v> =
            (usize, (ndarray::ArrayViewMut2<'v, f64>, (ndarray::ArrayView2<'v, f64>, ndarray::ArrayView2<'v, f64>)));
        let chunk = |(c, (mut out, (u, m))): Chunk| {
            kinetics.rates(u.view(), m, out.view_mut());
            if all_bounded(u) && all_bounded(out.view()) { None } else { Some(c) }
        };
        let outs = f.axis_chunks_iter_mut(ax, CHUNK);
        let us = u.axis_chunks_iter(ax, CHUNK);
        let ms = self.inputs.axis_chunks_iter(ax, CHUNK);
        let first_bad = if self.parallel {
            outs.into_par_iter().zip(us.into_par_iter().zip(ms.into_par_iter())).enumerate().filter_map(chunk).min()
        } else {
            outs.zip(us.zip(ms)).enumerate().filter_map(chunk).min()
        };
        if let Some(src) = &self.source {
            *f += src;
        }
        for (g, _) in self.clamps() {
            f.row_mut(g).fill(0.0);
        }
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
