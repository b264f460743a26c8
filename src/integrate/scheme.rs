//! What a time-stepping scheme is, and the list of schemes.
//!
//! Every scheme solves `du/dt = D∇²u + f(u, m(t))` IMEX-fashion: diffusion
//! implicit (exact solves), reactions explicit. A scheme is a type
//! implementing [`TimeScheme`], in a file of its own; [`schemes!`] registers
//! it, which makes a variant of [`Scheme`] (the modeller's choice, read from
//! `clock.scheme` by its [`TimeScheme::KEY`]).

use nalgebra::Complex;

/// A time-stepping scheme: its name, order, stability and limits.
pub trait TimeScheme {
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
    /// Working arrays of the state's size, per gene, that stepping with it holds.
    const ARRAYS_PER_GENE: u64;

    /// Largest amplification per step of the explicit part at `z = kλ`, for
    /// the test equation `y′ = λy` taken explicitly (the modulus of the
    /// largest root of the scheme's characteristic equation, or of its
    /// stability function).
    fn amplification(z: Complex<f64>) -> f64;
}

/// Registers the schemes: `Variant => type` makes `Scheme::Variant`, with
/// every [`TimeScheme`] fact of the type reachable from it.
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

            /// Amplification of the explicit part at `z = kλ` ([`TimeScheme::amplification`]).
            pub fn amplification(self, z: Complex<f64>) -> f64 {
                match self { $(Scheme::$variant => <$ty as TimeScheme>::amplification(z)),+ }
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
