//! One IMEX step at a time, on structure-of-arrays state `u[[gene, nucleus]]`,
//! with the scheme a model asks for ([`Scheme`]; each scheme's equations are
//! in its own file). The stepper holds the accepted state, the operators and
//! the trial array; the scheme holds its history.

use ndarray::Array2;

use super::StepError;
use super::checkpoint::StepperState;
use super::reactions::Reactions;
use super::scheme::{Accepted, AnyScheme, Operators, Scheme};
use crate::kinetics::Kinetics;
use crate::tissue::{Diffusion, Tissue};

/// Below this many values, work is done on one thread.
const PARALLEL_MIN: usize = 8192;

/// The integrator's state and working arrays; nothing is allocated per step.
pub struct Stepper<'a> {
    ops: Operators<'a>,
    now: Accepted,
    /// Where attempts put the state at the end of the step.
    trial: Array2<f64>,
    scheme: AnyScheme,
    /// The tissue, when it grows (its stretch scales diffusion).
    growing: Option<&'a Tissue>,
}

/// Changes to the plain reaction–diffusion system with sealed edges: made
/// by mutants, and by edge rules ([`crate::model::GeneEdges`]).
#[derive(Debug, Clone, Default)]
pub struct Forcing {
    /// Genes held at a level (their rates are zero and their level is reset after each step).
    pub clamps: Vec<Option<f64>>,
    /// Extra production [gene, nucleus], a.u./min, added to the rates
    /// (ectopic expression, and the constant part of edge rules).
    pub source: Option<Array2<f64>>,
    /// Per gene, the edges that hold a level (left, right, bottom, top);
    /// empty when every edge of every gene is sealed.
    pub held_edges: Vec<[bool; 4]>,
}

