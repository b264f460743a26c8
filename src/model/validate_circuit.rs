//! Validation of the `[[gene]]` tables and the `[circuit]` section (the
//! rest of [`super::validate`]'s pass).

use std::collections::HashMap;
use std::ops::Range;

use toml::Spanned;

use super::Level;
use super::spec::{GeneSpec, LinkSpec};
use super::validate::{Checker, PALETTE};
use super::{
    Circuit, Combine, Gene, Gradient, Grid, Initial, KineticsKind, Link, LinkEffect, ModelError, Regulator, Source,
};

/// Reads `initial_file` (relative to the model file): an NPY array of f64 with
/// one value per nucleus, shape `[nuclei]` or `[ny, nx]`.
fn read_initial_file(c: &Checker, name: &str, grid: &Grid) -> Result<Vec<f64>, ModelError> {
    use ndarray_npy::ReadNpyExt;
    let path = c.src.file().parent().map_or_else(|| name.into(), |dir| dir.join(name));
    let fix = "give an NPY file of float64 levels, one per nucleus (shape [nuclei] or [ny, nx])";
    // The header's shape is checked before any array is allocated: a small
    // file can claim an array that would not fit in memory.
    let shape = npy_shape(&path).map_err(|why| c.fail("initial_file", format!("`{}` {why}", path.display()), fix))?;
    let claimed: u128 = shape.iter().map(|d| *d as u128).product();
    if claimed != grid.len() as u128 {
        return Err(c.fail(
            "initial_file",
            format!("`{}` has shape {shape:?} but the tissue is {} x {} nuclei", path.display(), grid.ny, grid.nx),
            fix,
        ));
    }
    let file = std::fs::File::open(&path)
        .map_err(|e| c.fail("initial_file", format!("`{}` cannot be opened: {e}", path.display()), fix))?;
    let array = ndarray::ArrayD::<f64>::read_npy(std::io::BufReader::new(file))
        .map_err(|e| c.fail("initial_file", format!("`{}` is not a float64 NPY array: {e}", path.display()), fix))?;
    let shape = array.shape().to_vec();
    let fits = match shape[..] {
        [n] => n == grid.len(),
        [ny, nx] => ny == grid.ny && nx == grid.nx,
        _ => false,
    };
    if !fits {
        return Err(c.fail(
            "initial_file",
            format!("`{}` has shape {shape:?} but the tissue is {} x {} nuclei", path.display(), grid.ny, grid.nx),
            fix,
        ));
    }
    Ok(array.iter().copied().collect())
}

/// The shape an NPY file's header states, read from at most its first 64 KiB.
fn npy_shape(path: &std::path::Path) -> Result<Vec<u64>, String> {
    use std::io::Read;
    let mut head = Vec::new();
    std::fs::File::open(path)
        .and_then(|f| f.take(65_536).read_to_end(&mut head))
        .map_err(|e| format!("cannot be opened: {e}"))?;
    if head.len() < 12 || &head[..6] != b"\x93NUMPY" {
        return Err("is not an NPY file".into());
    }
    let (start, len) = if head[6] == 1 {
        (10, u16::from_le_bytes([head[8], head[9]]) as usize)
    } else {
        (12, u32::from_le_bytes([head[8], head[9], head[10], head[11]]) as usize)
    };
    let text = head.get(start..start + len).ok_or("has a header longer than its first 64 KiB")?;
    let text = String::from_utf8_lossy(text);
    let inside = text
        .split_once("'shape':")
        .and_then(|(_, rest)| rest.split_once('(').and_then(|(_, r)| r.split_once(')')))
        .map(|(dims, _)| dims.to_string())
        .ok_or("has no shape in its header")?;
    inside
        .split(',')
        .map(str::trim)
        .filter(|d| !d.is_empty())
        .map(|d| d.parse::<u64>().map_err(|_| format!("has a shape entry `{d}` that is not a whole number")))
        .collect()
}

/// Largest D/h² a gene may have, per minute.
pub const MAX_HOPS_PER_MIN: f64 = 1e9;

