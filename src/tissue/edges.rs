//! The explicit Laplacian and the edge rules of [`crate::model::GeneEdges`]
//! as the integrator sees them: an edge holding a level adds `−2u₀/h²` to
//! its nucleus's `∇²u` (part of the linear operator, solved implicitly),
//! and influxes and held levels add a constant source (with the reactions,
//! explicitly, which integrates a constant exactly). The ghost nuclei are
//! derived in [`crate::model::GeneEdges`]'s module.

use crate::model::{EdgeRule, Edges, Gene, GeneEdges, Grid};

/// The cell-centred Laplacian ∇²u (µm⁻² × a.u.), explicitly: mirror
/// neighbours on sealed edges, wrapped ones on periodic edges, and a ghost
/// `−u₀` beyond an edge that holds a level (`held`: left, right, bottom,
/// top; the level itself is in [`edge_source`]); five points on a sheet,
/// three in a row.
pub fn laplacian(grid: &Grid, held: [bool; 4], u: &[f64], out: &mut [f64]) {
    let (nx, ny, h2) = (grid.nx, grid.ny, grid.spacing_um * grid.spacing_um);
    let periodic = grid.edges == Edges::Periodic;
    // The value beyond nucleus i along an axis of n, towards `forward`: a
    // neighbour, the wrapped one, or the ghost of edge `edge`.
    let beyond = |line: &dyn Fn(usize) -> f64, i: usize, n: usize, forward: bool, edge: usize| -> f64 {
        match (forward, i) {
            (true, i) if i + 1 < n => line(i + 1),
            (false, i) if i > 0 => line(i - 1),
            (true, _) if periodic => line(0),
            (false, _) if periodic => line(n - 1),
            _ if held[edge] => -line(i),
            _ => line(i),
        }
    };
    for iy in 0..ny {
        let row = |ix: usize| u[iy * nx + ix];
        for ix in 0..nx {
            let column = |jy: usize| u[jy * nx + ix];
            let own = row(ix);
            let mut lap = beyond(&row, ix, nx, false, 0) + beyond(&row, ix, nx, true, 1) - 2.0 * own;
            if ny > 1 {
                lap += beyond(&column, iy, ny, false, 2) + beyond(&column, iy, ny, true, 3) - 2.0 * own;
            }
            out[iy * nx + ix] = lap / h2;
        }
    }
}

/// Adds each edge rule's constant source to `out` (one value per nucleus,
/// a.u./min): `j/h` in the nuclei along an edge with influx j, `2DC₀/h²`
/// along an edge holding C₀.
pub fn edge_source(grid: &Grid, gene: &Gene, out: &mut [f64]) {
    let (nx, ny, h) = (grid.nx, grid.ny, grid.spacing_um);
    let amount = |rule: EdgeRule| match rule {
        EdgeRule::Sealed => 0.0,
        EdgeRule::Influx(j) => j / h,
        EdgeRule::Level(c) => 2.0 * gene.diffusion * c / (h * h),
    };
    let GeneEdges { left, right, bottom, top } = gene.edges;
    for iy in 0..ny {
        out[iy * nx] += amount(left);
        out[iy * nx + nx - 1] += amount(right);
    }
    if ny > 1 {
        for ix in 0..nx {
            out[ix] += amount(bottom);
            out[(ny - 1) * nx + ix] += amount(top);
        }
    }
}

/// `D∇²u` of one gene with its edge rules, constant sources included, a.u./min:
/// what diffusion brings into each nucleus.
pub fn inflow(grid: &Grid, gene: &Gene, u: &[f64], out: &mut [f64]) {
    laplacian(grid, gene.edges.held(), u, out);
    out.iter_mut().for_each(|v| *v *= gene.diffusion);
    edge_source(grid, gene, out);
}
