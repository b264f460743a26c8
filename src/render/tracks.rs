//! Boundary tracks: each boundary linked through time to the nearest one of
//! the same gene and direction at the previous snapshot (if within a tenth of
//! the axis), kept only where the gene is expressed and marked where the
//! boundary is broad. The kymograph and the boundary-position plot draw them.

use super::Style;
use crate::integrate::{ReadBackError, Recording};
use crate::readout::Boundary;

/// A boundary is traced only where its gene's highest level is at least
/// this fraction of the gene's highest over the shown times: the crossings
/// of a gene that is barely on are those of a nearly flat profile, and
/// wander (common practice, no source).
pub const EXPRESSED: f64 = 0.25;

/// A boundary wider than this fraction of the axis (its width: the gene's
/// maximum over the slope at the crossing) is a shallow gradient more than an
/// edge, and is drawn thin and dotted (common practice, no source).
pub const BROAD: f64 = 0.25;

/// One step of a boundary's track between two snapshots.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Segment {
    /// Gene index (into the recording's genes).
    pub gene: usize,
    /// Its place among the shown genes (0: the first).
    pub rank: usize,
    /// True for a rising boundary (low → high along the axis).
    pub rising: bool,
    /// (time, min; position, % length) at the earlier snapshot.
    pub from: (f64, f64),
    /// The same at the later snapshot.
    pub to: (f64, f64),
    /// Either end is broader than [`BROAD`] of the axis.
    pub broad: bool,
}

/// The tracks of `boundaries` over the shown snapshots of `rec`, for the
/// shown genes, where the gene is expressed at both ends ([`EXPRESSED`]).
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn tracks(rec: &Recording, boundaries: &[Boundary], style: &Style) -> Result<Vec<Segment>, ReadBackError> {
    let snaps = style.snapshots(rec);
    let times: Vec<f64> = snaps.iter().map(|&s| rec.times[s]).collect();
    let per_snapshot: Vec<Vec<f64>> = snaps.iter().map(|&s| rec.max_levels([s])).collect::<Result<_, _>>()?;
    let overall = super::gene_maxima(rec, &snaps)?;
    let expressed = |g: usize, t: f64| {
        times
            .iter()
            .position(|&s| (s - t).abs() <= 1e-9 * t.abs().max(1.0))
            .is_some_and(|k| per_snapshot[k][g] >= EXPRESSED * overall[g])
    };
    let (t0, t1) = (times.first().copied().unwrap_or(0.0), times.last().copied().unwrap_or(0.0));
    let length = rec.grid.length_um();
    let pct = |u: f64| 100.0 * u / length;
    let mut out = Vec::new();
    for (rank, &g) in style.genes.iter().enumerate() {
        for rising in [true, false] {
            let dir = if rising { "rising" } else { "falling" };
            // (time, [(µm, broad)]).
            let mut by_time: Vec<(f64, Vec<(f64, bool)>)> = Vec::new();
            for b in boundaries.iter().filter(|b| {
                b.gene == rec.genes[g] && b.direction == dir && b.time_min >= t0 - 1e-9 && b.time_min <= t1 + 1e-9
            }) {
                let x = (b.position_um, b.width_um > BROAD * length);
                match by_time.last_mut() {
                    Some((t, xs)) if *t == b.time_min => xs.push(x),
                    _ => by_time.push((b.time_min, vec![x])),
                }
            }
            let index = |t: f64| times.iter().position(|&s| (s - t).abs() <= 1e-9 * t.abs().max(1.0));
            for pair in by_time.windows(2) {
                let ((t_prev, prev), (t, now)) = (&pair[0], &pair[1]);
                // Only boundaries at consecutive snapshots are joined: a
                // snapshot without the boundary (the gene below its floor,
                // or the crossing gone) leaves a gap, not a line across it.
                let consecutive = matches!((index(*t_prev), index(*t)), (Some(a), Some(b)) if b == a + 1);
                if !(consecutive && expressed(g, *t_prev) && expressed(g, *t)) {
                    continue;
                }
                for &(x, broad) in now {
                    let nearest = prev.iter().copied().min_by(|p, q| (p.0 - x).abs().total_cmp(&(q.0 - x).abs()));
                    if let Some((p, was_broad)) = nearest.filter(|p| (p.0 - x).abs() < 0.1 * length) {
                        out.push(Segment {
                            gene: g,
                            rank,
                            rising,
                            from: (*t_prev, pct(p)),
                            to: (*t, pct(x)),
                            broad: broad || was_broad,
                        });
                    }
                }
            }
        }
    }
    Ok(out)
}
