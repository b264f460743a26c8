//! Basins of every nucleus over time: with its inputs frozen at each snapshot,
//! which attractors a nucleus has, which one its state flows to, and from when
//! on that no longer changes (its commitment time).

use std::collections::HashMap;
use std::sync::Arc;

use rayon::prelude::*;

use super::fixed::{FixedPoint, find_fixed_points};
use super::flow::{Fate, fate};
use super::system::{Frozen, System};
use crate::integrate::{ReadBackError, Recording};
use crate::model::Model;
use crate::tissue::{Tissue, inflow};

/// Options of the basin analysis.
#[derive(Debug, Clone, PartialEq)]
pub struct BasinOptions {
    /// Freeze the diffusion influx D∇²u of each snapshot as a constant term too.
    pub with_influx: bool,
    /// Quasi-random Newton starts added to the grid of starts in each nucleus.
    pub extra_starts: usize,
    /// Analyse every this many snapshots (and always the last); 1: all.
    pub every: usize,
    /// Analyse the snapshots nearest these times, min, instead (empty: use `every`).
    pub at_min: Vec<f64>,
}

impl Default for BasinOptions {
    fn default() -> Self {
        BasinOptions { with_influx: false, extra_starts: 30, every: 1, at_min: Vec::new() }
    }
}

impl BasinOptions {
    /// The snapshot indices of `times` to analyse, in order, without repeats.
    pub fn snapshots(&self, times: &[f64]) -> Vec<usize> {
        let last = times.len() - 1;
        let mut out: Vec<usize> = if self.at_min.is_empty() {
            (0..times.len()).filter(|s| s % self.every.max(1) == 0 || *s == last).collect()
        } else {
            self.at_min
                .iter()
                .map(|&t| {
                    (0..times.len())
                        .min_by(|&a, &b| (times[a] - t).abs().total_cmp(&(times[b] - t).abs()))
                        .unwrap_or(last)
                })
                .collect()
        };
        out.sort_unstable();
        out.dedup();
        out
    }
}

/// The fate of one nucleus at one snapshot.
#[derive(Debug, Clone, PartialEq)]
pub struct NucleusBasin {
    /// Fixed points of the isolated nucleus (shared between nuclei and times with equal inputs).
    pub points: Arc<Vec<FixedPoint>>,
    /// Where its state flows.
    pub fate: Fate,
    /// Attractor label (see [`BasinAnalysis::labels`]).
    pub label: String,
    /// Distance (Euclidean, a.u.) from its state to the fixed point it flows to; 0 for cycles.
    pub distance: f64,
}

/// Basins of every nucleus at every snapshot.
#[derive(Debug, Clone)]
pub struct BasinAnalysis {
    /// Snapshot times at which inputs were frozen, min.
    pub times: Vec<f64>,
    /// `basins[s][i]`: nucleus i at snapshot s.
    pub basins: Vec<Vec<NucleusBasin>>,
    /// What was frozen: "gradients" or "gradients+influx".
    pub frozen: &'static str,
    /// Level above which a gene counts as "on" in an attractor's label, per gene:
    /// half its largest level over all stable fixed points found.
    pub on_level: Vec<f64>,
    /// Every label used, in first-seen order.
    pub labels: Vec<String>,
}

/// One nucleus's commitment: the earliest snapshot time after which its
/// attractor label no longer changes.
#[derive(Debug, Clone, PartialEq)]
pub struct Commitment {
    /// Nucleus index.
    pub nucleus: usize,
    /// Final attractor label.
    pub label: String,
    /// Commitment time, min.
    pub time_min: f64,
}

/// Names an attractor by the genes that are on in it (joined by "+"), or "low".
pub fn point_label(p: &FixedPoint, genes: &[String], on_level: &[f64]) -> String {
    state_label(&p.x, genes, on_level)
}

