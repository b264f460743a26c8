//! Time integration: IMEX schemes (diffusion implicit, reactions explicit),
//! each a [`TimeScheme`] in a file of its own — second-order SBDF2
//! (`sbdf2`, the default) or fourth-order ARK4(3) (`ark4`), registered in
//! `scheme` — with fixed or error-controlled steps, landing exactly on every
//! snapshot time.

mod ark4;
mod checkpoint;
mod control;
pub mod memory;
mod reactions;
mod recording;
pub mod safety;
mod sbdf2;
mod scheme;
mod stepper;
pub mod stochastic;

use ndarray::Array2;
use rand::{RngExt, SeedableRng};

pub use checkpoint::{Checkpoint, CheckpointError, CheckpointParts, Progress, StepperState};
pub use control::{ErrorControl, FixedSteps, StepControl, Verdict};
pub use memory::{MemoryPlan, STREAM_ABOVE_BYTES};
pub use recording::{EXPRESSION_FLOOR, ReadBackError, Recording, raise_to_maxima};
pub use scheme::{History, Scheme, TimeScheme};
pub use stepper::{Forcing, Stepper, time_derivative};

use crate::kinetics::Kinetics;
use crate::model::{Initial, Model, Stepping};
use crate::tissue::Tissue;

/// A run that could not go on.
#[derive(Debug, thiserror::Error)]
pub enum StepError {
    /// NaN, infinity or a blow-up.
    #[error(
        "the run blew up at t = {t_min:.6} min: the {what} of gene `{gene}` in nucleus {nucleus} is {value:e}; \
         take a smaller step_min or a tighter tolerance, and check that every gene has a decay rate"
    )]
    NonFinite {
        /// Time, min.
        t_min: f64,
        /// Nucleus index (row-major on a sheet).
        nucleus: usize,
        /// Gene name.
        gene: String,
        /// "level" or "rate".
        what: String,
        /// The value found.
        value: f64,
    },
    /// A fixed step too long for the model (an unstable mode, or levels
    /// that the rate law cannot make negative going negative).
    #[error(
        "the fixed step of {step_min} min is too long for this model: at t = {t_min:.4} min, in nucleus {nucleus}, {why}. \
         Take step_min <= {advice:.4e} min, or error-controlled steps (clock.tolerance = 1e-6)"
    )]
    UnsafeStep {
        /// Time, min.
        t_min: f64,
        /// The step, min.
        step_min: f64,
        /// Nucleus.
        nucleus: usize,
        /// What is wrong.
        why: String,
        /// A step that would do, min.
        advice: f64,
    },
    /// A growing row given to a verb that runs rows of fixed size.
    #[error(
        "the model grows ([growth]), and this verb simulates rows of fixed size: run a growing row with \
         `anlage run`, or remove [growth] to ask this question of the row at its starting size"
    )]
    Growing,
    /// Stopped on request (a signal), at this time.
    #[error("stopped at t = {t_min:.4} min on request (a signal)")]
    Stopped {
        /// Time reached, min.
        t_min: f64,
    },
    /// A streamed snapshot could not be written.
    #[error("the recording could not be streamed to disk: {0}; free disk space in the output folder")]
    Recording(String),
    /// A streamed snapshot could not be read back.
    #[error(transparent)]
    ReadBack(#[from] ReadBackError),
    /// Error-controlled steps shrank to nothing.
    #[error(
        "error-controlled steps collapsed to {step_min:e} min at t = {t_min:.6} min: the estimated error ({error:.3e} \
         of the tolerance) would not fall; loosen clock.tolerance or use a fixed step_min"
    )]
    StepCollapse {
        /// Time, min.
        t_min: f64,
        /// Last step tried, min.
        step_min: f64,
        /// Last error norm (1 = at tolerance).
        error: f64,
    },
}

/// Counts from a finished integration.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct StepStats {
    /// Accepted steps.
    pub steps: usize,
    /// Rejected (retried) steps.
    pub rejected: usize,
    /// Smallest accepted step, min.
    pub min_step_min: f64,
    /// Largest accepted step, min.
    pub max_step_min: f64,
}

impl StepStats {
    /// Adds the counts of a later part of the same run.
    pub fn merge(&mut self, part: StepStats) {
        if part.steps == 0 {
            self.rejected += part.rejected;
            return;
        }
        if self.steps == 0 {
            *self = StepStats { rejected: self.rejected + part.rejected, ..part };
            return;
        }
        self.steps += part.steps;
        self.rejected += part.rejected;
        self.min_step_min = self.min_step_min.min(part.min_step_min);
        self.max_step_min = self.max_step_min.max(part.max_step_min);
    }

