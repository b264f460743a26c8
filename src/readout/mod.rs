//! Readouts from a [`Recording`]: boundaries and domains along the axis.
//!
//! A boundary is where a gene's profile crosses its boundary level (by
//! default half of its maximum at that snapshot; a model can set another
//! fraction of the maximum, an absolute level, or a fraction of the gene's
//! capacity p/d), located between nuclei by linear interpolation. On a sheet the
//! profile is the mean over a central strip of rows (see
//! [`Recording::midline_rows`]). Positions are reported in
//! µm from the left edge and in % of the axis length L = nx·h (the trade's
//! "% egg length").

mod matching;
mod predicted;
mod profile;
pub mod sheet;

pub use matching::{Shift, match_boundaries, pair_in_order, same_time};
pub use predicted::{predicted_boundaries, predicted_final_boundaries, recording_at};
pub use profile::{Crossing, Level, Span, boundaries_at_level, domains_at_level, profile_boundaries, profile_domains};

use serde::{Deserialize, Serialize};

use crate::integrate::{ReadBackError, Recording};

/// A boundary of one gene at one snapshot.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Boundary {
    /// Snapshot time, min.
    pub time_min: f64,
    /// Gene name.
    pub gene: String,
    /// `"rising"` (low → high going along the axis) or `"falling"`.
    #[serde(deserialize_with = "direction_from_text")]
    pub direction: Word,
    /// Position, µm from the left edge.
    pub position_um: f64,
    /// Position, % of the axis length.
    pub position_pct: f64,
    /// |slope| at the crossing as a fraction of the gene's maximum, 1/µm.
    pub steepness_per_um: f64,
    /// Boundary width: max/|slope| at the crossing, the width of a linear ramp
    /// from 0 to the maximum with that slope, µm (common practice, no source).
    pub width_um: f64,
}

/// One of a few fixed words. (An alias, so that serde's derive does not
/// treat the field as borrowed from the input: serde-rs/serde issue 2665.)
pub type Word = &'static str;

/// Reads a boundary's direction back as one of the two words it can be.
fn direction_from_text<'de, D: serde::Deserializer<'de>>(d: D) -> Result<&'static str, D::Error> {
    let text = String::deserialize(d)?;
    match text.as_str() {
        "rising" => Ok("rising"),
        "falling" => Ok("falling"),
        other => Err(serde::de::Error::custom(format!("direction `{other}` is neither rising nor falling"))),
    }
}

/// A domain (a run of nuclei above half maximum) of one gene at one snapshot.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Domain {
    /// Snapshot time, min.
    pub time_min: f64,
    /// Gene name.
    pub gene: String,
    /// Start, µm.
    pub start_um: f64,
    /// Start, % of axis length.
    pub start_pct: f64,
    /// End, µm (less than the start when a periodic domain wraps around).
    pub end_um: f64,
    /// End, % of axis length.
    pub end_pct: f64,
    /// Width, µm.
    pub width_um: f64,
    /// Width, % of axis length.
    pub width_pct: f64,
}

/// Runs `read(profile, spacing_um, periodic)` on each gene's axis profile
/// at snapshot `s` (`profiles`, in gene order) and converts each finding
/// with `make(time, gene, finding, length_um)`.
fn per_gene<F, T>(
    rec: &Recording,
    s: usize,
    profiles: &[Vec<f64>],
    read: impl Fn(&[f64], Level, f64, bool) -> Vec<F>,
    make: impl Fn(f64, &str, F, f64) -> T,
) -> Vec<T> {
    let grid = &rec.grid;
    let periodic = grid.edges == crate::model::Edges::Periodic;
    let mut out = Vec::new();
    for (g, (name, profile)) in rec.genes.iter().zip(profiles).enumerate() {
        if profile.iter().copied().fold(f64::NEG_INFINITY, f64::max) < rec.floor.get(g).copied().unwrap_or(0.0) {
            continue; // not expressed
        }
        let at = rec.levels.get(g).copied().unwrap_or_default();
        for found in read(profile, at, grid.spacing_um, periodic) {
            out.push(make(rec.times[s], name, found, grid.length_um()));
        }
    }
    out
}

