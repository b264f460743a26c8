//! Tables of the phase-space analysis. Every row says what was frozen
//! (`frozen_inputs`) and when (`frozen_at_min`): these describe the isolated
//! nucleus, not the coupled tissue. Numbers as Rust's `{}` prints them
//! ([`shortest`]).

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::table_writer::{Cells, TableWriter, header_of, shortest, shortest_opt};
use super::{ExportError, write_atomic};
use crate::integrate::Recording;
use crate::phase::{BasinAnalysis, Fate, Landscape};

/// A nucleus with its inputs frozen at a snapshot: how rows of
/// `attractors.csv` and `basins.csv` begin.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct FrozenNucleus<'a> {
    /// Snapshot whose inputs were frozen, min.
    #[serde(serialize_with = "shortest")]
    pub frozen_at_min: f64,
    /// What was frozen: `gradients` or `gradients+influx`.
    pub frozen_inputs: &'a str,
    /// Nucleus index (row-major on a sheet).
    pub nucleus: usize,
    /// Position of its column along the axis, µm.
    #[serde(serialize_with = "shortest")]
    pub x_um: f64,
    /// The same, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub x_pct: f64,
}

/// A fixed point of a [`FrozenNucleus`]: the rest of a row of
/// `attractors.csv` before its levels (one column per gene, a.u.) and its
/// eigenvalues (`eig1_re, eig1_im, …`, 1/min).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct FixedPointRow<'a> {
    /// Its number among the nucleus's fixed points, from 0.
    pub point: usize,
    /// Stability type (`stable node`, `saddle`, …).
    #[serde(rename = "type")]
    pub kind: &'a str,
    /// Attractor label for a stable point (the genes above their on-level,
    /// `+`-joined, or `low`); empty otherwise.
    pub label: &'a str,
}

/// Where a [`FrozenNucleus`]'s state flows: the rest of a row of `basins.csv`.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct BasinRow<'a> {
    /// Attractor label.
    pub attractor: &'a str,
    /// `point`, `cycle` or `unresolved`.
    pub fate: &'a str,
    /// Euclidean distance from the state to the fixed point it flows to,
    /// a.u.; empty when not finite.
    #[serde(serialize_with = "shortest_opt")]
    pub distance: Option<f64>,
    /// Period of a cycle, min; empty for other fates.
    #[serde(serialize_with = "shortest_opt")]
    pub period_min: Option<f64>,
}

/// A row of `commitment.csv`: when a nucleus's attractor stopped changing.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct CommitmentRow<'a> {
    /// Nucleus index (row-major on a sheet).
    pub nucleus: usize,
    /// Position of its column along the axis, µm.
    #[serde(serialize_with = "shortest")]
    pub x_um: f64,
    /// The same, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub x_pct: f64,
    /// Final attractor label.
    pub attractor: &'a str,
    /// The snapshot time after which the label no longer changes, min.
    #[serde(serialize_with = "shortest")]
    pub commitment_min: f64,
    /// What was frozen: `gradients` or `gradients+influx`.
    pub frozen_inputs: &'a str,
}

/// A point of a continued branch, or a fold: a row of `landscape.csv` before
/// its levels (one column per gene, a.u.).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct LandscapeRow<'a> {
    /// Time the gradients are frozen at, min.
    #[serde(serialize_with = "shortest")]
    pub frozen_at_min: f64,
    /// Branch number, from 0.
    pub branch: usize,
    /// Position, % of the axis length.
    #[serde(serialize_with = "shortest")]
    pub x_pct: f64,
    /// Stability type, or `fold` (a saddle-node point).
    #[serde(rename = "type")]
    pub kind: &'a str,
}

/// Nucleus `i` of `rec` frozen at `frozen_at_min`.
fn frozen_nucleus<'a>(rec: &Recording, a: &'a BasinAnalysis, frozen_at_min: f64, i: usize) -> FrozenNucleus<'a> {
    let (x_um, x_pct) = x_cols(rec, i);
    FrozenNucleus { frozen_at_min, frozen_inputs: a.frozen, nucleus: i, x_um, x_pct }
}

fn x_cols(rec: &Recording, i: usize) -> (f64, f64) {
    let ix = i % rec.grid.nx;
    let x = rec.grid.x_um(ix);
    (x, 100.0 * x / rec.grid.length_um())
}

/// `attractors.csv`: every fixed point of every nucleus at every snapshot, a
/// [`FrozenNucleus`] and a [`FixedPointRow`], then the point's level of each
/// gene and its eigenvalues.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_attractors(rec: &Recording, a: &BasinAnalysis, path: &Path) -> Result<(), ExportError> {
    let g = rec.genes.len();
    write_atomic(path, |w| {
        let mut header = header_of::<(FrozenNucleus, FixedPointRow)>()?;
        header.extend(rec.genes.iter().cloned());
        header.extend((1..=g).flat_map(|k| [format!("eig{k}_re"), format!("eig{k}_im")]));
        let mut table = TableWriter::new(w, &header)?;
        let mut cells = Vec::with_capacity(3 * g);
        for (s, row) in a.basins.iter().enumerate() {
            for (i, b) in row.iter().enumerate() {
                let at = frozen_nucleus(rec, a, a.times[s], i);
                for (k, p) in b.points.iter().enumerate() {
                    let label = if p.kind.is_stable() {
                        crate::phase::basins::point_label(p, &rec.genes, &a.on_level)
                    } else {
                        String::new()
                    };
                    cells.clear();
                    cells.extend(&p.x);
                    cells.extend(p.eigenvalues.iter().flat_map(|e| [e.re, e.im]));
                    let point = FixedPointRow { point: k, kind: p.kind.name(), label: &label };
                    table.row((at, point, Cells(&cells)))?;
                }
            }
        }
        table.finish()
    })
}

