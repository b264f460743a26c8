//! Bifurcation diagrams of the isolated nucleus in any model parameter (a
//! gene's, a link's, a gradient's or a named constant): every branch of
//! fixed points over a range of the parameter, with its stability, folds,
//! branch points (and the branches that cross there, switched onto) and
//! Hopf points with their period at onset. The nucleus sits at one place on
//! the axis with its inputs frozen at one time (see [`super`]).

use std::sync::{Arc, Mutex};

use super::continuation::{Branch, lies_on, switch_branch, trace_through};
use super::fixed::{find_fixed_points, newton_tolerance};
use super::landscape::point_inputs;
use super::system::{AtParameter, Family};
use crate::kinetics::Kinetics;
use crate::model::{GeneParam, Initial, Model, Param};

/// Built rate laws kept by parameter values (bits), with their inputs.
type Built = Vec<((u64, u64), Arc<dyn Kinetics>, Arc<Vec<f64>>)>;

/// A second parameter, for two-parameter continuation: a model parameter,
/// or the nucleus's position along the axis (% of its length).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Second {
    /// A model parameter.
    Param(Param),
    /// The position of the nucleus, % of the axis length (its inputs are
    /// the gradients there).
    Position,
}

/// The isolated nucleus at one point and time as a family in one model
/// parameter: `F(u, s)` is the rate law of the model with the parameter set
/// to s (and, where a second parameter is given, that one at `q`).
pub struct ParameterFamily {
    model: Model,
    param: Param,
    second: Option<Second>,
    /// The second parameter's value for [`Family`]'s view.
    q: f64,
    point_um: (f64, f64),
    t_min: f64,
    genes: usize,
    neighbour_genes: usize,
    /// The last few rate laws built (continuation asks for s, s ± δ in turn).
    built: Mutex<Built>,
}

impl ParameterFamily {
    /// The family of `model` in `param` for the nucleus at `x_pct` % of the
    /// axis (on the midline of a sheet), inputs at `t_min`.
    pub fn new(model: &Model, param: Param, x_pct: f64, t_min: f64) -> ParameterFamily {
        // A growing row's circuit as it stands then (production paused in mitosis).
        let mut model = model.circuit_at(t_min);
        // Starting levels play no part here (and may be large arrays).
        for g in &mut model.genes {
            g.initial = Initial::Uniform(0.0);
        }
        let grid = model.grid_at(t_min);
        ParameterFamily {
            param,
            second: None,
            q: 0.0,
            point_um: (x_pct / 100.0 * grid.length_um(), grid.height_um() / 2.0),
            t_min,
            genes: model.genes.len(),
            neighbour_genes: if model.circuit.neighbours { model.genes.len() } else { 0 },
            model,
            built: Mutex::new(Vec::new()),
        }
    }

    /// The same family with a second parameter, held at `q` in the
    /// one-parameter view ([`Family`]) and free in [`Self::rates2`].
    pub fn with_second(mut self, second: Second, q: f64) -> ParameterFamily {
        self.second = Some(second);
        self.q = q;
        self.built.get_mut().unwrap_or_else(|e| e.into_inner()).clear();
        self
    }

    /// The same family with the second parameter held at `q`.
    pub fn held_at(&self, q: f64) -> ParameterFamily {
        let mut f = ParameterFamily::new(&self.model, self.param, 0.0, self.t_min);
        f.point_um = self.point_um;
        match self.second {
            Some(second) => f.with_second(second, q),
            None => f,
        }
    }

    /// The model with the parameter at `s` (and the second at `q`).
    pub fn model_at2(&self, s: f64, q: f64) -> Model {
        let mut m = self.model.clone();
        if let Some(v) = m.param_mut(self.param) {
            *v = s;
        }
        if let Some(Second::Param(p2)) = self.second
            && let Some(v) = m.param_mut(p2)
        {
            *v = q;
        }
        m
    }

    /// The model with the parameter at `s` (the second, if any, at its held value).
    pub fn model_at(&self, s: f64) -> Model {
        self.model_at2(s, self.q)
    }