/// Every gene's axis profile at snapshot `s`, read back from disk if streamed.
fn profiles_at(rec: &Recording, s: usize) -> Result<Vec<Vec<f64>>, ReadBackError> {
    rec.axis_profiles(s, 0..rec.genes.len())
}

/// Every gene's axis profile at the last snapshot (held in memory, so nothing can fail).
fn final_profiles(rec: &Recording) -> Vec<Vec<f64>> {
    rec.profiles_of(rec.final_state(), 0..rec.genes.len())
}

/// Boundaries of every gene at snapshot `s`.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn boundaries_at(rec: &Recording, s: usize) -> Result<Vec<Boundary>, ReadBackError> {
    Ok(boundaries_in(rec, s, &profiles_at(rec, s)?))
}

/// Boundaries at the last snapshot.
pub fn final_boundaries(rec: &Recording) -> Vec<Boundary> {
    boundaries_in(rec, rec.len() - 1, &final_profiles(rec))
}

/// Boundaries of every gene in `profiles`, snapshot `s`.
fn boundaries_in(rec: &Recording, s: usize, profiles: &[Vec<f64>]) -> Vec<Boundary> {
    per_gene(rec, s, profiles, boundaries_at_level, |time_min, gene, c: Crossing, length| Boundary {
        time_min,
        gene: gene.to_string(),
        direction: if c.rising { "rising" } else { "falling" },
        position_um: c.position_um,
        position_pct: 100.0 * c.position_um / length,
        steepness_per_um: c.steepness_per_um,
        width_um: c.width_um,
    })
}

/// Domains of every gene at snapshot `s`.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn domains_at(rec: &Recording, s: usize) -> Result<Vec<Domain>, ReadBackError> {
    Ok(domains_in(rec, s, &profiles_at(rec, s)?))
}

/// Domains at the last snapshot.
pub fn final_domains(rec: &Recording) -> Vec<Domain> {
    domains_in(rec, rec.len() - 1, &final_profiles(rec))
}

/// Domains of every gene in `profiles`, snapshot `s`.
fn domains_in(rec: &Recording, s: usize, profiles: &[Vec<f64>]) -> Vec<Domain> {
    per_gene(rec, s, profiles, domains_at_level, |time_min, gene, d: Span, length| Domain {
        time_min,
        gene: gene.to_string(),
        start_um: d.start_um,
        start_pct: 100.0 * d.start_um / length,
        end_um: d.end_um,
        end_pct: 100.0 * d.end_um / length,
        width_um: d.width_um,
        width_pct: 100.0 * d.width_um / length,
    })
}

/// Boundaries at every snapshot, in time order.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn find_boundaries(rec: &Recording) -> Result<Vec<Boundary>, ReadBackError> {
    Ok((0..rec.len()).map(|s| boundaries_at(rec, s)).collect::<Result<Vec<_>, _>>()?.concat())
}

/// Boundaries and domains at every snapshot, in time order: each snapshot
/// is read and profiled once for both.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn find_boundaries_and_domains(rec: &Recording) -> Result<(Vec<Boundary>, Vec<Domain>), ReadBackError> {
    let (mut boundaries, mut domains) = (Vec::new(), Vec::new());
    for s in 0..rec.len() {
        let profiles = profiles_at(rec, s)?;
        boundaries.extend(boundaries_in(rec, s, &profiles));
        domains.extend(domains_in(rec, s, &profiles));
    }
    Ok((boundaries, domains))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Edges, Grid};

    #[test]
    fn a_gene_below_its_expression_floor_has_no_boundaries() {
        let grid = Grid { nx: 4, ny: 1, spacing_um: 1.0, edges: Edges::Sealed };
        let state = ndarray::array![[0.0, 0.01, 0.02, 0.03], [0.0, 1.0, 2.0, 3.0]];
        let rec = Recording::with_states(
            grid,
            vec!["faint".into(), "bright".into()],
            vec![[0, 0, 0]; 2],
            vec![0.0],
            vec![state],
            vec![0.25, 0.25],
        );
        let b = boundaries_at(&rec, 0).unwrap();
        assert_eq!(b.len(), 1);
        assert_eq!(b[0].gene, "bright");
        assert!(domains_at(&rec, 0).unwrap().iter().all(|d| d.gene == "bright"));
    }
}
