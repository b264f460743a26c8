//! `[growth]`: a row that lengthens and whose nuclei divide.
//!
//! - **Uniform growth** at relative rate g (1/min): the row's length is
//!   L(t) = L₀·e^{g·t}, every nucleus moves with the tissue (x_i(t) =
//!   x_i(0)·e^{g·t} until the grid changes), and every level is diluted at
//!   rate g (the nuclei's volume grows with the length). In the nuclei's own
//!   (material) coordinates the equations become
//!   `∂u/∂t = D·e^{−2g(t−t₀)}·∂²u/∂ξ² − g·u + f(u, m(x(ξ, t), t))` (Crampin,
//!   Gaffney & Maini 1999, Bull. Math. Biol. 61:1093, eq. 2.5 for uniform
//!   domain growth; from memory).
//! - **Division cycles** at given times: every nucleus is replaced by two
//!   daughters, each with its mother's levels and half its share of the
//!   length, so the amount Σ u·h is unchanged; production of every gene
//!   pauses for `mitosis_min` before each division (decay, dilution and
//!   diffusion go on).
//! - **Refinement**: the grid is split the same way (each nucleus in two,
//!   keeping its amount, with a limited linear reconstruction) whenever the
//!   spacing reaches twice its starting value, so that a growing row keeps
//!   its resolution; not for circuits that read neighbours (`refine`),
//!   where a nucleus is a cell and new ones would change the pattern.

use serde::Deserialize;
use toml::Spanned;

use super::{Model, ModelError, Source, Stepping};

/// `[growth]` as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GrowthSpec {
    /// Relative elongation rate g, 1/min (default 0).
    pub rate_per_min: Option<f64>,
    /// Times at which every nucleus divides, min.
    #[serde(default)]
    pub divide_at_min: Vec<f64>,
    /// Length of the mitosis window before each division, min, in which
    /// production pauses (default 0).
    pub mitosis_min: Option<f64>,
    /// Whether the grid is refined when its spacing doubles (default: yes,
    /// unless the circuit reads neighbours, whose cells it would multiply).
    pub refine: Option<bool>,
}

/// A checked `[growth]`.
#[derive(Debug, Clone, PartialEq)]
pub struct Growth {
    /// Relative elongation rate g, 1/min.
    pub rate_per_min: f64,
    /// Division times, min, strictly increasing, inside the run.
    pub divide_at_min: Vec<f64>,
    /// Mitosis window before each division, min.
    pub mitosis_min: f64,
    /// The grid is refined when its spacing reaches twice its start.
    pub refine: bool,
}

impl Growth {
    /// Length of a row that was `l0` µm long at t = 0, at time `t` (min), µm.
    pub fn length_at(&self, l0: f64, t_min: f64) -> f64 {
        l0 * (self.rate_per_min * t_min).exp()
    }

    /// True while production pauses (inside a mitosis window [t_d − w, t_d)).
    pub fn in_mitosis(&self, t_min: f64) -> bool {
        self.divide_at_min.iter().any(|&d| t_min >= d - self.mitosis_min && t_min < d)
    }
}

impl Model {
    /// The model as its circuit stands at `t_min`: on a growing row inside a
    /// mitosis window, every `hill` or `sigmoid` gene makes nothing (it keeps
    /// its capacity for expression floors); otherwise the model itself.
    pub fn circuit_at(&self, t_min: f64) -> Model {
        let mut m = self.clone();
        if self.growth.as_ref().is_some_and(|g| g.in_mitosis(t_min)) {
            for gene in m.genes.iter_mut().filter(|g| g.rate.is_none()) {
                gene.knocked_out_production.get_or_insert(gene.production);
                gene.production = 0.0;
            }
        }
        m
    }

    /// The starting grid as the row stands at `t_min`: its spacing
    /// stretched by e^{g·t} on a growing row (the nucleus count as at the
    /// start: for questions about positions, not a simulation grid), the
    /// grid itself otherwise.
    pub fn grid_at(&self, t_min: f64) -> super::Grid {
        match &self.growth {
            Some(g) => super::Grid { spacing_um: self.grid.spacing_um * (g.rate_per_min * t_min).exp(), ..self.grid },
            None => self.grid,
        }
    }
}

