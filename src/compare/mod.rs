//! Scoring a run against measured boundaries (the table is described in
//! [`table`]): per sample, at the snapshot nearest the measured time, each
//! measured boundary is paired with the nearest simulated one of the same
//! gene and direction.
//!
//! Error bars are never taken below what the image can resolve: the sd used
//! is the larger of the table's sd, its `resolution_pct` (one pixel in % of
//! the length) and a floor (default [`DEFAULT_SD_FLOOR_PCT`]).

pub mod spread;
pub mod table;

use serde::Serialize;

use crate::integrate::{ReadBackError, Recording};
use crate::readout::match_boundaries;
use crate::readout::{Boundary, boundaries_at};

pub use table::{CompareError, MeasuredRow, check_genes, check_times, read_measured};

/// The smallest sd taken at face value, % of the length (common practice, no
/// source): boundary positions read from stained embryos are rarely
/// reproducible to better than half a per cent of the length, whatever the
/// sd of a few embryos says.
pub const DEFAULT_SD_FLOOR_PCT: f64 = 0.5;

/// The smallest sd a row may carry: the larger of its resolution and `floor`, %.
pub fn sd_floor(row: &MeasuredRow, floor: f64) -> f64 {
    floor.max(row.resolution_pct.unwrap_or(0.0))
}

/// The row's sd raised to [`sd_floor`], or None when the row gives no sd.
pub fn floored_sd(row: &MeasuredRow, floor: f64) -> Option<f64> {
    row.sd_pct.map(|sd| sd.max(sd_floor(row, floor)))
}

/// One line of a comparison: a row of `comparison.csv` (numbers in the csv
/// crate's form; an empty cell for None).
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize, Default)]
pub struct ComparisonRow {
    /// Sample.
    pub sample: String,
    /// Snapshot compared, min.
    pub time_min: f64,
    /// Gene.
    pub gene: String,
    /// Direction.
    pub direction: String,
    /// Measured position, % length.
    pub measured_pct: Option<f64>,
    /// Its standard deviation, as given.
    pub sd_pct: Option<f64>,
    /// The sd used for z: never below the resolution or the floor.
    pub sd_used_pct: Option<f64>,
    /// Simulated position, % length.
    pub simulated_pct: Option<f64>,
    /// Simulated − measured, % length.
    pub difference_pct: Option<f64>,
    /// Difference / sd.
    pub z: Option<f64>,
    /// "matched", "measured only" or "simulated only".
    pub status: String,
    /// Embryos behind the measured sd, as given.
    pub n: Option<u32>,
    /// Positional error over replicate embryos of the model, % length
    /// (with `compare --replicates`; see [`spread`]).
    pub predicted_sd_pct: Option<f64>,
    /// Replicate embryos behind it.
    pub predicted_embryos: Option<usize>,
    /// Measured sd over predicted sd.
    pub sd_ratio: Option<f64>,
    /// 95 % interval of that ratio, low end (needs the measured n).
    pub sd_ratio_low: Option<f64>,
    /// Its high end.
    pub sd_ratio_high: Option<f64>,
    /// "measured wider", "measured narrower", "same", "no predicted spread"
    /// or empty (see [`spread::score_spread`]).
    pub spread: String,
}

/// A sample whose boundaries match much better read the other way round.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MirrorHint {
    /// Sample.
    pub sample: String,
    /// Snapshot compared, min.
    pub time_min: f64,
    /// Matched boundaries and their rms difference (%) as given.
    pub as_given: (usize, Option<f64>),
    /// The same with head and tail swapped.
    pub mirrored: (usize, Option<f64>),
}

/// A run scored against measurements.
#[derive(Debug, Clone)]
pub struct Comparison {
    /// Every pairing and every one-sided boundary.
    pub rows: Vec<ComparisonRow>,
    /// Root-mean-square difference over matched boundaries, % length.
    pub rmse_pct: Option<f64>,
    /// Samples that would match much better mirrored (a head taken at the wrong end?).
    pub mirror: Vec<MirrorHint>,
    /// Rows whose sd was raised to the floor.
    pub raised_sds: usize,
    /// Rows with no time, compared at the last snapshot.
    pub at_last_snapshot: usize,
}

