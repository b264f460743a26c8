//! Measured-boundary tables, measured profiles and comparisons, written by
//! the csv crate from typed rows (headers from the field names, quoting
//! where a cell needs it).

use std::path::Path;

use serde::Serialize;

use super::{ExportError, write_atomic};
use crate::compare::{Comparison, MeasuredRow};
use crate::measure::batch::ProfileRow;

/// Writes `rows` as CSV with a header made from the row type's field names
/// (the header alone when there are no rows).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_rows<T: Serialize + Default>(rows: &[T], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        if rows.is_empty() {
            let mut probe = csv::Writer::from_writer(Vec::new());
            probe.serialize(T::default()).map_err(std::io::Error::other)?;
            let text = probe.into_inner().map_err(|e| std::io::Error::other(e.to_string()))?;
            let header = text.split(|b| *b == b'\n').next().unwrap_or(&[]);
            w.write_all(header)?;
            return w.write_all(b"\n");
        }
        let mut out = csv::Writer::from_writer(w);
        for r in rows {
            out.serialize(r).map_err(std::io::Error::other)?;
        }
        out.flush()
    })
}

/// A measured-boundary table (columns: see [`crate::compare::table`]).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_measured(rows: &[MeasuredRow], path: &Path) -> Result<(), ExportError> {
    write_rows(rows, path)
}

/// Measured profiles, one row per sample, embryo, gene and position:
/// `sample, embryo, gene, position_pct, level, signal`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_measured_profiles(rows: &[ProfileRow], path: &Path) -> Result<(), ExportError> {
    write_rows(rows, path)
}

/// `comparison.csv`: `sample, time_min, gene, direction, measured_pct, sd_pct,
/// sd_used_pct, simulated_pct, difference_pct, z, status`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_comparison(c: &Comparison, path: &Path) -> Result<(), ExportError> {
    write_rows(&c.rows, path)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A table with no rows still has its header; rows round-trip through the csv reader.
    #[test]
    fn empty_tables_keep_their_header_and_rows_round_trip() {
        let dir = std::env::temp_dir().join(format!("anlage-rows-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("empty.csv");
        write_measured(&[], &path).unwrap();
        let text = std::fs::read_to_string(&path).unwrap();
        assert!(text.starts_with("sample,embryo,time_min,stage,gene,direction,position_pct"), "{text}");
        assert_eq!(text.lines().count(), 1);
        let row = MeasuredRow {
            sample: "e, one".into(),
            gene: "amber".into(),
            direction: "rising".into(),
            position_pct: 40.5,
            flag: Some("weak, \"head\"".into()),
            ..Default::default()
        };
        write_measured(std::slice::from_ref(&row), &path).unwrap();
        let back = crate::compare::read_measured(&path, &Default::default(), "").unwrap();
        assert_eq!((back[0].sample.as_str(), back[0].flag.as_deref()), ("e, one", Some("weak, \"head\"")));
    }
}
