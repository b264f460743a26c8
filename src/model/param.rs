//! The parameters mutants, sensitivity analyses and fits can name and scale:
//! a gene's, a gradient's, a link's, or a named constant of the rate
//! expressions, or a gene's edge rule (an influx entering at an edge, or a
//! level held there); and whether scaling one can change the simulation at
//! all.

use super::{EdgeRule, KineticsKind, LinkEffect, Model, Regulator, Shape};

/// The names (identifiers) in a rate expression's text, in order.
pub fn names_in(rate: &str) -> impl Iterator<Item = &str> {
    rate.split(|c: char| !(c.is_alphanumeric() || c == '_'))
        .filter(|w| w.chars().next().is_some_and(|c| c.is_alphabetic() || c == '_'))
}

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

/// Which value of an edge rule: the influx j entering (a.u.·µm/min) or the
/// level C₀ held at the edge (a.u.).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum EdgeParam {
    /// `{ influx = j }`.
    Influx,
    /// `{ level = C₀ }`.
    Level,
}

/// The edges in the order of [`super::GeneEdges::named`].
const SIDES: [&str; 4] = ["left", "right", "bottom", "top"];
/// Keys of edge parameters, side by side, for [`Param::key`].
const INFLUX_KEYS: [&str; 4] = ["edge.left.influx", "edge.right.influx", "edge.bottom.influx", "edge.top.influx"];
const LEVEL_KEYS: [&str; 4] = ["edge.left.level", "edge.right.level", "edge.bottom.level", "edge.top.level"];

/// A scalable model parameter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Param {
    /// Of gene i.
    Gene(usize, GeneParam),
    /// Of gradient k.
    Gradient(usize, GradientParam),
    /// Of link k.
    Link(usize, LinkParam),
    /// Named constant k of the rate expressions (`[circuit] parameters`).
    Constant(usize),
    /// Of gene i's rule at edge k (0 left, 1 right, 2 bottom, 3 top):
    /// written `GENE.edge.left.influx` or `GENE.edge.right.level`.
    Edge(usize, usize, EdgeParam),
}

impl Param {
    /// The parameter's key in the model file (`production`, `decay_length_um`,
    /// `threshold`, `edge.left.influx`, …; `parameters` for a named
    /// constant).
    pub fn key(self) -> &'static str {
        match self {
            Param::Constant(_) => "parameters",
            Param::Edge(_, side, EdgeParam::Influx) => INFLUX_KEYS[side],
            Param::Edge(_, side, EdgeParam::Level) => LEVEL_KEYS[side],
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

    /// Whether the parameter must stay above 0 (`Some(true)`), at or above 0
    /// (`Some(false)`), or may take either sign (`None`), as the model file
    /// allows it.
    pub fn lower_bound(self) -> Option<bool> {
        match self {
            Param::Constant(_) | Param::Gene(_, GeneParam::Bias) | Param::Link(_, LinkParam::Weight) => None,
            Param::Gene(..) | Param::Edge(..) => Some(false),
            Param::Link(..) => Some(true),
            Param::Gradient(_, GradientParam::Peak | GradientParam::Baseline) => Some(false),
            Param::Gradient(..) => Some(true),
        }
    }
}

impl Model {
    /// The name of a parameter as mutants and tables write it.
    pub fn param_name(&self, p: Param) -> String {
        let owner = match p {
            Param::Constant(k) => return self.circuit.parameters[k].0.clone(),
            Param::Gene(g, _) | Param::Edge(g, ..) => self.genes[g].name.clone(),
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
            Param::Constant(k) => self.circuit.parameters.get_mut(k).map(|(_, v)| v),
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
            Param::Edge(g, side, q) => match (q, self.genes.get_mut(g)?.edges.rule_mut(side)?) {
                (EdgeParam::Influx, EdgeRule::Influx(j)) => Some(j),
                (EdgeParam::Level, EdgeRule::Level(c)) => Some(c),
                _ => None,
            },
        }
    }