/// `basins.csv`: a [`FrozenNucleus`] and its [`BasinRow`], for every nucleus
/// at every snapshot analysed.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_basins(rec: &Recording, a: &BasinAnalysis, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        let mut table = TableWriter::of::<(FrozenNucleus, BasinRow)>(w)?;
        for (s, row) in a.basins.iter().enumerate() {
            for (i, b) in row.iter().enumerate() {
                let (fate, period_min) = match b.fate {
                    Fate::Point(_) => ("point", None),
                    Fate::Cycle { period_min, .. } => ("cycle", Some(period_min)),
                    Fate::Unresolved => ("unresolved", None),
                };
                let distance = b.distance.is_finite().then_some(b.distance);
                let basin = BasinRow { attractor: &b.label, fate, distance, period_min };
                table.row((frozen_nucleus(rec, a, a.times[s], i), basin))?;
            }
        }
        table.finish()
    })
}

/// `commitment.csv`: one [`CommitmentRow`] per nucleus.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_commitment(rec: &Recording, a: &BasinAnalysis, path: &Path) -> Result<(), ExportError> {
    let commitments = a.commitment();
    let rows: Vec<CommitmentRow> = commitments
        .iter()
        .map(|c| {
            let (x_um, x_pct) = x_cols(rec, c.nucleus);
            CommitmentRow {
                nucleus: c.nucleus,
                x_um,
                x_pct,
                attractor: &c.label,
                commitment_min: c.time_min,
                frozen_inputs: a.frozen,
            }
        })
        .collect();
    super::write_rows(&rows, path)
}

/// `landscape.csv`: a [`LandscapeRow`] and the level of each gene `genes`,
/// one row per continuation point, then the folds.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_landscape(genes: &[String], l: &Landscape, path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| {
        let header = [header_of::<LandscapeRow>()?, genes.to_vec()].concat();
        let mut table = TableWriter::new(w, &header)?;
        for (branch, b) in l.branches.iter().enumerate() {
            let rows =
                b.points.iter().map(|p| (p.s, p.kind.name(), &p.x)).chain(b.folds.iter().map(|f| (f.s, "fold", &f.x)));
            for (x_pct, kind, x) in rows {
                table.row((LandscapeRow { frozen_at_min: l.t_min, branch, x_pct, kind }, Cells(x)))?;
            }
        }
        table.finish()
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn round_trip<T: Serialize + Default>(row: T, extra: &[f64]) -> csv::StringRecord {
        let mut out = Vec::new();
        let header = [header_of::<T>().unwrap(), vec!["a,\"b\"".to_string(); extra.len()]].concat();
        let mut t = TableWriter::new(&mut out, &header).unwrap();
        t.row((row, Cells(extra))).unwrap();
        t.finish().unwrap();
        let mut reader = csv::Reader::from_reader(out.as_slice());
        assert_eq!(reader.headers().unwrap().len(), header.len());
        reader.records().next().unwrap().unwrap()
    }

    /// Every row type of the phase tables reads back as written, labels and
    /// gene names with commas and quotes included; empty cells stay None.
    #[test]
    fn phase_rows_round_trip_through_a_csv_reader() {
        let label = "am,b\"er+cobalt";
        let nucleus =
            FrozenNucleus { frozen_at_min: 8.0, frozen_inputs: "gradients", nucleus: 3, x_um: 17.5, x_pct: 3.5 };
        let point = FixedPointRow { point: 1, kind: "stable node", label };
        let record = round_trip((nucleus, point), &[0.5, -1e-9]);
        assert_eq!(
            record.deserialize::<(FrozenNucleus, FixedPointRow, Vec<f64>)>(None).unwrap(),
            (nucleus, point, vec![0.5, -1e-9])
        );
        assert_eq!(&record[0], "8");
        for basin in [
            BasinRow { attractor: label, fate: "cycle", distance: Some(0.0), period_min: Some(31.25) },
            BasinRow { attractor: label, fate: "unresolved", distance: None, period_min: None },
        ] {
            let record = round_trip((nucleus, basin), &[]);
            assert_eq!(record.deserialize::<(FrozenNucleus, BasinRow)>(None).unwrap(), (nucleus, basin));
        }
        let commitment = CommitmentRow {
            nucleus: 2,
            x_um: 12.5,
            x_pct: 2.5,
            attractor: label,
            commitment_min: 120.0,
            frozen_inputs: "gradients+influx",
        };
        assert_eq!(round_trip(commitment, &[]).deserialize::<CommitmentRow>(None).unwrap(), commitment);
        let landscape = LandscapeRow { frozen_at_min: 240.0, branch: 0, x_pct: 47.25, kind: "fold" };
        let record = round_trip(landscape, &[1.5]);
        assert_eq!(record.deserialize::<(LandscapeRow, Vec<f64>)>(None).unwrap(), (landscape, vec![1.5]));
        assert_eq!(header_of::<LandscapeRow>().unwrap(), ["frozen_at_min", "branch", "x_pct", "type"]);
    }
}