    fn count(&mut self, k: f64) {
        if self.steps == 0 {
            self.min_step_min = k;
            self.max_step_min = k;
        }
        self.steps += 1;
        self.min_step_min = self.min_step_min.min(k);
        self.max_step_min = self.max_step_min.max(k);
    }
}

/// The initial state [gene, nucleus]: each gene's initial level plus, where
/// asked, uniform noise in ±`initial_noise` from a PCG stream seeded by the
/// model seed and the gene's index; clamped at 0 unless the gene has its own rate expression (signed).
pub fn initial_state(model: &Model) -> Array2<f64> {
    let n = model.grid.len();
    let mut u = Array2::zeros((model.genes.len(), n));
    for (g, (gene, mut row)) in model.genes.iter().zip(u.outer_iter_mut()).enumerate() {
        match &gene.initial {
            Initial::Uniform(v) => row.fill(*v),
            Initial::Profile(p) => row.iter_mut().zip(p).for_each(|(r, v)| *r = *v),
        }
        if gene.initial_noise > 0.0 {
            let seed = model.seed ^ (0x9E37_79B9_7F4A_7C15u64.wrapping_mul(g as u64 + 1));
            let mut rng = rand_pcg::Pcg64::seed_from_u64(seed);
            let a = gene.initial_noise;
            // Levels of the circuit's rate law stay >= 0; a gene with its own
            // rate expression may take either sign.
            let floor = if gene.rate.is_some() { f64::NEG_INFINITY } else { 0.0 };
            row.iter_mut().for_each(|r| *r = (*r + rng.random_range(-a..=a)).max(floor));
        }
    }
    u
}

/// The clamps and ectopic sources a (mutant) model asks for, and its edge rules.
pub fn forcing(model: &Model) -> Forcing {
    let edged = model.genes.iter().any(|g| !g.edges.all_sealed());
    let mut source = (!model.ectopic.is_empty()).then(|| {
        let grid = model.grid;
        let mut s = Array2::zeros((model.genes.len(), grid.len()));
        for e in &model.ectopic {
            for iy in 0..grid.ny {
                for ix in 0..grid.nx {
                    let x = grid.x_um(ix);
                    if x >= e.from_um && x <= e.to_um {
                        s[[e.gene, iy * grid.nx + ix]] += e.rate;
                    }
                }
            }
        }
        s
    });
    let mut held_edges = Vec::new();
    if edged {
        let grid = model.grid;
        let s = source.get_or_insert_with(|| Array2::zeros((model.genes.len(), grid.len())));
        for (gene, mut row) in model.genes.iter().zip(s.outer_iter_mut()) {
            crate::tissue::edge_source(&grid, gene, row.as_slice_mut().expect("standard layout"));
        }
        held_edges = model.genes.iter().map(|g| g.edges.held()).collect();
    }
    Forcing { clamps: model.clamps.clone(), source, held_edges }
}

/// Fixed-step runs check their step ([`safety::check`]) after the first step,
/// every this many steps and at every snapshot (before anything is kept:
/// outputs are made of snapshots, and an instability that grows faster
/// makes the state non-finite or negative, which stops the run anyway).
pub const SAFETY_EVERY: usize = 100;

/// Integrates a model from its initial state to `clock.until_min`, calling
/// `snapshot(t, state)` at t = 0 and at every snapshot time.
///
/// # Errors
/// [`StepError`] when the state stops being finite or steps collapse.
pub fn integrate(
    model: &Model,
    kinetics: &dyn Kinetics,
    tissue: &Tissue,
    parallel: bool,
    snapshot: impl FnMut(f64, &Array2<f64>) + Send,
) -> Result<StepStats, StepError> {
    integrate_from(model, kinetics, tissue, parallel, None, snapshot, |_, _, _| true)
}

/// [`integrate`], optionally continuing from a checkpoint (whose snapshots the
/// caller has already recorded), and calling `accepted(stepper, progress,
/// stats)` after every accepted step, where a checkpoint may be taken; when
/// it returns false the run stops with [`StepError::Stopped`].
///
/// # Errors
/// [`StepError`] when the state stops being finite or steps collapse.
pub fn integrate_from(
    model: &Model,
    kinetics: &dyn Kinetics,
    tissue: &Tissue,
    parallel: bool,
    resume: Option<&Checkpoint>,
    snapshot: impl FnMut(f64, &Array2<f64>) + Send,
    accepted: impl FnMut(&Stepper, Progress, StepStats) -> bool + Send,
) -> Result<StepStats, StepError> {
    if model.growth.is_some() {
        return Err(StepError::Growing);
    }
    if parallel && rayon::current_thread_index().is_none() {
        // The time loop runs on a worker of the pool, so that the parallel
        // parts of every step start there, not by a hand-over from this
        // thread to the pool and back at every step (which cost 5× the
        // arithmetic on rows of 4,096 nuclei).
        return rayon::scope(|_| integrate_on_worker(model, kinetics, tissue, parallel, resume, snapshot, accepted));
    }
    integrate_on_worker(model, kinetics, tissue, parallel, resume, snapshot, accepted)
}