pub(super) fn check_gene(i: usize, g: &Spanned<GeneSpec>, grid: &Grid, src: &Source) -> Result<Gene, ModelError> {
    let spec = g.get_ref();
    let c = Checker { src, span: g.span(), prefix: format!("gene[{i}] `{}`.", spec.name) };
    let needed = if spec.rate.is_some() { Some(0.0) } else { None };
    let why = "by a gene without a `rate` expression";
    let production =
        c.non_negative("production", c.required("production", spec.production.or(needed), why)?, "a.u./min")?;
    let decay = c.non_negative("decay", c.required("decay", spec.decay.or(needed), why)?, "1/min")?;
    let diffusion = c.non_negative("diffusion", spec.diffusion.unwrap_or(0.0), "µm²/min")?;
    // D/h² is how often a molecule hops between neighbours per minute; past
    // 1e9 the units are wrong, and the solve would overflow.
    let hops = diffusion / (grid.spacing_um * grid.spacing_um);
    if hops > MAX_HOPS_PER_MIN {
        return Err(c.fail(
            "diffusion",
            format!(
                "is {diffusion:e} µm²/min over a spacing of {:e} µm: D/h² = {hops:.1e} per minute, past any tissue",
                grid.spacing_um
            ),
            "check the units: diffusion in µm²/min (typically 0.01–100) and tissue.spacing_um in µm (typically 1–20)",
        ));
    }
    let initial_noise = c.non_negative("initial_noise", spec.initial_noise.unwrap_or(0.0), "a.u.")?;
    if initial_noise > 1e100 {
        return Err(c.fail(
            "initial_noise",
            format!("is {initial_noise:e}, beyond any level a simulation can hold"),
            "give a noise amplitude of the order of the genes' levels",
        ));
    }
    let profile = match (&spec.initial_profile, &spec.initial_file) {
        (Some(_), Some(_)) => {
            return Err(c.fail(
                "initial_file",
                "is given together with `initial_profile`".into(),
                "keep one of the two",
            ));
        }
        (Some(p), None) => Some(("initial_profile", p.clone())),
        (None, Some(f)) => Some(("initial_file", read_initial_file(&c, f, grid)?)),
        (None, None) => None,
    };
    if spec.initial_formula.is_some() {
        let other = [
            ("initial", spec.initial.is_some()),
            ("initial_profile", spec.initial_profile.is_some()),
            ("initial_file", spec.initial_file.is_some()),
        ];
        if let Some((key, _)) = other.iter().find(|(_, given)| *given) {
            return Err(c.fail(key, "is given together with `initial_formula`".into(), "keep one of the two"));
        }
    }
    let initial = match (&spec.initial, profile) {
        (Some(_), Some((key, _))) => {
            return Err(c.fail(key, "is given together with `initial`".into(), "keep one of the two"));
        }
        // A gene with its own rate expression may take either sign.
        (Some(v), None) if spec.rate.is_some() => Initial::Uniform(c.finite("initial", *v)?),
        (Some(v), None) => Initial::Uniform(c.non_negative("initial", *v, "a.u.")?),
        (None, None) => Initial::Uniform(0.0),
        (None, Some((key, p))) => {
            if p.len() != grid.len() {
                return Err(c.fail(
                    key,
                    format!("has {} values but the tissue has {} nuclei", p.len(), grid.len()),
                    "give one value per nucleus (row by row for a sheet)",
                ));
            }
            let signed = spec.rate.is_some();
            if let Some((k, v)) = p.iter().enumerate().find(|(_, v)| !v.is_finite() || (**v < 0.0 && !signed)) {
                return Err(c.fail(
                    key,
                    format!("value {k} is {v}"),
                    "give finite levels, >= 0 unless the gene has a rate expression (which may take either sign)",
                ));
            }
            Initial::Profile(p)
        }
    };
    let color = match &spec.color {
        Some(text) => {
            parse_color(text).ok_or_else(|| c.fail("color", format!("is `{text}`"), "write a colour as \"#rrggbb\""))?
        }
        None => PALETTE[i % PALETTE.len()],
    };
    let combine = match spec.combine.as_deref() {
        None | Some("all") => Combine::All,
        Some("any") => Combine::Any,
        Some(other) => {
            return Err(c.fail("combine", format!("is `{other}`"), "use \"all\" (product) or \"any\" (sum)"));
        }
    };
    let bias = c.finite("bias", spec.bias.unwrap_or(0.0))?;
    let boundary = boundary_level(&c, spec, production, decay)?;
    let edges = super::edge::check_edges(&c, spec.edge.as_ref(), grid, diffusion)?;
    Ok(Gene {
        name: spec.name.clone(),
        color,
        production,
        decay,
        diffusion,
        initial,
        initial_noise,
        combine,
        bias,
        rate: spec.rate.clone(),
        initial_formula: None,
        boundary,
        knocked_out_production: None,
        edges,
    })
}