/// Names a state by the genes above their `on_level` (joined by "+"), or "low".
pub fn state_label(x: &[f64], genes: &[String], on_level: &[f64]) -> String {
    let on: Vec<&str> =
        genes.iter().zip(x).zip(on_level).filter(|((_, v), l)| **v > **l).map(|((g, _), _)| g.as_str()).collect();
    if on.is_empty() { "low".into() } else { on.join("+") }
}

fn key(inputs: &[f64], influx: &[f64]) -> Vec<u64> {
    inputs.iter().chain(influx).map(|v| v.to_bits()).collect()
}

/// One nucleus at one snapshot: its frozen inputs, diffusive influx and state.
type NucleusAt = (Vec<f64>, Vec<f64>, Vec<f64>);

/// Analyses every nucleus at the chosen snapshots of a run of `model`
/// ([`BasinOptions::snapshots`]).
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn analyse(model: &Model, rec: &Recording, opts: &BasinOptions) -> Result<BasinAnalysis, ReadBackError> {
    analyse_with_progress(model, rec, opts, &crate::progress::Silent)
}

/// [`analyse`], telling `progress` as snapshots' fates are found (stage "snapshots' fates").
///
/// Each nucleus's fate is followed for 60 time constants of its slowest
/// decaying mode — the smaller of the genes' slowest decay rate and the
/// slowest |Re λ| of the Jacobian at its state — and longer while it has not
/// settled ([`super::flow::fate_with`]: up to [`super::HORIZON_GROWTH`] ×).
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn analyse_with_progress(
    model: &Model,
    rec: &Recording,
    opts: &BasinOptions,
    progress: &dyn crate::progress::Progress,
) -> Result<BasinAnalysis, ReadBackError> {
    let chosen = opts.snapshots(&rec.times);
    let kinetics = crate::kinetics::build(model);
    let tissue = Tissue::new(model);
    let (n_genes, n) = (rec.genes.len(), rec.grid.len());
    // Box of starting points: 1.2 × the larger of the recorded maximum and p/d.
    let seen = rec.max_levels(0..rec.len())?;
    let hi: Vec<f64> = (0..n_genes)
        .map(|g| {
            let seen = seen[g];
            let gene = &model.genes[g];
            let cap = if gene.decay > 0.0 { gene.production / gene.decay } else { 0.0 };
            (1.2 * seen.max(cap)).max(1e-3)
        })
        .collect();
    let scale = hi.iter().copied().fold(0.0, f64::max);
    let tol = super::fixed::newton_tolerance(model);
    let slowest = model.genes.iter().map(|g| g.decay).filter(|d| *d > 0.0).fold(f64::INFINITY, f64::min);
    let slowest = if slowest.is_finite() { slowest } else { 1.0 / model.clock.until_min };

    // Frozen inputs and state of every (snapshot, nucleus), each snapshot read once.
    let frozen: Vec<Vec<NucleusAt>> = chosen
        .iter()
        .map(|&s| {
            let t = rec.times[s];
            let state = rec.state(s)?;
            let m = tissue.inputs_with_state(t, &state);
            let influx: Vec<Vec<f64>> = (0..n_genes)
                .map(|g| {
                    let mut lap = vec![0.0; n];
                    if opts.with_influx {
                        inflow(&rec.grid, &model.genes[g], state.row(g).as_slice().expect("contiguous"), &mut lap);
                    }
                    lap
                })
                .collect();
            Ok((0..n)
                .map(|i| (m.column(i).to_vec(), influx.iter().map(|q| q[i]).collect(), state.column(i).to_vec()))
                .collect())
        })
        .collect::<Result<_, ReadBackError>>()?;

    // Fixed points once per distinct frozen input, started from the box and from
    // every state a nucleus with those inputs had.
    let mut groups: HashMap<Vec<u64>, Vec<(usize, usize)>> = HashMap::new();
    let mut order: Vec<Vec<u64>> = Vec::new();
    for (s, row) in frozen.iter().enumerate() {
        for (i, (m, q, _)) in row.iter().enumerate() {
            let k = key(m, q);
            groups.entry(k.clone()).or_insert_with(|| {
                order.push(k.clone());
                Vec::new()
            });
            groups.get_mut(&k).expect("inserted").push((s, i));
        }
    }
    let base = super::fixed::model_starts(model, &hi, opts.extra_starts);
    let nonnegative = super::fixed::nonnegative(model);
    let solved: Vec<Arc<Vec<FixedPoint>>> = order
        .par_iter()
        .map(|k| {
            let members = &groups[k];
            let (s0, i0) = members[0];
            let (m, q, _) = &frozen[s0][i0];
            let sys = Frozen { kinetics: kinetics.as_ref(), inputs: m.clone(), influx: q.clone() };
            let mut starts = base.clone();
            starts.extend(members.iter().map(|&(s, i)| frozen[s][i].2.clone()));
            Arc::new(find_fixed_points(&sys, &starts, tol, nonnegative))
        })
        .collect();
    let points_of: HashMap<&Vec<u64>, Arc<Vec<FixedPoint>>> = order.iter().zip(solved).collect();

    let on_level: Vec<f64> = (0..n_genes)
        .map(|g| {
            0.5 * points_of
                .values()
                .flat_map(|ps| ps.iter().filter(|p| p.kind.is_stable()).map(move |p| p.x[g]))
                .fold(0.0, f64::max)
        })
        .collect();

    let done = crate::progress::Counter::begin(progress, "snapshots' fates", chosen.len());
    let basins: Vec<Vec<NucleusBasin>> = frozen
        .par_iter()
        .map(|row| {
            let out = row
                .iter()
                .map(|(m, q, state)| {
                    let points = points_of[&key(m, q)].clone();
                    let sys = Frozen { kinetics: kinetics.as_ref(), inputs: m.clone(), influx: q.clone() };
                    let mut jac = vec![0.0; n_genes * n_genes];
                    sys.jacobian(state, &mut jac);
                    let rate = super::fixed::eigenvalues(&jac, n_genes)
                        .iter()
                        .map(|l| l.re.abs())
                        .filter(|r| *r > 1e-9 * slowest)
                        .fold(slowest, f64::min);
                    let f = fate(&sys, state, &points, 1e-4 * scale, 60.0 / rate.max(1e-3 * slowest));
                    let (label, distance) = match &f {
                        Fate::Point(k) => {
                            let p = &points[*k];
                            let d = state.iter().zip(&p.x).map(|(a, b)| (a - b) * (a - b)).sum::<f64>().sqrt();
                            (point_label(p, &rec.genes, &on_level), d)
                        }
                        Fate::Cycle { .. } => ("cycle".to_string(), 0.0),
                        Fate::Unresolved => ("unresolved".to_string(), f64::NAN),
                    };
                    NucleusBasin { points, fate: f, label, distance }
                })
                .collect();
            done.tick();
            out
        })
        .collect();
    let mut labels: Vec<String> = Vec::new();
    for b in basins.iter().flatten() {
        if !labels.contains(&b.label) {
            labels.push(b.label.clone());
        }
    }
    Ok(BasinAnalysis {
        times: chosen.iter().map(|&s| rec.times[s]).collect(),
        basins,
        frozen: if opts.with_influx { "gradients+influx" } else { "gradients" },
        on_level,
        labels,
    })
}

impl BasinAnalysis {
    /// Commitment of every nucleus.
    pub fn commitment(&self) -> Vec<Commitment> {
        let n = self.basins.first().map_or(0, Vec::len);
        (0..n)
            .map(|i| {
                let last = &self.basins[self.times.len() - 1][i].label;
                let mut s = self.times.len() - 1;
                while s > 0 && &self.basins[s - 1][i].label == last {
                    s -= 1;
                }
                Commitment { nucleus: i, label: last.clone(), time_min: self.times[s] }
            })
            .collect()
    }
}
