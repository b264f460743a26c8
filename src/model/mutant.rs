//! Mutants: named, composable changes to the wild-type model — knock-outs,
//! link removals, scaled parameters (dosage), clamps, ectopic expression and
//! moved gradient sources — and the parameters they (and sensitivity
//! analyses) can name.

use std::ops::Range;

use super::spec::MutantSpec;
use super::{LinkEffect, Model, ModelError, Regulator, Shape, Side, Source};

/// A per-gene parameter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum GeneParam {
    /// p, a.u./min.
    Production,
    /// d, 1/min.
    Decay,
    /// D, µm²/min.
    Diffusion,
    /// Sigmoid bias h.
    Bias,
}

/// A per-gradient parameter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum GradientParam {
    /// Value at the source.
    Peak,
    /// Exponential decay length λ.
    DecayLength,
    /// Linear length.
    Length,
    /// Step width.
    Width,
    /// Value far away.
    Baseline,
}

/// A per-link parameter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum LinkParam {
    /// Hill threshold K.
    Threshold,
    /// Hill coefficient n.
    Hill,
    /// Sigmoid weight w.
    Weight,
}

/// A scalable model parameter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Param {
    /// Of gene i.
    Gene(usize, GeneParam),
    /// Of gradient k.
    Gradient(usize, GradientParam),
    /// Of link k.
    Link(usize, LinkParam),
}

impl Param {
    /// The parameter's key in the model file (`production`, `decay_length_um`, `threshold`, …).
    pub fn key(self) -> &'static str {
        match self {
            Param::Gene(_, q) => match q {
                GeneParam::Production => "production",
                GeneParam::Decay => "decay",
                GeneParam::Diffusion => "diffusion",
                GeneParam::Bias => "bias",
            },
            Param::Gradient(_, q) => match q {
                GradientParam::Peak => "peak",
                GradientParam::DecayLength => "decay_length_um",
                GradientParam::Length => "length_um",
                GradientParam::Width => "width_um",
                GradientParam::Baseline => "baseline",
            },
            Param::Link(_, q) => match q {
                LinkParam::Threshold => "threshold",
                LinkParam::Hill => "hill",
                LinkParam::Weight => "weight",
            },
        }
    }
}

/// Extra production of a gene over a region of the axis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ectopic {
    /// Gene index.
    pub gene: usize,
    /// Region along the axis, µm.
    pub from_um: f64,
    /// Region end, µm.
    pub to_um: f64,
    /// Extra production, a.u./min.
    pub rate: f64,
}

/// One change.
#[derive(Debug, Clone, PartialEq)]
pub enum Edit {
    /// No production of this gene.
    KnockOut(usize),
    /// Remove this link.
    RemoveLink(usize),
    /// Multiply a parameter.
    Scale(Param, f64),
    /// Hold a gene at a level.
    Clamp(usize, f64),
    /// Express a gene ectopically.
    Ectopic(Ectopic),
    /// Move a gradient's source.
    Source(usize, Side),
}

/// A checked mutant.
#[derive(Debug, Clone, PartialEq)]
pub struct Mutant {
    /// Name.
    pub name: String,
    /// Changes, applied together.
    pub edits: Vec<Edit>,
}

impl Model {
    /// The name of a parameter as mutants and tables write it.
    pub fn param_name(&self, p: Param) -> String {
        let owner = match p {
            Param::Gene(g, _) => self.genes[g].name.clone(),
            Param::Gradient(k, _) => self.gradients[k].name.clone(),
            Param::Link(k, _) => self.link_name(k),
        };
        format!("{owner}.{}", p.key())
    }

    /// `from->to` of link k.
    pub fn link_name(&self, k: usize) -> String {
        let l = &self.circuit.links[k];
        let from = match l.from {
            Regulator::Gene(g) => &self.genes[g].name,
            Regulator::Gradient(m) => &self.gradients[m].name,
        };
        format!("{from}->{}", self.genes[l.to].name)
    }