impl<'a> Stepper<'a> {
    /// Starts from `u0` at `t0` (min) with `scheme`; evaluates the first rates.
    ///
    /// # Errors
    /// [`StepError::NonFinite`] if the initial rates are not finite.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        kinetics: &'a dyn Kinetics,
        tissue: &'a Tissue,
        scheme: Scheme,
        diffusion: &[f64],
        gene_names: Vec<String>,
        u0: Array2<f64>,
        t0: f64,
        parallel: bool,
        forcing: Forcing,
    ) -> Result<Stepper<'a>, StepError> {
        let dim = u0.dim();
        let parallel = parallel && dim.0 * dim.1 >= PARALLEL_MIN;
        let mut ops = Operators {
            diffusion: Diffusion::new(&tissue.grid, diffusion, &forcing.held_edges),
            reactions: Reactions::new(kinetics, tissue, gene_names, parallel, t0, forcing),
        };
        let mut now = Accepted { t: t0, u: u0, f: Array2::zeros(dim), k: 0.0 };
        ops.reactions.clamp(&mut now.u);
        ops.reactions.eval(now.t, &now.u, &mut now.f)?;
        let scheme = AnyScheme::new(scheme, &now, &ops);
        let growing = (tissue.stretch_at(t0 + 1.0) != 1.0).then_some(tissue);
        Ok(Stepper { ops, now, trial: Array2::zeros(dim), scheme, growing })
    }

    /// The scheme it steps with.
    pub fn scheme(&self) -> Scheme {
        self.scheme.scheme()
    }

    /// Current time, min.
    pub fn time(&self) -> f64 {
        self.now.t
    }

    /// Current state [gene, nucleus].
    pub fn state(&self) -> &Array2<f64> {
        &self.now.u
    }

    /// Rates f(u, m(t)) at the current state [gene, nucleus], a.u./min.
    pub fn rates(&self) -> &Array2<f64> {
        &self.now.f
    }

    /// Last accepted step, min (0 before the first).
    pub fn last_step(&self) -> f64 {
        self.now.k
    }

    /// Number of accepted states the scheme steps from (1 before the first
    /// step; one-step schemes hold 1).
    pub fn history(&self) -> usize {
        self.scheme.held()
    }

    /// How fast the reaction rates change along an Euler step of `k` (min)
    /// from the accepted state, (f(t + k, u + k·f) − f(t, u))/k, a.u./min²;
    /// `None` if the rates there are not finite. For choosing a first step
    /// (it allocates).
    pub fn rate_change(&mut self, k: f64) -> Option<Array2<f64>> {
        let probe = &self.now.u + &(k * &self.now.f);
        let mut f = Array2::zeros(probe.dim());
        self.ops.reactions.eval(self.now.t + k, &probe, &mut f).ok()?;
        f -= &self.now.f;
        f /= k;
        Some(f)
    }

    /// Starts afresh from the accepted state: the scheme forgets its
    /// history ([`super::TimeScheme::forget_history`]).
    pub fn restart(&mut self) {
        self.scheme.forget_history();
    }

    /// A copy of everything the next steps depend on (for checkpoints): the
    /// accepted state and the scheme's history (the rates are evaluated
    /// again on [`Self::restore`]).
    pub fn save(&self) -> StepperState {
        StepperState {
            scheme: self.scheme(),
            t: self.now.t,
            last_step: self.now.k,
            u: self.now.u.clone(),
            history: self.scheme.save(),
        }
    }

    /// Puts back a saved state (same model, so same scheme and shapes; see
    /// `Checkpoint::check_fits`) and evaluates the rates there.
    ///
    /// # Errors
    /// [`StepError::NonFinite`] if the saved state's rates are not finite.
    ///
    /// # Panics
    /// If the scheme or the shapes differ from this stepper's.
    pub fn restore(&mut self, s: &StepperState) -> Result<(), StepError> {
        assert_eq!(s.scheme, self.scheme(), "checkpoint scheme");
        assert_eq!(s.u.dim(), self.now.u.dim(), "checkpoint shape");
        self.now.t = s.t;
        self.now.k = s.last_step;
        self.now.u.assign(&s.u);
        self.ops.reactions.eval(self.now.t, &self.now.u, &mut self.now.f)?;
        self.scheme.restore(&s.history, &self.now, &self.ops);
        Ok(())
    }

    /// From now on every attempt is accepted and [`Self::error_norm`] is not
    /// called (fixed steps); schemes then skip their error estimate or work
    /// in place ([`super::TimeScheme::accept_every_step`]). Results are
    /// bit-identical.
    pub fn accept_every_step(&mut self) {
        self.scheme.accept_every_step();
    }

    /// Computes a trial state at `t + k` (k in min) into the trial buffer,
    /// held genes reset (the accepted state and history unchanged, unless
    /// [`Self::accept_every_step`] was called: then the trial must be accepted).
    pub fn attempt(&mut self, k: f64) {
        if let Some(tissue) = self.growing {
            // Diffusion is implicit at the end of the step: on a grid
            // stretched by e there, D∇² is D·e⁻² times the grid's own.
            self.ops.diffusion.scale_to(tissue.stretch_at(self.now.t + k).powi(-2));
        }
        self.scheme.attempt(k, &self.now, &mut self.ops, &mut self.trial);
        self.ops.reactions.clamp(&mut self.trial);
    }

    /// Weighted max-norm of the local error of the trial step of size `k`
    /// (min), 1 at the tolerance `rtol`, `atol` (a.u.); infinite if the trial
    /// is not finite. Each scheme's estimate: [`super::TimeScheme::error_norm`].
    pub fn error_norm(&self, k: f64, rtol: f64, atol: f64) -> f64 {
        self.scheme.error_norm(k, &self.now, &self.trial, rtol, atol, self.ops.reactions.parallel)
    }

    /// Accepts the trial as the state at `t_new` (min), after a step of `k`;
    /// evaluates the rates there.
    ///
    /// # Errors
    /// [`StepError::NonFinite`] if the new state or its rates are NaN, infinite or blown up.
    pub fn accept(&mut self, k: f64, t_new: f64) -> Result<(), StepError> {
        self.scheme.accept(k, t_new, &mut self.now, &mut self.trial, &mut self.ops)
    }
}

/// The time derivative of `model`'s state `u` [gene, nucleus] at time `t`
/// (min), a.u./min: du/dt = f(u, m(t)) + D∇²u with the model's mutant
/// forcing (a clamped gene's derivative is 0), evaluated directly rather
/// than from differences of snapshots, so that how far apart snapshots are
/// does not matter.
///
/// # Errors
/// [`StepError::NonFinite`] if the rates are not finite.
pub fn time_derivative(model: &crate::model::Model, u: &Array2<f64>, t: f64) -> Result<Array2<f64>, StepError> {
    let tissue = Tissue::new(model);
    let kinetics = crate::kinetics::build(model);
    let forcing = super::forcing(model);
    let clamps = forcing.clamps.clone();
    let d: Vec<f64> = model.genes.iter().map(|g| g.diffusion).collect();
    let names = model.genes.iter().map(|g| g.name.clone()).collect();
    let stepper =
        Stepper::new(kinetics.as_ref(), &tissue, model.clock.scheme, &d, names, u.clone(), t, false, forcing)?;
    let mut rate = stepper.rates().clone();
    let mut lap = vec![0.0; u.ncols()];
    for (g, &dg) in d.iter().enumerate() {
        if clamps.get(g).is_some_and(Option::is_some) {
            rate.row_mut(g).fill(0.0);
            continue;
        }
        if dg == 0.0 {
            continue;
        }
        let row = stepper.state().row(g).to_vec();
        crate::tissue::laplacian(&tissue.grid, model.genes[g].edges.held(), &row, &mut lap);
        for (r, l) in rate.row_mut(g).iter_mut().zip(&lap) {
            *r += dg * l;
        }
    }
    Ok(rate)
}
