//! Tables of `anlage replicates`, through the table writer from typed rows.
//! Numbers are Rust's shortest round-trip form ([`super::shortest`]); a
//! value that does not exist (a boundary no embryo has) is an empty cell.

use std::io::Write;
use std::path::Path;

use serde::Serialize;

use super::{ExportError, TableWriter, shortest_opt, write_atomic};
use crate::readout::Boundary;
use crate::replicates::{PairedShift, Replicates, Share, StepChange};

/// A number in Rust's shortest round-trip form, empty when not finite.
fn num<S: serde::Serializer>(v: &f64, s: S) -> Result<S::Ok, S::Error> {
    shortest_opt(&v.is_finite().then_some(*v), s)
}

/// A whole table: the header (also with no rows), then the rows.
fn table<R: Serialize + Default>(rows: impl IntoIterator<Item = R>, w: &mut dyn Write) -> std::io::Result<()> {
    let mut out = TableWriter::of::<R>(w)?;
    for r in rows {
        out.row(r)?;
    }
    out.finish()
}

/// One embryo's boundary in `embryo_boundaries.csv`.
#[derive(Serialize, Default)]
struct EmbryoRow<'a> {
    embryo: usize,
    #[serde(serialize_with = "num")]
    time_min: f64,
    gene: &'a str,
    direction: &'a str,
    #[serde(serialize_with = "num")]
    position_um: f64,
    #[serde(serialize_with = "num")]
    position_pct: f64,
}

/// The header line of `embryo_boundaries.csv`: `embryo, time_min, gene,
/// direction, position_um, position_pct`.
///
/// # Errors
/// The writer's error.
pub fn embryo_header(w: &mut dyn Write) -> std::io::Result<()> {
    TableWriter::of::<EmbryoRow>(w)?.finish()
}

/// Writes one embryo's boundaries (all snapshots) as rows of
/// `embryo_boundaries.csv` (after [`embryo_header`]).
///
/// # Errors
/// The writer's error.
pub fn embryo_rows(embryo: usize, bs: &[Boundary], w: &mut dyn Write) -> std::io::Result<()> {
    let mut out = csv::WriterBuilder::new().has_headers(false).from_writer(w);
    for b in bs {
        out.serialize(EmbryoRow {
            embryo,
            time_min: b.time_min,
            gene: &b.gene,
            direction: b.direction,
            position_um: b.position_um,
            position_pct: b.position_pct,
        })
        .map_err(std::io::Error::other)?;
    }
    out.flush()
}

#[derive(Serialize, Default)]
struct PrecisionRow<'a> {
    #[serde(serialize_with = "num")]
    time_min: f64,
    gene: &'a str,
    direction: &'a str,
    #[serde(serialize_with = "num")]
    reference_um: f64,
    #[serde(serialize_with = "num")]
    present_fraction: f64,
    embryos: usize,
    #[serde(serialize_with = "num")]
    ragged_fraction: f64,
    #[serde(serialize_with = "num")]
    miscounted_fraction: f64,
    #[serde(serialize_with = "num")]
    mean_um: f64,
    #[serde(serialize_with = "num")]
    sd_um: f64,
    #[serde(serialize_with = "num")]
    mean_pct: f64,
    #[serde(serialize_with = "num")]
    sd_pct: f64,
    #[serde(serialize_with = "num")]
    decoded_sd_um: f64,
}

/// `precision.csv`: per snapshot and boundary of the noise-free embryo:
/// `time_min, gene, direction, reference_um, present_fraction, embryos,
/// ragged_fraction, miscounted_fraction, mean_um,
/// sd_um, mean_pct, sd_pct, decoded_sd_um` (µm and % of the length; the
/// decoded error at the mean position, last snapshot only).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_precision(r: &Replicates, path: &Path) -> Result<(), ExportError> {
    let last = r.times.last().copied().unwrap_or(0.0);
    write_atomic(path, |w| {
        table(
            r.boundaries.iter().map(|b| PrecisionRow {
                time_min: b.time_min,
                gene: &b.gene,
                direction: &b.direction,
                reference_um: b.reference_um,
                present_fraction: b.present_fraction,
                embryos: b.embryos,
                ragged_fraction: b.ragged_fraction,
                miscounted_fraction: b.miscounted_fraction,
                mean_um: b.mean_um,
                sd_um: b.sd_um,
                mean_pct: b.mean_pct,
                sd_pct: b.sd_pct,
                decoded_sd_um: if crate::readout::same_time(b.time_min, last) && b.mean_um.is_finite() {
                    r.decoded_at(b.mean_um)
                } else {
                    f64::NAN
                },
            }),
            w,
        )
    })
}

