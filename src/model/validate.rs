//! One validation pass: [`ModelSpec`] → [`Model`].

use std::collections::HashMap;
use std::ops::Range;

use toml::Spanned;

use super::spec::{ClockSpec, GradientSpec, ModelSpec, TissueSpec};
use super::validate_circuit::{check_circuit, check_gene};
use super::{
    Circuit, Clock, Edges, Gradient, Grid, KineticsKind, Model, ModelError, Scheme, Shape, Side, Source, Stepping,
};

/// Default gene colours: the Okabe & Ito (2008) palette, distinguishable with
/// the common forms of colour blindness ("Color Universal Design", web page).
pub const PALETTE: [[u8; 3]; 7] =
    [[230, 159, 0], [86, 180, 233], [0, 158, 115], [204, 121, 167], [240, 228, 66], [0, 114, 178], [213, 94, 0]];

/// Checks a parsed model file and builds the [`Model`].
pub fn validate(spec: ModelSpec, src: &Source) -> Result<Model, ModelError> {
    let grid = check_tissue(&spec.tissue, src)?;
    let clock = check_clock(&spec.clock, src)?;

    let mut names: HashMap<String, (&'static str, Range<usize>)> = HashMap::new();
    let mut gradients = Vec::with_capacity(spec.gradient.len());
    for (i, g) in spec.gradient.iter().enumerate() {
        claim_name(&mut names, &g.get_ref().name, "gradient", g.span(), src)?;
        gradients.push(check_gradient(i, g, &grid, src)?);
    }
    let mut genes = Vec::with_capacity(spec.gene.len());
    for (i, g) in spec.gene.iter().enumerate() {
        claim_name(&mut names, &g.get_ref().name, "gene", g.span(), src)?;
        genes.push(check_gene(i, g, &grid, src)?);
    }
    if genes.is_empty() {
        let (line, column) = src.line_col(0);
        return Err(ModelError::Invalid {
            file: src.file(),
            line,
            column,
            field: "gene".into(),
            problem: "is missing: the model has no genes".into(),
            fix: "add at least one [[gene]] table with name, production and decay".into(),
        });
    }
    let circuit = match &spec.circuit {
        Some(c) => check_circuit(c, &spec.gene, &genes, &gradients, src)?,
        None => Circuit { kinetics: KineticsKind::Hill, links: Vec::new(), parameters: Vec::new(), neighbours: false },
    };
    let mut circuit = circuit;
    for (i, (gs, g)) in spec.gene.iter().zip(genes.iter_mut()).enumerate() {
        if let Some(text) = &gs.get_ref().initial_formula {
            g.initial = initial_from_formula(i, gs, &g.name, text, &grid, &circuit.parameters, src)?;
            g.initial_formula = Some(text.clone());
        }
    }
    let names = super::expr::ModelNames { genes: &genes, gradients: &gradients, parameters: &circuit.parameters };
    let mut neighbours = false;
    for (i, (gs, g)) in spec.gene.iter().zip(&genes).enumerate() {
        if let Some(text) = &g.rate {
            let e = super::expr::parse(text, &names).map_err(|e| {
                src.invalid(
                    &gs.span(),
                    "rate",
                    format!("gene[{i}] `{}`.rate", g.name),
                    format!("column {} of the expression: {}", e.column, e.message),
                    "fix the expression",
                )
            })?;
            neighbours |= e.reads_input(&|k| k >= gradients.len() + 2);
            // The expression and every derivative must compile within the stack limit.
            let e = super::expr::simplify(e);
            let fits = |x: &super::expr::Expr| x.stack_depth() <= super::expr::MAX_DEPTH;
            if !fits(&e) || !(0..genes.len()).all(|j| fits(&e.derivative(j))) {
                return Err(src.invalid(
                    &gs.span(),
                    "rate",
                    format!("gene[{i}] `{}`.rate", g.name),
                    format!(
                        "the expression (or its derivative) needs more than {} intermediate values at once",
                        super::expr::MAX_DEPTH
                    ),
                    "write it flatter: fewer nested powers and parentheses, or part of it as a constant",
                ));
            }
        }
    }
    circuit.neighbours = neighbours;

    let title = spec.title.clone().unwrap_or_else(|| {
        src.file().file_stem().map_or_else(|| "untitled".to_string(), |s| s.to_string_lossy().into_owned())
    });
    let n_genes = genes.len();
    let mut model = Model {
        title,
        file: src.file(),
        text: src.text().to_string(),
        seed: spec.seed.unwrap_or(0),
        grid,
        clock,
        gradients,
        genes,
        circuit,
        mutants: Vec::new(),
        clamps: vec![None; n_genes],
        ectopic: Vec::new(),
        noise: super::noise::Noise::default(),
        growth: None,
    };
    model.noise = super::noise::check_noise(&model, spec.noise.as_ref(), src)?;
    model.growth = super::growth::check_growth(&model, spec.growth.as_ref(), src)?;
    let mut seen_mutants: HashMap<String, usize> = HashMap::new();
    for m in &spec.mutant {
        let (line, column) = src.locate(&m.span(), "name");
        if let Some(first_line) = seen_mutants.get(&m.get_ref().name) {
            return Err(ModelError::Duplicate {
                file: src.file(),
                line,
                column,
                kind: "mutant".into(),
                name: m.get_ref().name.clone(),
                first_kind: "mutant".into(),
                first_line: *first_line,
            });
        }
        seen_mutants.insert(m.get_ref().name.clone(), line);
        let checked = super::mutant::check_mutant(&model, m.get_ref(), &m.span(), src)?;
        model.mutants.push(checked);
    }
    let needed = crate::integrate::MemoryPlan::of(&model).resident();
    let budget = crate::integrate::memory::memory_budget_bytes().map_err(|text| ModelError::BadBudget { text })?;
    if needed > budget {
        let (line, column) = src.locate(&spec.tissue.span(), "nuclei");
        return Err(ModelError::TooLarge {
            file: src.file(),
            line,
            column,
            needed_gib: needed as f64 / (1u64 << 30) as f64,
            budget_gib: budget as f64 / (1u64 << 30) as f64,
        });
    }
    Ok(model)
}

/// What a name means in rate expressions when no gene, gradient or
/// parameter may take it: `x` (position, µm) and `t` (time, min).
pub(super) fn reserved(name: &str) -> Option<&'static str> {
    match name {
        "x" => Some("the position, µm"),
        "t" => Some("the time, min"),
        _ => None,
    }
}