    fn at(&self, s: f64, q: f64) -> (Arc<dyn Kinetics>, Arc<Vec<f64>>) {
        let key = (s.to_bits(), q.to_bits());
        let mut built = self.built.lock().unwrap_or_else(|e| e.into_inner());
        if let Some((_, k, m)) = built.iter().find(|(b, _, _)| *b == key) {
            return (k.clone(), m.clone());
        }
        let model = self.model_at2(s, q);
        let kinetics: Arc<dyn Kinetics> = Arc::from(crate::kinetics::build(&model));
        // A growing row's positions at that time (the same % of its length).
        let grid = model.grid_at(self.t_min);
        let point = match self.second {
            Some(Second::Position) => (q / 100.0 * grid.length_um(), self.point_um.1),
            _ => self.point_um,
        };
        let inputs = Arc::new(point_inputs(&model.gradients, &grid, point, self.t_min, self.neighbour_genes));
        if built.len() >= 8 {
            built.remove(0);
        }
        built.push((key, kinetics.clone(), inputs.clone()));
        (kinetics, inputs)
    }

    /// The parameter continued.
    pub fn param(&self) -> Param {
        self.param
    }

    /// F(u, s, q) with the second parameter free.
    pub fn rates2(&self, u: &[f64], s: f64, q: f64, out: &mut [f64]) {
        let (k, m) = self.at(s, q);
        k.rates_one(u, &m, out);
    }

    /// ∂F/∂u at (u, s, q), row-major.
    pub fn jacobian2(&self, u: &[f64], s: f64, q: f64, jac: &mut [f64]) {
        let (k, m) = self.at(s, q);
        k.jacobian(u, &m, jac);
    }
}

impl Family for ParameterFamily {
    fn dim(&self) -> usize {
        self.genes
    }
    fn rates(&self, u: &[f64], s: f64, out: &mut [f64]) {
        self.rates2(u, s, self.q, out);
    }
    fn jacobian(&self, u: &[f64], s: f64, jac: &mut [f64]) {
        self.jacobian2(u, s, self.q, jac);
    }
}

/// What to draw a diagram of.
#[derive(Debug, Clone, Copy)]
pub struct DiagramRequest {
    /// The parameter continued.
    pub param: Param,
    /// Its range.
    pub from: f64,
    /// Its range.
    pub to: f64,
    /// Where the nucleus sits, % of the axis length.
    pub x_pct: f64,
    /// When its inputs are frozen, min.
    pub t_min: f64,
}

/// A bifurcation diagram.
#[derive(Debug, Clone)]
pub struct Diagram {
    /// The parameter's name as the model writes it.
    pub parameter: String,
    /// What was asked.
    pub request: DiagramRequest,
    /// Branches: first those through the fixed points found at sampled
    /// parameter values, then those switched onto at their branch points.
    pub branches: Vec<Branch>,
    /// For each branch, the branch it was switched from at a branch point.
    pub switched_from: Vec<Option<usize>>,
}

/// The kind of a special point.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Special {
    /// Saddle-node: two fixed points meet and vanish.
    Fold,
    /// Two branches cross (pitchfork or transcritical).
    BranchPoint,
    /// A complex pair crosses the imaginary axis: oscillations start.
    Hopf,
}

impl Special {
    /// Name in tables.
    pub fn name(self) -> &'static str {
        match self {
            Special::Fold => "fold",
            Special::BranchPoint => "branch point",
            Special::Hopf => "Hopf",
        }
    }
}

/// A special point of a diagram, met on one or more branches.
#[derive(Debug, Clone, PartialEq)]
pub struct SpecialPoint {
    /// Kind.
    pub kind: Special,
    /// Parameter value.
    pub s: f64,
    /// Fixed point.
    pub x: Vec<f64>,
    /// Period of the oscillation at onset (Hopf), min.
    pub period_min: Option<f64>,
    /// The first branch it was met on.
    pub branch: usize,
    /// For branch points, how well located (see [`super::Crossing::residual`]).
    residual: f64,
}

