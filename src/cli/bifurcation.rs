//! `anlage bifurcation`: the bifurcation diagram of one nucleus in any model
//! parameter, without simulating.

use std::fmt::Write as _;
use std::path::PathBuf;

use anyhow::Context;
use clap::Args;

use super::args::CanvasArgs;
use super::common::require_png;
use anlage::phase::{Diagram, DiagramRequest, Special};
use anlage::render::{Style, StyleError};

/// Arguments of `bifurcation`.
#[derive(Debug, Args)]
pub struct BifurcationArgs {
    /// Model file (TOML).
    pub model: PathBuf,
    /// The parameter to continue: GENE.production, GENE.decay, FROM->TO.threshold,
    /// GRADIENT.peak, … or a named constant of the rate expressions.
    #[arg(long)]
    pub parameter: String,
    /// Start of the parameter's range.
    #[arg(long, allow_hyphen_values = true)]
    pub from: f64,
    /// End of the parameter's range.
    #[arg(long, allow_hyphen_values = true)]
    pub to: f64,
    /// Where the nucleus sits, % of the axis length (0–100).
    #[arg(long, default_value_t = 50.0)]
    pub at: f64,
    /// Freeze the gradients at this time, min (default: the end of the model's clock).
    #[arg(long)]
    pub time: Option<f64>,
    /// Gene whose level the picture shows (default: the first).
    #[arg(long)]
    pub gene: Option<String>,
    /// A second parameter (a model parameter, or `position` for the place
    /// along the axis): trace the fold curves in the plane of the two instead
    /// of the one-parameter diagram.
    #[arg(long, requires_all = ["second_from", "second_to"])]
    pub second: Option<String>,
    /// Start of the second parameter's range (% of the axis for `position`).
    #[arg(long, allow_hyphen_values = true, requires = "second")]
    pub second_from: Option<f64>,
    /// End of the second parameter's range.
    #[arg(long, allow_hyphen_values = true, requires = "second")]
    pub second_to: Option<f64>,
    /// Output folder (default: `<model name>_bifurcation` next to the model file).
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// Print what was found as one JSON document instead of the report.
    #[arg(long)]
    pub json: bool,
    /// Background, size and SVG.
    #[command(flatten)]
    pub canvas: CanvasArgs,
}

/// `anlage bifurcation`.
pub fn bifurcation(args: &BifurcationArgs) -> anyhow::Result<()> {
    let model = anlage::model::Model::load(&args.model)?;
    let param = model.parse_param(&args.parameter).map_err(|why| {
        anyhow::anyhow!(
            "--parameter: {why}; name a parameter as GENE.production, FROM->TO.threshold, GRADIENT.peak or a constant"
        )
    })?;
    if !(0.0..=100.0).contains(&args.at) {
        return Err(StyleError::OutOfRange {
            option: "--at".into(),
            value: args.at.to_string(),
            fix: "give a position from 0 to 100 (% of the axis length)".into(),
        }
        .into());
    }
    let t_min = args.time.unwrap_or(model.clock.until_min);
    if !(t_min.is_finite() && t_min >= 0.0) {
        return Err(StyleError::OutOfRange {
            option: "--time".into(),
            value: t_min.to_string(),
            fix: "give a time >= 0 min".into(),
        }
        .into());
    }
    if model.growth.is_some() && t_min > model.clock.until_min {
        return Err(StyleError::OutOfRange {
            option: "--time".into(),
            value: t_min.to_string(),
            fix: format!(
                "the row grows, and its growth is known only within its run: give a time up to {} min",
                model.clock.until_min
            ),
        }
        .into());
    }
    let names: Vec<String> = model.genes.iter().map(|g| g.name.clone()).collect();
    let gene = match &args.gene {
        Some(name) => model.gene_index(name).ok_or_else(|| StyleError::UnknownGene {
            option: "--gene".into(),
            name: name.clone(),
            known: names.join(", "),
        })?,
        None => 0,
    };
    let dir = args.out.clone().unwrap_or_else(|| {
        let stem = args.model.file_stem().map_or_else(|| "model".into(), |s| s.to_string_lossy().into_owned());
        args.model.with_file_name(format!("{stem}_bifurcation"))
    });
    let picture = dir.join("bifurcation.png");
    require_png(&picture, "")?;
    let colors: Vec<[u8; 3]> = model.genes.iter().map(|g| g.color).collect();
    let style = Style::for_genes(&names, &colors, &model.title, &args.canvas.options())?;
    if let Some(second) = &args.second {
        let range = (args.second_from.unwrap_or(f64::NAN), args.second_to.unwrap_or(f64::NAN));
        return fold_plane(args, &model, param, second, range, t_min, &dir, &style, &names);
    }
    let request = DiagramRequest { param, from: args.from, to: args.to, x_pct: args.at, t_min };
    let diagram = anlage::phase::diagram(&model, &request)?;
    std::fs::create_dir_all(&dir).with_context(|| format!("creating {}", dir.display()))?;
    anlage::write_bifurcation(&diagram, &names, gene, &style, &dir)
        .with_context(|| format!("writing into {}", dir.display()))?;
    super::json::print_either(
        args.json,
        || super::json::bifurcation(&diagram, &names, &dir),
        || report(&diagram, &names, &dir),
    );
    Ok(())
}