    /// The link written `from -> to` (spaces optional).
    pub fn find_link(&self, text: &str) -> Option<usize> {
        let compact: String = text.chars().filter(|c| !c.is_whitespace()).collect();
        (0..self.circuit.links.len()).find(|&k| self.link_name(k) == compact)
    }

    /// A mutable reference to a parameter's value, if the model has it.
    pub fn param_mut(&mut self, p: Param) -> Option<&mut f64> {
        match p {
            Param::Gene(g, q) => {
                let gene = self.genes.get_mut(g)?;
                Some(match q {
                    GeneParam::Production => &mut gene.production,
                    GeneParam::Decay => &mut gene.decay,
                    GeneParam::Diffusion => &mut gene.diffusion,
                    GeneParam::Bias => &mut gene.bias,
                })
            }
            Param::Gradient(k, q) => {
                let g = self.gradients.get_mut(k)?;
                match (q, &mut g.shape) {
                    (GradientParam::Peak, _) => Some(&mut g.peak),
                    (GradientParam::Baseline, _) => Some(&mut g.baseline),
                    (GradientParam::DecayLength, Shape::Exponential { decay_length_um }) => Some(decay_length_um),
                    (GradientParam::Length, Shape::Linear { length_um }) => Some(length_um),
                    (GradientParam::Width, Shape::Step { width_um }) => Some(width_um),
                    _ => None,
                }
            }
            Param::Link(k, q) => match (q, &mut self.circuit.links.get_mut(k)?.effect) {
                (LinkParam::Threshold, LinkEffect::Hill { threshold, .. }) => Some(threshold),
                (LinkParam::Hill, LinkEffect::Hill { hill, .. }) => Some(hill),
                (LinkParam::Weight, LinkEffect::Weight(w)) => Some(w),
                _ => None,
            },
        }
    }

    /// A parameter's value.
    pub fn param_value(&self, p: Param) -> Option<f64> {
        self.clone().param_mut(p).map(|v| *v)
    }

    /// Reads `gene.production`, `gradient.peak`, `from->to.threshold`, …
    ///
    /// # Errors
    /// A sentence naming what is unknown and what exists.
    pub fn parse_param(&self, name: &str) -> Result<Param, String> {
        let (owner, field) =
            name.rsplit_once('.').ok_or_else(|| format!("`{name}` is not of the form owner.parameter"))?;
        let owner = owner.trim();
        let p = if owner.contains("->") {
            let k = self.find_link(owner).ok_or_else(|| {
                let known: Vec<String> = (0..self.circuit.links.len()).map(|k| self.link_name(k)).collect();
                format!("no link `{owner}`; links: {}", known.join(", "))
            })?;
            let q = match field {
                "threshold" => LinkParam::Threshold,
                "hill" => LinkParam::Hill,
                "weight" => LinkParam::Weight,
                _ => {
                    return Err(format!(
                        "links have threshold, hill (hill kinetics) or weight (sigmoid), not `{field}`"
                    ));
                }
            };
            Param::Link(k, q)
        } else if let Some(g) = self.gene_index(owner) {
            let q = match field {
                "production" => GeneParam::Production,
                "decay" => GeneParam::Decay,
                "diffusion" => GeneParam::Diffusion,
                "bias" => GeneParam::Bias,
                _ => return Err(format!("genes have production, decay, diffusion or bias, not `{field}`")),
            };
            Param::Gene(g, q)
        } else if let Some(k) = self.gradients.iter().position(|g| g.name == owner) {
            let q = match field {
                "peak" => GradientParam::Peak,
                "decay_length_um" => GradientParam::DecayLength,
                "length_um" => GradientParam::Length,
                "width_um" => GradientParam::Width,
                "baseline" => GradientParam::Baseline,
                _ => {
                    return Err(format!(
                        "gradients have peak, decay_length_um, length_um, width_um or baseline, not `{field}`"
                    ));
                }
            };
            Param::Gradient(k, q)
        } else {
            let known: Vec<&str> = self
                .genes
                .iter()
                .map(|g| g.name.as_str())
                .chain(self.gradients.iter().map(|g| g.name.as_str()))
                .collect();
            return Err(format!("no gene or gradient `{owner}`; known: {}", known.join(", ")));
        };
        if self.param_value(p).is_none() {
            return Err(format!("`{name}` does not apply to this model (wrong shape or kinetics)"));
        }
        Ok(p)
    }

