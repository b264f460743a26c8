//! Raw model file: a serde mirror of the TOML, with spans kept so that
//! validation can point at the line of a bad field.
//!
//! Nothing here is checked beyond TOML syntax and types; [`super::validate`]
//! turns a [`ModelSpec`] into a [`super::Model`] that cannot be invalid.

use serde::Deserialize;
use toml::Spanned;

/// The whole model file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelSpec {
    /// Free text shown in summaries and pictures.
    pub title: Option<String>,
    /// Seed for initial noise (default 0).
    pub seed: Option<u64>,
    /// Geometry of the tissue.
    pub tissue: Spanned<TissueSpec>,
    /// Time span, step control and snapshots.
    pub clock: Spanned<ClockSpec>,
    /// Morphogen gradients read by the circuit (inputs, not dynamic species).
    #[serde(default)]
    pub gradient: Vec<Spanned<GradientSpec>>,
    /// Dynamic species, one per gene product.
    #[serde(default)]
    pub gene: Vec<Spanned<GeneSpec>>,
    /// Regulatory links and the rate law that reads them.
    pub circuit: Option<Spanned<CircuitSpec>>,
    /// Mutants: named sets of changes to the wild type.
    #[serde(default)]
    pub mutant: Vec<Spanned<MutantSpec>>,
    /// How replicate embryos differ (see `super::noise`).
    pub noise: Option<Spanned<super::noise::NoiseSpec>>,
    /// Growth and division cycles of a row (see `super::growth`).
    pub growth: Option<Spanned<super::growth::GrowthSpec>>,
    /// Parameter fitting (read by `anlage fit`, see `crate::fit`).
    pub fit: Option<toml::Value>,
}

/// `[[mutant]]` (also the syntax of `--mutant` on the command line).
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MutantSpec {
    /// Name shown in tables.
    pub name: String,
    /// Genes with no production.
    #[serde(default)]
    pub knock_out: Vec<String>,
    /// Links to remove, written `"from -> to"`.
    #[serde(default)]
    pub remove_link: Vec<String>,
    /// Parameters to multiply: `"gene.production" = 0.5`, `"gradient.peak" = 2`,
    /// `"from->to.threshold" = 1.5`.
    #[serde(default)]
    pub scale: std::collections::BTreeMap<String, f64>,
    /// Genes held at a level, a.u.
    #[serde(default)]
    pub clamp: std::collections::BTreeMap<String, f64>,
    /// Extra production of a gene in a region of the axis.
    #[serde(default)]
    pub ectopic: Vec<EctopicSpec>,
    /// Gradients whose source moves to another side: `head = "right"`.
    #[serde(default)]
    pub source: std::collections::BTreeMap<String, String>,
}

/// Ectopic expression: `{ gene = "amber", from_pct = 60, to_pct = 80, rate = 1.0 }`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EctopicSpec {
    /// Gene.
    pub gene: String,
    /// Start of the region, % of axis length.
    pub from_pct: f64,
    /// End of the region, % of axis length.
    pub to_pct: f64,
    /// Extra production, a.u./min.
    pub rate: f64,
}

/// `[tissue]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TissueSpec {
    /// `[n]` for a row, `[nx, ny]` for a sheet.
    pub nuclei: Vec<Spanned<i64>>,
    /// Distance between neighbouring nuclei, µm.
    pub spacing_um: f64,
    /// `"sealed"` (no flux, default) or `"periodic"`.
    pub edges: Option<String>,
}

/// `[clock]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ClockSpec {
    /// End time, min.
    pub until_min: f64,
    /// Fixed step, min (give this or `tolerance`).
    pub step_min: Option<f64>,
    /// Relative tolerance for error-controlled steps: bounds each step's
    /// estimated local error; the final error is typically 10–1000× larger.
    pub tolerance: Option<f64>,
    /// Absolute tolerance for error-controlled steps, a.u. (default: `tolerance`).
    pub abs_tolerance: Option<f64>,
    /// Largest step the controller may take, min (default: the snapshot interval).
    pub max_step_min: Option<f64>,
    /// Interval between recorded snapshots, min.
    pub snapshot_every_min: f64,
    /// Time-stepping scheme: `"sbdf2"` (default) or `"ark4"`.
    pub scheme: Option<String>,
}

