//! What a time-stepping scheme is, and the list of schemes.
//!
//! Every scheme solves `du/dt = D∇²u + f(u, m(t))` IMEX-fashion: diffusion
//! implicit (exact solves), reactions explicit. A scheme is a type
//! implementing [`TimeScheme`], in a file of its own; one line in the
//! `schemes!` list at the end of this file registers it, which makes a
//! variant of [`Scheme`] (the modeller's choice, read from `clock.scheme` by
//! its [`TimeScheme::KEY`]) and lets the [`super::Stepper`] step with it.
//!
//! A scheme steps from the [`Accepted`] state (time, levels, rates there and
//! the step that led there), which the stepper holds, and keeps whatever
//! else its next steps need (its [`History`]: earlier states, stage arrays).
//! How long each step is, and whether it is accepted, is decided outside
//! (`control`).

use nalgebra::Complex;
use ndarray::Array2;

use super::StepError;
use super::reactions::Reactions;
use crate::tissue::Diffusion;

/// The accepted state every step starts from; the stepper holds it and the
/// schemes advance it.
pub struct Accepted {
    /// Time of `u`, min.
    pub t: f64,
    /// Levels [gene, nucleus], a.u.
    pub u: Array2<f64>,
    /// Rates f(u, m(t)) [gene, nucleus], a.u./min.
    pub f: Array2<f64>,
    /// The step that led to `u`, min (0 before the first).
    pub k: f64,
}

impl Accepted {
    /// Takes the values in `trial` as the state at `t_new` (min), reached by
    /// a step of `k` (min), leaving the previous state's buffer in `trial`,
    /// and evaluates the rates there.
    ///
    /// # Errors
    /// [`StepError::NonFinite`] if the new state or its rates are NaN, infinite or blown up.
    pub(super) fn take(
        &mut self,
        trial: &mut Array2<f64>,
        k: f64,
        t_new: f64,
        reactions: &mut Reactions,
    ) -> Result<(), StepError> {
        std::mem::swap(&mut self.u, trial);
        self.k = k;
        self.t = t_new;
        reactions.eval(self.t, &self.u, &mut self.f)
    }
}

/// The two halves of the right-hand side: reactions (explicit) and
/// diffusion (implicit solves).
pub struct Operators<'a> {
    /// `f(u, m(t))`, clamps and sources.
    pub(super) reactions: Reactions<'a>,
    /// `D∇²` and solves of `(a₀ − c·D∇²) x = b`.
    pub(super) diffusion: Diffusion,
}

/// What a scheme's next steps need beyond the accepted state, as named
/// numbers and arrays (their names: [`Scheme::history_numbers`] and
/// [`Scheme::history_arrays`]), for checkpoints.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct History {
    /// Numbers, in the order of their names.
    pub numbers: Vec<f64>,
    /// Arrays [gene, nucleus], in the order of their names.
    pub arrays: Vec<Array2<f64>>,
}

