//! The measured-boundary table: one row per boundary (of one embryo, or a
//! mean over embryos).
//!
//! Columns (CSV, our own; header names are the fields below, and only
//! `sample`, `gene`, `direction` and `position_pct` are required):
//! `sample, embryo, time_min, stage, gene, direction, position_pct, sd_pct, n,
//! resolution_pct, head, head_confidence, flag`. A table with a single `time`
//! column (minutes or a stage label) is read as well.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use serde::Serialize;

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
    #[error("{}: the header has no `{column}` column; the columns are sample, embryo, time_min, stage, gene, direction, position_pct, sd_pct, n, resolution_pct, head, head_confidence, flag (sample, gene, direction and position_pct are required)", path.display())]
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
    /// A row with another number of fields than the header.
    #[error("{}:{line}: the row has {found} fields where the header has {expected}; give every row as many fields as the header (empty ones as ,,)", path.display())]
    Ragged {
        /// File.
        path: PathBuf,
        /// Line (1-based, the header is line 1).
        line: usize,
        /// Fields in the row.
        found: u64,
        /// Fields in the header.
        expected: u64,
    },
    /// A table with no rows.
    #[error("{}: the table has no rows", path.display())]
    Empty {
        /// File.
        path: PathBuf,
    },
    /// A gene the model does not have.
    #[error("{}:{line}: gene `{gene}` is not in the model (its genes: {known}); rename the gene in the table or leave the row out", path.display())]
    UnknownGene {
        /// File.
        path: PathBuf,
        /// Line.
        line: usize,
        /// The gene.
        gene: String,
        /// The model's genes.
        known: String,
    },
    /// Replicates that do not belong to the run.
    #[error("{}: {why}", path.display())]
    Origin {
        /// The replicates' origin file.
        path: PathBuf,
        /// What differs, and how to fix it.
        why: String,
    },
    /// Replicates made from another model than the run.
    #[error("{}: the noise-free {gene} {direction} boundary at t = {time_min} min is at {replicates_pct:.2} % there but at {run_pct:.2} % in the run: the replicates were made from another model or other settings; rerun `anlage replicates` on the model file of the run", path.display())]
    OtherModel {
        /// The replicates' precision table.
        path: PathBuf,
        /// Gene.
        gene: String,
        /// Direction.
        direction: String,
        /// Snapshot, min.
        time_min: f64,
        /// The run's position, %.
        run_pct: f64,
        /// The replicates' noise-free position, %.
        replicates_pct: f64,
    },
}

/// One measured boundary.
#[derive(Debug, Clone, PartialEq, Serialize, Default)]
pub struct MeasuredRow {
    /// Sample id (an image, or an embryo in an image with several).
    pub sample: String,
    /// Embryo number in its image (None for a mean over embryos or a hand-made row).
    pub embryo: Option<u32>,
    /// Time, min (None: a stage label, or the run's last snapshot).
    pub time_min: Option<f64>,
    /// Stage label, kept as written.
    pub stage: Option<String>,
    /// Gene.
    pub gene: String,
    /// "rising" or "falling", going from head to tail.
    pub direction: String,
    /// Position, % of axis length from the head.
    pub position_pct: f64,
    /// Standard deviation over embryos, % of length.
    pub sd_pct: Option<f64>,
    /// Number of embryos.
    pub n: Option<u32>,
    /// One pixel in % of the embryo length (the image's resolution).
    pub resolution_pct: Option<f64>,
    /// Which end was taken as the head, and how.
    pub head: Option<String>,
    /// Confidence of a guessed head (0–1).
    pub head_confidence: Option<f64>,
    /// Warnings for this row, in words.
    pub flag: Option<String>,
    /// Line in the file it was read from (0 when made in memory).
    #[serde(skip)]
    pub line: usize,
    /// The time compared, min: `time_min`, else the stage mapped to minutes
    /// when the table was read; None: the run's last snapshot.
    #[serde(skip)]
    pub at_min: Option<f64>,
}

