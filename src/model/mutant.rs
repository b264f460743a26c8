//! Mutants: named, composable changes to the wild-type model — knock-outs,
//! link removals, scaled parameters (dosage), clamps, ectopic expression and
//! moved gradient sources. The parameters they name are in `param.rs`.

use std::ops::Range;

use super::spec::MutantSpec;
use super::{EdgeRule, LinkParam, Model, ModelError, Param, Regulator, Side, Source};

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
    /// No production of this gene; a gene written as a rate expression is
    /// held at zero instead.
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
    /// A mutant's change in words, with names and numbers written in full
    /// (so that two different changes never read the same), e.g.
    /// `scale wren.production by 0.5`.
    pub fn describe_edit(&self, e: &Edit) -> String {
        let gene = |g: usize| self.genes.get(g).map_or_else(|| format!("gene {g}"), |x| x.name.clone());
        let regulator = |r: &Regulator| match *r {
            Regulator::Gene(g) => gene(g),
            Regulator::Gradient(k) => self.gradients.get(k).map_or_else(|| format!("gradient {k}"), |x| x.name.clone()),
        };
        match e {
            Edit::KnockOut(g) => format!("knock out {}", gene(*g)),
            Edit::RemoveLink(l) => match self.circuit.links.get(*l) {
                Some(link) => format!("remove the link {} -> {}", regulator(&link.from), gene(link.to)),
                None => format!("remove link {l}"),
            },
            Edit::Scale(p, f) => format!("scale {} by {f:?}", self.param_name(*p)),
            Edit::Clamp(g, v) => format!("hold {} at {v:?}", gene(*g)),
            Edit::Ectopic(x) => format!(
                "express {} ectopically at {:?} a.u./min from {:?} to {:?} µm",
                gene(x.gene),
                x.rate,
                x.from_um,
                x.to_um
            ),
            Edit::Source(k, side) => format!(
                "move the source of {} to the {side:?} edge",
                self.gradients.get(*k).map_or_else(|| format!("gradient {k}"), |x| x.name.clone())
            ),
        }
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
                Edit::KnockOut(g) if out.genes[*g].rate.is_some() => out.clamps[*g] = Some(0.0),
                Edit::KnockOut(g) => {
                    let gene = &mut out.genes[*g];
                    gene.knocked_out_production.get_or_insert(gene.production);
                    gene.production = 0.0;
                    // What enters at an edge is the gene's product too.
                    for rule in gene.edges.rules_mut() {
                        if let EdgeRule::Influx(v) | EdgeRule::Level(v) = rule {
                            *v = 0.0;
                        }
                    }
                }
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
            fail("scale", why, "name a parameter as gene.production, gradient.peak, from->to.threshold or a constant of the rate expressions")
        })?;
        if !(f.is_finite() && *f > 0.0) {
            return Err(fail("scale", format!("factor for `{name}` is {f}"), "give a finite factor > 0"));
        }
        if let Some(why) = model.no_effect(p) {
            return Err(fail("scale", why, "leave it out"));
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
        let g = gene("clamp", name)?;
        if edits.contains(&Edit::KnockOut(g)) {
            return Err(fail(
                "clamp",
                format!("holds `{name}`, which the mutant also knocks out"),
                "keep one: knock_out (no production) or clamp (a fixed level)",
            ));
        }
        edits.push(Edit::Clamp(g, *level));
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
