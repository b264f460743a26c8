//! Measured-boundary tables, measured profiles and comparisons (rows written
//! by [`write_rows`], numbers in the csv crate's own form).

use std::path::Path;

use super::{ExportError, write_rows};
use crate::compare::{Comparison, MeasuredRow};
use crate::measure::batch::ProfileRow;

/// A measured-boundary table (columns: see [`crate::compare::table`]).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_measured(rows: &[MeasuredRow], path: &Path) -> Result<(), ExportError> {
    write_rows(rows, path)
}

/// Measured profiles: one [`ProfileRow`] per sample, embryo, gene and position.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_measured_profiles(rows: &[ProfileRow], path: &Path) -> Result<(), ExportError> {
    write_rows(rows, path)
}

/// `comparison.csv`: one [`crate::compare::ComparisonRow`] per pairing and
/// per boundary found on one side only.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_comparison(c: &Comparison, path: &Path) -> Result<(), ExportError> {
    write_rows(&c.rows, path)
}

/// The table of [`write_comparison`], into `w` (e.g. standard output).
///
/// # Errors
/// The writer's.
pub fn write_comparison_to(c: &Comparison, w: impl std::io::Write) -> std::io::Result<()> {
    super::write_rows_to(&c.rows, w)
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