/// The gene's boundary level, checked; a fraction of capacity becomes the
/// absolute level f·p/d of the model as written (a fixed level: mutants that
/// change p or d do not move it, as a detection threshold would not move).
fn boundary_level(c: &Checker, spec: &GeneSpec, production: f64, decay: f64) -> Result<Level, ModelError> {
    use toml::Value;
    let key = "boundary_level";
    let fix = "write a fraction of the maximum (0 < f < 1), { absolute = LEVEL } (LEVEL > 0, a.u.) \
               or { of_capacity = f } (0 < f < 1)";
    let number = |v: &Value| match v {
        Value::Float(f) => Some(*f),
        Value::Integer(i) => Some(*i as f64),
        _ => None,
    };
    let Some(value) = &spec.boundary_level else { return Ok(Level::HALF_MAX) };
    if let Some(f) = number(value) {
        if f.is_finite() && f > 0.0 && f < 1.0 {
            return Ok(Level::FractionOfMax(f));
        }
        return Err(c.fail(key, format!("is {f}, not a fraction between 0 and 1"), fix));
    }
    let Value::Table(t) = value else {
        return Err(c.fail(key, format!("is {value}, neither a number nor a table"), fix));
    };
    if let Some(other) = t.keys().find(|k| !matches!(k.as_str(), "absolute" | "of_capacity")) {
        return Err(c.fail(key, format!("has an unknown key `{other}`"), fix));
    }
    let read = |name: &str| -> Result<Option<f64>, ModelError> {
        match t.get(name) {
            None => Ok(None),
            Some(v) => {
                number(v).map(Some).ok_or_else(|| c.fail(key, format!("has {name} = {v}, which is not a number"), fix))
            }
        }
    };
    match (read("absolute")?, read("of_capacity")?) {
        (Some(v), None) if v.is_finite() && v > 0.0 => Ok(Level::Absolute(v)),
        (Some(v), None) => Err(c.fail(key, format!("has absolute = {v}, which is not above 0"), fix)),
        (None, Some(f)) if f.is_finite() && f > 0.0 && f < 1.0 => {
            if spec.rate.is_some() || !(production > 0.0 && decay > 0.0) {
                return Err(c.fail(
                    key,
                    "asks for a fraction of the capacity p/d, which this gene does not have".into(),
                    "give { absolute = LEVEL } instead (a gene with a rate expression or no decay has no capacity)",
                ));
            }
            Ok(Level::Absolute(f * production / decay))
        }
        (None, Some(f)) => Err(c.fail(
            key,
            format!("has of_capacity = {f}, not between 0 and 1"),
            "a level at or above the capacity p/d is never crossed; take a fraction 0 < f < 1",
        )),
        (None, None) => Err(c.fail(key, "is an empty table".into(), fix)),
        (Some(_), Some(_)) => Err(c.fail(key, "gives both absolute and of_capacity".into(), "keep one of them")),
    }
}

/// Parses `#rrggbb`.
pub fn parse_color(text: &str) -> Option<[u8; 3]> {
    let hex = text.strip_prefix('#')?;
    if hex.len() != 6 || !hex.chars().all(|c| c.is_ascii_hexdigit()) {
        return None;
    }
    let byte = |k: usize| u8::from_str_radix(&hex[k..k + 2], 16).ok();
    Some([byte(0)?, byte(2)?, byte(4)?])
}

