//! `[noise]`: how replicate embryos differ. Three sources, each optional:
//!
//! - **extrinsic**: `[[noise.vary]]` entries, each a model parameter (named as
//!   in mutants: `"cue.peak"`, `"amber.production"`, `"cue->amber.threshold"`,
//!   a `[circuit] parameters` constant) multiplied per embryo by a factor of
//!   mean 1 and coefficient of variation `cv`: lognormal
//!   (exp(σz − σ²/2), σ² = ln(1 + cv²)) or normal (1 + cv·z, redrawn until
//!   positive: a truncated normal, documented as such);
//! - **intrinsic**: `molecules_per_unit` Ω, how many molecules one
//!   concentration unit means in one nucleus. Each gene's production P and
//!   decay d·u become a chemical Langevin term √((P + d·u)/Ω)·dW
//!   (Gillespie 2000, J. Chem. Phys. 113:297, eq. 23); `additive` adds a
//!   constant noise amplitude per gene (a.u./√min);
//! - **initial**: each gene's `initial_noise` (already in `[[gene]]`),
//!   drawn from the embryo's own seed.
//!
//! `replicates` is how many embryos `anlage replicates` runs by default.

use serde::Deserialize;
use toml::Spanned;

use super::{Model, ModelError, Param, Source};

/// `[noise]` as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct NoiseSpec {
    /// Replicate embryos (default 100).
    pub replicates: Option<usize>,
    /// Ω: molecules per concentration unit in one nucleus (intrinsic noise).
    pub molecules_per_unit: Option<f64>,
    /// Constant noise amplitude per gene, a.u./√min: `{ amber = 0.1 }`.
    #[serde(default)]
    pub additive: std::collections::BTreeMap<String, f64>,
    /// Fixed step of stochastic runs, min (default: the clock's fixed step).
    pub step_min: Option<f64>,
    /// Embryo-to-embryo variation of parameters.
    #[serde(default)]
    pub vary: Vec<Spanned<VarySpec>>,
}

/// `[[noise.vary]]` as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VarySpec {
    /// The parameter, named as in mutants.
    pub parameter: String,
    /// Coefficient of variation of the factor (sd / mean).
    pub cv: f64,
    /// "lognormal" (default) or "normal".
    pub law: Option<String>,
}

/// How a varied parameter's factor is drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Law {
    /// exp(σz − σ²/2) with σ² = ln(1 + cv²): mean 1, CV cv, always positive.
    Lognormal,
    /// 1 + cv·z, redrawn while ≤ 0 (for cv ≤ 0.5, fewer than 1 in 3·10⁶ draws are redrawn).
    Normal,
}

/// One parameter varied between embryos.
#[derive(Debug, Clone, PartialEq)]
pub struct Variation {
    /// The parameter as written.
    pub name: String,
    /// The parameter.
    pub param: Param,
    /// Coefficient of variation.
    pub cv: f64,
    /// Distribution of the factor.
    pub law: Law,
}

/// The noise of a checked model.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Noise {
    /// Replicate embryos by default.
    pub replicates: usize,
    /// Ω, molecules per unit (None: no chemical Langevin noise).
    pub molecules_per_unit: Option<f64>,
    /// Constant noise amplitude per gene, a.u./√min (0: none).
    pub additive: Vec<f64>,
    /// Parameters varied between embryos.
    pub vary: Vec<Variation>,
    /// Fixed step of stochastic runs, min (set whenever [`Noise::is_stochastic`]).
    pub step_min: Option<f64>,
}

/// Default number of replicate embryos (common practice, no source: enough
/// for a standard deviation to about 7 % of itself).
pub const DEFAULT_REPLICATES: usize = 100;
/// Most replicate embryos a model may ask for by default.
pub const MAX_REPLICATES: usize = 100_000;

impl Noise {
    /// True if a run of the model is stochastic (intrinsic or additive noise).
    pub fn is_stochastic(&self) -> bool {
        self.molecules_per_unit.is_some() || self.additive.iter().any(|a| *a > 0.0)
    }
}

