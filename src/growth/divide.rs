//! Doubling a row's nuclei: by division (daughters inherit their mother's
//! levels) or by refinement of the grid (a limited linear reconstruction
//! that keeps each mother's amount). Either way each mother's share of the
//! length is split in two, so the amount Σ u·h of every gene is unchanged.

use ndarray::Array2;

/// Division: every nucleus i becomes nuclei 2i and 2i + 1 with its levels.
pub fn divide(u: &Array2<f64>) -> Array2<f64> {
    let (genes, n) = u.dim();
    Array2::from_shape_fn((genes, 2 * n), |(g, j)| u[[g, j / 2]])
}

/// Refinement: nucleus i becomes `u_i − s_i/4` and `u_i + s_i/4`, where
/// `s_i` is the minmod of the differences to its neighbours (0 at a sealed
/// end, where the ghost value equals the end's own). The pair's mean is
/// `u_i`, and no new extremum appears (van Leer 1979, J. Comput. Phys.
/// 32:101, the limited piecewise-linear reconstruction).
pub fn refine(u: &Array2<f64>) -> Array2<f64> {
    let (genes, n) = u.dim();
    let mut out = Array2::zeros((genes, 2 * n));
    for g in 0..genes {
        let row = u.row(g);
        for i in 0..n {
            let left = if i > 0 { row[i] - row[i - 1] } else { 0.0 };
            let right = if i + 1 < n { row[i + 1] - row[i] } else { 0.0 };
            let s = if left * right > 0.0 { left.signum() * left.abs().min(right.abs()) } else { 0.0 };
            out[[g, 2 * i]] = row[i] - 0.25 * s;
            out[[g, 2 * i + 1]] = row[i] + 0.25 * s;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    /// Amount per mother kept, daughters inherit, no new extremum
    /// (properties of the definitions above).
    #[test]
    fn doubling_keeps_each_mothers_amount() {
        let u = array![[0.0, 1.0, 3.0, 3.5, 2.0], [5.0, 5.0, 5.0, 5.0, 5.0]];
        for out in [divide(&u), refine(&u)] {
            assert_eq!(out.dim(), (2, 10));
            for g in 0..2 {
                for i in 0..5 {
                    approx::assert_abs_diff_eq!(
                        out[[g, 2 * i]] + out[[g, 2 * i + 1]],
                        2.0 * u[[g, i]],
                        epsilon = 1e-15
                    );
                }
                let (lo, hi) = u.row(g).iter().fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
                assert!(out.row(g).iter().all(|&v| v >= lo && v <= hi));
            }
        }
        assert_eq!(divide(&u)[[0, 5]], 3.0);
        // A straight ramp is refined onto the finer grid's own ramp.
        let ramp = array![[0.0, 1.0, 2.0, 3.0]];
        let r = refine(&ramp);
        assert_eq!(r.row(0).to_vec()[2..6], [0.75, 1.25, 1.75, 2.25]);
    }
}