#[derive(Serialize, Default)]
struct WidthRow<'a> {
    gene: &'a str,
    #[serde(serialize_with = "num")]
    reference_start_um: f64,
    #[serde(serialize_with = "num")]
    reference_width_um: f64,
    #[serde(serialize_with = "num")]
    present_fraction: f64,
    #[serde(serialize_with = "num")]
    mean_width_um: f64,
    #[serde(serialize_with = "num")]
    sd_width_um: f64,
}

/// `widths.csv`: per domain of the noise-free embryo at the last snapshot:
/// `gene, reference_start_um, reference_width_um, present_fraction,
/// mean_width_um, sd_width_um`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_widths(r: &Replicates, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        table(
            r.widths.iter().map(|d| WidthRow {
                gene: &d.gene,
                reference_start_um: d.reference_start_um,
                reference_width_um: d.reference_width_um,
                present_fraction: d.present_fraction,
                mean_width_um: d.mean_width_um,
                sd_width_um: d.sd_width_um,
            }),
            w,
        )
    })
}

/// `decoding.csv`: per nucleus at the last snapshot (on a sheet, per
/// column of the central strip's mean, as every profile of a sheet):
/// `nucleus` (`column`), `x_um, x_pct, decoded_sd_um`, then `<gene>_mean,
/// <gene>_sd` for every gene (a.u.); the decoded error is empty where
/// position cannot be read.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_decoding(r: &Replicates, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        let index = if r.sheet { "column" } else { "nucleus" };
        let mut header: Vec<String> = [index, "x_um", "x_pct", "decoded_sd_um"].map(String::from).to_vec();
        for g in &r.genes {
            header.push(format!("{g}_mean"));
            header.push(format!("{g}_sd"));
        }
        let mut out = TableWriter::new(w, &header)?;
        let text = |v: f64| if v.is_finite() { v.to_string() } else { String::new() };
        for (i, d) in r.decoded_um.iter().enumerate() {
            let x = (i as f64 + 0.5) * r.spacing_um;
            let mut row = vec![i.to_string(), text(x), text(100.0 * x / r.length_um), text(*d)];
            for g in 0..r.genes.len() {
                row.push(text(r.profiles.mean[g][i]));
                row.push(text(r.profiles.sd(g, i)));
            }
            out.row(&row)?;
        }
        out.finish()
    })
}

#[derive(Serialize, Default)]
struct ShareRow<'a> {
    source: &'a str,
    gene: &'a str,
    direction: &'a str,
    #[serde(serialize_with = "num")]
    reference_um: f64,
    #[serde(serialize_with = "num")]
    sd_alone_um: f64,
    #[serde(serialize_with = "num")]
    fraction: f64,
}

/// `attribution.csv`: per noise source and final boundary: `source, gene,
/// direction, reference_um, sd_alone_um, fraction` (variance with the source
/// alone over the variance with every source).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_attribution(shares: &[Share], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        table(
            shares.iter().map(|s| ShareRow {
                source: &s.source,
                gene: &s.gene,
                direction: &s.direction,
                reference_um: s.reference_um,
                sd_alone_um: s.sd_alone_um,
                fraction: s.fraction,
            }),
            w,
        )
    })
}

#[derive(Serialize, Default)]
struct StepRow<'a> {
    gene: &'a str,
    direction: &'a str,
    #[serde(serialize_with = "num")]
    mean_um: f64,
    #[serde(serialize_with = "num")]
    mean_half_step_um: f64,
    #[serde(serialize_with = "num")]
    sd_um: f64,
    #[serde(serialize_with = "num")]
    sd_half_step_um: f64,
    unchanged: bool,
}

/// `step_check.csv`: per final boundary, the mean and positional error with
/// the noise step and with half of it: `gene, direction, mean_um,
/// mean_half_step_um, sd_um, sd_half_step_um, unchanged` (true when both
/// differences are within 3 standard errors).
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_step_check(rows: &[StepChange], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        table(
            rows.iter().map(|c| StepRow {
                gene: &c.gene,
                direction: &c.direction,
                mean_um: c.mean_um,
                mean_half_step_um: c.mean_half_um,
                sd_um: c.sd_um,
                sd_half_step_um: c.sd_half_um,
                unchanged: c.unchanged,
            }),
            w,
        )
    })
}