/// Checks `[noise]` against the model built so far.
pub(super) fn check_noise(model: &Model, spec: Option<&Spanned<NoiseSpec>>, src: &Source) -> Result<Noise, ModelError> {
    let n_genes = model.genes.len();
    let Some(spanned) = spec else {
        return Ok(Noise { replicates: DEFAULT_REPLICATES, additive: vec![0.0; n_genes], ..Noise::default() });
    };
    let (s, span) = (spanned.get_ref(), spanned.span());
    let replicates = s.replicates.unwrap_or(DEFAULT_REPLICATES);
    if !(2..=MAX_REPLICATES).contains(&replicates) {
        return Err(src.invalid(
            &span,
            "replicates",
            "noise.replicates".into(),
            format!("is {replicates}"),
            &format!("give 2 to {MAX_REPLICATES} embryos (a spread needs at least two)"),
        ));
    }
    if let Some(omega) = s.molecules_per_unit
        && !(omega.is_finite() && omega > 0.0)
    {
        return Err(src.invalid(
            &span,
            "molecules_per_unit",
            "noise.molecules_per_unit".into(),
            format!("is {omega}"),
            "give how many molecules one concentration unit means in a nucleus, a number > 0 (e.g. 100)",
        ));
    }
    if s.molecules_per_unit.is_some()
        && let Some(g) = model.genes.iter().find(|g| g.rate.is_some())
    {
        return Err(src.invalid(
            &span,
            "molecules_per_unit",
            "noise.molecules_per_unit".into(),
            format!("gene `{}` is written as a rate expression, which has no separate production and decay to make chemical Langevin noise from", g.name),
            "use `additive = { gene = amplitude }` for such genes, or write the gene with production and decay",
        ));
    }
    let mut additive = vec![0.0; n_genes];
    for (name, &amp) in &s.additive {
        let Some(g) = model.gene_index(name) else {
            return Err(src.invalid(
                &span,
                "additive",
                format!("noise.additive.{name}"),
                format!("names no gene `{name}`"),
                &format!("name one of the genes: {}", gene_list(model)),
            ));
        };
        if !(amp.is_finite() && amp >= 0.0) {
            return Err(src.invalid(
                &span,
                "additive",
                format!("noise.additive.{name}"),
                format!("is {amp}"),
                "give a noise amplitude >= 0, a.u. per square root of a minute",
            ));
        }
        additive[g] = amp;
    }
    let mut vary: Vec<Variation> = Vec::new();
    for (k, v) in s.vary.iter().enumerate() {
        let (vs, vspan) = (v.get_ref(), v.span());
        let field = |what: &str| format!("noise.vary[{k}] `{}`.{what}", vs.parameter);
        let param = model.parse_param(&vs.parameter).map_err(|why| {
            src.invalid(&vspan, "parameter", field("parameter"), why, "name a parameter as in a mutant's `scale`")
        })?;
        if model.clone().param_mut(param).is_none_or(|v| *v == 0.0) {
            return Err(src.invalid(
                &vspan,
                "parameter",
                field("parameter"),
                "is 0 in this model, so a factor cannot change it".into(),
                "vary a parameter that is not 0, or give it a value first",
            ));
        }
        if vary.iter().any(|w| w.param == param) {
            return Err(src.invalid(
                &vspan,
                "parameter",
                field("parameter"),
                "is varied twice".into(),
                "keep one [[noise.vary]] entry per parameter",
            ));
        }
        if !(vs.cv.is_finite() && vs.cv > 0.0 && vs.cv <= 2.0) {
            return Err(src.invalid(
                &vspan,
                "cv",
                field("cv"),
                format!("is {}", vs.cv),
                "give a coefficient of variation above 0 and at most 2 (e.g. 0.1 for 10 %)",
            ));
        }
        let law = match vs.law.as_deref() {
            None | Some("lognormal") => Law::Lognormal,
            Some("normal") if vs.cv <= 0.5 => Law::Normal,
            Some("normal") => {
                return Err(src.invalid(
                    &vspan,
                    "cv",
                    field("cv"),
                    format!("is {} with law = \"normal\": a normal factor would often be negative", vs.cv),
                    "use law = \"lognormal\", or a cv of at most 0.5",
                ));
            }
            Some(other) => {
                return Err(src.invalid(
                    &vspan,
                    "law",
                    field("law"),
                    format!("is `{other}`"),
                    "write \"lognormal\" or \"normal\"",
                ));
            }
        };
        vary.push(Variation { name: vs.parameter.clone(), param, cv: vs.cv, law });
    }
    let stochastic = s.molecules_per_unit.is_some() || additive.iter().any(|a| *a > 0.0);
    let step_min = match (s.step_min, model.clock.stepping) {
        (Some(k), _) if !(k.is_finite() && k > 0.0 && k <= model.clock.until_min) => {
            return Err(src.invalid(
                &span,
                "step_min",
                "noise.step_min".into(),
                format!("is {k}"),
                &format!("give a step > 0 and at most the run's length ({} min)", model.clock.until_min),
            ));
        }
        (Some(k), _) => Some(k),
        (None, super::Stepping::Fixed { step_min }) => Some(step_min),
        (None, super::Stepping::Adaptive { .. }) if stochastic => {
            return Err(src.invalid(
                &span,
                "molecules_per_unit",
                "noise.step_min".into(),
                "is missing: stochastic runs take fixed steps, and the clock's steps are error-controlled".into(),
                "add `step_min = 0.05` (min) to [noise]; halve it and compare to check the results do not change",
            ));
        }
        (None, _) => None,
    };
    // A shortened last step before a snapshot would mix two step sizes in
    // the spread at that snapshot.
    if let Some(k) = step_min.filter(|_| stochastic) {
        let whole = |span_min: f64| {
            let steps = span_min / k;
            (steps - steps.round()).abs() <= 1e-9 * steps.max(1.0)
        };
        let (every, until) = (model.clock.snapshot_every_min, model.clock.until_min);
        if !whole(every) || !whole(until) {
            return Err(src.invalid(
                &span,
                if s.step_min.is_some() { "step_min" } else { "molecules_per_unit" },
                "noise.step_min".into(),
                format!(
                    "is {k} min; it must divide both the snapshot interval ({every} min) and the run ({until} min)"
                ),
                "choose a step that divides it (a shortened step before each snapshot would mix two step sizes)",
            ));
        }
    }
    Ok(Noise { replicates, molecules_per_unit: s.molecules_per_unit, additive, vary, step_min })
}

fn gene_list(model: &Model) -> String {
    model.genes.iter().map(|g| g.name.as_str()).collect::<Vec<_>>().join(", ")
}
