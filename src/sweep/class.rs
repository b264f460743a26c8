//! The class of a final pattern, by rules a reader can check (they are in
//! the README): first whether it has settled, then what its domains look
//! like along the axis.

use crate::integrate::Recording;
use crate::readout::{Boundary, Domain};

/// A level that changes faster than this fraction of its gene's largest
/// level per decay time (1/decay, or the run's length for a gene that does
/// not decay), over either of the last two snapshot intervals, means the
/// pattern has not settled (common practice, no source).
pub const SETTLED_REL: f64 = 1e-2;

/// What kind of pattern a run ends with.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum PatternClass {
    /// No gene crosses its boundary level.
    NoBoundary,
    /// Boundaries, every domain reaching an edge of the row: no stripe.
    Boundary,
    /// One gene has one domain away from both edges (and none has more).
    Stripe,
    /// Some gene has two or more domains away from both edges.
    SeveralStripes,
    /// Levels still move between the last two snapshots (oscillating, or a
    /// front still travelling): the run ends before a steady pattern.
    Changing,
    /// The run failed.
    Failed,
}

impl PatternClass {
    /// Every class, in legend order.
    pub const ALL: [PatternClass; 6] = [
        PatternClass::NoBoundary,
        PatternClass::Boundary,
        PatternClass::Stripe,
        PatternClass::SeveralStripes,
        PatternClass::Changing,
        PatternClass::Failed,
    ];

    /// Its name in tables and pictures.
    pub fn name(self) -> &'static str {
        match self {
            PatternClass::NoBoundary => "no boundary",
            PatternClass::Boundary => "boundary",
            PatternClass::Stripe => "stripe",
            PatternClass::SeveralStripes => "several stripes",
            PatternClass::Changing => "changing",
            PatternClass::Failed => "failed",
        }
    }
}

/// Classifies a run from its last snapshot (and the one before, kept in
/// `rec`), its final `boundaries` and `domains`:
/// 1. "changing" if any level changes, over either of the last two
///    snapshot intervals, faster than [`SETTLED_REL`] of its gene's largest
///    level per decay time (an oscillation whose period divides the snapshot
///    interval looks steady: take snapshots finer than the period);
/// 2. "no boundary" if there is no boundary;
/// 3. "several stripes" if some gene has two or more domains that touch
///    neither edge (on a periodic row every domain counts);
/// 4. "stripe" if some gene has one;
/// 5. otherwise "boundary".
pub fn classify(rec: &Recording, rates_per_min: &[f64], boundaries: &[Boundary], domains: &[Domain]) -> PatternClass {
    let last = rec.len().saturating_sub(1);
    let Ok(end) = rec.state(last) else { return PatternClass::Failed };
    for s in last.saturating_sub(2)..last {
        let Ok(a) = rec.state(s) else { return PatternClass::Failed };
        let dt = rec.times[last] - rec.times[s];
        for g in 0..rec.genes.len() {
            let (row_a, row_b) = (a.row(g), end.row(g));
            let top = row_b.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            let moved = row_a.iter().zip(row_b.iter()).fold(0.0f64, |m, (x, y)| m.max((x - y).abs()));
            if top > 0.0 && dt > 0.0 && moved / dt > SETTLED_REL * top * rates_per_min[g] {
                return PatternClass::Changing;
            }
        }
    }
    if boundaries.is_empty() {
        return PatternClass::NoBoundary;
    }
    let length = rec.grid.length_um();
    let periodic = rec.grid.edges == crate::model::Edges::Periodic;
    let edge = 1e-9 * length;
    let interior = |d: &Domain| periodic || (d.start_um > edge && d.end_um < length - edge);
    let most =
        rec.genes.iter().map(|g| domains.iter().filter(|d| &d.gene == g && interior(d)).count()).max().unwrap_or(0);
    match most {
        0 => PatternClass::Boundary,
        1 => PatternClass::Stripe,
        _ => PatternClass::SeveralStripes,
    }
}
