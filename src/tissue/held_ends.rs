//! Rows whose ends hold a level: the matrix `A = a₀ I − c ∇²` of a sealed
//! row plus `2c/h²` on the diagonal at each held end (the ghost `−u₀`, see
//! [`super::edges`]), solved with the sealed row's kept factors and a
//! rank-two correction (Sherman–Morrison–Woodbury; Golub & Van Loan,
//! *Matrix Computations*, 4th ed. 2013, §2.1.4):
//!
//! ```text
//! A = S + U Vᵀ,  U = [δ₀e₀, δ₁e₋₁],  V = [e₀, e₋₁],  δ = 2c/h² at a held end, 0 else
//! A⁻¹b = y − [δ₀z₀, δ₁z₁] (I + Vᵀ[δ₀z₀, δ₁z₁])⁻¹ Vᵀy,  y = S⁻¹b,  z₀ = S⁻¹e₀,  z₁ = S⁻¹e₋₁
//! ```
//! `z₀` and `z₁` are kept with the factors, so a solve costs one more pass
//! over the row.

use super::row_solve::TriFactor;

/// The correction for one row's factor: which ends hold a level, and the
/// columns `δ·S⁻¹e` and the 2×2 inverse for the current `(a₀, c)`.
#[derive(Debug, Clone)]
pub struct HeldEnds {
    /// Left and right end held.
    held: [bool; 2],
    /// `δ₀ z₀` and `δ₁ z₁` (zero for a sealed end).
    columns: [Vec<f64>; 2],
    /// `(I + Vᵀ[δ₀z₀, δ₁z₁])⁻¹`.
    inverse: [[f64; 2]; 2],
}

impl HeldEnds {
    /// For a row of `n` nuclei; `held` = [left, right].
    pub fn new(n: usize, held: [bool; 2]) -> HeldEnds {
        HeldEnds { held, columns: [vec![0.0; n], vec![0.0; n]], inverse: [[1.0, 0.0], [0.0, 1.0]] }
    }

    /// Recomputes the columns for `factor`, just factored for `(a₀, c)` on spacing `h` µm.
    pub fn refresh(&mut self, factor: &TriFactor, c: f64, h: f64) {
        let n = self.columns[0].len();
        if n == 0 {
            return;
        }
        let delta = 2.0 * c / (h * h);
        for (end, column) in self.columns.iter_mut().enumerate() {
            column.fill(0.0);
            if self.held[end] {
                column[if end == 0 { 0 } else { n - 1 }] = 1.0;
                factor.solve(column);
                column.iter_mut().for_each(|v| *v *= delta);
            }
        }
        // I + Vᵀ[δ₀z₀, δ₁z₁]: rows are the ends (first, last nucleus).
        let m =
            [[1.0 + self.columns[0][0], self.columns[1][0]], [self.columns[0][n - 1], 1.0 + self.columns[1][n - 1]]];
        let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
        self.inverse = [[m[1][1] / det, -m[0][1] / det], [-m[1][0] / det, m[0][0] / det]];
    }

    /// `y ← A⁻¹b` from `y = S⁻¹b`, in place.
    pub fn correct(&self, y: &mut [f64]) {
        let n = y.len();
        if n == 0 {
            return;
        }
        let ends = [y[0], y[n - 1]];
        let a = [
            self.inverse[0][0] * ends[0] + self.inverse[0][1] * ends[1],
            self.inverse[1][0] * ends[0] + self.inverse[1][1] * ends[1],
        ];
        let [z0, z1] = &self.columns;
        for ((v, p), q) in y.iter_mut().zip(z0).zip(z1) {
            *v -= a[0] * p + a[1] * q;
        }
    }
}