pub(super) fn check_circuit(
    cs: &Spanned<super::spec::CircuitSpec>,
    gene_specs: &[Spanned<GeneSpec>],
    genes: &[Gene],
    gradients: &[Gradient],
    src: &Source,
) -> Result<Circuit, ModelError> {
    let spec = cs.get_ref();
    let c = Checker { src, span: cs.span(), prefix: "circuit.".into() };
    let kinetics = match spec.kinetics.as_str() {
        "hill" => KineticsKind::Hill,
        "sigmoid" => KineticsKind::Sigmoid,
        "rates" => KineticsKind::Rates,
        other => {
            return Err(c.fail("kinetics", format!("is `{other}`"), "use \"hill\", \"sigmoid\" or \"rates\""));
        }
    };
    let mut parameters = Vec::new();
    for (name, v) in &spec.parameters {
        let clash = genes.iter().any(|g| &g.name == name) || gradients.iter().any(|g| &g.name == name);
        if clash
            || !name.chars().all(|ch| ch.is_alphanumeric() || ch == '_')
            || name.starts_with(|ch: char| ch.is_ascii_digit())
        {
            return Err(c.fail(
                "parameters",
                format!("has the name `{name}`"),
                "name parameters with letters, digits and _, unlike any gene or gradient",
            ));
        }
        if let Some(meaning) = super::validate::reserved(name) {
            return Err(c.fail(
                "parameters",
                format!("has the name `{name}`, which rate expressions read as {meaning}"),
                "choose another name",
            ));
        }
        parameters.push((name.clone(), c.finite("parameters", *v)?));
    }
    for (gs, g) in gene_specs.iter().zip(genes) {
        let gc = Checker { src, span: gs.span(), prefix: format!("gene `{}`.", g.name) };
        match kinetics {
            KineticsKind::Hill => gc.forbidden("bias", &gs.get_ref().bias, "to hill kinetics")?,
            KineticsKind::Sigmoid => gc.forbidden("combine", &gs.get_ref().combine, "to sigmoid kinetics")?,
            KineticsKind::Rates => {
                if g.rate.is_none() {
                    return Err(gc.fail(
                        "rate",
                        "is missing".into(),
                        "with kinetics = \"rates\" every gene needs rate = \"...\"",
                    ));
                }
            }
        }
    }
    let known = |kind: &str| -> String {
        let mut names: Vec<&str> = genes.iter().map(|g| g.name.as_str()).collect();
        if kind != "gene" {
            names.extend(gradients.iter().map(|g| g.name.as_str()));
        }
        names.join(", ")
    };
    let gene_at: HashMap<&str, usize> = genes.iter().enumerate().map(|(i, g)| (g.name.as_str(), i)).collect();
    let gradient_at: HashMap<&str, usize> = gradients.iter().enumerate().map(|(i, g)| (g.name.as_str(), i)).collect();
    let mut links = Vec::with_capacity(spec.link.len());
    let mut seen: HashMap<(Regulator, usize), Range<usize>> = HashMap::new();
    for (i, ls) in spec.link.iter().enumerate() {
        let l: &LinkSpec = ls.get_ref();
        let lc = Checker { src, span: ls.span(), prefix: format!("circuit.link[{i}].") };
        let unknown = |key: &str, name: &str, kind: &str| {
            let (line, column) = src.locate(&ls.span(), key);
            ModelError::UnknownName {
                file: src.file(),
                line,
                column,
                field: format!("circuit.link[{i}].{key}"),
                kind: kind.into(),
                name: name.into(),
                known: known(kind),
            }
        };
        let from = if let Some(&k) = gene_at.get(l.from.as_str()) {
            Regulator::Gene(k)
        } else if let Some(&k) = gradient_at.get(l.from.as_str()) {
            Regulator::Gradient(k)
        } else {
            return Err(unknown("from", &l.from, "gene or gradient"));
        };
        let to = gene_at.get(l.to.as_str()).copied().ok_or_else(|| unknown("to", &l.to, "gene"))?;
        if kinetics == KineticsKind::Rates || genes[to].rate.is_some() {
            return Err(lc.fail(
                "to",
                format!("targets `{}`, whose rate is an expression", l.to),
                "write this regulation inside the gene's rate expression, or remove the link",
            ));
        }
        if let Some(first) = seen.get(&(from, to)) {
            return Err(lc.fail(
                "from",
                format!("repeats the link {} -> {} at line {}", l.from, l.to, src.line_col(first.start).0),
                "keep one link per regulator and target",
            ));
        }
        seen.insert((from, to), ls.span());
        let effect = match kinetics {
            KineticsKind::Hill => {
                lc.forbidden("weight", &l.weight, "to hill kinetics (use sign, threshold and hill)")?;
                let activates = match lc.required("sign", l.sign.as_deref(), "by a hill link")? {
                    "+" => true,
                    "-" => false,
                    other => {
                        return Err(lc.fail(
                            "sign",
                            format!("is `{other}`"),
                            "use \"+\" to activate or \"-\" to repress",
                        ));
                    }
                };
                let threshold =
                    lc.positive("threshold", lc.required("threshold", l.threshold, "by a hill link")?, "a.u.")?;
                let hill = lc.positive("hill", lc.required("hill", l.hill, "by a hill link")?, "")?;
                if hill > 64.0 {
                    return Err(lc.fail("hill", format!("is {hill}"), "use a Hill coefficient up to 64"));
                }
                LinkEffect::Hill { activates, threshold, hill }
            }
            KineticsKind::Rates => unreachable!("links to genes with rate expressions are refused above"),
            KineticsKind::Sigmoid => {
                lc.forbidden("sign", &l.sign, "to sigmoid kinetics (the weight's sign says it)")?;
                lc.forbidden("threshold", &l.threshold, "to sigmoid kinetics")?;
                lc.forbidden("hill", &l.hill, "to sigmoid kinetics")?;
                LinkEffect::Weight(lc.finite("weight", lc.required("weight", l.weight, "by a sigmoid link")?)?)
            }
        };
        links.push(Link { from, to, effect });
    }
    Ok(Circuit { kinetics, links, parameters, neighbours: false })
}
