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

    /// Rows of `comparison.csv` and of measured profiles read back as
    /// written, sample names with commas and quotes included.
    #[test]
    fn comparison_and_profile_rows_round_trip() {
        let row = crate::compare::ComparisonRow {
            sample: "embryo \"3\", left".into(),
            time_min: 240.0,
            gene: "amber".into(),
            direction: "falling".into(),
            measured_pct: Some(47.5),
            sd_pct: None,
            sd_used_pct: Some(0.5),
            simulated_pct: Some(47.8),
            difference_pct: Some(0.30000000000000004),
            z: Some(0.6),
            status: "matched".into(),
            n: Some(12),
            predicted_sd_pct: Some(2.25),
            predicted_embryos: Some(200),
            sd_ratio: Some(1.1),
            sd_ratio_low: Some(0.7),
            sd_ratio_high: Some(1.9),
            spread: "same".into(),
        };
        let c = Comparison {
            rows: vec![row.clone()],
            rmse_pct: None,
            mirror: Vec::new(),
            raised_sds: 0,
            at_last_snapshot: 0,
        };
        let mut out = Vec::new();
        write_comparison_to(&c, &mut out).unwrap();
        let back: Vec<crate::compare::ComparisonRow> =
            csv::Reader::from_reader(out.as_slice()).deserialize().collect::<Result<_, _>>().unwrap();
        assert_eq!(back, [row]);
        let profile = ProfileRow {
            sample: "a,\"b\"".into(),
            embryo: 2,
            gene: "cobalt".into(),
            position_pct: 0.25,
            level: 1.0,
            signal: 1e-7,
        };
        out.clear();
        super::super::write_rows_to(std::slice::from_ref(&profile), &mut out).unwrap();
        assert!(String::from_utf8(out.clone()).unwrap().ends_with("\"a,\"\"b\"\"\",2,cobalt,0.25,1.0,1e-7\n"));
        let back: Vec<ProfileRow> =
            csv::Reader::from_reader(out.as_slice()).deserialize().collect::<Result<_, _>>().unwrap();
        assert_eq!(back, [profile]);
    }
}
