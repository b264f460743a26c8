//! Tables of mutant screens and sensitivities (model predictions).

use std::io::Write;
use std::path::Path;

use super::{ExportError, TableWriter, write_atomic};
use crate::readout::Shift;
use crate::screen::{Screen, SensitivityRow};

/// `shifts.csv`: one [`Shift`] per boundary of every mutant.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_shifts(s: &Screen, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| write_shifts_to(s, w))
}

/// The table of [`write_shifts`], into `w` (e.g. standard output).
///
/// # Errors
/// The writer's.
pub fn write_shifts_to(s: &Screen, w: impl Write) -> std::io::Result<()> {
    let mut table = TableWriter::of::<Shift>(w)?;
    for shift in s.shifts.iter().flatten() {
        table.row(shift)?;
    }
    table.finish()
}

/// `sensitivity.csv`: one [`SensitivityRow`] per boundary and parameter.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_sensitivity(rows: &[SensitivityRow], path: &Path) -> Result<(), ExportError> {
    super::write_rows(rows, path)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::export::write_rows_to;

    /// Rows of `shifts.csv` and `sensitivity.csv` read back as written, a
    /// mutant name, a reason and a parameter with commas and quotes included.
    #[test]
    fn screen_rows_round_trip_through_a_csv_reader() {
        let shift = Shift {
            mutant: "het, \"weak\"".into(),
            gene: "amber".into(),
            direction: "falling".into(),
            wild_type_um: Some(239.0),
            wild_type_pct: Some(47.8),
            status: "failed".into(),
            reason: Some("blow-up at t = 3 min, nucleus 4, gene `amber`".into()),
            ..Default::default()
        };
        let screen = Screen {
            wild_type: Vec::new(),
            mutants: vec![shift.mutant.clone()],
            shifts: vec![vec![shift.clone(), Shift { status: "moved".into(), shift_pct: Some(1e-7), ..shift.clone() }]],
            wild_type_changing: None,
        };
        let mut out = Vec::new();
        write_shifts_to(&screen, &mut out).unwrap();
        let text = String::from_utf8(out.clone()).unwrap();
        assert!(
            text.lines().nth(2).unwrap().starts_with("\"het, \"\"weak\"\"\",amber,falling,239.0,47.8,,,,1e-7,moved,")
        );
        let back: Vec<Shift> =
            csv::Reader::from_reader(out.as_slice()).deserialize().collect::<Result<_, _>>().unwrap();
        assert_eq!(back, screen.shifts[0]);
        let row = SensitivityRow {
            parameter: "co,\"balt\".production".into(),
            value: 0.8,
            gene: "amber".into(),
            direction: "rising".into(),
            position_pct: 48.0,
            kind: "pinned".into(),
            d_um_per_ln: None,
            d_pct_per_ln: Some(-2.5),
            step_ln: 0.1,
            jumps_at: "0.7;0.9".into(),
        };
        out.clear();
        write_rows_to(std::slice::from_ref(&row), &mut out).unwrap();
        let back: Vec<SensitivityRow> =
            csv::Reader::from_reader(out.as_slice()).deserialize().collect::<Result<_, _>>().unwrap();
        assert_eq!(back, [row]);
    }
}
