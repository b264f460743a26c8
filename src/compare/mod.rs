//! Scoring a run against measured boundaries.
//!
//! Measured-boundary table (CSV, our own columns; `time`, `sd_pct` and `n`
//! may be left empty):
//! `sample, time, gene, direction, position_pct, sd_pct, n` — time in minutes
//! or a stage label mapped to minutes by the caller; empty time = the run's
//! last snapshot; position in % of axis length from the head.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use serde::Serialize;

use crate::integrate::{ReadBackError, Recording};
use crate::readout::{Boundary, boundaries_at};
use crate::screen::match_boundaries;

/// A table that cannot be used.
#[derive(Debug, thiserror::Error)]
pub enum CompareError {
    /// Unreadable file.
    #[error("cannot read {}", path.display())]
    Read {
        /// File.
        path: PathBuf,
        /// Cause.
        source: std::io::Error,
    },
    /// Missing column.
    #[error("{}: the header has no `{column}` column; the columns are sample, time, gene, direction, position_pct, sd_pct, n", path.display())]
    MissingColumn {
        /// File.
        path: PathBuf,
        /// Column.
        column: String,
    },
    /// Bad value.
    #[error("{}:{line}: column `{column}` is `{value}`; {fix}", path.display())]
    BadValue {
        /// File.
        path: PathBuf,
        /// Line (1-based, the header is line 1).
        line: usize,
        /// Column.
        column: String,
        /// Value.
        value: String,
        /// How to fix.
        fix: String,
    },
    /// A table with no rows.
    #[error("{}: the table has no rows", path.display())]
    Empty {
        /// File.
        path: PathBuf,
    },
}

/// One measured boundary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeasuredRow {
    /// Sample id.
    pub sample: String,
    /// Time, min (None: the run's last snapshot).
    pub time_min: Option<f64>,
    /// Gene.
    pub gene: String,
    /// "rising" or "falling".
    pub direction: String,
    /// Position, % of axis length.
    pub position_pct: f64,
    /// Standard deviation, % of axis length.
    pub sd_pct: Option<f64>,
    /// Number of embryos.
    pub n: Option<u32>,
}

/// Reads a measured-boundary table; `stages` maps stage labels to minutes.
///
/// # Errors
/// [`CompareError`] naming the file, line and column of the first problem.
pub fn read_measured(path: &Path, stages: &HashMap<String, f64>) -> Result<Vec<MeasuredRow>, CompareError> {
    let text =
        std::fs::read_to_string(path).map_err(|source| CompareError::Read { path: path.to_path_buf(), source })?;
    let mut reader = csv::ReaderBuilder::new().trim(csv::Trim::All).from_reader(text.as_bytes());
    let headers =
        reader.headers().map_err(|e| bad(path, 1, "header", &e.to_string(), "write a CSV header line"))?.clone();
    let col = |name: &str| {
        headers
            .iter()
            .position(|h| h == name)
            .ok_or_else(|| CompareError::MissingColumn { path: path.to_path_buf(), column: name.into() })
    };
    let (c_sample, c_gene, c_dir, c_pos) = (col("sample")?, col("gene")?, col("direction")?, col("position_pct")?);
    let (c_time, c_sd, c_n) = (
        headers.iter().position(|h| h == "time"),
        headers.iter().position(|h| h == "sd_pct"),
        headers.iter().position(|h| h == "n"),
    );
    let mut rows = Vec::new();
    for (k, rec) in reader.records().enumerate() {
        let line = k + 2;
        let rec =
            rec.map_err(|e| bad(path, line, "row", &e.to_string(), "give every row as many fields as the header"))?;
        let field = |c: Option<usize>| c.and_then(|c| rec.get(c)).unwrap_or("").to_string();
        let number = |c: usize, name: &str, fix: &str| -> Result<f64, CompareError> {
            let v = field(Some(c));
            v.parse::<f64>().ok().filter(|x| x.is_finite()).ok_or_else(|| bad(path, line, name, &v, fix))
        };
        let position_pct = number(c_pos, "position_pct", "give a number, % of the axis length")?;
        if !(0.0..=100.0).contains(&position_pct) {
            let v = field(Some(c_pos));
            return Err(bad(path, line, "position_pct", &v, "give a position between 0 and 100 % of the axis length"));
        }
        let gene = field(Some(c_gene));
        if gene.trim().is_empty() {
            return Err(bad(path, line, "gene", &gene, "name the gene whose boundary this is"));
        }
        let direction = field(Some(c_dir));
        if direction != "rising" && direction != "falling" {
            return Err(bad(path, line, "direction", &direction, "write rising or falling (going from head to tail)"));
        }
        let time = field(c_time);
        let time_min = if time.is_empty() {
            None
        } else if let Ok(t) = time.parse::<f64>() {
            if !(t.is_finite() && t >= 0.0) {
                return Err(bad(path, line, "time", &time, "give minutes >= 0"));
            }
            Some(t)
        } else {
            Some(*stages.get(&time).ok_or_else(|| {
                bad(path, line, "time", &time, "give minutes, or map this stage label with --stage LABEL=MINUTES")
            })?)
        };
        let sd = field(c_sd);
        let sd_pct = if sd.is_empty() {
            None
        } else {
            Some(
                sd.parse::<f64>()
                    .ok()
                    .filter(|x| x.is_finite() && *x >= 0.0)
                    .ok_or_else(|| bad(path, line, "sd_pct", &sd, "give a number >= 0 or leave it empty"))?,
            )
        };
        let n = field(c_n);
        let n = if n.is_empty() {
            None
        } else {
            Some(n.parse::<u32>().map_err(|_| bad(path, line, "n", &n, "give a whole number or leave it empty"))?)
        };
        rows.push(MeasuredRow {
            sample: field(Some(c_sample)),
            time_min,
            gene: field(Some(c_gene)),
            direction,
            position_pct,
            sd_pct,
            n,
        });
    }
    if rows.is_empty() {
        return Err(CompareError::Empty { path: path.to_path_buf() });
    }
    Ok(rows)
}

