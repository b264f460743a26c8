//! The folder of a growing row's run ([`crate::growth`]): its snapshots
//! have different grids, so it holds tables in µm and % of the length at
//! each time instead of `states.npy`.
//!
//! ```text
//! <run>/boundaries.csv, domains.csv   (µm and % of the length at each time)
//!       growth_frames.csv, growth_events.csv, growth_profiles.csv
//!       kymograph.png, boundary_positions.png  (against % of the length)
//!       summary.json [`GrowthSummary`], model.toml, report.html, manifest.json
//! ```

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::{MODEL_COPY, PREDICTION_NOTE, RUN_OUTPUTS, SUMMARY, manifest, remove_derived, stepping_text};
use crate::growth::GrowthRun;
use crate::model::Model;
use crate::outputs::{WriteError, write_picture};
use crate::readout::{Boundary, Domain};
use crate::{export, render};

/// A division, refinement or mitosis window's start, in `summary.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EventSummary {
    /// Time, min.
    pub time_min: f64,
    /// `mitosis_start`, `division` or `refinement`.
    pub event: String,
    /// Nuclei after.
    pub nuclei_after: usize,
    /// Length of the row, µm.
    pub length_um: f64,
}

/// `summary.json` of a growing row.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GrowthSummary {
    /// Always `growing row`.
    pub kind: String,
    /// Model title.
    pub title: String,
    /// anlage version that made the run.
    pub anlage_version: String,
    /// A reminder of what these numbers are.
    pub note: String,
    /// SHA-256 of everything the model was read from.
    pub model_inputs_sha256: String,
    /// Gene names.
    pub genes: Vec<String>,
    /// Relative elongation rate g, 1/min.
    pub growth_rate_per_min: f64,
    /// Mitosis window before each division, min.
    pub mitosis_min: f64,
    /// Nuclei at the start and at the end.
    pub nuclei: [usize; 2],
    /// Length at the start and at the end, µm.
    pub length_um: [f64; 2],
    /// Divisions, refinements and mitosis windows.
    pub events: Vec<EventSummary>,
    /// Step control.
    pub stepping: String,
    /// Accepted steps.
    pub steps: usize,
    /// Rejected steps.
    pub rejected_steps: usize,
    /// Snapshot times, min.
    pub snapshot_times_min: Vec<f64>,
    /// Boundaries at the final time (µm and % of the final length).
    pub final_boundaries: Vec<Boundary>,
    /// Domains at the final time.
    pub final_domains: Vec<Domain>,
}

/// Writes every output of a growing row's run into `dir`; each file
/// appears whole or not at all, and the manifest comes last.
///
/// # Errors
/// [`WriteError`] if a picture option is wrong or a file cannot be written.
pub fn write_growth_run(
    model: &Model,
    run: &GrowthRun,
    dir: &Path,
    style_options: &render::StyleOptions,
    pictures: bool,
) -> Result<GrowthSummary, WriteError> {
    let display = run.display_recording(model, render::DISPLAY_NUCLEI);
    let style = render::Style::with_options(&display, &model.title, style_options)?;
    std::fs::create_dir_all(dir).map_err(|source| export::ExportError::Io { path: dir.to_path_buf(), source })?;
    export::remove_stale_temps(dir);
    manifest::unmark(dir);
    let path = |name: &str| -> PathBuf { dir.join(name) };
    let (boundaries, domains) = run.readouts(model)?;
    export::write_boundaries(&boundaries, &path("boundaries.csv"))?;
    export::write_domains(&domains, &path("domains.csv"))?;
    let genes: Vec<String> = model.genes.iter().map(|g| g.name.clone()).collect();
    export::write_growth_tables(run, &genes, dir)?;
    let mut written: Vec<String> = ["boundaries.csv", "domains.csv"].map(String::from).to_vec();
    written.extend(export::GROWTH_TABLES.map(String::from));
    if pictures {
        let (kymo, track) = render::growth_pictures(run, &display, &boundaries, &style)?;
        for (name, canvas) in [("kymograph.png", kymo), ("boundary_positions.png", track)] {
            for p in write_picture(&path(name), &canvas, style.svg)? {
                written.extend(p.file_name().map(|n| n.to_string_lossy().into_owned()));
            }
        }
    }
    let summary = summarise(model, run, &boundaries, &domains);
    export::write_json(&summary, &path(SUMMARY))?;
    export::write_atomic(&path(MODEL_COPY), |w| w.write_all(model.text.as_bytes()))?;
    written.extend([SUMMARY, MODEL_COPY, crate::page::PAGE].map(String::from));
    for stale in RUN_OUTPUTS.iter().filter(|n| !written.iter().any(|w| w == *n)) {
        let _ = std::fs::remove_file(path(stale));
    }
    remove_derived(dir);
    crate::page::write_page(dir, &model.title)?;
    manifest::write_manifest(dir, &written)?;
    Ok(summary)
}

fn summarise(model: &Model, run: &GrowthRun, boundaries: &[Boundary], domains: &[Domain]) -> GrowthSummary {
    let growth = model.growth.as_ref().expect("a growing model");
    let (first, last) = (&run.frames[0], &run.frames[run.frames.len() - 1]);
    let at_end = |t: f64| t == last.time_min;
    GrowthSummary {
        kind: "growing row".into(),
        title: model.title.clone(),
        anlage_version: env!("CARGO_PKG_VERSION").into(),
        note: PREDICTION_NOTE.into(),
        model_inputs_sha256: model.inputs_sha256(),
        genes: model.genes.iter().map(|g| g.name.clone()).collect(),
        growth_rate_per_min: growth.rate_per_min,
        mitosis_min: growth.mitosis_min,
        nuclei: [first.grid.nx, last.grid.nx],
        length_um: [first.grid.length_um(), last.grid.length_um()],
        events: run
            .events
            .iter()
            .map(|e| EventSummary {
                time_min: e.time_min,
                event: e.kind.word().into(),
                nuclei_after: e.nuclei.1,
                length_um: e.length_um,
            })
            .collect(),
        stepping: stepping_text(&model.clock),
        steps: run.stats.steps,
        rejected_steps: run.stats.rejected,
        snapshot_times_min: run.frames.iter().map(|f| f.time_min).collect(),
        final_boundaries: boundaries.iter().filter(|b| at_end(b.time_min)).cloned().collect(),
        final_domains: domains.iter().filter(|d| at_end(d.time_min)).cloned().collect(),
    }
}
