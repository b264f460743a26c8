//! Gradient shapes and time courses.

use crate::model::{Gradient, Grid, Shape, Side};

/// Distance of nucleus `(ix, iy)` from a gradient's source, µm.
///
/// Left/right/bottom/top: distance from that edge of the tissue (nuclei sit at
/// cell centres, so the first nucleus is h/2 from the edge). Centre: distance
/// from the middle of the axis (row) or radial distance from the sheet's centre.
pub fn distance_um(grid: &Grid, side: Side, ix: usize, iy: usize) -> f64 {
    distance_at(grid, side, grid.x_um(ix), grid.y_um(iy))
}

/// Distance of the point (x, y) µm from a gradient's source, µm (see [`distance_um`]).
pub fn distance_at(grid: &Grid, side: Side, x: f64, y: f64) -> f64 {
    match side {
        Side::Left => x,
        Side::Right => grid.length_um() - x,
        Side::Bottom => y,
        Side::Top => grid.height_um() - y,
        Side::Centre => {
            let dx = x - grid.length_um() / 2.0;
            if grid.is_sheet() { dx.hypot(y - grid.height_um() / 2.0) } else { dx.abs() }
        }
    }
}

/// Value of gradient `g` at the point (x, y) µm at time `t_min`:
/// `a(t)·(baseline + (peak − baseline)·s(d))`, a.u.
pub fn value_at(g: &Gradient, grid: &Grid, x: f64, y: f64, t_min: f64) -> f64 {
    let d = distance_at(grid, g.from, x, y);
    amplitude_at(&g.amplitude, t_min) * (g.baseline + (g.peak - g.baseline) * unit_shape(&g.shape, d, t_min))
}

/// Unit shape s(d) at time `t_min`, 1 at the source:
/// exponential `exp(−d/λ)`, linear `max(0, 1 − d/ℓ)`, step `1` for `d < w`
/// else `0`, a table its level at d (linear between its points), tables at
/// several times their level at d and t (linear in time between them).
pub fn unit_shape(shape: &Shape, d_um: f64, t_min: f64) -> f64 {
    match *shape {
        Shape::TableInTime { ref frames } => crate::model::gradient_table::level_in_time(frames, d_um, t_min),
        Shape::Exponential { decay_length_um } => (-d_um / decay_length_um).exp(),
        Shape::Linear { length_um } => (1.0 - d_um / length_um).max(0.0),
        Shape::Table { ref points } => crate::model::gradient_table::level_at(points, d_um),
        Shape::Step { width_um } => {
            if d_um < width_um {
                1.0
            } else {
                0.0
            }
        }
    }
}

/// Amplitude factor a(t): piecewise linear through `(t_min, factor)` points,
/// held constant before the first and after the last; 1 when there are none.
pub fn amplitude_at(points: &[(f64, f64)], t_min: f64) -> f64 {
    if points.is_empty() { 1.0 } else { crate::model::gradient_table::level_at(points, t_min) }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::Edges;
    use approx::assert_relative_eq;

    #[test]
    fn amplitude_interpolates_and_holds_ends() {
        let p = [(0.0, 0.0), (10.0, 1.0), (30.0, 0.5)];
        assert_eq!(amplitude_at(&p, -1.0), 0.0);
        assert_relative_eq!(amplitude_at(&p, 5.0), 0.5);
        assert_relative_eq!(amplitude_at(&p, 20.0), 0.75);
        assert_eq!(amplitude_at(&p, 99.0), 0.5);
        assert_eq!(amplitude_at(&[], 3.0), 1.0);
    }

    #[test]
    fn distances_are_from_cell_centres() {
        let g = Grid { nx: 10, ny: 4, spacing_um: 2.0, edges: Edges::Sealed };
        assert_relative_eq!(distance_um(&g, Side::Left, 0, 0), 1.0);
        assert_relative_eq!(distance_um(&g, Side::Right, 9, 0), 1.0);
        assert_relative_eq!(distance_um(&g, Side::Top, 0, 3), 1.0);
        assert_relative_eq!(distance_um(&g, Side::Centre, 5, 2), 1.0f64.hypot(1.0));
    }
}