/// Reads a measured-boundary table. Every stage label must be mapped by
/// `stages` (label → minutes); `stage_fix` says how, for the error.
///
/// # Errors
/// [`CompareError`] naming the file, line and column of the first problem.
pub fn read_measured(
    path: &Path,
    stages: &HashMap<String, f64>,
    stage_fix: &str,
) -> Result<Vec<MeasuredRow>, CompareError> {
    let text = crate::files::read_text(path, crate::files::MAX_TABLE_BYTES)
        .map_err(|source| CompareError::Read { path: path.to_path_buf(), source })?;
    let mut reader = csv::ReaderBuilder::new().trim(csv::Trim::All).from_reader(text.as_bytes());
    let headers =
        reader.headers().map_err(|e| bad(path, 1, "header", &e.to_string(), "write a CSV header line"))?.clone();
    let find = |name: &str| headers.iter().position(|h| h == name);
    let col = |name: &str| {
        find(name).ok_or_else(|| CompareError::MissingColumn { path: path.to_path_buf(), column: name.into() })
    };
    let (c_sample, c_gene, c_dir, c_pos) = (col("sample")?, col("gene")?, col("direction")?, col("position_pct")?);
    let mut rows = Vec::new();
    for (k, rec) in reader.records().enumerate() {
        let line = k + 2;
        let rec = rec.map_err(|e| match e.kind() {
            csv::ErrorKind::UnequalLengths { expected_len, len, .. } => {
                CompareError::Ragged { path: path.to_path_buf(), line, found: *len, expected: *expected_len }
            }
            _ => bad(path, line, "row", &e.to_string(), "give every row as many fields as the header"),
        })?;
        let field = |name: &str| find(name).and_then(|c| rec.get(c)).unwrap_or("").to_string();
        let optional = |name: &str, fix: &str, ok: &dyn Fn(f64) -> bool| -> Result<Option<f64>, CompareError> {
            let v = field(name);
            if v.is_empty() {
                return Ok(None);
            }
            v.parse::<f64>()
                .ok()
                .filter(|x| x.is_finite() && ok(*x))
                .map(Some)
                .ok_or_else(|| bad(path, line, name, &v, fix))
        };
        let v = rec.get(c_pos).unwrap_or("").to_string();
        let position_pct = v
            .parse::<f64>()
            .ok()
            .filter(|x| x.is_finite())
            .ok_or_else(|| bad(path, line, "position_pct", &v, "give a number, % of the axis length"))?;
        if !(0.0..=100.0).contains(&position_pct) {
            return Err(bad(path, line, "position_pct", &v, "give a position between 0 and 100 % of the axis length"));
        }
        let gene = rec.get(c_gene).unwrap_or("").to_string();
        if gene.is_empty() {
            return Err(bad(path, line, "gene", &gene, "name the gene whose boundary this is"));
        }
        let direction = rec.get(c_dir).unwrap_or("").to_string();
        if direction != "rising" && direction != "falling" {
            return Err(bad(path, line, "direction", &direction, "write rising or falling (going from head to tail)"));
        }
        let minutes_fix = "give minutes >= 0";
        let mut time_min = optional("time_min", minutes_fix, &|t| t >= 0.0)?;
        let mut stage = Some(field("stage")).filter(|s| !s.is_empty());
        // The older single `time` column: minutes or a stage label.
        let time = field("time");
        if !time.is_empty() && time_min.is_none() && stage.is_none() {
            match time.parse::<f64>() {
                Ok(t) if t.is_finite() && t >= 0.0 => time_min = Some(t),
                Ok(_) => return Err(bad(path, line, "time", &time, minutes_fix)),
                Err(_) => stage = Some(time),
            }
        }
        if time_min.is_none()
            && let Some(s) = &stage
            && !stages.contains_key(s)
        {
            let column = if find("stage").is_some() { "stage" } else { "time" };
            return Err(bad(path, line, column, s, &format!("map this stage label to minutes ({stage_fix})")));
        }
        let sd_pct = optional("sd_pct", "give a number >= 0 or leave it empty", &|x| x >= 0.0)?;
        let n = field("n");
        let n =
            if n.is_empty() {
                None
            } else {
                Some(n.parse::<u32>().ok().filter(|v| *v >= 1).ok_or_else(|| {
                    bad(path, line, "n", &n, "give the number of embryos (1 or more) or leave it empty")
                })?)
            };
        let embryo = field("embryo");
        let embryo = if embryo.is_empty() {
            None
        } else {
            Some(
                embryo
                    .parse::<u32>()
                    .map_err(|_| bad(path, line, "embryo", &embryo, "give a whole number or leave it empty"))?,
            )
        };
        let mapped = stage.as_ref().and_then(|s| stages.get(s).copied());
        if let (Some(t), Some(m), Some(s)) = (time_min, mapped, &stage)
            && !crate::readout::same_time(t, m)
        {
            return Err(bad(
                path,
                line,
                "time_min",
                &t.to_string(),
                &format!("the row's stage `{s}` is mapped to {m} min; give one time, or make them agree"),
            ));
        }
        let at_min = time_min.or(mapped);
        rows.push(MeasuredRow {
            sample: rec.get(c_sample).unwrap_or("").to_string(),
            embryo,
            time_min,
            stage,
            gene,
            direction,
            position_pct,
            sd_pct,
            n,
            resolution_pct: optional("resolution_pct", "give a number > 0 (% of length) or leave it empty", &|x| {
                x > 0.0
            })?,
            head: Some(field("head")).filter(|s| !s.is_empty()),
            head_confidence: optional("head_confidence", "give a number from 0 to 1 or leave it empty", &|x| {
                (0.0..=1.0).contains(&x)
            })?,
            flag: Some(field("flag")).filter(|s| !s.is_empty()),
            line,
            at_min,
        });
    }
    if rows.is_empty() {
        return Err(CompareError::Empty { path: path.to_path_buf() });
    }
    Ok(rows)
}

/// Checks that every row's gene is one of `genes`.
///
/// # Errors
/// [`CompareError::UnknownGene`] for the first row that is not.
pub fn check_genes(path: &Path, rows: &[MeasuredRow], genes: &[String]) -> Result<(), CompareError> {
    match rows.iter().find(|r| !genes.contains(&r.gene)) {
        Some(r) => Err(CompareError::UnknownGene {
            path: path.to_path_buf(),
            line: r.line,
            gene: r.gene.clone(),
            known: genes.join(", "),
        }),
        None => Ok(()),
    }
}

/// Checks that every row's time lies within the run (`times`, the snapshot
/// times in min): no later than half a snapshot interval after the last.
///
/// # Errors
/// [`CompareError::BadValue`] for the first row that does not.
pub fn check_times(path: &Path, rows: &[MeasuredRow], times: &[f64]) -> Result<(), CompareError> {
    let last = times.last().copied().unwrap_or(0.0);
    let every = if times.len() > 1 { times[1] - times[0] } else { 0.0 };
    match rows.iter().find(|r| r.at_min.is_some_and(|t| t > last + 0.5 * every)) {
        Some(r) => {
            let t = r.at_min.unwrap_or(0.0);
            let (column, value) = match (&r.time_min, &r.stage) {
                (Some(_), _) | (None, None) => ("time_min", t.to_string()),
                (None, Some(stage)) => ("stage", format!("{stage} (= {t} min)")),
            };
            Err(bad(
                path,
                r.line,
                column,
                &value,
                &format!("the run ends at {last} min; give a time within it, or run the model longer"),
            ))
        }
        None => Ok(()),
    }
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