    /// A parameter's value.
    pub fn param_value(&self, p: Param) -> Option<f64> {
        match p {
            Param::Constant(k) => self.circuit.parameters.get(k).map(|(_, v)| *v),
            Param::Gene(g, q) => {
                let gene = self.genes.get(g)?;
                Some(match q {
                    GeneParam::Production => gene.production,
                    GeneParam::Decay => gene.decay,
                    GeneParam::Diffusion => gene.diffusion,
                    GeneParam::Bias => gene.bias,
                })
            }
            Param::Gradient(k, q) => {
                let g = self.gradients.get(k)?;
                match (q, &g.shape) {
                    (GradientParam::Peak, _) => Some(g.peak),
                    (GradientParam::Baseline, _) => Some(g.baseline),
                    (GradientParam::DecayLength, Shape::Exponential { decay_length_um }) => Some(*decay_length_um),
                    (GradientParam::Length, Shape::Linear { length_um }) => Some(*length_um),
                    (GradientParam::Width, Shape::Step { width_um }) => Some(*width_um),
                    _ => None,
                }
            }
            Param::Link(k, q) => match (q, &self.circuit.links.get(k)?.effect) {
                (LinkParam::Threshold, LinkEffect::Hill { threshold, .. }) => Some(*threshold),
                (LinkParam::Hill, LinkEffect::Hill { hill, .. }) => Some(*hill),
                (LinkParam::Weight, LinkEffect::Weight(w)) => Some(*w),
                _ => None,
            },
            Param::Edge(g, side, q) => match (q, self.genes.get(g)?.edges.named().get(side)?.1) {
                (EdgeParam::Influx, EdgeRule::Influx(j)) => Some(j),
                (EdgeParam::Level, EdgeRule::Level(c)) => Some(c),
                _ => None,
            },
        }
    }