/// `anlage bifurcation --second`: fold curves in two parameters.
#[allow(clippy::too_many_arguments)]
fn fold_plane(
    args: &BifurcationArgs,
    model: &anlage::model::Model,
    param: anlage::model::Param,
    second: &str,
    (q0, q1): (f64, f64),
    t_min: f64,
    dir: &std::path::Path,
    style: &anlage::render::Style,
    names: &[String],
) -> anyhow::Result<()> {
    use anlage::phase::{FoldCurveRequest, ParameterFamily, Second, check_parameter};
    let first = check_parameter(model, param, (args.from, args.to), "--from < --to")?;
    let (which, second_name) = if second.eq_ignore_ascii_case("position") {
        if !(0.0 <= q0 && q0 < q1 && q1 <= 100.0) {
            return Err(StyleError::OutOfRange {
                option: "--second-from/--second-to".into(),
                value: format!("{q0} to {q1}"),
                fix: "give 0 <= --second-from < --second-to <= 100 (% of the axis length)".into(),
            }
            .into());
        }
        (Second::Position, "position_pct".to_string())
    } else {
        let p2 = model.parse_param(second).map_err(|why| {
            anyhow::anyhow!("--second: {why}; name a parameter as GENE.production, FROM->TO.threshold, GRADIENT.peak, a constant, or `position`")
        })?;
        if p2 == param {
            anyhow::bail!("--second names the same parameter as --parameter; give another, or `position`");
        }
        (Second::Param(p2), check_parameter(model, p2, (q0, q1), "--second-from < --second-to")?)
    };
    let fam = ParameterFamily::new(model, param, args.at, t_min).with_second(which, q0);
    let req = FoldCurveRequest { p: (args.from, args.to), q: (q0, q1), seed_lines: 11 };
    let seeds = anlage::phase::seed_lines(&fam, &first, &req);
    let curves = anlage::phase::fold_curves(&fam, &seeds, &req);
    let grid = (96, 64);
    let counts = anlage::phase::stable_counts(&fam, &seeds, &req, grid);
    let place = match which {
        Second::Position => String::new(),
        Second::Param(_) => format!(" at {} %", args.at),
    };
    let shown = if which == Second::Position { "position" } else { second_name.as_str() };
    let heading = format!("Fold curves in {first} and {shown} (isolated nucleus{place}, t = {t_min} min)");
    let plane = anlage::render::FoldPlane {
        curves: &curves,
        counts: &counts,
        grid,
        p: (&first, req.p),
        q: (&second_name, req.q),
        heading: &heading,
    };
    std::fs::create_dir_all(dir).with_context(|| format!("creating {}", dir.display()))?;
    anlage::write_fold_curves(&plane, names, style, dir).with_context(|| format!("writing into {}", dir.display()))?;
    let bistable = counts.iter().filter(|&&n| n >= 2).count();
    super::json::print_either(
        args.json,
        || {
            let cusps: Vec<serde_json::Value> = curves
                .iter()
                .flat_map(|c| c.cusps.iter())
                .map(|c| serde_json::json!({ "value": c.p, "second_value": c.q, "levels": c.x }))
                .collect();
            serde_json::json!({
                "kind": "fold_curves",
                "outputs": dir,
                "model_prediction": true,
                "isolated_nucleus": true,
                "parameter": first,
                "second": second_name,
                "curves": curves.len(),
                "cusps": cusps,
                "bistable_share": bistable as f64 / counts.len() as f64,
            })
        },
        || {
            let mut s = String::new();
            let _ = writeln!(s, "{heading} (model prediction)");
            let _ = writeln!(s, "  {} fold curve{}", curves.len(), if curves.len() == 1 { "" } else { "s" });
            for c in curves.iter().flat_map(|c| c.cusps.iter()) {
                let _ = writeln!(s, "  cusp          {first} = {}, {second_name} = {}", c.p, c.q);
            }
            let _ = writeln!(
                s,
                "  two or more stable states at {:.1} % of the plane (checked point by point on a {} x {} grid)",
                100.0 * bistable as f64 / counts.len() as f64,
                grid.0,
                grid.1
            );
            let _ = writeln!(s, "wrote fold_curves.csv, fold_cusps.csv and fold_curves.png in {}", dir.display());
            s
        },
    );
    Ok(())
}

/// What `anlage bifurcation` prints.
fn report(d: &Diagram, names: &[String], dir: &std::path::Path) -> String {
    let mut s = String::new();
    let switched = d.switched_from.iter().filter(|f| f.is_some()).count();
    let _ = writeln!(
        s,
        "bifurcation diagram in {} from {} to {}: isolated nucleus at {} % of the axis, inputs at t = {} min (model prediction)",
        d.parameter, d.request.from, d.request.to, d.request.x_pct, d.request.t_min
    );
    let _ = writeln!(
        s,
        "  {} branch{}{}",
        d.branches.len(),
        if d.branches.len() == 1 { "" } else { "es" },
        if switched > 0 { format!(" ({switched} switched onto at branch points)") } else { String::new() }
    );
    let points = d.special_points();
    if points.is_empty() {
        let _ = writeln!(s, "  no fold, branch point or Hopf point in this range");
    }
    for p in &points {
        let levels: Vec<String> = names.iter().zip(&p.x).map(|(n, v)| format!("{n} {v:.6}")).collect();
        let period = match (p.kind, p.period_min) {
            (Special::Hopf, Some(t)) => format!(", period at onset {t:.6} min"),
            _ => String::new(),
        };
        let _ = writeln!(s, "  {:<13} {} = {:.9}  ({}){period}", p.kind.name(), d.parameter, p.s, levels.join(", "));
    }
    let _ =
        writeln!(s, "wrote bifurcation_branches.csv, bifurcation_points.csv and bifurcation.png in {}", dir.display());
    s
}