    /// Every parameter that is non-zero and can be scaled (for sensitivity).
    pub fn parameters(&self) -> Vec<Param> {
        let mut out = Vec::new();
        for g in 0..self.genes.len() {
            for q in [GeneParam::Production, GeneParam::Decay, GeneParam::Diffusion, GeneParam::Bias] {
                out.push(Param::Gene(g, q));
            }
        }
        for k in 0..self.gradients.len() {
            for q in [
                GradientParam::Peak,
                GradientParam::DecayLength,
                GradientParam::Length,
                GradientParam::Width,
                GradientParam::Baseline,
            ] {
                out.push(Param::Gradient(k, q));
            }
        }
        for k in 0..self.circuit.links.len() {
            for q in [LinkParam::Threshold, LinkParam::Hill, LinkParam::Weight] {
                out.push(Param::Link(k, q));
            }
        }
        out.retain(|p| self.param_value(*p).is_some_and(|v| v != 0.0));
        out
    }

    /// The model with a mutant's changes applied (the mutant was checked
    /// against this model). Scales apply first, link removals last.
    pub fn with_mutant(&self, m: &Mutant) -> Model {
        let mut out = self.clone();
        out.title = format!("{} [{}]", self.title, m.name);
        let mut removed = Vec::new();
        for e in &m.edits {
            match e {
                Edit::Scale(p, f) => {
                    if let Some(v) = out.param_mut(*p) {
                        *v *= f;
                    }
                }
                Edit::KnockOut(g) => out.genes[*g].production = 0.0,
                Edit::Clamp(g, level) => out.clamps[*g] = Some(*level),
                Edit::Ectopic(x) => out.ectopic.push(*x),
                Edit::Source(k, side) => out.gradients[*k].from = *side,
                Edit::RemoveLink(k) => removed.push(*k),
            }
        }
        removed.sort_unstable();
        for k in removed.into_iter().rev() {
            out.circuit.links.remove(k);
        }
        out
    }

    /// Checks a mutant given on the command line as a TOML inline table,
    /// e.g. `{ name = "het", scale = { "amber.production" = 0.5 } }`.
    ///
    /// # Errors
    /// [`ModelError`] naming the field and the unknown gene, link or parameter.
    pub fn parse_mutant(&self, text: &str) -> Result<Mutant, ModelError> {
        let wrapped = format!("mutant = {text}\n");
        #[derive(serde::Deserialize)]
        struct One {
            mutant: toml::Spanned<MutantSpec>,
        }
        let file = std::path::Path::new("--mutant");
        let src = Source::new(file, &wrapped);
        let one: One = toml::from_str(&wrapped).map_err(|e| src.syntax_error(&e))?;
        check_mutant(self, one.mutant.get_ref(), &one.mutant.span(), &src)
    }
}