    /// Reads `gene.production`, `gradient.peak`, `from->to.threshold`, … or
    /// the name of a constant of the rate expressions (`p`).
    ///
    /// # Errors
    /// A sentence naming what is unknown and what exists.
    pub fn parse_param(&self, name: &str) -> Result<Param, String> {
        if let Some(k) = self.circuit.parameters.iter().position(|(n, _)| n == name.trim()) {
            return Ok(Param::Constant(k));
        }
        if let Some((owner, rule)) = name.trim().split_once(".edge.")
            && let Some(g) = self.gene_index(owner.trim())
        {
            return self.parse_edge_param(name, g, rule);
        }
        let (owner, field) = name.rsplit_once('.').ok_or_else(|| {
            let constants: Vec<&str> = self.circuit.parameters.iter().map(|(n, _)| n.as_str()).collect();
            if constants.is_empty() {
                format!("`{name}` is not of the form owner.parameter")
            } else {
                format!("`{name}` is neither owner.parameter nor a constant ({})", constants.join(", "))
            }
        })?;
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

    /// `left.influx`, `right.level`, … of gene `g`'s edge rules (`name` is
    /// the whole name, for messages).
    fn parse_edge_param(&self, name: &str, g: usize, rule: &str) -> Result<Param, String> {
        let hint = "write GENE.edge.SIDE.influx or GENE.edge.SIDE.level, SIDE being left, right, bottom or top";
        let (side, kind) = rule.split_once('.').ok_or_else(|| format!("`{name}`: {hint}"))?;
        let side = SIDES.iter().position(|s| *s == side).ok_or_else(|| format!("`{name}`: {hint}"))?;
        let kind = match kind {
            "influx" => EdgeParam::Influx,
            "level" => EdgeParam::Level,
            _ => return Err(format!("`{name}`: {hint}")),
        };
        let p = Param::Edge(g, side, kind);
        if self.param_value(p).is_none() {
            let gene = &self.genes[g];
            let (k, side) = (side, SIDES[side]);
            return Err(match gene.edges.named()[k].1 {
                EdgeRule::Sealed => format!(
                    "`{name}` does not apply: gene `{}` has no rule at its {side} edge (it is sealed: no flux); \
                     give one in the model file (`edge.{side} = {{ influx = J }}` or `{{ level = C }}`) to vary it",
                    gene.name
                ),
                EdgeRule::Influx(j) => format!(
                    "`{name}` does not apply: gene `{}` has an influx at its {side} edge ({j} a.u.·µm/min), not a held \
                     level; name it `{}.edge.{side}.influx`",
                    gene.name, gene.name
                ),
                EdgeRule::Level(c) => format!(
                    "`{name}` does not apply: gene `{}` holds a level at its {side} edge ({c} a.u.), not an influx; \
                     name it `{}.edge.{side}.level`",
                    gene.name, gene.name
                ),
            });
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
        out.extend((0..self.circuit.parameters.len()).map(Param::Constant));
        for g in 0..self.genes.len() {
            for side in 0..SIDES.len() {
                out.extend([EdgeParam::Influx, EdgeParam::Level].map(|q| Param::Edge(g, side, q)));
            }
        }
        out.retain(|p| self.param_value(*p).is_some() && self.no_effect(*p).is_none());
        out
    }

    /// Why constant `k` cannot be varied even where a rate uses it: it also
    /// sets a gene's initial levels through an `initial_formula`, computed
    /// once when the model is read, which would not follow.
    fn sets_a_start(&self, k: usize) -> Option<String> {
        let constant = &self.circuit.parameters[k].0;
        let g = self
            .genes
            .iter()
            .find(|g| g.initial_formula.as_deref().is_some_and(|f| names_in(f).any(|n| n == constant)))?;
        Some(format!(
            "`{constant}` also sets `{}`'s initial levels (its initial_formula), which are computed once when the \
             model is read and would not follow; give the formula a constant of its own",
            g.name
        ))
    }

    /// The constants a rate expression uses that [`Self::parameters`] leaves
    /// out because they also set a start, each with why.
    pub fn constants_fixed_by_starts(&self) -> Vec<String> {
        let rates: Vec<&str> = self.genes.iter().filter_map(|g| g.rate.as_deref()).collect();
        (0..self.circuit.parameters.len())
            .filter(|&k| {
                let c = &self.circuit.parameters[k].0;
                rates.iter().any(|r| names_in(r).any(|n| n == c))
            })
            .filter_map(|k| self.sets_a_start(k))
            .collect()
    }

    /// Why scaling `p` cannot change the simulation, or None when it can:
    /// a gene written as a rate expression does not use production, decay or
    /// bias, nor links into it; bias is only for sigmoid kinetics; a gradient
    /// or constant no gene reads, and a value of 0, change nothing.
    pub fn no_effect(&self, p: Param) -> Option<String> {
        if let Param::Constant(k) = p
            && let Some(why) = self.sets_a_start(k)
        {
            return Some(why);
        }
        self.unread(p).or_else(|| {
            (self.param_value(p) == Some(0.0))
                .then(|| format!("`{}` is 0, so scaling it changes nothing", self.param_name(p)))
        })
    }

    /// Why the rate law never reads `p` at any value, or None when it does
    /// (the structural part of [`Self::no_effect`]; diffusion and edge rules
    /// are read by the tissue, not the rate law, and count as read here).
    pub fn unread(&self, p: Param) -> Option<String> {
        let name = self.param_name(p);
        let expression = |g: usize| self.genes[g].rate.as_deref();
        let structural = match p {
            Param::Gene(g, q) => {
                let gene = &self.genes[g].name;
                match (q, expression(g)) {
                    (GeneParam::Diffusion, _) => None,
                    (_, Some(rate)) => Some(format!(
                        "`{name}` has no effect: `{gene}` is written as a rate expression (`{rate}`), which does not use {}; scale the constants it uses instead{}",
                        p.key(),
                        self.constants_in(rate)
                    )),
                    (GeneParam::Bias, None) if self.circuit.kinetics != KineticsKind::Sigmoid => Some(format!(
                        "`{name}` has no effect: bias belongs to sigmoid kinetics, and this circuit uses Hill kinetics"
                    )),
                    _ => None,
                }
            }
            Param::Link(k, _) => {
                let to = self.circuit.links[k].to;
                expression(to).map(|rate| {
                    format!(
                        "`{name}` has no effect: `{}` is written as a rate expression (`{rate}`), which links do not enter; scale the constants it uses instead{}",
                        self.genes[to].name,
                        self.constants_in(rate)
                    )
                })
            }
            Param::Gradient(k, _) => {
                let gradient = &self.gradients[k].name;
                let by_link =
                    self.circuit.links.iter().any(|l| l.from == Regulator::Gradient(k) && expression(l.to).is_none());
                let by_rate = (0..self.genes.len()).filter_map(expression).any(|r| names_in(r).any(|n| n == gradient));
                (!by_link && !by_rate)
                    .then(|| format!("`{name}` has no effect: no gene reads the gradient `{gradient}`"))
            }
            Param::Constant(k) => {
                let constant = &self.circuit.parameters[k].0;
                let used = (0..self.genes.len()).filter_map(expression).any(|r| names_in(r).any(|n| n == constant));
                (!used).then(|| format!("`{name}` has no effect: no rate expression uses the constant `{constant}`"))
            }
            Param::Edge(..) => None,
        };
        structural
    }

    /// ", e.g. p, k" for the constants an expression uses, or "" when none.
    fn constants_in(&self, rate: &str) -> String {
        let mut used: Vec<&str> = Vec::new();
        for n in names_in(rate) {
            if self.circuit.parameters.iter().any(|(c, _)| c == n) && !used.contains(&n) {
                used.push(n);
            }
        }
        if used.is_empty() { String::new() } else { format!(" ({})", used.join(", ")) }
    }
}
