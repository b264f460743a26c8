//! Scoring measured positional errors against predicted ones: the sd over
//! stained embryos of each matched boundary (the table's `sd_pct`, over `n`
//! embryos) against the sd over replicate embryos that `anlage replicates`
//! wrote in `precision.csv`, as a ratio with the interval of the F test for
//! two independent samples ([`crate::replicates::intervals::independent_sd_ratio`]).
//!
//! The measured sd is taken as given (not raised to the floor used for z):
//! it holds measurement error as well as embryo-to-embryo variation, so a
//! measured spread wider than the prediction may be the stain, the imaging
//! or the staging rather than the embryos.

use std::path::{Path, PathBuf};

use serde::Deserialize;

use super::{CompareError, Comparison};
use crate::readout::same_time;
use crate::replicates::intervals::{independent_sd_ratio, verdict};

/// The run and the replicates disagree about a noise-free boundary by more
/// than this, % of the length: they were not made from the same model.
pub const SAME_MODEL_PCT: f64 = 0.5;

/// One row of `precision.csv`, as read back.
#[derive(Debug, Clone, PartialEq, Deserialize)]
pub struct PredictedSpread {
    /// Snapshot, min.
    pub time_min: f64,
    /// Gene.
    pub gene: String,
    /// "rising" or "falling".
    pub direction: String,
    /// The noise-free embryo's position, µm.
    pub reference_um: f64,
    /// Embryos in which the boundary exists (empty in tables written before
    /// this column existed).
    pub embryos: Option<usize>,
    /// Positional error, % of the length (empty when no embryo has it).
    pub sd_pct: Option<f64>,
}

/// Reads `precision.csv` of a replicates folder.
///
/// # Errors
/// [`CompareError`] naming the file, line and column.
pub fn read_predicted(path: &Path) -> Result<Vec<PredictedSpread>, CompareError> {
    let read = |source| CompareError::Read { path: path.to_path_buf(), source };
    let file = std::fs::File::open(path).map_err(read)?;
    let mut rdr = csv::Reader::from_reader(file);
    let headers = rdr.headers().map_err(|e| read(std::io::Error::other(e)))?.clone();
    let mut out = Vec::new();
    for (k, row) in rdr.deserialize::<PredictedSpread>().enumerate() {
        let row = row.map_err(|e| CompareError::BadValue {
            path: path.to_path_buf(),
            line: e.position().map_or(k + 2, |p| p.line() as usize),
            column: match e.kind() {
                csv::ErrorKind::Deserialize { err, .. } => {
                    err.field().and_then(|f| headers.get(f as usize)).unwrap_or("?").to_string()
                }
                _ => "?".into(),
            },
            value: e.to_string(),
            fix: "give the precision.csv that `anlage replicates` wrote, unedited".into(),
        })?;
        out.push(row);
    }
    if out.iter().all(|r| r.embryos.is_none()) && !out.is_empty() {
        return Err(CompareError::BadValue {
            path: path.to_path_buf(),
            line: 1,
            column: "embryos".into(),
            value: "missing".into(),
            fix: "this table predates the embryos column; rerun `anlage replicates` to write it again".into(),
        });
    }
    Ok(out)
}

/// What [`score_spread`] did.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SpreadNotes {
    /// Matched rows with a measured sd scored against a prediction.
    pub scored: usize,
    /// Matched rows with a measured sd but no predicted boundary at their
    /// snapshot (the replicates recorded other times, or no embryo had it).
    pub no_prediction: usize,
}