#[derive(Serialize, Default)]
struct ShiftRow<'a> {
    mutant: &'a str,
    gene: &'a str,
    direction: &'a str,
    #[serde(serialize_with = "num")]
    reference_um: f64,
    #[serde(serialize_with = "num")]
    present_fraction: f64,
    #[serde(serialize_with = "num")]
    wild_type_mean_um: f64,
    #[serde(serialize_with = "num")]
    wild_type_sd_um: f64,
    #[serde(serialize_with = "num")]
    mutant_mean_um: f64,
    #[serde(serialize_with = "num")]
    mutant_sd_um: f64,
    #[serde(serialize_with = "num")]
    shift_um: f64,
    #[serde(serialize_with = "num")]
    shift_se_um: f64,
    #[serde(serialize_with = "num")]
    shift_sd_um: f64,
    #[serde(serialize_with = "num")]
    shift_low_um: f64,
    #[serde(serialize_with = "num")]
    shift_high_um: f64,
    #[serde(serialize_with = "num")]
    sd_ratio: f64,
    #[serde(serialize_with = "num")]
    sd_ratio_low: f64,
    #[serde(serialize_with = "num")]
    sd_ratio_high: f64,
    precision: &'a str,
}

/// `shift.csv` (of `replicates --mutant`) and `replicate_shifts.csv` (of
/// `screen --replicates`): per mutant and final boundary of the noise-free
/// wild type, how the mutant moves it over the same embryos and whether it
/// changes its precision (see [`PairedShift`]): `mutant, gene, direction,
/// reference_um, present_fraction, wild_type_mean_um, wild_type_sd_um,
/// mutant_mean_um, mutant_sd_um, shift_um, shift_se_um, shift_sd_um,
/// shift_low_um, shift_high_um, sd_ratio, sd_ratio_low, sd_ratio_high,
/// precision`.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_shifts_over_embryos(rows: &[PairedShift], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        table(
            rows.iter().map(|s| ShiftRow {
                mutant: &s.mutant,
                gene: &s.gene,
                direction: &s.direction,
                reference_um: s.reference_um,
                present_fraction: s.present_fraction,
                wild_type_mean_um: s.wild_type_mean_um,
                wild_type_sd_um: s.wild_type_sd_um,
                mutant_mean_um: s.mutant_mean_um,
                mutant_sd_um: s.mutant_sd_um,
                shift_um: s.shift_um,
                shift_se_um: s.shift_se_um,
                shift_sd_um: s.shift_sd_um,
                shift_low_um: s.shift_low_um,
                shift_high_um: s.shift_high_um,
                sd_ratio: s.sd_ratio,
                sd_ratio_low: s.sd_ratio_low,
                sd_ratio_high: s.sd_ratio_high,
                precision: &s.precision,
            }),
            w,
        )
    })
}

#[cfg(test)]
mod tests {
    /// Rows read back through the csv crate, with a gene name that needs quoting.
    #[test]
    fn embryo_rows_round_trip_with_quoting() {
        let b = crate::readout::Boundary {
            time_min: 12.5,
            gene: "odd, \"name\"".into(),
            direction: "rising",
            position_um: 101.25,
            position_pct: 20.25,
            steepness_per_um: 0.1,
            width_um: 10.0,
        };
        let mut buf = Vec::new();
        super::embryo_header(&mut buf).unwrap();
        super::embryo_rows(3, &[b.clone()], &mut buf).unwrap();
        super::embryo_rows(4, &[b], &mut buf).unwrap();
        let mut rd = csv::Reader::from_reader(buf.as_slice());
        assert_eq!(
            rd.headers().unwrap().iter().collect::<Vec<_>>(),
            ["embryo", "time_min", "gene", "direction", "position_um", "position_pct"]
        );
        let rows: Vec<csv::StringRecord> = rd.records().map(Result::unwrap).collect();
        assert_eq!(rows.len(), 2);
        assert_eq!(&rows[1][0], "4");
        assert_eq!(&rows[0][2], "odd, \"name\"");
        assert_eq!(rows[0][4].parse::<f64>().unwrap(), 101.25);
    }
}