/// Checks `[growth]` against the rest of the model.
pub(super) fn check_growth(
    model: &Model,
    spec: Option<&Spanned<GrowthSpec>>,
    src: &Source,
) -> Result<Option<Growth>, ModelError> {
    let Some(spanned) = spec else { return Ok(None) };
    let (s, span) = (spanned.get_ref(), spanned.span());
    let fail = |key: &str, problem: String, fix: &str| src.invalid(&span, key, format!("growth.{key}"), problem, fix);
    let rate = s.rate_per_min.unwrap_or(0.0);
    if !(rate.is_finite() && rate >= 0.0) {
        return Err(fail(
            "rate_per_min",
            format!("is {rate}"),
            "give the relative elongation rate, a number >= 0 in 1/min (e.g. 0.01)",
        ));
    }
    let mitosis = s.mitosis_min.unwrap_or(0.0);
    if !(mitosis.is_finite() && mitosis >= 0.0) {
        return Err(fail("mitosis_min", format!("is {mitosis}"), "give the mitosis window, a number of minutes >= 0"));
    }
    let until = model.clock.until_min;
    // Rows that grow more than a million-fold are a mistake of units.
    if rate * until > 1e6f64.ln() {
        return Err(fail(
            "rate_per_min",
            format!("is {rate}: the row would grow e^{:.3}-fold over the {until} min run", rate * until),
            "give the relative elongation rate in 1/min (0.01 doubles the length in 69 min)",
        ));
    }
    let mut previous = 0.0;
    for (i, &t) in s.divide_at_min.iter().enumerate() {
        if !(t.is_finite() && t > previous && t < until) {
            let shown = if t.abs() < 1e6 { format!("{t}") } else { format!("{t:e}") };
            return Err(fail(
                "divide_at_min",
                format!("entry {i} is {shown}"),
                &format!(
                    "give division times in increasing order, each after the one before and inside the run (0 < t < {until})"
                ),
            ));
        }
        if t - mitosis < previous {
            return Err(fail(
                "mitosis_min",
                format!(
                    "is {mitosis}, longer than the {} min between division {i} and the time before it",
                    t - previous
                ),
                "shorten mitosis_min or space the divisions further apart",
            ));
        }
        previous = t;
    }
    if mitosis > 0.0 && s.divide_at_min.is_empty() {
        return Err(fail(
            "mitosis_min",
            format!("is {mitosis}, and there is no division for the window to precede"),
            "give divide_at_min, or remove mitosis_min",
        ));
    }
    let neighbours = model.circuit.neighbours;
    if neighbours && s.refine == Some(true) {
        return Err(fail(
            "refine",
            "is true, and the circuit reads neighbours(...): refining the grid would make new cells and change \
             the pattern's period"
                .into(),
            "leave refine out (false for such circuits): the cells grow instead, and divide only at divide_at_min",
        ));
    }
    if rate == 0.0 && s.divide_at_min.is_empty() {
        return Err(fail(
            "rate_per_min",
            "is 0 and no divisions are given: nothing grows".into(),
            "give rate_per_min > 0 or divide_at_min, or remove [growth]",
        ));
    }
    let tissue = |problem: String, fix: &str| fail("rate_per_min", problem, fix);
    if model.grid.is_sheet() {
        return Err(tissue(
            "is given for a sheet; growth and divisions are for rows".into(),
            "use a row (nuclei = [n]) or remove [growth]",
        ));
    }
    if model.grid.edges == super::Edges::Periodic {
        return Err(tissue(
            "is given for a periodic row; a growing row has two ends".into(),
            "use edges = \"sealed\" or remove [growth]",
        ));
    }
    if let Some(g) = model.genes.iter().find(|g| !g.edges.all_sealed()) {
        return Err(tissue(
            format!(
                "is given, and gene `{}` has an edge rule (influx or held level), which growth does not rescale",
                g.name
            ),
            "make the source a gene produced near the edge (a rate expression with step(...) of x), or remove [growth]",
        ));
    }
    if model.clock.scheme != super::Scheme::Sbdf2 {
        return Err(tissue(
            "is given with clock.scheme other than sbdf2".into(),
            "growing rows step with sbdf2: remove clock.scheme",
        ));
    }
    if let Stepping::Fixed { .. } = model.clock.stepping {
        return Err(tissue(
            "is given with a fixed clock.step_min; a growing row changes its grid at divisions and refinements, and its steps are error-controlled".into(),
            "give clock.tolerance (e.g. 1e-6) instead of step_min",
        ));
    }
    if mitosis > 0.0
        && let Some(g) = model.genes.iter().find(|g| g.rate.is_some())
    {
        return Err(fail(
            "mitosis_min",
            format!(
                "is {mitosis}, and gene `{}` has a rate expression, which has no separate production to pause",
                g.name
            ),
            "write the pause into the expression (e.g. a factor of step(t - a) for a window ending at a), and set mitosis_min = 0",
        ));
    }
    let growth = Growth {
        rate_per_min: rate,
        divide_at_min: s.divide_at_min.clone(),
        mitosis_min: mitosis,
        refine: s.refine.unwrap_or(!neighbours),
    };
    // Every snapshot of the grown row is kept in memory (they differ in
    // size, so they are not streamed): bound the nuclei at the end by the
    // divisions and by refinement keeping the spacing at least h₀.
    let doublings = 2f64.powi(growth.divide_at_min.len() as i32);
    let length_end = growth.length_at(model.grid.length_um(), until);
    let refined = if growth.refine { 2.0 * length_end / model.grid.spacing_um } else { 0.0 };
    let nuclei = doublings * (model.grid.nx as f64).max(refined);
    let bytes = model.snapshot_count() as f64 * model.genes.len() as f64 * nuclei * 8.0;
    let budget = crate::integrate::memory::memory_budget_bytes().map_err(|text| ModelError::BadBudget { text })?;
    if bytes > budget as f64 {
        let key = if growth.divide_at_min.is_empty() { "rate_per_min" } else { "divide_at_min" };
        return Err(fail(
            key,
            format!(
                "makes up to {nuclei:.3e} nuclei, and the {} snapshots of the growing row (kept in memory) would need about {:.1} GiB, more than the {:.1} GiB allowed",
                model.snapshot_count(),
                bytes / f64::from(1u32 << 30),
                budget as f64 / f64::from(1u32 << 30)
            ),
            "take fewer snapshots (a larger clock.snapshot_every_min), fewer divisions, slower growth or a shorter run",
        ));
    }
    Ok(Some(growth))
}