/// `[[gradient]]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GradientSpec {
    /// Name used by links.
    pub name: String,
    /// `"exponential"`, `"linear"` or `"step"`.
    pub shape: String,
    /// Source: `"left"`, `"right"`, `"top"`, `"bottom"` (sheets) or `"centre"`.
    pub from: String,
    /// Value at the source, a.u.
    pub peak: f64,
    /// Exponential decay length λ, µm.
    pub decay_length_um: Option<f64>,
    /// Linear: distance over which the value falls to the baseline, µm.
    pub length_um: Option<f64>,
    /// Step: width of the high region next to the source, µm.
    pub width_um: Option<f64>,
    /// Value far from the source, a.u. (default 0).
    pub baseline: Option<f64>,
    /// Time course of the amplitude: `[[t_min, factor], ...]`, linear in between.
    pub amplitude: Option<Vec<[f64; 2]>>,
    /// Table: a CSV of `position_pct` or `position_um` (from the source) and
    /// `level`, path relative to the model file.
    pub table: Option<String>,
    /// Table: the gene whose rows to use, when the table has a `gene` column.
    pub table_gene: Option<String>,
}

/// `[[gene]]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GeneSpec {
    /// Invented gene name, used by links.
    pub name: String,
    /// Display colour `#rrggbb`.
    pub color: Option<String>,
    /// Maximal production rate, a.u./min (not used by a rate expression).
    pub production: Option<f64>,
    /// First-order decay rate, 1/min (not used by a rate expression).
    pub decay: Option<f64>,
    /// Rate expression du/dt (reaction part), a.u./min: replaces the circuit's
    /// rate law for this gene.
    pub rate: Option<String>,
    /// Diffusion coefficient, µm²/min (default 0).
    pub diffusion: Option<f64>,
    /// Initial level everywhere, a.u. (default 0).
    pub initial: Option<f64>,
    /// Initial level per nucleus, a.u. (row-major for sheets).
    pub initial_profile: Option<Vec<f64>>,
    /// Initial level per nucleus from an NPY file of f64 (shape `[nuclei]` or
    /// `[ny, nx]`), path relative to the model file.
    pub initial_file: Option<String>,
    /// Initial level per nucleus as a formula of x, y (µm), L, W, pi and the
    /// circuit's named constants, e.g. `"2 * step(0.3 * L - x)"`.
    pub initial_formula: Option<String>,
    /// Half-width of uniform noise added to the initial level, a.u. (default 0).
    pub initial_noise: Option<f64>,
    /// Hill kinetics: how activators combine, `"all"` (product, default) or `"any"` (sum).
    pub combine: Option<String>,
    /// Sigmoid kinetics: bias h added to the regulatory input (default 0).
    pub bias: Option<f64>,
    /// The level that defines this gene's boundaries: a fraction of its
    /// maximum (a number, default 0.5), `{ absolute = 2.0 }` (a.u.) or
    /// `{ of_capacity = 0.5 }` (a fraction of p/d); read as a TOML value and
    /// checked by hand, so that a mistake gets a message in these words.
    pub boundary_level: Option<toml::Value>,
    /// What happens at each edge: `edge.left = { influx = 0.5 }` (a.u.·µm/min
    /// entering) or `edge.right = { level = 0 }` (a.u. held); no flux where
    /// none is given.
    pub edge: Option<EdgesSpec>,
}

/// A gene's `edge` table: one entry per edge, each absent for no flux.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EdgesSpec {
    /// x = 0.
    pub left: Option<EdgeSpec>,
    /// x = L.
    pub right: Option<EdgeSpec>,
    /// y = 0 (sheets).
    pub bottom: Option<EdgeSpec>,
    /// y = W (sheets).
    pub top: Option<EdgeSpec>,
}

/// One edge's rule: exactly one of the two.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EdgeSpec {
    /// Amount entering per µm of edge per minute, a.u.·µm/min.
    pub influx: Option<f64>,
    /// Level held at the edge, a.u.
    pub level: Option<f64>,
}

/// `[circuit]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CircuitSpec {
    /// `"hill"`, `"sigmoid"` or `"rates"`.
    pub kinetics: String,
    /// Named constants for rate expressions.
    #[serde(default)]
    pub parameters: std::collections::BTreeMap<String, f64>,
    /// Regulatory links.
    #[serde(default)]
    pub link: Vec<Spanned<LinkSpec>>,
}

/// `[[circuit.link]]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LinkSpec {
    /// Regulator: a gene or a gradient.
    pub from: String,
    /// Target gene.
    pub to: String,
    /// Hill kinetics: `"+"` activates, `"-"` represses.
    pub sign: Option<String>,
    /// Hill kinetics: threshold K (level of half effect), a.u.
    pub threshold: Option<f64>,
    /// Hill kinetics: Hill coefficient n.
    pub hill: Option<f64>,
    /// Sigmoid kinetics: weight w (positive activates).
    pub weight: Option<f64>,
}