/// Matched count, rms difference and a cost (mean squared difference, each
/// capped at 25 %, an unmatched measured boundary costing 25²) of `measured`
/// against `simulated`.
fn score(simulated: &[Boundary], measured: &[Boundary]) -> (usize, Option<f64>, f64) {
    let shifts = match_boundaries("", simulated, measured);
    let diffs: Vec<f64> = shifts.iter().filter_map(|s| s.shift_pct).collect();
    let rms = (!diffs.is_empty()).then(|| (diffs.iter().map(|d| d * d).sum::<f64>() / diffs.len() as f64).sqrt());
    let unmatched = measured.len() - diffs.len();
    let cost = (diffs.iter().map(|d| d.abs().min(25.0).powi(2)).sum::<f64>() + 625.0 * unmatched as f64)
        / measured.len().max(1) as f64;
    (diffs.len(), rms, cost)
}

/// Pairs measured and simulated boundaries: per sample, at the snapshot
/// nearest the measured time (the last one when a row has none), same gene
/// and direction, nearest in position. z uses the floored sd (see
/// [`floored_sd`], with `floor` in %). A sample is reported in
/// [`Comparison::mirror`] when reading it head-to-tail reversed costs less
/// than a quarter as much and its rms difference as given exceeds 2 %.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn compare(rec: &Recording, measured: &[MeasuredRow], floor: f64) -> Result<Comparison, ReadBackError> {
    let last = rec.times.len() - 1;
    let snapshot = |t: Option<f64>| {
        t.map_or(last, |t| {
            (0..rec.times.len())
                .min_by(|&a, &b| (rec.times[a] - t).abs().total_cmp(&(rec.times[b] - t).abs()))
                .unwrap_or(last)
        })
    };
    let length = rec.grid.length_um();
    let mut groups: Vec<((String, usize), Vec<&MeasuredRow>)> = Vec::new();
    for m in measured {
        let key = (m.sample.clone(), snapshot(m.at_min));
        match groups.iter_mut().find(|(k, _)| *k == key) {
            Some((_, v)) => v.push(m),
            None => groups.push((key, vec![m])),
        }
    }
    let mut rows = Vec::new();
    let mut mirror = Vec::new();
    for ((sample, s), ms) in groups {
        let simulated = boundaries_at(rec, s)?;
        let as_boundary = |mirrored: bool| -> Vec<Boundary> {
            ms.iter()
                .map(|m| {
                    let rising = (m.direction == "rising") != mirrored;
                    let pct = if mirrored { 100.0 - m.position_pct } else { m.position_pct };
                    Boundary {
                        time_min: rec.times[s],
                        gene: m.gene.clone(),
                        direction: if rising { "rising" } else { "falling" },
                        position_um: pct / 100.0 * length,
                        position_pct: pct,
                        steepness_per_um: f64::NAN,
                        width_um: f64::NAN,
                    }
                })
                .collect()
        };
        let given = as_boundary(false);
        let (matched, rms, cost) = score(&simulated, &given);
        let (m_matched, m_rms, m_cost) = score(&simulated, &as_boundary(true));
        if m_cost < 0.25 * cost && rms.is_none_or(|r| r > 2.0) {
            mirror.push(MirrorHint {
                sample: sample.clone(),
                time_min: rec.times[s],
                as_given: (matched, rms),
                mirrored: (m_matched, m_rms),
            });
        }
        for sh in match_boundaries(&sample, &simulated, &given) {
            let row = ms
                .iter()
                .find(|m| Some(m.position_pct) == sh.mutant_pct && m.gene == sh.gene && m.direction == sh.direction);
            let sd = row.and_then(|m| m.sd_pct);
            let sd_used = row.and_then(|m| floored_sd(m, floor));
            let difference_pct = sh.shift_pct.map(|d| -d);
            rows.push(ComparisonRow {
                sample: sample.clone(),
                time_min: rec.times[s],
                gene: sh.gene,
                direction: sh.direction,
                measured_pct: sh.mutant_pct,
                sd_pct: sd,
                sd_used_pct: sd_used,
                simulated_pct: sh.wild_type_pct,
                difference_pct,
                z: difference_pct.zip(sd_used).map(|(d, s)| d / s),
                status: match sh.status.as_str() {
                    "moved" => "matched",
                    "lost" => "simulated only",
                    _ => "measured only",
                }
                .to_string(),
                n: row.and_then(|m| m.n),
                ..ComparisonRow::default()
            });
        }
    }
    let diffs: Vec<f64> = rows.iter().filter_map(|r| r.difference_pct).collect();
    let rmse_pct = (!diffs.is_empty()).then(|| (diffs.iter().map(|d| d * d).sum::<f64>() / diffs.len() as f64).sqrt());
    let raised_sds = measured.iter().filter(|m| m.sd_pct.is_some_and(|sd| sd < sd_floor(m, floor))).count();
    let at_last_snapshot = measured.iter().filter(|m| m.at_min.is_none()).count();
    Ok(Comparison { rows, rmse_pct, mirror, raised_sds, at_last_snapshot })
}
