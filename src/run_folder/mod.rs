//! A run's folder: what `anlage run` writes into it, the summary, the
//! manifest that marks the set complete, and reading the run back.
//!
//! ```text
//! <run>/profiles.csv, profiles_long.csv, boundaries.csv, domains.csv
//!       sheets: final_sheet.csv, sheet_patterns.csv, contours.csv,
//!       contour_points.csv, sheet_domains.csv, contours.png
//!       states.npy   snapshots × genes × nuclei (× rows), f64
//!       summary.json [`Summary`]: what was run, how it went, final boundaries
//!       model.toml   the model file as run
//!       *.png, pattern.gif (and *.svg when asked)
//!       report.html  the report page ([`crate::page`])
//!       manifest.json every file with its size and SHA-256, written last
//! ```
//! Tables and pictures are written through [`crate::export`] (formats) and
//! [`crate::render`] (pictures); this module decides which files make a run
//! folder and in what order they become complete.

mod growth;
mod manifest;
mod read;
mod summary;

use std::path::{Path, PathBuf};

use crate::model::Model;
use crate::outputs::{PictureKind, WriteError, write_pictures};
use crate::{Run, export, readout, render};

pub use growth::{EventSummary, GrowthSummary, write_growth_run};
pub use manifest::{
    BUSY, MANIFEST, MANIFEST_FORMAT, Manifest, ManifestEntry, Reservation, add_to_manifest, incomplete, reserve,
    sha256_of, unmark, write_manifest,
};
pub use read::{RunFolderError, SavedRun, load};
pub use summary::{GridInfo, PREDICTION_NOTE, Summary, fnv1a, stepping_text};

/// The summary's file name.
pub const SUMMARY: &str = "summary.json";
/// The states' file name (NumPy `.npy`).
pub const STATES: &str = "states.npy";
/// The copy of the model file.
pub const MODEL_COPY: &str = "model.toml";

/// Writes every output of a run into `dir` (created if missing) and returns
/// the summary and notes on pictures changed to meet a size asked for
/// (`--gif-max-mb`); each file appears whole or not at all. Pictures are drawn
/// with `style_options` (checked before anything is written).
///
/// # Errors
/// [`WriteError`] if a picture option is wrong or a file cannot be written.
pub fn write_run(
    model: &Model,
    run: &Run,
    dir: &Path,
    style_options: &render::StyleOptions,
    pictures: bool,
) -> Result<(Summary, Vec<String>), WriteError> {
    let style = render::Style::with_options(&run.recording, &model.title, style_options)?;
    std::fs::create_dir_all(dir).map_err(|source| export::ExportError::Io { path: dir.to_path_buf(), source })?;
    export::remove_stale_temps(dir);
    // From here until the new manifest, the folder's set is incomplete.
    manifest::unmark(dir);
    let rec = &run.recording;
    let (boundaries, domains) = readout::find_boundaries_and_domains(rec)?;
    let path = |name: &str| -> PathBuf { dir.join(name) };
    let mut written: Vec<String> = vec!["profiles.csv".into(), "profiles_long.csv".into()];
    export::write_profiles(rec, &path("profiles.csv"))?;
    export::write_profiles_long(rec, &path("profiles_long.csv"))?;
    if rec.grid.is_sheet() {
        export::write_sheet(rec, &path("final_sheet.csv"))?;
        written.push("final_sheet.csv".into());
    }
    export::write_states_npy(rec, &path(STATES))?;
    export::write_boundaries(&boundaries, &path("boundaries.csv"))?;
    export::write_domains(&domains, &path("domains.csv"))?;
    let mut summary = Summary::new(model, run);
    if rec.grid.is_sheet() {
        // The whole sheet's readouts: patterns at every snapshot, contours
        // and domains at the last.
        let last = readout::sheet::final_sheet(rec);
        export::write_sheet_patterns(&readout::sheet::sheet_patterns(rec, &last)?, &path(SHEET_TABLES[0]))?;
        summary.final_sheet = last.patterns.clone();
        export::write_contours(&last.contours, &path(SHEET_TABLES[1]), &path(SHEET_TABLES[2]))?;
        export::write_sheet_domains(&last.domains, &path(SHEET_TABLES[3]))?;
        written.extend(SHEET_TABLES.map(String::from));
    }
    let mut notes = Vec::new();
    if pictures {
        let drawn = write_pictures(rec, &boundaries, &style, dir, PictureKind::All)?;
        for p in &drawn.files {
            written.extend(p.file_name().map(|n| n.to_string_lossy().into_owned()));
        }
        notes = drawn.notes;
    }
    export::write_json(&summary, &path(SUMMARY))?;
    export::write_atomic(&path(MODEL_COPY), |w| w.write_all(model.text.as_bytes()))?;
    written.extend([STATES, "boundaries.csv", "domains.csv", SUMMARY, MODEL_COPY].map(String::from));
    written.push(crate::page::PAGE.into());
    // Outputs of an earlier run of another kind (a sheet's table, pictures
    // not drawn this time) would pass for this run's: they go.
    for stale in RUN_OUTPUTS.iter().filter(|n| !written.iter().any(|w| w == *n)) {
        let _ = std::fs::remove_file(path(stale));
    }
    // What other verbs drew from the earlier run (a comparison, basins, a
    // figure, portraits) describes that run, not this one: it goes too.
    remove_derived(dir);
    // The page shows what the folder now holds, so it comes after the rest.
    crate::page::write_page(dir, &model.title)?;
    manifest::write_manifest(dir, &written)?;
    Ok((summary, notes))
}