/// Checks one mutant against a model.
pub(super) fn check_mutant(
    model: &Model,
    spec: &MutantSpec,
    span: &Range<usize>,
    src: &Source,
) -> Result<Mutant, ModelError> {
    let fail = |key: &str, problem: String, fix: &str| {
        src.invalid(span, key, format!("mutant `{}`.{key}", spec.name), problem, fix)
    };
    let gene = |key: &str, name: &str| {
        model.gene_index(name).ok_or_else(|| {
            let (line, column) = src.locate(span, key);
            ModelError::UnknownName {
                file: src.file(),
                line,
                column,
                field: format!("mutant `{}`.{key}", spec.name),
                kind: "gene".into(),
                name: name.into(),
                known: model.genes.iter().map(|g| g.name.as_str()).collect::<Vec<_>>().join(", "),
            }
        })
    };
    if spec.name.trim().is_empty() {
        return Err(fail("name", "is empty".into(), "give the mutant a name"));
    }
    let mut edits = Vec::new();
    for (name, f) in &spec.scale {
        let p = model.parse_param(name).map_err(|why| {
            fail("scale", why, "name a parameter as gene.production, gradient.peak or from->to.threshold")
        })?;
        if !(f.is_finite() && *f > 0.0) {
            return Err(fail("scale", format!("factor for `{name}` is {f}"), "give a finite factor > 0"));
        }
        if matches!(p, Param::Link(_, LinkParam::Hill)) && model.param_value(p).unwrap_or(0.0) * f > 64.0 {
            return Err(fail("scale", format!("makes `{name}` larger than 64"), "use a smaller factor"));
        }
        edits.push(Edit::Scale(p, *f));
    }
    for name in &spec.knock_out {
        edits.push(Edit::KnockOut(gene("knock_out", name)?));
    }
    for text in &spec.remove_link {
        let k = model.find_link(text).ok_or_else(|| {
            let known: Vec<String> = (0..model.circuit.links.len()).map(|k| model.link_name(k)).collect();
            fail(
                "remove_link",
                format!("names no link `{text}`"),
                &format!("write \"from -> to\"; links: {}", known.join(", ")),
            )
        })?;
        edits.push(Edit::RemoveLink(k));
    }
    for (name, level) in &spec.clamp {
        if !(level.is_finite() && *level >= 0.0) {
            return Err(fail("clamp", format!("level for `{name}` is {level}"), "give a finite level >= 0"));
        }
        edits.push(Edit::Clamp(gene("clamp", name)?, *level));
    }
    for e in &spec.ectopic {
        let g = gene("ectopic", &e.gene)?;
        let ok = e.from_pct.is_finite()
            && e.to_pct.is_finite()
            && 0.0 <= e.from_pct
            && e.from_pct < e.to_pct
            && e.to_pct <= 100.0;
        if !(ok && e.rate.is_finite() && e.rate >= 0.0) {
            return Err(fail(
                "ectopic",
                format!("region {}–{} % at rate {}", e.from_pct, e.to_pct, e.rate),
                "give 0 <= from_pct < to_pct <= 100 and a rate >= 0",
            ));
        }
        let l = model.grid.length_um();
        edits.push(Edit::Ectopic(Ectopic {
            gene: g,
            from_um: e.from_pct / 100.0 * l,
            to_um: e.to_pct / 100.0 * l,
            rate: e.rate,
        }));
    }
    for (name, side) in &spec.source {
        let k = model.gradients.iter().position(|g| &g.name == name).ok_or_else(|| {
            let known: Vec<&str> = model.gradients.iter().map(|g| g.name.as_str()).collect();
            fail("source", format!("names no gradient `{name}`"), &format!("gradients: {}", known.join(", ")))
        })?;
        let side = match side.as_str() {
            "left" => Side::Left,
            "right" => Side::Right,
            "centre" | "center" => Side::Centre,
            "top" if model.grid.is_sheet() => Side::Top,
            "bottom" if model.grid.is_sheet() => Side::Bottom,
            other => {
                return Err(fail(
                    "source",
                    format!("side `{other}`"),
                    "use left, right or centre (top, bottom on sheets)",
                ));
            }
        };
        edits.push(Edit::Source(k, side));
    }
    if edits.is_empty() {
        return Err(fail(
            "name",
            "changes nothing".into(),
            "add knock_out, remove_link, scale, clamp, ectopic or source",
        ));
    }
    Ok(Mutant { name: spec.name.clone(), edits })
}
