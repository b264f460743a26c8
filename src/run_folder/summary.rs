//! `summary.json`: what was run, how it went, and the final boundaries and
//! domains. The one [`Summary`] type is written and read back.

use serde::{Deserialize, Serialize};

use crate::Run;
use crate::model::{Clock, Edges, Model, Stepping};

use crate::readout::sheet::SheetPattern;
use crate::readout::{Boundary, Domain, final_boundaries, final_domains};

/// The summary of one run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Summary {
    /// Model title.
    pub title: String,
    /// anlage version that made the run.
    pub anlage_version: String,
    /// A reminder of what these numbers are.
    pub note: String,
    /// FNV-1a 64-bit hash of the model file's text, hex.
    pub model_hash: String,
    /// SHA-256 of everything the model was read from: its text and the
    /// initial levels it may read from an `initial_file`
    /// ([`Model::inputs_sha256`]): the same digest means the same model.
    /// Absent from runs written before it was recorded.
    #[serde(default)]
    pub model_inputs_sha256: Option<String>,
    /// Seed of the initial noise.
    pub seed: u64,
    /// Tissue shape, e.g. "row of 96".
    pub tissue: String,
    /// The grid, as needed to read states.npy back.
    pub grid: GridInfo,
    /// Display colour of each gene, `#rrggbb`, in state order.
    pub colors: Vec<String>,
    /// Snapshot times, min (the first axis of states.npy).
    pub snapshot_times_min: Vec<f64>,
    /// Per gene, the level below which it counts as not expressed (no boundaries), a.u.
    pub expression_floor: Vec<f64>,
    /// Per gene, the level that defines its boundaries: `{"fraction_of_max": f}` or `{"absolute": a.u.}`.
    /// Absent from runs written before boundary levels could be chosen (read as half maximum).
    #[serde(default)]
    pub boundary_levels: Vec<crate::model::Level>,
    /// Axis length, µm.
    pub axis_length_um: f64,
    /// Gene names in state order.
    pub genes: Vec<String>,
    /// Step control, e.g. "fixed step 0.05 min".
    pub stepping: String,
    /// Accepted steps.
    pub steps: usize,
    /// Rejected steps (error control).
    pub rejected_steps: usize,
    /// Snapshots recorded.
    pub snapshots: usize,
    /// Final time, min.
    pub final_time_min: f64,
    /// Boundaries at the final time.
    pub final_boundaries: Vec<Boundary>,
    /// Domains at the final time.
    pub final_domains: Vec<Domain>,
    /// A sheet's patterns at the final time, one per gene (class, wavelength,
    /// counts; see [`crate::readout::sheet`]; set by [`crate::write_run`],
    /// which reads the sheet once for them and its tables). Absent for rows.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub final_sheet: Vec<SheetPattern>,
}

/// The grid of a run, in summary.json.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GridInfo {
    /// Nuclei along the axis.
    pub nx: usize,
    /// Nuclei across (1 for a row).
    pub ny: usize,
    /// Spacing, µm.
    pub spacing_um: f64,
    /// "sealed" or "periodic".
    pub edges: String,
}

/// What outputs say about their status.
pub const PREDICTION_NOTE: &str = "model prediction from a simulated circuit, not a measurement";

impl Summary {
    /// Summarises a run of a model.
    pub fn new(model: &Model, run: &Run) -> Summary {
        let rec = &run.recording;
        let last = rec.times.len() - 1;
        Summary {
            title: model.title.clone(),
            anlage_version: env!("CARGO_PKG_VERSION").into(),
            note: PREDICTION_NOTE.into(),
            model_hash: format!("{:016x}", fnv1a(model.text.as_bytes())),
            model_inputs_sha256: Some(model.inputs_sha256()),
            seed: model.seed,
            tissue: model.grid.shape_text(),
            grid: GridInfo {
                nx: model.grid.nx,
                ny: model.grid.ny,
                spacing_um: model.grid.spacing_um,
                edges: match model.grid.edges {
                    Edges::Sealed => "sealed".into(),
                    Edges::Periodic => "periodic".into(),
                },
            },
            colors: rec.colors.iter().map(|[r, g, b]| format!("#{r:02x}{g:02x}{b:02x}")).collect(),
            snapshot_times_min: rec.times.clone(),
            expression_floor: rec.floor.clone(),
            boundary_levels: rec.levels.clone(),
            axis_length_um: model.grid.length_um(),
            genes: rec.genes.clone(),
            stepping: stepping_text(&model.clock),
            steps: run.stats.steps,
            rejected_steps: run.stats.rejected,
            snapshots: rec.times.len(),
            final_time_min: rec.times[last],
            final_boundaries: final_boundaries(rec),
            final_domains: final_domains(rec),
            final_sheet: Vec::new(),
        }
    }
}

/// FNV-1a, 64 bit (Fowler, Noll & Vo; the IETF draft "The FNV Non-Cryptographic
/// Hash Algorithm"): offset basis 0xcbf29ce484222325, prime 0x100000001b3.
pub fn fnv1a(bytes: &[u8]) -> u64 {
    bytes.iter().fold(0xcbf2_9ce4_8422_2325u64, |h, b| (h ^ *b as u64).wrapping_mul(0x0000_0100_0000_01b3))
}

/// Human-readable step control.
pub fn stepping_text(clock: &Clock) -> String {
    let scheme = clock.scheme.name();
    match clock.stepping {
        Stepping::Fixed { step_min } => format!("{scheme}, fixed step {step_min} min"),
        Stepping::Adaptive { rtol, atol, max_step_min } => {
            format!("{scheme}, error-controlled steps (rtol {rtol:e}, atol {atol:e}, at most {max_step_min} min)")
        }
    }
}

#[cfg(test)]
mod tests {
    use super::Summary;

    /// The summary a run writes reads back as the same value: one type both ways.
    #[test]
    fn a_summary_reads_back_as_written() {
        let text = include_str!("../../patterns/ribbon.toml");
        let model = crate::model::Model::from_toml(text, "ribbon.toml".as_ref()).unwrap();
        let run = crate::simulate(&model, &crate::RunOptions::default()).unwrap();
        let written = Summary::new(&model, &run);
        assert!(!written.final_boundaries.is_empty(), "the test needs a boundary to read back");
        let json = serde_json::to_string_pretty(&written).unwrap();
        let read: Summary = serde_json::from_str(&json).unwrap();
        assert_eq!(read, written);
        let bad = json.replace("\"rising\"", "\"sideways\"").replace("\"falling\"", "\"sideways\"");
        assert!(serde_json::from_str::<Summary>(&bad).unwrap_err().to_string().contains("sideways"));
    }
    /// Published FNV-1a 64 test vectors (the IETF FNV draft's test suite, from memory):
    /// "" → cbf29ce484222325, "a" → af63dc4c8601ec8c, "foobar" → 85944171f73967e8.
    #[test]
    fn fnv1a_matches_published_vectors() {
        assert_eq!(super::fnv1a(b""), 0xcbf2_9ce4_8422_2325);
        assert_eq!(super::fnv1a(b"a"), 0xaf63_dc4c_8601_ec8c);
        assert_eq!(super::fnv1a(b"foobar"), 0x8594_4171_f739_67e8);
    }
}
