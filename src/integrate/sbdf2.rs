//! Variable-step SBDF2 (Wang & Ruuth 2008, J. Comput. Math. 26:838, eq. 2.4;
//! constant-step form: Ruuth 1995, J. Math. Biol. 34:148), with ω = kₙ/kₙ₋₁,
//! multiplied through by (1 + ω):
//!
//! ```text
//! (1+2ω) u¹ − k(1+ω) D∇²u¹ = (1+ω)² u⁰ − ω² u⁻¹ + k(1+ω) [(1+ω) f(u⁰) − ω f(u⁻¹)]
//! ```
//! For ω = 1 this is `3u¹ − 2kD∇²u¹ = 4u⁰ − u⁻¹ + 2k(2f⁰ − f⁻¹)`. The first
//! step, with no history, is IMEX Euler: `u¹ − kD∇²u¹ = u⁰ + k f(u⁰)`.
//! Diffusion is implicit (exact solve), reactions explicit.

use nalgebra::Complex;

use super::scheme::TimeScheme;

/// The SBDF2 scheme.
pub struct Sbdf2;

impl TimeScheme for Sbdf2 {
    const KEY: &'static str = "sbdf2";
    const NAME: &'static str = "SBDF2";
    const ADVICE: &'static str = "second order, the default";
    const ORDER: u32 = 2;
    /// The error is estimated against a polynomial predictor (Milne's device), O(k³).
    const ESTIMATE_ORDER: u32 = 2;
    /// Variable-step BDF2 is zero-stable for ratios below 1 + √2
    /// (Grigorieff 1983, Numer. Math. 42:359); we allow 2.
    const MAX_GROWTH: f64 = 2.0;
    /// The root of `3ξ² − 4(1+z)ξ + (1+2z)` reaches ξ = −1 at z = kλ = −4/3
    /// (derived here, no source).
    const EXPLICIT_STABILITY: f64 = 4.0 / 3.0;
    /// The state one and two steps back, and the rates one step back.
    const ARRAYS_PER_GENE: u64 = 3;

    /// The larger modulus of the roots ζ of `3ζ² − (4 + 4z)ζ + (1 + 2z) = 0`
    /// (the explicit part of SBDF2 on `y′ = λy`, z = kλ: Ascher, Ruuth &
    /// Wetton 1995, SIAM J. Numer. Anal. 32:797, the SBDF scheme); on the
    /// negative real axis stable up to z = −4/3.
    fn amplification(z: Complex<f64>) -> f64 {
        let one = Complex::new(1.0, 0.0);
        let b = (one + z) * 4.0;
        let c = (one + z * 2.0) * 3.0;
        let root = (b * b - c * 4.0).sqrt();
        ((b + root) / 6.0).norm().max(((b - root) / 6.0).norm())
    }
}
