//! The `[fit]` part of a model file: free parameters with bounds and scales,
//! and measured-boundary tables tied to genotypes.
//!
//! ```toml
//! [fit]
//! seed = 1                 # optimiser seed (default 0)
//! evaluations = 3000       # budget of objective evaluations (default 200 per parameter)
//! restarts = 1             # independent restarts sharing the budget (default 1)
//! starts = 1              # independent starts (seeds seed, seed+1, …), each with the whole budget
//! [[fit.parameter]]
//! name = "amber.production"  # any parameter a mutant can scale
//! min = 0.5
//! max = 2.0
//! scale = "log"            # or "linear" (default)
//! [[fit.data]]
//! table = "measured.csv"   # sample, time, gene, direction, position_pct, sd_pct, n
//! genotype = "wild type"   # or the name of a [[mutant]]
//! ```

use std::collections::HashMap;
use std::path::Path;

use serde::Deserialize;
use toml::Spanned;

use crate::compare::{MeasuredRow, read_measured};
use crate::model::{Model, ModelError, Mutant, Param, Source};

/// The genotype name of the unmutated model.
pub const WILD_TYPE: &str = "wild type";

#[derive(Debug, Deserialize)]
struct FitFile {
    fit: Option<Spanned<FitSpec>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct FitSpec {
    seed: Option<u64>,
    evaluations: Option<usize>,
    restarts: Option<usize>,
    sd_floor_pct: Option<f64>,
    #[serde(default)]
    stages: HashMap<String, f64>,
    starts: Option<usize>,
    #[serde(default)]
    parameter: Vec<Spanned<ParamSpec>>,
    #[serde(default)]
    data: Vec<Spanned<DataSpec>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ParamSpec {
    name: String,
    min: f64,
    max: f64,
    scale: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct DataSpec {
    table: String,
    genotype: Option<String>,
}

/// One free parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct FreeParam {
    /// As written, e.g. `amber.production`.
    pub name: String,
    /// Which model parameter.
    pub param: Param,
    /// Bounds.
    pub min: f64,
    /// Bounds.
    pub max: f64,
    /// Searched on a logarithmic scale.
    pub log: bool,
    /// The model file's value.
    pub start: f64,
}

impl FreeParam {
    /// Value at position `z ∈ [0, 1]` of the search range.
    pub fn value(&self, z: f64) -> f64 {
        let z = z.clamp(0.0, 1.0);
        if self.log {
            (self.min.ln() + z * (self.max.ln() - self.min.ln())).exp()
        } else {
            self.min + z * (self.max - self.min)
        }
    }
    /// Position of `v` in the search range.
    pub fn unit(&self, v: f64) -> f64 {
        if self.log {
            (v.ln() - self.min.ln()) / (self.max.ln() - self.min.ln())
        } else {
            (v - self.min) / (self.max - self.min)
        }
    }
}

/// Measured boundaries of one genotype.
#[derive(Debug, Clone)]
pub struct Genotype {
    /// `wild type` or a mutant's name.
    pub name: String,
    /// The mutant (None for the wild type).
    pub mutant: Option<Mutant>,
    /// Measured rows (each with a time in min; missing times mean the end of the run).
    pub rows: Vec<MeasuredRow>,
}

/// A checked fitting problem.
#[derive(Debug, Clone)]
pub struct FitProblem {
    /// The model with the file's parameter values.
    pub model: Model,
    /// Free parameters.
    pub params: Vec<FreeParam>,
    /// Data per genotype.
    pub genotypes: Vec<Genotype>,
    /// Optimiser seed.
    pub seed: u64,
    /// Objective evaluations allowed.
    pub evaluations: usize,
    /// Independent restarts.
    pub restarts: usize,
    /// Independent starts of the global search (seeds `seed`, `seed + 1`, …),
    /// each with the whole budget, each polished.
    pub starts: usize,
    /// Smallest sd taken at face value, % of length (raised to a row's
    /// resolution where that is larger).
    pub sd_floor_pct: f64,
}

impl FitProblem {
    /// Reads the `[fit]` part of `model`'s file and the tables it names
    /// (paths relative to the model file).
    ///
    /// # Errors
    /// [`ModelError`] naming the line and field of the problem, or the table's row.
    pub fn from_model(model: &Model) -> Result<FitProblem, FitSetupError> {
        let src = Source::new(&model.file, &model.text);
        let file: FitFile = toml::from_str(&model.text).map_err(|e| src.syntax_error(&e))?;
        let Some(fit) = file.fit else {
            return Err(FitSetupError::NoFit { file: model.file.clone() });
        };
        let spec = fit.get_ref();
        let span = fit.span();
        if spec.parameter.is_empty() {
            return Err(src
                .invalid(
                    &span,
                    "parameter",
                    "fit.parameter".into(),
                    "is empty".into(),
                    "add [[fit.parameter]] tables with name, min and max",
                )
                .into());
        }
        let mut params = Vec::new();
        for (i, p) in spec.parameter.iter().enumerate() {
            let (ps, span) = (p.get_ref(), p.span());
            let field = |k: &str| format!("fit.parameter[{i}].{k}");
            let param = model.parse_param(&ps.name).map_err(|why| {
                src.invalid(
                    &span,
                    "name",
                    field("name"),
                    format!("`{}`: {why}", ps.name),
                    "name a parameter as gene.production, gradient.peak, from->to.threshold or a constant of the rate expressions",
                )
            })?;
            if let Some(why) = model.no_effect(param) {
                return Err(src
                    .invalid(&span, "name", field("name"), why, "fit a parameter the simulation uses")
                    .into());
            }
            let log = match ps.scale.as_deref() {
                None | Some("linear") => false,
                Some("log") => true,
                Some(other) => {
                    return Err(src
                        .invalid(&span, "scale", field("scale"), format!("is `{other}`"), "write \"linear\" or \"log\"")
                        .into());
                }
            };
            let ok = ps.min.is_finite() && ps.max.is_finite() && ps.min < ps.max && (!log || ps.min > 0.0);
            if !ok {
                return Err(src
                    .invalid(
                        &span,
                        "min",
                        field("min"),
                        format!("and max are {} and {}", ps.min, ps.max),
                        "give finite bounds with min < max (and min > 0 on a log scale)",
                    )
                    .into());
            }
            let need = match param.lower_bound() {
                Some(true) if ps.min <= 0.0 => Some("> 0"),
                Some(false) if ps.min < 0.0 => Some(">= 0"),
                _ => None,
            };
            if let Some(need) = need {
                return Err(src
                    .invalid(
                        &span,
                        "min",
                        field("min"),
                        format!("is {}, but `{}` must stay {need}, as in the model file", ps.min, ps.name),
                        "raise min to the smallest value the parameter can take",
                    )
                    .into());
            }
            if params.iter().any(|q: &FreeParam| q.param == param) {
                return Err(src
                    .invalid(
                        &span,
                        "name",
                        field("name"),
                        format!("`{}` is already free", ps.name),
                        "list each parameter once",
                    )
                    .into());
            }
            let start = model.param_value(param).expect("parse_param checked it applies");
            params.push(FreeParam { name: ps.name.clone(), param, min: ps.min, max: ps.max, log, start });
        }
        if spec.data.is_empty() {
            return Err(src
                .invalid(
                    &span,
                    "data",
                    "fit.data".into(),
                    "is empty".into(),
                    "add [[fit.data]] tables with a measured-boundary table",
                )
                .into());
        }
        let dir = model.file.parent().unwrap_or(Path::new("."));
        let mut genotypes: Vec<Genotype> = Vec::new();
        for (i, d) in spec.data.iter().enumerate() {
            let (ds, span) = (d.get_ref(), d.span());
            let name = ds.genotype.clone().unwrap_or_else(|| WILD_TYPE.into());
            let mutant = if name == WILD_TYPE {
                None
            } else {
                let m = model.mutants.iter().find(|m| m.name == name).ok_or_else(|| {
                    let known: Vec<&str> = model.mutants.iter().map(|m| m.name.as_str()).collect();
                    src.invalid(
                        &span,
                        "genotype",
                        format!("fit.data[{i}].genotype"),
                        format!("`{name}` is not a declared mutant (known: {})", known.join(", ")),
                        "write \"wild type\" or the name of a [[mutant]]",
                    )
                })?;
                Some(m.clone())
            };
            let table = dir.join(&ds.table);
            let rows = read_measured(&table, &spec.stages, "stages = { LABEL = MINUTES } in [fit]")?;
            crate::compare::check_genes(
                &table,
                &rows,
                &model.genes.iter().map(|g| g.name.clone()).collect::<Vec<_>>(),
            )?;
            let times = model.clock.snapshot_times();
            for r in &rows {
                if let Some(t) = r.at_min
                    && !times.iter().any(|&s| crate::readout::same_time(s, t))
                {
                    let label = r.stage.as_ref().map_or(String::new(), |s| format!(" (stage `{s}`)"));
                    let problem = if t > model.clock.until_min {
                        format!(
                            "`{}` has a boundary at t = {t} min{label}, after the end of the run ({} min)",
                            ds.table, model.clock.until_min
                        )
                    } else {
                        format!(
                            "`{}` has a boundary at t = {t} min{label}, which is not a snapshot time of the clock",
                            ds.table
                        )
                    };
                    return Err(src
                        .invalid(&span, "table", format!("fit.data[{i}].table"), problem, "give times that are snapshot times (multiples of snapshot_every_min, up to until_min), or leave time empty for the end of the run")
                        .into());
                }
            }
            match genotypes.iter_mut().find(|g| g.name == name) {
                Some(g) => g.rows.extend(rows),
                None => genotypes.push(Genotype { name, mutant, rows }),
            }
        }
        let evaluations = spec.evaluations.unwrap_or(200 * params.len()).max(10);
        let sd_floor_pct = spec.sd_floor_pct.unwrap_or(crate::compare::DEFAULT_SD_FLOOR_PCT);
        if !(sd_floor_pct.is_finite() && sd_floor_pct > 0.0) {
            return Err(src
                .invalid(
                    &span,
                    "sd_floor_pct",
                    "fit.sd_floor_pct".into(),
                    format!("is {sd_floor_pct}"),
                    "give a number > 0, % of the length",
                )
                .into());
        }
        let starts = spec.starts.unwrap_or(1);
        if !(1..=64).contains(&starts) {
            return Err(src
                .invalid(&span, "starts", "fit.starts".into(), format!("is {starts}"), "give 1 to 64 starts")
                .into());
        }
        Ok(FitProblem {
            model: model.clone(),
            params,
            genotypes,
            seed: spec.seed.unwrap_or(0),
            evaluations,
            restarts: spec.restarts.unwrap_or(1).max(1),
            starts,
            sd_floor_pct,
        })
    }

    /// Parameter values at a point `u` of the unit cube (one coordinate per free parameter).
    pub fn values(&self, u: &[f64]) -> Vec<f64> {
        self.params.iter().zip(u).map(|(p, z)| p.value(*z)).collect()
    }

    /// The model with free parameters at `values`.
    pub fn model_at(&self, values: &[f64]) -> Model {
        let mut m = self.model.clone();
        for (p, v) in self.params.iter().zip(values) {
            *m.param_mut(p.param).expect("checked parameter") = *v;
        }
        m
    }

    /// Number of measured boundaries.
    pub fn data_points(&self) -> usize {
        self.genotypes.iter().map(|g| g.rows.len()).sum()
    }
}

/// Why a fit could not be set up.
#[derive(Debug, thiserror::Error)]
pub enum FitSetupError {
    /// The model file has no `[fit]`.
    #[error("{}: there is no [fit] section; add [fit] with [[fit.parameter]] and [[fit.data]] tables (see README, \"Fit\")", file.display())]
    NoFit {
        /// The model file.
        file: std::path::PathBuf,
    },
    /// A field of `[fit]` is wrong.
    #[error(transparent)]
    Model(#[from] ModelError),
    /// A measured table is wrong.
    #[error(transparent)]
    Table(#[from] crate::compare::CompareError),
}