/// A time-stepping scheme: its name, order, stability and limits, and its
/// steps.
///
/// A step is [`Self::attempt`]ed into a trial array; with error control
/// [`Self::error_norm`] says whether to [`Self::accept`] it or attempt a
/// shorter one (an attempt leaves the accepted state and the history
/// unchanged). With fixed steps [`Self::accept_every_step`] is called once,
/// and every attempt is then accepted and no error is asked for.
pub trait TimeScheme: Sized {
    /// Name in model files (`clock.scheme`).
    const KEY: &'static str;
    /// Name in summaries and reports.
    const NAME: &'static str;
    /// When to choose it, for the message listing the schemes.
    const ADVICE: &'static str;
    /// Order p of the solution: the global error scales as kᵖ.
    const ORDER: u32;
    /// Order of the lower member of the error-estimate pair: the estimated
    /// local error scales as k^(ESTIMATE_ORDER + 1).
    const ESTIMATE_ORDER: u32;
    /// Largest growth of the step from one accepted step to the next.
    const MAX_GROWTH: f64;
    /// Largest `k·|λ|` on the negative real axis for which the explicit
    /// (reaction) part is stable (a safe lower bound on the edge of
    /// [`Self::amplification`]'s region).
    const EXPLICIT_STABILITY: f64;
    /// Working arrays of the state's size, per gene, that the scheme holds
    /// (besides the stepper's state, rates and trial).
    const ARRAYS_PER_GENE: u64;
    /// Names of the numbers of its [`History`], in order (units in the name).
    const HISTORY_NUMBERS: &'static [&'static str];
    /// Names of the arrays of its [`History`], in order.
    const HISTORY_ARRAYS: &'static [&'static str];

    /// Largest amplification per step of the explicit part at `z = kλ`, for
    /// the test equation `y′ = λy` taken explicitly (the modulus of the
    /// largest root of the scheme's characteristic equation, or of its
    /// stability function).
    fn amplification(z: Complex<f64>) -> f64;

    /// Ready to step from `now`, with no history.
    fn new(now: &Accepted, ops: &Operators) -> Self;

    /// From now on every attempt is accepted and no error is asked for
    /// (fixed steps): a scheme may then skip its error estimate or work in
    /// place. Results stay bit-identical.
    fn accept_every_step(&mut self);

    /// Computes the state at `now.t + k` (k in min) into `trial` (the
    /// stepper then resets held genes in it).
    fn attempt(&mut self, k: f64, now: &Accepted, ops: &mut Operators, trial: &mut Array2<f64>);

    /// Weighted max-norm of the local error of the last attempt (a step of
    /// `k`, min, into `trial`): `max |e| / (atol + rtol·max(|u|, |u_trial|))`,
    /// 1 at the tolerance; infinite if anything is not finite. Values are
    /// split between threads when `parallel`.
    fn error_norm(&self, k: f64, now: &Accepted, trial: &Array2<f64>, rtol: f64, atol: f64, parallel: bool) -> f64;

    /// Makes the last attempt (a step of `k` to `t_new`, min) the accepted
    /// state (see `Accepted::take`) and updates the history.
    ///
    /// # Errors
    /// [`StepError::NonFinite`] if the attempt or the new rates blew up.
    fn accept(
        &mut self,
        k: f64,
        t_new: f64,
        now: &mut Accepted,
        trial: &mut Array2<f64>,
        ops: &mut Operators,
    ) -> Result<(), StepError>;

    /// Accepted states the scheme steps from, the current one included.
    fn held(&self) -> usize;

    /// Drops the history, so that the next step starts afresh from the
    /// accepted state alone (after a kink of the inputs in time, which
    /// steps built on earlier rates would carry across). One-step schemes
    /// hold none.
    fn forget_history(&mut self) {}

    /// A copy of its history (for checkpoints).
    fn save(&self) -> History;

    /// Puts back a saved history, for the accepted state `now` (whose rates
    /// are evaluated). The history has the layout of `HISTORY_*` and the
    /// state's shape (checked when the checkpoint was read).
    fn restore(&mut self, history: &History, now: &Accepted, ops: &Operators);
}

