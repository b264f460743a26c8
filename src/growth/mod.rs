//! Running a row that grows and divides ([`crate::model::growth`]): the run
//! is cut at every change of grid or circuit (the start and end of each
//! mitosis window, each division, each refinement), and each stretch is
//! integrated with error-controlled SBDF2 on its own grid, with positions
//! stretching and levels diluted as the row lengthens. Snapshots keep their
//! own grid; readouts are in µm and % of the length at that time.

mod divide;

pub use divide::{divide, refine};

use ndarray::Array2;

use crate::integrate::{ReadBackError, Recording, StepError, StepStats, initial_state, integrate_span};
use crate::model::{Grid, Model};
use crate::readout::{Boundary, Domain};
use crate::tissue::Tissue;

/// One snapshot of a growing row.
#[derive(Debug, Clone)]
pub struct Frame {
    /// Time, min.
    pub time_min: f64,
    /// Divisions so far.
    pub cycle: usize,
    /// True inside a mitosis window (production paused).
    pub mitosis: bool,
    /// The row at this time: nucleus count and spacing, µm.
    pub grid: Grid,
    /// Levels [gene, nucleus], a.u.
    pub state: Array2<f64>,
}

/// What changed the row's grid or circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EventKind {
    /// Production pauses.
    MitosisStart,
    /// Every nucleus divides (production resumes).
    Division,
    /// The grid is refined (the spacing had doubled).
    Refinement,
}

impl EventKind {
    /// The word used in tables.
    pub fn word(self) -> &'static str {
        match self {
            EventKind::MitosisStart => "mitosis_start",
            EventKind::Division => "division",
            EventKind::Refinement => "refinement",
        }
    }
}

/// A change of grid or circuit, at a time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Event {
    /// Time, min.
    pub time_min: f64,
    /// What happened.
    pub kind: EventKind,
    /// Nuclei before and after.
    pub nuclei: (usize, usize),
    /// Length of the row, µm.
    pub length_um: f64,
}

/// A finished run of a growing row.
#[derive(Debug, Clone)]
pub struct GrowthRun {
    /// Snapshots, at the clock's snapshot times.
    pub frames: Vec<Frame>,
    /// Mitosis windows, divisions and refinements, in time order.
    pub events: Vec<Event>,
    /// Step counts over the whole run.
    pub stats: StepStats,
}

/// A segment's end: a scheduled change, or the end of the run.
fn next_change(model: &Model, t: f64, t_refine: f64) -> (f64, Option<EventKind>) {
    let growth = model.growth.as_ref().expect("a growing model");
    let mut best = (model.clock.until_min, None);
    for &d in &growth.divide_at_min {
        let start = d - growth.mitosis_min;
        if growth.mitosis_min > 0.0 && start > t && start < best.0 {
            best = (start, Some(EventKind::MitosisStart));
        }
        if d > t && d < best.0 {
            best = (d, Some(EventKind::Division));
        }
    }
    if t_refine > t && t_refine < best.0 - 1e-9 * best.0.max(1.0) {
        best = (t_refine, Some(EventKind::Refinement));
    }
    best
}