fn claim_name(
    names: &mut HashMap<String, (&'static str, Range<usize>)>,
    name: &str,
    kind: &'static str,
    span: Range<usize>,
    src: &Source,
) -> Result<(), ModelError> {
    let (line, column) = src.locate(&span, "name");
    if name.trim().is_empty() || name.contains(|c: char| c.is_whitespace() || c == ',') {
        return Err(ModelError::Invalid {
            file: src.file(),
            line,
            column,
            field: format!("{kind}.name"),
            problem: format!("is `{name}`, not a usable name"),
            fix: "use a non-empty name without spaces or commas".into(),
        });
    }
    if let Some(meaning) = reserved(name) {
        return Err(ModelError::Invalid {
            file: src.file(),
            line,
            column,
            field: format!("{kind}.name"),
            problem: format!("is `{name}`, which rate expressions read as {meaning}"),
            fix: "choose another name".into(),
        });
    }
    if let Some((first_kind, first)) = names.get(name) {
        let (first_line, _) = src.locate(first, "name");
        return Err(ModelError::Duplicate {
            file: src.file(),
            line,
            column,
            kind: kind.into(),
            name: name.into(),
            first_kind: (*first_kind).into(),
            first_line,
        });
    }
    names.insert(name.to_string(), (kind, span));
    Ok(())
}

/// Field checks for one table: each returns the value or an Invalid error at its key.
pub(super) struct Checker<'s, 'a> {
    pub(super) src: &'s Source<'a>,
    pub(super) span: Range<usize>,
    pub(super) prefix: String,
}

impl Checker<'_, '_> {
    pub(super) fn fail(&self, key: &str, problem: String, fix: &str) -> ModelError {
        self.src.invalid(&self.span, key, format!("{}{key}", self.prefix), problem, fix)
    }
    pub(super) fn positive(&self, key: &str, v: f64, unit: &str) -> Result<f64, ModelError> {
        if v.is_finite() && v > 0.0 {
            Ok(v)
        } else {
            Err(self.fail(
                key,
                format!("must be a finite number > 0{}, got {v}", unit_text(unit)),
                "give a positive value",
            ))
        }
    }
    pub(super) fn non_negative(&self, key: &str, v: f64, unit: &str) -> Result<f64, ModelError> {
        if v.is_finite() && v >= 0.0 {
            Ok(v)
        } else {
            Err(self.fail(
                key,
                format!("must be a finite number >= 0{}, got {v}", unit_text(unit)),
                "give zero or a positive value",
            ))
        }
    }
    pub(super) fn finite(&self, key: &str, v: f64) -> Result<f64, ModelError> {
        if v.is_finite() {
            Ok(v)
        } else {
            Err(self.fail(key, format!("must be a finite number, got {v}"), "give a real number"))
        }
    }
    pub(super) fn required<T: Copy>(&self, key: &str, v: Option<T>, why: &str) -> Result<T, ModelError> {
        v.ok_or_else(|| self.fail(key, format!("is missing; it is needed {why}"), &format!("add `{key} = ...`")))
    }
    pub(super) fn forbidden<T>(&self, key: &str, v: &Option<T>, why: &str) -> Result<(), ModelError> {
        match v {
            Some(_) => Err(self.fail(key, format!("does not apply {why}"), &format!("remove `{key}`"))),
            None => Ok(()),
        }
    }
}

fn unit_text(unit: &str) -> String {
    if unit.is_empty() { String::new() } else { format!(" ({unit})") }
}

fn check_tissue(t: &Spanned<TissueSpec>, src: &Source) -> Result<Grid, ModelError> {
    let c = Checker { src, span: t.span(), prefix: "tissue.".into() };
    let spec = t.get_ref();
    let dims: Vec<i64> = spec.nuclei.iter().map(|n| *n.get_ref()).collect();
    if dims.is_empty() || dims.len() > 2 {
        return Err(c.fail(
            "nuclei",
            format!("has {} entries", dims.len()),
            "write [n] for a row or [nx, ny] for a sheet",
        ));
    }
    for (k, n) in spec.nuclei.iter().enumerate() {
        let v = *n.get_ref();
        if !(1..=1 << 26).contains(&v) || (k == 0 && v < 2) {
            let (line, column) = src.line_col(n.span().start);
            return Err(ModelError::Invalid {
                file: src.file(),
                line,
                column,
                field: format!("tissue.nuclei[{k}]"),
                problem: format!("is {v}"),
                fix: "give a whole number of nuclei: at least 2 along the axis, at least 1 across".into(),
            });
        }
    }
    let spacing_um = c.positive("spacing_um", spec.spacing_um, "µm")?;
    let edges = match spec.edges.as_deref() {
        None | Some("sealed") => Edges::Sealed,
        Some("periodic") => Edges::Periodic,
        Some(other) => {
            return Err(c.fail("edges", format!("is `{other}`"), "use \"sealed\" (no flux) or \"periodic\""));
        }
    };
    let ny = if dims.len() == 2 { dims[1] as usize } else { 1 };
    Ok(Grid { nx: dims[0] as usize, ny, spacing_um, edges })
}

fn check_clock(cl: &Spanned<ClockSpec>, src: &Source) -> Result<Clock, ModelError> {
    let c = Checker { src, span: cl.span(), prefix: "clock.".into() };
    let spec = cl.get_ref();
    let until_min = c.positive("until_min", spec.until_min, "min")?;
    let snapshot_every_min = c.positive("snapshot_every_min", spec.snapshot_every_min, "min")?;
    if snapshot_every_min > until_min {
        return Err(c.fail(
            "snapshot_every_min",
            format!("is {snapshot_every_min} min, longer than the run ({until_min} min)"),
            "record at least once before the end",
        ));
    }
    if until_min / snapshot_every_min > 1e6 {
        return Err(c.fail("snapshot_every_min", "asks for over a million snapshots".into(), "record less often"));
    }
    let stepping = match (spec.step_min, spec.tolerance) {
        (Some(_), Some(_)) => {
            return Err(c.fail(
                "tolerance",
                "is given together with `step_min`".into(),
                "choose fixed steps (step_min) or error-controlled steps (tolerance), not both",
            ));
        }
        (None, None) => {
            return Err(c.fail(
                "step_min",
                "is missing, and so is `tolerance`".into(),
                "add `step_min = 0.05` for fixed steps or `tolerance = 1e-6` for error-controlled steps",
            ));
        }
        (Some(step), None) => {
            let step_min = c.positive("step_min", step, "min")?;
            c.forbidden("abs_tolerance", &spec.abs_tolerance, "to fixed steps")?;
            c.forbidden("max_step_min", &spec.max_step_min, "to fixed steps")?;
            if step_min > snapshot_every_min {
                return Err(c.fail(
                    "step_min",
                    format!("is {step_min} min, longer than the snapshot interval"),
                    "take a step no longer than snapshot_every_min",
                ));
            }
            for (key, span) in [("until_min", until_min), ("snapshot_every_min", snapshot_every_min)] {
                let ratio = span / step_min;
                if (ratio - ratio.round()).abs() > 1e-9 * ratio.max(1.0) {
                    return Err(c.fail(
                        "step_min",
                        format!("({step_min} min) does not divide `{key}` ({span} min) into whole steps"),
                        "choose a step that divides both the run and the snapshot interval",
                    ));
                }
            }
            if until_min / step_min > 1e9 {
                return Err(c.fail("step_min", "asks for over 10^9 steps".into(), "take a longer step"));
            }
            Stepping::Fixed { step_min }
        }
        (None, Some(tol)) => {
            let rtol = c.positive("tolerance", tol, "")?;
            if !(1e-12..0.1).contains(&rtol) {
                return Err(c.fail(
                    "tolerance",
                    format!("is {rtol}"),
                    "use a relative tolerance between 1e-12 and 0.1",
                ));
            }
            let atol = match spec.abs_tolerance {
                Some(a) => c.positive("abs_tolerance", a, "a.u.")?,
                None => rtol,
            };
            let max_step_min = match spec.max_step_min {
                Some(m) => c.positive("max_step_min", m, "min")?.min(snapshot_every_min),
                None => snapshot_every_min,
            };
            Stepping::Adaptive { rtol, atol, max_step_min }
        }
    };
    let scheme = match spec.scheme.as_deref() {
        None => Scheme::default(),
        Some(key) => match Scheme::from_key(key) {
            Some(scheme) => scheme,
            None => return Err(c.fail("scheme", format!("is `{key}`"), &format!("use {}", Scheme::choices()))),
        },
    };
    Ok(Clock { until_min, snapshot_every_min, stepping, scheme })
}

fn check_gradient(i: usize, g: &Spanned<GradientSpec>, grid: &Grid, src: &Source) -> Result<Gradient, ModelError> {
    let spec = g.get_ref();
    let c = Checker { src, span: g.span(), prefix: format!("gradient[{i}] `{}`.", spec.name) };
    let from = match spec.from.as_str() {
        "left" => Side::Left,
        "right" => Side::Right,
        "bottom" => Side::Bottom,
        "top" => Side::Top,
        "centre" | "center" => Side::Centre,
        other => {
            return Err(c.fail("from", format!("is `{other}`"), "use left, right, top, bottom or centre"));
        }
    };
    if matches!(from, Side::Top | Side::Bottom) && !grid.is_sheet() {
        return Err(c.fail(
            "from",
            format!("is `{}` but the tissue is a row", spec.from),
            "a row has only left, right and centre; make the tissue a sheet [nx, ny] or change the side",
        ));
    }
    let shape_keys = ["decay_length_um", "length_um", "width_um"];
    let (shape, key) = match spec.shape.as_str() {
        "exponential" => (
            Shape::Exponential {
                decay_length_um: c.positive(
                    "decay_length_um",
                    c.required("decay_length_um", spec.decay_length_um, "by an exponential gradient")?,
                    "µm",
                )?,
            },
            "decay_length_um",
        ),
        "linear" => (
            Shape::Linear {
                length_um: c.positive(
                    "length_um",
                    c.required("length_um", spec.length_um, "by a linear gradient")?,
                    "µm",
                )?,
            },
            "length_um",
        ),
        "step" => (
            Shape::Step {
                width_um: c.positive("width_um", c.required("width_um", spec.width_um, "by a step gradient")?, "µm")?,
            },
            "width_um",
        ),
        "table" => {
            let file = c.required("table", spec.table.as_deref(), "by a table gradient")?;
            let path = src.file().parent().map_or_else(|| file.into(), |dir| dir.join(file));
            // % are of the extent the distance runs along: the sheet's height
            // for a source at the top or bottom, the axis length otherwise.
            let extent_um = if matches!(from, Side::Top | Side::Bottom) { grid.height_um() } else { grid.length_um() };
            let read = super::gradient_table::read(&path, spec.table_gene.as_deref(), extent_um).map_err(|why| {
                c.fail(
                    "table",
                    why,
                    "give a CSV with position_pct or position_um (from the source side) and a level column \
                     (with time_min for profiles at several times, or one level_<T>min column per time), \
                     e.g. the profile table of `anlage measure`",
                )
            })?;
            let shape = match read {
                super::gradient_table::Profiles::Static(points) => Shape::Table { points: points.into() },
                super::gradient_table::Profiles::Timed(frames) => Shape::TableInTime {
                    frames: frames.into_iter().map(|(t, p)| (t, p.into())).collect::<Vec<_>>().into(),
                },
            };
            (shape, "table")
        }
        other => {
            return Err(c.fail("shape", format!("is `{other}`"), "use exponential, linear, step or table"));
        }
    };
    if key != "table" {
        c.forbidden("table", &spec.table, &format!("to a {} gradient", spec.shape))?;
        c.forbidden("table_gene", &spec.table_gene, &format!("to a {} gradient", spec.shape))?;
    }
    let values = [spec.decay_length_um, spec.length_um, spec.width_um];
    for (k, v) in shape_keys.iter().zip(values) {
        if *k != key {
            c.forbidden(k, &v, &format!("to a {} gradient", spec.shape))?;
        }
    }
    let peak = c.non_negative("peak", spec.peak, "a.u.")?;
    let baseline = c.non_negative("baseline", spec.baseline.unwrap_or(0.0), "a.u.")?;
    let mut amplitude = Vec::new();
    if let Some(points) = &spec.amplitude {
        if points.is_empty() {
            return Err(c.fail("amplitude", "is empty".into(), "give [[t_min, factor], ...] or remove it"));
        }
        let mut last_t = f64::NEG_INFINITY;
        for [t, a] in points {
            if !t.is_finite() || !a.is_finite() || *a < 0.0 || *t <= last_t {
                return Err(c.fail(
                    "amplitude",
                    format!("has the point [{t}, {a}]"),
                    "give finite [t_min, factor] pairs with factor >= 0 and times strictly increasing",
                ));
            }
            last_t = *t;
            amplitude.push((*t, *a));
        }
    }
    Ok(Gradient { name: spec.name.clone(), shape, from, peak, baseline, amplitude })
}

/// A gene's initial levels from its `initial_formula`, evaluated at every
/// nucleus's centre; refused where it is not a finite level ≥ 0.
fn initial_from_formula(
    i: usize,
    gs: &Spanned<super::spec::GeneSpec>,
    name: &str,
    text: &str,
    grid: &super::Grid,
    parameters: &[(String, f64)],
    src: &Source,
) -> Result<super::Initial, ModelError> {
    let field = format!("gene[{i}] `{name}`.initial_formula");
    let names = super::expr::InitialNames { parameters, length_um: grid.length_um(), height_um: grid.height_um() };
    let e = super::expr::parse(text, &names).map_err(|e| {
        src.invalid(
            &gs.span(),
            "initial_formula",
            field.clone(),
            format!("column {} of the formula: {}", e.column, e.message),
            "write a formula of x, y (µm), L, W, pi and the [circuit] parameters, e.g. \"2 * step(0.3 * L - x)\"",
        )
    })?;
    let mut levels = Vec::with_capacity(grid.len());
    for iy in 0..grid.ny {
        for ix in 0..grid.nx {
            let (x, y) = (grid.x_um(ix), grid.y_um(iy));
            let v = e.value(&[x, y]);
            // A gene with its own rate expression may take either sign.
            if !(v.is_finite() && (v >= 0.0 || gs.get_ref().rate.is_some())) {
                let at = if grid.is_sheet() { format!("x = {x} µm, y = {y} µm") } else { format!("x = {x} µm") };
                return Err(src.invalid(
                    &gs.span(),
                    "initial_formula",
                    field,
                    format!("is {v} at nucleus {} ({at}): levels must be finite and >= 0", iy * grid.nx + ix),
                    "keep the formula >= 0 everywhere, e.g. wrap it in max(0, ...) (a gene with a rate expression \
                     may take either sign, but must stay finite)",
                ));
            }
            levels.push(v);
        }
    }
    Ok(super::Initial::Profile(levels))
}