fn bad(path: &Path, line: usize, column: &str, value: &str, fix: &str) -> CompareError {
    CompareError::BadValue {
        path: path.to_path_buf(),
        line,
        column: column.into(),
        value: value.into(),
        fix: fix.into(),
    }
}

/// One line of a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
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
    /// Its standard deviation.
    pub sd_pct: Option<f64>,
    /// Simulated position, % length.
    pub simulated_pct: Option<f64>,
    /// Simulated − measured, % length.
    pub difference_pct: Option<f64>,
    /// Difference / sd.
    pub z: Option<f64>,
    /// "matched", "measured only" or "simulated only".
    pub status: String,
}

/// A run scored against measurements.
#[derive(Debug, Clone)]
pub struct Comparison {
    /// Every pairing and every one-sided boundary.
    pub rows: Vec<ComparisonRow>,
    /// Root-mean-square difference over matched boundaries, % length.
    pub rmse_pct: Option<f64>,
}

/// Pairs measured and simulated boundaries: per sample, at the snapshot
/// nearest the measured time, same gene and direction, nearest in position.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn compare(rec: &Recording, measured: &[MeasuredRow]) -> Result<Comparison, ReadBackError> {
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
        let key = (m.sample.clone(), snapshot(m.time_min));
        match groups.iter_mut().find(|(k, _)| *k == key) {
            Some((_, v)) => v.push(m),
            None => groups.push((key, vec![m])),
        }
    }
    let mut rows = Vec::new();
    for ((sample, s), ms) in groups {
        let simulated = boundaries_at(rec, s)?;
        let as_boundary: Vec<Boundary> = ms
            .iter()
            .map(|m| Boundary {
                time_min: rec.times[s],
                gene: m.gene.clone(),
                direction: if m.direction == "rising" { "rising" } else { "falling" },
                position_um: m.position_pct / 100.0 * length,
                position_pct: m.position_pct,
                steepness_per_um: f64::NAN,
                width_um: f64::NAN,
            })
            .collect();
        for sh in match_boundaries(&sample, &simulated, &as_boundary) {
            let sd = ms
                .iter()
                .find(|m| Some(m.position_pct) == sh.mutant_pct && m.gene == sh.gene && m.direction == sh.direction)
                .and_then(|m| m.sd_pct);
            let difference_pct = sh.shift_pct.map(|d| -d);
            rows.push(ComparisonRow {
                sample: sample.clone(),
                time_min: rec.times[s],
                gene: sh.gene,
                direction: sh.direction,
                measured_pct: sh.mutant_pct,
                sd_pct: sd,
                simulated_pct: sh.wild_type_pct,
                difference_pct,
                z: difference_pct.zip(sd.filter(|s| *s > 0.0)).map(|(d, s)| d / s),
                status: match sh.status.as_str() {
                    "moved" => "matched",
                    "lost" => "simulated only",
                    _ => "measured only",
                }
                .to_string(),
            });
        }
    }
    let diffs: Vec<f64> = rows.iter().filter_map(|r| r.difference_pct).collect();
    let rmse_pct = (!diffs.is_empty()).then(|| (diffs.iter().map(|d| d * d).sum::<f64>() / diffs.len() as f64).sqrt());
    Ok(Comparison { rows, rmse_pct })
}