impl Diagram {
    /// Every fold, branch point and Hopf point, once each, sorted by
    /// parameter value. The same point met on two branches is listed once; a
    /// branch point, where the branch that turns there locates it less
    /// sharply than the one that passes straight through, keeps the sharper
    /// location.
    pub fn special_points(&self) -> Vec<SpecialPoint> {
        let mut all: Vec<SpecialPoint> = Vec::new();
        let scale = self
            .branches
            .iter()
            .flat_map(|b| b.points.iter().flat_map(|p| p.x.iter()))
            .fold(1.0f64, |m, v| m.max(v.abs()));
        let width = self.request.to - self.request.from;
        let mut add = |p: SpecialPoint| {
            let loose = if p.kind == Special::BranchPoint { 1e-3 } else { 1e-7 };
            let same = |q: &SpecialPoint| {
                q.kind == p.kind
                    && (q.s - p.s).abs() <= loose * width.max(p.s.abs())
                    && q.x.iter().zip(&p.x).all(|(a, b)| (a - b).abs() <= loose * 10.0 * scale)
            };
            match all.iter_mut().find(|q| same(q)) {
                Some(q) if p.residual < q.residual => *q = p,
                Some(_) => {}
                None => all.push(p),
            }
        };
        for (k, b) in self.branches.iter().enumerate() {
            for f in &b.folds {
                add(SpecialPoint {
                    kind: Special::Fold,
                    s: f.s,
                    x: f.x.clone(),
                    period_min: None,
                    branch: k,
                    residual: 0.0,
                });
            }
            for c in &b.crossings {
                add(SpecialPoint {
                    kind: Special::BranchPoint,
                    s: c.s,
                    x: c.x.clone(),
                    period_min: None,
                    branch: k,
                    residual: c.residual,
                });
            }
            for h in &b.hopfs {
                add(SpecialPoint {
                    kind: Special::Hopf,
                    s: h.s,
                    x: h.x.clone(),
                    period_min: Some(h.period_min()),
                    branch: k,
                    residual: 0.0,
                });
            }
        }
        all.sort_by(|a, b| a.s.total_cmp(&b.s));
        all
    }
}

/// Why a diagram cannot be drawn.
#[derive(Debug, thiserror::Error)]
pub enum DiagramError {
    /// The rate law never reads the parameter.
    #[error("{0}; continue in a parameter the rate law reads")]
    Unread(String),
    /// Diffusion does not act on one nucleus.
    #[error(
        "`{0}` is a diffusion coefficient, which does not act on an isolated nucleus; continue in a parameter of the rate law"
    )]
    Diffusion(String),
    /// An edge rule does not act on one nucleus.
    #[error(
        "`{0}` is an edge rule, which acts through diffusion and not on an isolated nucleus; continue in a parameter of the rate law"
    )]
    Edge(String),
    /// A bad range.
    #[error("the range {from} to {to} of `{name}` {why}; give {options}{hint}")]
    Range {
        /// The options that give the range, e.g. `--from < --to`.
        options: &'static str,
        /// Parameter.
        name: String,
        /// Start.
        from: f64,
        /// End.
        to: f64,
        /// What is wrong.
        why: &'static str,
        /// More advice.
        hint: &'static str,
    },
}

/// A gene's capacity p/d, a.u. (0 without decay).
pub(crate) fn capacity(gene: &crate::model::Gene) -> f64 {
    if gene.decay > 0.0 { gene.production / gene.decay } else { 0.0 }
}

/// How far fixed points are searched for, given the largest level a gene
/// can reach: 1.5 times that, at least 1 a.u.
pub(crate) fn search_limit(reach: f64) -> f64 {
    (1.5 * reach).max(1.0)
}

/// Parameter values at which fixed points are searched for from scratch.
const SAMPLES: usize = 41;