/// Files other verbs write into a run folder (`compare`, `basins`,
/// `figure`, `portrait`); `run` removes them when it rewrites the folder.
pub const DERIVED_OUTPUTS: &[&str] = &[
    "comparison.csv",
    "comparison.png",
    "comparison.svg",
    "attractors.csv",
    "basins.csv",
    "commitment.csv",
    "landscape.csv",
    "basins.png",
    "basins.svg",
    "landscape.png",
    "landscape.svg",
    "figure.png",
    "figure.svg",
];

/// Removes [`DERIVED_OUTPUTS`] and the pictures named after a derived
/// output (`comparison_t…`, `portrait_…`) from `dir`.
pub(crate) fn remove_derived(dir: &Path) {
    for name in DERIVED_OUTPUTS {
        let _ = std::fs::remove_file(dir.join(name));
    }
    for entry in std::fs::read_dir(dir).into_iter().flatten().flatten() {
        let name = entry.file_name().to_string_lossy().into_owned();
        let picture = [".png", ".svg", ".gif"].iter().any(|e| name.ends_with(e));
        if picture && (name.starts_with("comparison_t") || name.starts_with("portrait_")) {
            let _ = std::fs::remove_file(entry.path());
        }
    }
}

/// The tables of a sheet's readouts ([`readout::sheet`]).
pub const SHEET_TABLES: [&str; 4] = ["sheet_patterns.csv", "contours.csv", "contour_points.csv", "sheet_domains.csv"];

/// Every file `anlage run` can write into its folder (besides the manifest).
pub const RUN_OUTPUTS: &[&str] = &[
    "profiles.csv",
    "profiles_long.csv",
    "final_sheet.csv",
    "sheet_patterns.csv",
    "contours.csv",
    "contour_points.csv",
    "sheet_domains.csv",
    "growth_frames.csv",
    "growth_events.csv",
    "growth_profiles.csv",
    "contours.png",
    "contours.svg",
    "states.npy",
    "boundaries.csv",
    "domains.csv",
    "summary.json",
    "model.toml",
    "kymograph.png",
    "pattern.png",
    "profiles.png",
    "boundary_positions.png",
    "kymograph.svg",
    "pattern.svg",
    "profiles.svg",
    "boundary_positions.svg",
    "pattern.gif",
    crate::page::PAGE,
];