/// [`integrate_from`] on the current thread.
fn integrate_on_worker(
    model: &Model,
    kinetics: &dyn Kinetics,
    tissue: &Tissue,
    parallel: bool,
    resume: Option<&Checkpoint>,
    mut snapshot: impl FnMut(f64, &Array2<f64>),
    accepted: impl FnMut(&Stepper, Progress, StepStats) -> bool,
) -> Result<StepStats, StepError> {
    let names = model.genes.iter().map(|g| g.name.clone()).collect();
    let d: Vec<f64> = model.genes.iter().map(|g| g.diffusion).collect();
    let scheme = model.clock.scheme;
    let mut stepper =
        Stepper::new(kinetics, tissue, scheme, &d, names, initial_state(model), 0.0, parallel, forcing(model))?;
    let control = StepControl::new(&model.clock);
    let (stats, progress) = match resume {
        Some(c) => {
            stepper.restore(&c.stepper)?;
            (c.stats, c.progress)
        }
        None => {
            snapshot(0.0, stepper.state());
            let next_step_min = match control {
                StepControl::Adaptive(c) => first_step(&c, &mut stepper),
                StepControl::Fixed(_) => 0.0,
            };
            (StepStats::default(), Progress { next_snapshot: 1, steps_taken: 0, next_step_min })
        }
    };
    let breaks = tissue.breakpoints();
    let time_loop = TimeLoop { model, stepper, stats, progress, times: model.clock.snapshot_times(), breaks };
    match control {
        StepControl::Fixed(steps) => time_loop.fixed(steps, kinetics, tissue, snapshot, accepted),
        StepControl::Adaptive(control) => time_loop.error_controlled(control, snapshot, accepted),
    }
}

/// Error-controlled steps from state `u0` at `t0` (min) through each of
/// `targets` (increasing, after `t0`), landing on each exactly and calling
/// `reached(t, state)` there: one stretch of a run whose grid or circuit
/// changes between stretches (a growing, dividing row). Each stretch starts
/// afresh: its first step is IMEX Euler, which has no error estimate, so it
/// is chosen from the rates ([`ErrorControl::first_step_bounded`]). Returns
/// the step counts.
///
/// # Errors
/// [`StepError`] when the state stops being finite or steps collapse.
///
/// # Panics
/// If the model's steps are fixed (growing rows are refused them).
#[allow(clippy::too_many_arguments)]
pub fn integrate_span(
    model: &Model,
    kinetics: &dyn Kinetics,
    tissue: &Tissue,
    parallel: bool,
    t0: f64,
    u0: Array2<f64>,
    targets: &[f64],
    reached: impl FnMut(f64, &Array2<f64>),
) -> Result<StepStats, StepError> {
    let names = model.genes.iter().map(|g| g.name.clone()).collect();
    let d: Vec<f64> = model.genes.iter().map(|g| g.diffusion).collect();
    let mut stepper = Stepper::new(kinetics, tissue, model.clock.scheme, &d, names, u0, t0, parallel, forcing(model))?;
    let StepControl::Adaptive(control) = StepControl::new(&model.clock) else {
        panic!("a stretch of a run is integrated with error-controlled steps");
    };
    let progress = Progress { next_snapshot: 0, steps_taken: 0, next_step_min: first_step(&control, &mut stepper) };
    let breaks = tissue.breakpoints();
    let time_loop = TimeLoop { model, stepper, stats: StepStats::default(), progress, times: targets.to_vec(), breaks };
    time_loop.error_controlled(control, reached, |_, _, _| true)
}

/// The first step of error-controlled steps from the stepper's state (at
/// the start, or after a restart): [`ErrorControl::first_step_bounded`].
fn first_step(control: &ErrorControl, stepper: &mut Stepper) -> f64 {
    let k = control.first_step(stepper.state(), stepper.rates());
    match stepper.rate_change(k) {
        Some(change) => control.first_step_bounded(stepper.state(), stepper.rates(), &change),
        None => k,
    }
}