/// Runs a growing row from its initial state to the end of its clock.
///
/// # Errors
/// [`StepError`] when the state stops being finite or steps collapse.
///
/// # Panics
/// If the model has no `[growth]`.
pub fn grow(model: &Model, parallel: bool) -> Result<GrowthRun, StepError> {
    let growth = model.growth.clone().expect("a growing model");
    let g = growth.rate_per_min;
    let h0 = model.grid.spacing_um;
    let snapshots = model.clock.snapshot_times();
    let mut grid = model.grid;
    let mut u = initial_state(model);
    let (mut t, mut cycle) = (0.0, 0);
    let mut frames = vec![Frame { time_min: 0.0, cycle: 0, mitosis: growth.in_mitosis(0.0), grid, state: u.clone() }];
    let (mut events, mut stats) = (Vec::new(), StepStats::default());
    let mut next_snapshot = 1;
    while t < model.clock.until_min {
        // The grid's spacing is grid.spacing_um at t; it reaches 2·h0 at:
        let t_refine = if g > 0.0 && growth.refine { t + (2.0 * h0 / grid.spacing_um).ln() / g } else { f64::INFINITY };
        let (end, event) = next_change(model, t, t_refine);
        // The row's grid then, production paused during mitosis.
        let m = Model { grid, ..model.circuit_at(t) };
        let kinetics = crate::kinetics::build(&m);
        let tissue = Tissue::new(&m).stretched_from(t);
        let mut targets: Vec<f64> =
            snapshots[next_snapshot..].iter().copied().take_while(|&s| s < end - 1e-9 * end).collect();
        targets.push(end);
        let mut last = None;
        let part = integrate_span(&m, kinetics.as_ref(), &tissue, parallel, t, u, &targets, |at, state| {
            if at == end {
                last = Some(state.clone());
            }
            if next_snapshot < snapshots.len() && (at - snapshots[next_snapshot]).abs() <= 1e-9 * at.max(1.0) {
                let spacing_um = grid.spacing_um * tissue.stretch_at(at);
                frames.push(Frame {
                    time_min: snapshots[next_snapshot],
                    cycle,
                    mitosis: growth.in_mitosis(at),
                    grid: Grid { spacing_um, ..grid },
                    state: state.clone(),
                });
                next_snapshot += 1;
            }
        })?;
        stats.merge(part);
        u = last.expect("the stretch reaches its end");
        grid.spacing_um *= tissue.stretch_at(end);
        t = end;
        let Some(kind) = event else { break };
        let before = grid.nx;
        match kind {
            EventKind::MitosisStart => {}
            EventKind::Division | EventKind::Refinement => {
                u = if kind == EventKind::Division { divide(&u) } else { refine(&u) };
                grid.nx *= 2;
                grid.spacing_um /= 2.0;
                if kind == EventKind::Division {
                    cycle += 1;
                }
            }
        }
        events.push(Event { time_min: t, kind, nuclei: (before, grid.nx), length_um: grid.length_um() });
    }
    Ok(GrowthRun { frames, events, stats })
}

impl GrowthRun {
    /// Each gene's largest level over the whole run, a.u.
    fn top_levels(&self) -> Vec<f64> {
        let mut top = vec![0.0f64; self.frames.first().map_or(0, |f| f.state.nrows())];
        for f in &self.frames {
            crate::integrate::raise_to_maxima(&mut top, &f.state);
        }
        top
    }

    /// A one-snapshot recording of frame `s` on its own grid, with the
    /// model's genes, colours and boundary levels, and expression floors of
    /// genes without a capacity from `top`, the run's largest levels
    /// ([`Recording::floor_from_levels`]): for the readouts of fixed rows.
    fn frame_recording(&self, model: &Model, s: usize, top: &[f64]) -> Recording {
        let f = &self.frames[s];
        let mut rec = Recording::for_model(&Model { grid: f.grid, ..model.clone() });
        rec.floor_from_levels(top);
        rec.push(f.time_min, &f.state).expect("a recording in memory");
        rec
    }

    /// Boundaries and domains of every frame, in µm and % of the length at
    /// that time.
    ///
    /// # Errors
    /// Never in practice (the frames are in memory).
    pub fn readouts(&self, model: &Model) -> Result<(Vec<Boundary>, Vec<Domain>), ReadBackError> {
        let (mut b, mut d) = (Vec::new(), Vec::new());
        let top = self.top_levels();
        for s in 0..self.frames.len() {
            let (fb, fd) = crate::readout::find_boundaries_and_domains(&self.frame_recording(model, s, &top))?;
            b.extend(fb);
            d.extend(fd);
        }
        Ok((b, d))
    }

    /// Total amount of each gene, Σ u·h (a.u.·µm), at frame `s`.
    pub fn amounts(&self, s: usize) -> Vec<f64> {
        let f = &self.frames[s];
        f.state.outer_iter().map(|row| row.sum() * f.grid.spacing_um).collect()
    }

    /// The frames resampled onto one grid of `nx` nuclei spanning 100 "µm"
    /// (that is, % of the length at each time), linear between nucleus
    /// centres: for pictures drawn against % of the current length.
    pub fn display_recording(&self, model: &Model, nx: usize) -> Recording {
        let grid = Grid { nx, ny: 1, spacing_um: 100.0 / nx as f64, edges: model.grid.edges };
        let mut rec = Recording::for_model(&Model { grid, ..model.clone() });
        for f in &self.frames {
            let h_pct = 100.0 / f.grid.nx as f64;
            let state = Array2::from_shape_fn((f.state.nrows(), nx), |(g, i)| {
                let row = f.state.row(g);
                crate::render::level_at(row.as_slice().expect("standard layout"), h_pct, grid.x_um(i))
            });
            rec.push(f.time_min, &state).expect("a recording in memory");
        }
        rec
    }
}