/// Registers the schemes: `Variant => type` makes `Scheme::Variant`, with
/// every [`TimeScheme`] fact of the type reachable from it, and a variant of
/// `AnyScheme`, which holds a scheme's working arrays for the stepper.
macro_rules! schemes {
    ($($(#[$attr:meta])* $variant:ident => $ty:ty),+ $(,)?) => {
        /// The IMEX time-stepping scheme a model asks for (diffusion
        /// implicit, reactions explicit); see [`TimeScheme`].
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
        pub enum Scheme {
            $($(#[$attr])* $variant),+
        }

        impl Scheme {
            /// Every scheme, the default first.
            pub const ALL: [Scheme; [$(Scheme::$variant),+].len()] = [$(Scheme::$variant),+];

            /// Name in model files ([`TimeScheme::KEY`]).
            pub fn key(self) -> &'static str {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::KEY),+ }
            }

            /// Name in summaries ([`TimeScheme::NAME`]).
            pub fn name(self) -> &'static str {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::NAME),+ }
            }

            /// When to choose it ([`TimeScheme::ADVICE`]).
            pub fn advice(self) -> &'static str {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::ADVICE),+ }
            }

            /// Order of the solution ([`TimeScheme::ORDER`]).
            pub fn order(self) -> u32 {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::ORDER),+ }
            }

            /// Order of the error estimate's lower member ([`TimeScheme::ESTIMATE_ORDER`]).
            pub fn estimate_order(self) -> u32 {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::ESTIMATE_ORDER),+ }
            }

            /// Largest step growth ([`TimeScheme::MAX_GROWTH`]).
            pub fn max_growth(self) -> f64 {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::MAX_GROWTH),+ }
            }

            /// Edge of explicit stability on the negative real axis ([`TimeScheme::EXPLICIT_STABILITY`]).
            pub fn explicit_stability(self) -> f64 {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::EXPLICIT_STABILITY),+ }
            }

            /// Working arrays per gene ([`TimeScheme::ARRAYS_PER_GENE`]).
            pub fn arrays_per_gene(self) -> u64 {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::ARRAYS_PER_GENE),+ }
            }

            /// Names of its history's numbers ([`TimeScheme::HISTORY_NUMBERS`]).
            pub fn history_numbers(self) -> &'static [&'static str] {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::HISTORY_NUMBERS),+ }
            }

            /// Names of its history's arrays ([`TimeScheme::HISTORY_ARRAYS`]).
            pub fn history_arrays(self) -> &'static [&'static str] {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::HISTORY_ARRAYS),+ }
            }

            /// Amplification of the explicit part at `z = kλ` ([`TimeScheme::amplification`]).
            pub fn amplification(self, z: Complex<f64>) -> f64 {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::amplification(z)),+ }
            }
        }

        /// One scheme's working arrays: what the stepper steps with. An enum,
        /// so that a step costs one branch, no allocation and no indirect call.
        pub(super) enum AnyScheme {
            $($variant($ty)),+
        }

        impl AnyScheme {
            /// `scheme`, ready to step from `now`.
            pub(super) fn new(scheme: Scheme, now: &Accepted, ops: &Operators) -> AnyScheme {
                match scheme { $(Scheme::$variant => AnyScheme::$variant(<$ty as TimeScheme>::new(now, ops))),+ }
            }

            /// Which scheme.
            pub(super) fn scheme(&self) -> Scheme {
                match self { $(AnyScheme::$variant(_) => Scheme::$variant),+ }
            }

            /// [`TimeScheme::forget_history`].
            pub(super) fn forget_history(&mut self) {
                match self { $(AnyScheme::$variant(s) => s.forget_history()),+ }
            }

            /// [`TimeScheme::accept_every_step`].
            pub(super) fn accept_every_step(&mut self) {
                match self { $(AnyScheme::$variant(s) => s.accept_every_step()),+ }
            }

            /// [`TimeScheme::attempt`].
            #[inline]
            pub(super) fn attempt(&mut self, k: f64, now: &Accepted, ops: &mut Operators, trial: &mut Array2<f64>) {
                match self { $(AnyScheme::$variant(s) => s.attempt(k, now, ops, trial)),+ }
            }

            /// [`TimeScheme::error_norm`].
            #[inline]
            pub(super) fn error_norm(
                &self,
                k: f64,
                now: &Accepted,
                trial: &Array2<f64>,
                rtol: f64,
                atol: f64,
                parallel: bool,
            ) -> f64 {
                match self { $(AnyScheme::$variant(s) => s.error_norm(k, now, trial, rtol, atol, parallel)),+ }
            }

            /// [`TimeScheme::accept`].
            #[inline]
            pub(super) fn accept(
                &mut self,
                k: f64,
                t_new: f64,
                now: &mut Accepted,
                trial: &mut Array2<f64>,
                ops: &mut Operators,
            ) -> Result<(), StepError> {
                match self { $(AnyScheme::$variant(s) => s.accept(k, t_new, now, trial, ops)),+ }
            }

            /// [`TimeScheme::held`].
            pub(super) fn held(&self) -> usize {
                match self { $(AnyScheme::$variant(s) => s.held()),+ }
            }

            /// [`TimeScheme::save`].
            pub(super) fn save(&self) -> History {
                match self { $(AnyScheme::$variant(s) => s.save()),+ }
            }

            /// [`TimeScheme::restore`].
            pub(super) fn restore(&mut self, history: &History, now: &Accepted, ops: &Operators) {
                match self { $(AnyScheme::$variant(s) => s.restore(history, now, ops)),+ }
            }
        }
    };
}

schemes! {
    /// Second-order semi-implicit BDF (SBDF2), one solve and one rate
    /// evaluation per step; error control by a predictor (Milne's device).
    #[default]
    Sbdf2 => super::sbdf2::Sbdf2,
    /// Fourth-order additive Runge–Kutta ARK4(3)6L\[2\]SA (Kennedy & Carpenter
    /// 2003, Appl. Numer. Math. 44:139), five solves and five rate
    /// evaluations per step; error control by its embedded third-order pair.
    Ark4 => super::ark4::Ark4,
}

impl Scheme {
    /// The scheme whose [`TimeScheme::KEY`] is `key`.
    pub fn from_key(key: &str) -> Option<Scheme> {
        Scheme::ALL.into_iter().find(|s| s.key() == key)
    }

    /// Every scheme's key with its advice, for a message:
    /// "`a` (advice) or `b` (advice)".
    pub fn choices() -> String {
        let each: Vec<String> = Scheme::ALL.iter().map(|s| format!("`{}` ({})", s.key(), s.advice())).collect();
        match each.split_last() {
            Some((last, [])) => last.clone(),
            Some((last, rest)) => format!("{} or {last}", rest.join(", ")),
            None => String::new(),
        }
    }

    /// Exponent of the step-size controller: the estimated local error
    /// scales as k^(p+1), p = [`Self::estimate_order`], so a step that
    /// should bring the error norm from `e` to 1 is `k·e^(−1/(p+1))`.
    pub fn error_exponent(self) -> f64 {
        1.0 / (self.estimate_order() + 1) as f64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Keys are unique and found back; the listing reads as the message
    /// before the schemes were registered (common practice, no source).
    #[test]
    fn keys_find_their_scheme() {
        for scheme in Scheme::ALL {
            assert_eq!(Scheme::from_key(scheme.key()), Some(scheme));
        }
        assert_eq!(Scheme::from_key("euler"), None);
        assert_eq!(Scheme::ALL[0], Scheme::default());
        assert!(Scheme::choices().starts_with("`sbdf2` (second order, the default) or `ark4` (fourth order"));
    }
}