/// A time loop in progress.
struct TimeLoop<'m, 's> {
    model: &'m Model,
    stepper: Stepper<'s>,
    stats: StepStats,
    progress: Progress,
    /// Snapshot times, min.
    times: Vec<f64>,
    /// Kinks of the inputs in time ([`Tissue::breakpoints`]), min.
    breaks: Vec<f64>,
}

impl TimeLoop<'_, '_> {
    /// Fixed steps, every step accepted, with the step checked for safety
    /// ([`safety::check`]) after the first step, every [`SAFETY_EVERY`] steps
    /// and at every snapshot.
    fn fixed(
        mut self,
        steps: FixedSteps,
        kinetics: &dyn Kinetics,
        tissue: &Tissue,
        mut snapshot: impl FnMut(f64, &Array2<f64>),
        mut accepted: impl FnMut(&Stepper, Progress, StepStats) -> bool,
    ) -> Result<StepStats, StepError> {
        let (model, times, step_min) = (self.model, &self.times, steps.step_min);
        let stepper = &mut self.stepper;
        stepper.accept_every_step();
        let held: Vec<bool> = model.clamps.iter().map(Option::is_some).collect();
        let signed: Vec<bool> = model.genes.iter().map(|g| g.rate.is_some()).collect();
        let names: Vec<String> = model.genes.iter().map(|g| g.name.clone()).collect();
        let mut flagged: Option<usize> = None;
        let mut round = 0;
        let mut scores = Vec::new();
        let rho = safety::safe_disk(model.clock.scheme, step_min, model.clock.until_min);
        while self.progress.steps_taken < steps.total {
            let n = self.progress.steps_taken + 1;
            let t_new = steps.time_after(n);
            stepper.attempt(step_min);
            stepper.accept(step_min, t_new)?;
            self.stats.count(step_min);
            self.progress.steps_taken = n;
            let next = self.progress.next_snapshot;
            let at_snapshot = next < times.len() && steps.reaches(n, times[next]);
            if n == 1 || n.is_multiple_of(SAFETY_EVERY) || at_snapshot {
                let u = stepper.state();
                let m = tissue.inputs_with_state(t_new, u);
                let nuclei = safety::picks(u, stepper.rates(), round, flagged, &mut scores);
                round += 1;
                match safety::check(
                    kinetics,
                    model.clock.scheme,
                    step_min,
                    model.clock.until_min,
                    u,
                    &m,
                    &held,
                    &signed,
                    &names,
                    &nuclei,
                    rho,
                ) {
                    // An unstable mode seen at two checks in a row (a brief
                    // excursion does no harm; the flagged nucleus is examined
                    // again), or a negative level at once.
                    Some(bad) if bad.negative || flagged.is_some() => {
                        let at_state = if bad.stable_step.is_finite() { bad.stable_step } else { step_min };
                        // Along a loose error-controlled trial the whole run's limit shows,
                        // not only that of a state the long step has already spoiled.
                        let along = safety::trial(model).map_or(f64::INFINITY, |t| t.stable_step);
                        let advice = 0.9 * if along < step_min { along } else { at_state.min(0.25 * step_min) };
                        let why = bad.why;
                        return Err(StepError::UnsafeStep {
                            t_min: t_new,
                            step_min,
                            nucleus: bad.nucleus,
                            why,
                            advice,
                        });
                    }
                    Some(bad) => flagged = Some(bad.nucleus),
                    None => flagged = None,
                }
            }
            if at_snapshot {
                snapshot(times[next], stepper.state());
                self.progress.next_snapshot += 1;
            }
            if !accepted(stepper, self.progress, self.stats) {
                return Err(StepError::Stopped { t_min: stepper.time() });
            }
        }
        Ok(self.stats)
    }

