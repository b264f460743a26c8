//! What happens to a gene at each edge of a sealed tissue: nothing passes
//! (no flux, the default), a given influx enters (a source outside the
//! tissue), or the level is held (a reservoir at the edge).
//!
//! On the cell-centred grid an edge lies half a spacing h outside the
//! outermost nuclei, and each rule is a ghost nucleus beyond it (finite
//! volumes; LeVeque 2007, *Finite Difference Methods for Ordinary and
//! Partial Differential Equations*, §2.12, from memory for the section):
//! - no flux: `u₋₁ = u₀`;
//! - influx j (a.u.·µm/min, amount per unit edge per minute, entering):
//!   `D(u₋₁ − u₀)/h = j`, so the edge nucleus gains `j/h` a.u./min;
//! - level C₀ at the edge: `(u₋₁ + u₀)/2 = C₀`, so `u₋₁ = 2C₀ − u₀`: the
//!   edge nucleus's `D∇²u` gains `D(2C₀ − 2u₀)/h²`, a constant source
//!   `2DC₀/h²` and an extra loss `2D/h²·u₀` (second order at the edge).

use super::spec::{EdgeSpec, EdgesSpec};
use super::validate::Checker;
use super::{Grid, ModelError};

/// One gene's rule at one edge.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum EdgeRule {
    /// Nothing passes (mirror ghost nucleus).
    #[default]
    Sealed,
    /// This much enters per µm of edge per minute, a.u.·µm/min.
    Influx(f64),
    /// The level at the edge is held here, a.u.
    Level(f64),
}

/// One gene's rules at the left (x = 0), right (x = L), bottom (y = 0) and
/// top (y = W) edges.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct GeneEdges {
    /// x = 0.
    pub left: EdgeRule,
    /// x = L.
    pub right: EdgeRule,
    /// y = 0 (sheets).
    pub bottom: EdgeRule,
    /// y = W (sheets).
    pub top: EdgeRule,
}

impl GeneEdges {
    /// The rules with their names, in the order left, right, bottom, top.
    pub fn named(&self) -> [(&'static str, EdgeRule); 4] {
        [("left", self.left), ("right", self.right), ("bottom", self.bottom), ("top", self.top)]
    }

    /// The rules, to change them, in the order left, right, bottom, top.
    pub fn rules_mut(&mut self) -> [&mut EdgeRule; 4] {
        [&mut self.left, &mut self.right, &mut self.bottom, &mut self.top]
    }

    /// The rule at edge k (0 left, 1 right, 2 bottom, 3 top), to change it.
    pub fn rule_mut(&mut self, k: usize) -> Option<&mut EdgeRule> {
        self.rules_mut().into_iter().nth(k)
    }

    /// True if every edge is sealed.
    pub fn all_sealed(&self) -> bool {
        self.named().iter().all(|(_, r)| *r == EdgeRule::Sealed)
    }

    /// Which edges hold a level: [left, right, bottom, top].
    pub fn held(&self) -> [bool; 4] {
        self.named().map(|(_, r)| matches!(r, EdgeRule::Level(_)))
    }

    /// A line for `check`: "left: influx 0.5 a.u.·µm/min; right: level 0 a.u.".
    pub fn describe(&self) -> Option<String> {
        let parts: Vec<String> = self
            .named()
            .iter()
            .filter_map(|(name, rule)| match rule {
                EdgeRule::Sealed => None,
                EdgeRule::Influx(j) => Some(format!("{name}: influx {j} a.u.·µm/min")),
                EdgeRule::Level(c) => Some(format!("{name}: level held at {c} a.u.")),
            })
            .collect();
        (!parts.is_empty()).then(|| parts.join("; "))
    }
}

/// Reads and checks a gene's `edge` table (`edge.left = { influx = 0.5 }`).
pub(super) fn check_edges(
    c: &Checker,
    spec: Option<&EdgesSpec>,
    grid: &Grid,
    diffusion: f64,
) -> Result<GeneEdges, ModelError> {
    let Some(spec) = spec else { return Ok(GeneEdges::default()) };
    let sides = [("left", &spec.left), ("right", &spec.right), ("bottom", &spec.bottom), ("top", &spec.top)];
    let mut rules = [EdgeRule::Sealed; 4];
    for (k, (side, given)) in sides.into_iter().enumerate() {
        let Some(given) = given else { continue };
        let key = format!("edge.{side}");
        rules[k] = one_edge(c, &key, given)?;
        if rules[k] == EdgeRule::Sealed {
            continue;
        }
        if grid.edges == super::Edges::Periodic {
            return Err(c.fail(
                &key,
                "is given, but the tissue is periodic: it has no edges".into(),
                "set `edges = \"sealed\"` in [tissue], or remove the edge rule",
            ));
        }
        if !grid.is_sheet() && k >= 2 {
            return Err(c.fail(
                &key,
                "is given, but a row has only a left and a right edge".into(),
                "use edge.left or edge.right, or make the tissue a sheet",
            ));
        }
        if diffusion == 0.0 {
            return Err(c.fail(
                &key,
                "is given, but the gene does not diffuse (diffusion = 0): nothing crosses the edge".into(),
                "give the gene a diffusion coefficient (µm²/min), or make it in a source region with a `rate` \
                 expression such as `p * step(40 - x) - d * fern`",
            ));
        }
        if grid.is_sheet() && matches!(rules[k], EdgeRule::Level(_)) {
            return Err(c.fail(
                &key,
                "holds a level on a sheet; levels held at an edge are implemented for rows only".into(),
                "give an influx at this edge instead, or run the model on a row",
            ));
        }
    }
    let [left, right, bottom, top] = rules;
    Ok(GeneEdges { left, right, bottom, top })
}

fn one_edge(c: &Checker, key: &str, spec: &EdgeSpec) -> Result<EdgeRule, ModelError> {
    match (spec.influx, spec.level) {
        (Some(_), Some(_)) => Err(c.fail(
            key,
            "gives both an influx and a level".into(),
            "keep one: `{ influx = J }` (a.u.·µm/min entering) or `{ level = C }` (a.u. held at the edge)",
        )),
        (None, None) => Err(c.fail(
            key,
            "gives neither an influx nor a level".into(),
            "write `{ influx = J }` (a.u.·µm/min entering) or `{ level = C }` (a.u. held at the edge); \
             leave the edge out for no flux",
        )),
        (Some(j), None) => {
            if j.is_finite() && j >= 0.0 {
                Ok(EdgeRule::Influx(j))
            } else {
                Err(c.fail(
                    key,
                    format!("has influx = {j}; an influx must be a finite number >= 0 (a.u.·µm/min)"),
                    "give the amount entering per µm of edge per minute; a constant outflow would drive levels \
                     below zero, so hold a level of 0 at the edge for an absorbing edge",
                ))
            }
        }
        (None, Some(level)) => {
            if level.is_finite() && level >= 0.0 {
                Ok(EdgeRule::Level(level))
            } else {
                Err(c.fail(
                    key,
                    format!("has level = {level}; a level must be a finite number >= 0 (a.u.)"),
                    "give the level held at the edge (0 for an absorbing edge)",
                ))
            }
        }
    }
}
