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