/// Checks that `param` can be continued over `from`..`to` (given by the
/// options `options`, e.g. `--from < --to`); its name as the model writes it.
///
/// # Errors
/// [`DiagramError`] when the parameter does not act on a nucleus or the range is bad.
pub fn check_parameter(
    model: &Model,
    param: Param,
    (from, to): (f64, f64),
    options: &'static str,
) -> Result<String, DiagramError> {
    let name = model.param_name(param);
    if let Param::Gene(_, GeneParam::Diffusion) = param {
        return Err(DiagramError::Diffusion(name));
    }
    if let Param::Edge(..) = param {
        return Err(DiagramError::Edge(name));
    }
    if let Some(why) = model.unread(param) {
        return Err(DiagramError::Unread(why));
    }
    let range_error = |why, hint| DiagramError::Range { options, name: name.clone(), from, to, why, hint };
    if !(from.is_finite() && to.is_finite() && from < to) {
        return Err(range_error("is empty or not finite", ""));
    }
    match param.lower_bound() {
        Some(true) if from <= 0.0 => Err(range_error("reaches 0 or below", " (this parameter must stay above 0)")),
        Some(false) if from < 0.0 => Err(range_error("goes below 0", " (this parameter must stay at or above 0)")),
        _ => Ok(name),
    }
}

/// Draws the bifurcation diagram of `model`'s isolated nucleus in `req.param`.
///
/// # Errors
/// [`DiagramError`] when the parameter does not act on a nucleus or the range is bad.
pub fn diagram(model: &Model, req: &DiagramRequest) -> Result<Diagram, DiagramError> {
    let name = check_parameter(model, req.param, (req.from, req.to), "--from < --to")?;
    let fam = ParameterFamily::new(model, req.param, req.x_pct, req.t_min);
    Ok(diagram_of(&fam, name, req))
}

/// The diagram of a family (checked).
pub(crate) fn diagram_of(fam: &ParameterFamily, name: String, req: &DiagramRequest) -> Diagram {
    let samples: Vec<f64> =
        (0..SAMPLES).map(|k| req.from + (req.to - req.from) * k as f64 / (SAMPLES - 1) as f64).collect();
    // The search box: 1.5 times each gene's capacity p/d at any sampled value (at least 1 a.u.).
    let models: Vec<Model> = samples.iter().map(|&s| fam.model_at(s)).collect();
    let hi: Vec<f64> = (0..fam.genes)
        .map(|g| search_limit(models.iter().map(|m| capacity(&m.genes[g])).fold(0.0, f64::max)))
        .collect();
    let starts = super::fixed::model_starts(&fam.model, &hi, 40);
    let tol = newton_tolerance(&fam.model);
    let mut previous: Vec<Vec<f64>> = Vec::new();
    let seeds: Vec<(f64, Vec<Vec<f64>>)> = samples
        .iter()
        .map(|&s| {
            let mut from_here = starts.clone();
            from_here.extend(previous.iter().cloned());
            let points: Vec<Vec<f64>> = find_fixed_points(
                &AtParameter { family: fam, s },
                &from_here,
                tol,
                super::fixed::nonnegative(&fam.model),
            )
            .into_iter()
            .map(|p| p.x)
            .collect();
            previous = points.clone();
            (s, points)
        })
        .collect();
    let scale = hi.iter().copied().fold(1e-12, f64::max);
    let ds_max = 0.01 * (req.to - req.from).max(scale);
    let range = (req.from, req.to);
    let mut branches = trace_through(fam, &seeds, range, ds_max, scale);
    let mut switched_from: Vec<Option<usize>> = vec![None; branches.len()];
    for k in 0..branches.len() {
        for c in branches[k].crossings.clone() {
            for sign in [-1.0, 1.0] {
                let Some(b) = switch_branch(fam, &c, sign, range, ds_max, 20_000) else { continue };
                // Already traced (the other branch of a transcritical point
                // exists at sampled values): keep the first.
                if b.points.len() < 3 {
                    continue;
                }
                let middle = &b.points[b.points.len() / 2];
                if lies_on(&branches, middle.s, &middle.x, 1e-3 * scale) {
                    continue;
                }
                branches.push(b);
                switched_from.push(Some(k));
            }
        }
    }
    Diagram { parameter: name, request: *req, branches, switched_from }
}