    /// Error-controlled steps ([`ErrorControl`]), landing exactly on every
    /// snapshot time.
    fn error_controlled(
        mut self,
        control: ErrorControl,
        mut snapshot: impl FnMut(f64, &Array2<f64>),
        mut accepted: impl FnMut(&Stepper, Progress, StepStats) -> bool,
    ) -> Result<StepStats, StepError> {
        let stepper = &mut self.stepper;
        let near = |a: f64, b: f64| (a - b).abs() <= 1e-12 * a.abs().max(b.abs()).max(1.0);
        while self.progress.next_snapshot < self.times.len() {
            let snap = self.times[self.progress.next_snapshot];
            // At a kink of the inputs, steps start afresh: a multistep
            // scheme would carry the rates from before it across, and its
            // error estimate, built on the same history, would not see it
            // (also when a run is resumed there). The first step is chosen
            // from the rates, as at the start.
            if self.breaks.iter().any(|&b| near(b, stepper.time())) && stepper.history() > 1 {
                stepper.restart();
                self.progress.next_step_min = first_step(&control, stepper);
            }
            let kink = self.breaks.iter().copied().find(|&b| b > stepper.time() && !near(b, stepper.time()));
            let target = match kink {
                Some(b) if b < snap && !near(b, snap) => b,
                _ => snap,
            };
            while target - stepper.time() > 1e-12 * target {
                let remaining = target - stepper.time();
                let mut k_try = control.first_try(self.progress.next_step_min, stepper.last_step());
                let mut rejected_here = false;
                loop {
                    let (k, landing) = control.fit(k_try, remaining);
                    stepper.attempt(k);
                    let error = stepper.error_norm(k, control.rtol, control.atol);
                    match control.judge(error, k, landing, rejected_here) {
                        Verdict::Accept { next_min } => {
                            let t_new = if landing { target } else { stepper.time() + k };
                            stepper.accept(k, t_new)?;
                            self.stats.count(k);
                            self.progress.next_step_min = next_min;
                            break;
                        }
                        Verdict::Retry { retry_min } => {
                            self.stats.rejected += 1;
                            rejected_here = true;
                            k_try = retry_min;
                        }
                        Verdict::Collapse { step_min } => {
                            return Err(StepError::StepCollapse { t_min: stepper.time(), step_min, error });
                        }
                    }
                }
                if !accepted(stepper, self.progress, self.stats) {
                    return Err(StepError::Stopped { t_min: stepper.time() });
                }
            }
            if target == snap {
                snapshot(target, stepper.state());
                self.progress.next_snapshot += 1;
            }
        }
        Ok(self.stats)
    }
}

/// The engine's throughput, nucleus·gene·steps per second: an order of
/// magnitude (`cargo bench --bench engine`), for warnings about long runs.
pub const THROUGHPUT: f64 = 1e8;

/// A lower bound on the steps a run of `model` takes: its fixed steps, or
/// for error control the larger of `until / max_step` and `until` over the
/// stable step of the initial reaction rates (circuits of up to
/// [`safety::MAX_GENES_CHECKED`] genes).
pub fn least_steps(model: &Model) -> f64 {
    let until = model.clock.until_min;
    match model.clock.stepping {
        Stepping::Fixed { step_min } => (until / step_min).ceil(),
        Stepping::Adaptive { max_step_min, .. } => {
            let by_cap = (until / max_step_min).ceil();
            let rate = if model.genes.len() > safety::MAX_GENES_CHECKED { 0.0 } else { reaction_stiffness(model) };
            let edge = model.clock.scheme.explicit_stability();
            if rate > 0.0 { by_cap.max((until * rate / edge).ceil()) } else { by_cap }
        }
    }
}

/// Seconds of computing a run of `model` takes at least, at [`THROUGHPUT`].
pub fn least_seconds(model: &Model) -> f64 {
    least_steps(model) * model.grid.len() as f64 * model.genes.len() as f64 / THROUGHPUT
}

/// Fastest reaction rate at the start, 1/min: the largest Gershgorin bound
/// `max_g Σ_j |∂f_g/∂u_j|` of the reaction Jacobian over (up to 1000 evenly
/// spread) nuclei of the initial state. A scheme's explicit reaction part is
/// stable for `k·|λ|` up to its [`Scheme::explicit_stability`] on a real
/// negative eigenvalue λ (SBDF2: 4/3), so steps much longer than that over
/// the rate cannot be taken.
pub fn reaction_stiffness(model: &Model) -> f64 {
    let kinetics = crate::kinetics::build(model);
    let tissue = Tissue::new(model);
    let u = initial_state(model);
    let m = tissue.inputs_at(0.0);
    let (genes, n) = u.dim();
    let stride = n.div_ceil(1000).max(1);
    let mut jac = vec![0.0; genes * genes];
    let mut worst = 0.0f64;
    for i in (0..n).step_by(stride) {
        let ui: Vec<f64> = u.column(i).to_vec();
        let mi: Vec<f64> = m.column(i).to_vec();
        kinetics.jacobian(&ui, &mi, &mut jac);
        for row in jac.chunks(genes) {
            let bound: f64 = row.iter().map(|v| v.abs()).sum();
            if bound.is_finite() {
                worst = worst.max(bound);
            }
        }
    }
    worst
}