/// Adds the predicted spread to every matched row of `cmp` that has a
/// measured sd: `predicted_sd_pct`, `predicted_embryos`, `sd_ratio`
/// (measured over predicted) with its 95 % interval (when the row gives
/// `n`), and `spread` ("measured wider", "measured narrower", "same",
/// "no predicted spread" when every embryo of the model is the same, or
/// "one embryo: no spread to score" for an sd over n = 1). A row
/// is paired with the prediction of the same snapshot, gene and direction
/// whose noise-free position is nearest the run's.
///
/// # Errors
/// [`CompareError::OtherModel`] when that nearest noise-free position is
/// more than [`SAME_MODEL_PCT`] away from the run's: the replicates were
/// made from another model (or other settings) than the run.
pub fn score_spread(
    cmp: &mut Comparison,
    predicted: &[PredictedSpread],
    length_um: f64,
    path: &Path,
) -> Result<SpreadNotes, CompareError> {
    let mut notes = SpreadNotes::default();
    for row in cmp.rows.iter_mut().filter(|r| r.status == "matched" && r.sd_pct.is_some()) {
        let (Some(sim), Some(sd)) = (row.simulated_pct, row.sd_pct) else { continue };
        let pct = |p: &PredictedSpread| 100.0 * p.reference_um / length_um;
        let nearest = predicted
            .iter()
            .filter(|p| same_time(p.time_min, row.time_min) && p.gene == row.gene && p.direction == row.direction)
            .min_by(|a, b| (pct(a) - sim).abs().total_cmp(&(pct(b) - sim).abs()));
        let Some(p) = nearest else {
            notes.no_prediction += 1;
            continue;
        };
        if (pct(p) - sim).abs() > SAME_MODEL_PCT {
            return Err(CompareError::OtherModel {
                path: path.to_path_buf(),
                gene: row.gene.clone(),
                direction: row.direction.clone(),
                time_min: row.time_min,
                run_pct: sim,
                replicates_pct: pct(p),
            });
        }
        let (Some(embryos), Some(predicted_sd)) = (p.embryos, p.sd_pct) else {
            notes.no_prediction += 1;
            continue;
        };
        notes.scored += 1;
        row.predicted_sd_pct = Some(predicted_sd);
        row.predicted_embryos = Some(embryos);
        if predicted_sd <= 0.0 {
            row.spread = "no predicted spread".into();
            continue;
        }
        row.sd_ratio = Some(sd / predicted_sd);
        if row.n == Some(1) {
            row.spread = "one embryo: no spread to score".into();
            continue;
        }
        if let Some(n) = row.n {
            let (ratio, low, high) = independent_sd_ratio(sd, n as usize, predicted_sd, embryos);
            if low.is_finite() && high.is_finite() {
                row.sd_ratio_low = Some(low);
                row.sd_ratio_high = Some(high);
                row.spread = verdict(ratio, low, high, "measured wider", "measured narrower").into();
            }
        }
    }
    Ok(notes)
}

/// Checks that the replicates in `replicates_dir` were made from the same
/// model file as the run in `run_dir` (the SHA-256 of the run's
/// `model.toml` against the one `replicates.json` records) and of the wild
/// type, not of a mutant.
///
/// # Errors
/// [`CompareError::Origin`] saying what differs, or [`CompareError::Read`].
pub fn check_origin(run_dir: &Path, replicates_dir: &Path) -> Result<(), CompareError> {
    let origin_path = replicates_dir.join(crate::replicates::ORIGIN);
    let bad = |why: String| CompareError::Origin { path: origin_path.clone(), why };
    let text = std::fs::read_to_string(&origin_path).map_err(|_| {
        bad("it is missing: the folder was not written by this version of `anlage replicates`; rerun it".into())
    })?;
    let origin: serde_json::Value =
        serde_json::from_str(&text).map_err(|e| bad(format!("it cannot be read ({e}); rerun `anlage replicates`")))?;
    let model_path = run_dir.join(crate::run_folder::MODEL_COPY);
    let run_text = std::fs::read_to_string(&model_path)
        .map_err(|source| CompareError::Read { path: model_path.clone(), source })?;
    if origin["model_text_sha256"].as_str() != Some(crate::replicates::text_sha256(&run_text).as_str()) {
        return Err(bad(format!(
            "the replicates were made from another model file than the run ({}); rerun `anlage replicates` on the model file of the run",
            model_path.display()
        )));
    }
    // The model text alone does not say what an initial_file held.
    let summary_path = run_dir.join(crate::run_folder::SUMMARY);
    let run_inputs = std::fs::read_to_string(&summary_path)
        .ok()
        .and_then(|t| serde_json::from_str::<crate::run_folder::Summary>(&t).ok())
        .and_then(|s| s.model_inputs_sha256);
    if let (Some(theirs), Some(ours)) = (origin["model_inputs_sha256"].as_str(), run_inputs.as_deref())
        && theirs != ours
    {
        return Err(bad(format!(
            "the replicates were made from the same model text as the run but other inputs (an initial_file that \
             changed since, e.g.; see {}); rerun the run or `anlage replicates` so both read the same files",
            summary_path.display()
        )));
    }
    if let Some(m) = origin["mutant"].as_str() {
        return Err(bad(format!(
            "the replicates are of the mutant `{m}`, the run of the wild type; rerun `anlage replicates` without --mutant"
        )));
    }
    Ok(())
}

/// The `precision.csv` of a replicates folder.
pub fn precision_table(dir: &Path) -> PathBuf {
    dir.join("precision.csv")
}
