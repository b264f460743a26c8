//! Everything a phase portrait of one nucleus shows, computed: flow field,
//! nullclines, fixed points, separatrices, and the nucleus's trajectory as it
//! happened (coupled) beside its isolated trajectory.

use super::fixed::{FixedPoint, box_starts, find_fixed_points};
use super::plane::{separatrix, trajectory, zero_contour};
use super::system::{Frozen, Slice, System};
use crate::integrate::{ReadBackError, Recording};
use crate::model::Model;
use crate::tissue::Tissue;

/// A computed phase portrait.
#[derive(Debug, Clone)]
pub struct PortraitData {
    /// Gene indices on the x and y axes.
    pub genes: [usize; 2],
    /// Plot ranges, a.u.
    pub bounds: [(f64, f64); 2],
    /// Flow arrows: position and rate (a.u., a.u./min).
    pub field: Vec<([f64; 2], [f64; 2])>,
    /// Zero contours of each axis gene's rate.
    pub nullclines: [Vec<[(f64, f64); 2]>; 2],
    /// Fixed points in the plane.
    pub points: Vec<FixedPoint>,
    /// Stable manifolds of saddles.
    pub separatrices: Vec<Vec<Vec<f64>>>,
    /// The nucleus's recorded (coupled) trajectory: (time, [a, b]).
    pub recorded: Vec<(f64, [f64; 2])>,
    /// Its isolated trajectory from its state at the frozen time.
    pub isolated: Vec<Vec<f64>>,
    /// Time the inputs are frozen at, min.
    pub t_min: f64,
    /// Nucleus index.
    pub nucleus: usize,
    /// Other genes held fixed (name, level) when the circuit has more than two.
    pub slice: Vec<(String, f64)>,
}

/// Computes the portrait of nucleus `nucleus` in the plane of genes `a`, `b`,
/// with inputs frozen at snapshot `s` (gradients only).
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn portrait_data(
    model: &Model,
    rec: &Recording,
    nucleus: usize,
    a: usize,
    b: usize,
    s: usize,
) -> Result<PortraitData, ReadBackError> {
    let kinetics = crate::kinetics::build(model);
    let tissue = Tissue::new(model);
    let t = rec.times[s];
    let at_s = rec.state(s)?;
    let inputs = tissue.inputs_with_state(t, &at_s).column(nucleus).to_vec();
    let n_genes = rec.genes.len();
    let full = Frozen { kinetics: kinetics.as_ref(), inputs, influx: vec![0.0; n_genes] };
    let state = at_s.column(nucleus).to_vec();
    let sys = Slice { full: &full, base: state.clone(), a, b };
    let seen = rec.max_levels(0..rec.len())?;
    let top = |g: usize| {
        let seen = seen[g];
        let gene = &model.genes[g];
        let cap = if gene.decay > 0.0 { gene.production / gene.decay } else { 0.0 };
        1.1 * seen.max(cap).max(1e-6)
    };
    // Fixed points are searched for up to capacity, so that none is missed;
    // the picture shows what happens: every level the run reached and every
    // fixed point, with a margin, not the (often much larger) capacity.
    let search = [(0.0, top(a)), (0.0, top(b))];
    let tol = super::fixed::newton_tolerance(model);
    let mut starts = box_starts(&[search[0].1, search[1].1], 40);
    starts.push(vec![state[a], state[b]]);
    let points = find_fixed_points(&sys, &starts, tol, true);
    let shown = |g: usize, k: usize| {
        let fixed = points.iter().map(|p| p.x[k]).fold(0.0, f64::max);
        (1.15 * seen[g].max(fixed)).clamp(1e-6, search[k].1)
    };
    let bounds = [(0.0, shown(a, 0)), (0.0, shown(b, 1))];
    let field_n = 20;
    let mut field = Vec::with_capacity(field_n * field_n);
    let mut f = [0.0; 2];
    for j in 0..field_n {
        for i in 0..field_n {
            let p = [bounds[0].1 * (i as f64 + 0.5) / field_n as f64, bounds[1].1 * (j as f64 + 0.5) / field_n as f64];
            sys.rates(&p, &mut f);
            field.push((p, f));
        }
    }
    let rate = |k: usize| {
        let sys = &sys;
        move |x: f64, y: f64| {
            let mut out = [0.0; 2];
            sys.rates(&[x, y], &mut out);
            out[k]
        }
    };
    let nullclines = [zero_contour(&rate(0), bounds, 160, 160), zero_contour(&rate(1), bounds, 160, 160)];
    let slowest = model.genes.iter().map(|g| g.decay).filter(|d| *d > 0.0).fold(f64::INFINITY, f64::min);
    let horizon = if slowest.is_finite() { 40.0 / slowest } else { model.clock.until_min };
    let separatrices = points.iter().flat_map(|p| separatrix(&sys, p, &bounds, horizon)).collect();
    let isolated = trajectory(&sys, &[state[a], state[b]], horizon, &bounds);
    let recorded = rec
        .times
        .iter()
        .zip(rec.states())
        .map(|(t, st)| st.map(|st| (*t, [st[[a, nucleus]], st[[b, nucleus]]])))
        .collect::<Result<_, _>>()?;
    let slice = (0..n_genes).filter(|g| *g != a && *g != b).map(|g| (rec.genes[g].clone(), state[g])).collect();
    Ok(PortraitData {
        genes: [a, b],
        bounds,
        field,
        nullclines,
        points,
        separatrices,
        recorded,
        isolated,
        t_min: t,
        nucleus,
        slice,
    })
}
