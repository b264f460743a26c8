//! `basins` and `portrait`: phase space of the nuclei.

use std::path::Path;

use anyhow::Context;

use anlage::render::{Style, StyleError};

use super::args::*;
use super::common::*;
use super::print;

/// `anlage basins`.
pub fn basins(args: &BasinsArgs) -> anyhow::Result<()> {
    let BasinsArgs { source, out, with_influx, gene, every, at, look, json } = args;
    look.refuse(
        &[Unused::Animation, Unused::Heatmap, Unused::TimeRange],
        "basins",
        "analyses the snapshots chosen with --every or --at and draws no animation",
    )?;
    let (model, rec, dir) = model_and_recording(source, out.as_deref())?;
    let style = Style::with_options(&rec, &model.title, &look.options())?;
    let gene = gene_or_first(&model, &rec, gene.as_deref())?;
    if *every == 0 || at.iter().any(|t| !(t.is_finite() && *t >= 0.0)) {
        return Err(StyleError::OutOfRange {
            option: if *every == 0 { "--every".into() } else { "--at".into() },
            value: if *every == 0 { "0".into() } else { format!("{at:?}") },
            fix: "give --every N with N >= 1, or --at with times >= 0 (min)".into(),
        }
        .into());
    }
    let last = rec.times.last().copied().unwrap_or(0.0);
    let every_snapshot = rec.times.windows(2).map(|w| w[1] - w[0]).fold(0.0f64, f64::max);
    if let Some(t) = at.iter().find(|t| **t > last + 0.5 * every_snapshot) {
        return Err(StyleError::OutOfRange {
            option: "--at".into(),
            value: format!("{t}"),
            fix: format!("the run ends at t = {last} min; give times up to that"),
        }
        .into());
    }
    let opts = anlage::phase::BasinOptions {
        with_influx: *with_influx,
        every: *every,
        at_min: at.clone(),
        ..Default::default()
    };
    let count = opts.snapshots(&rec.times).len();
    if count > 500 {
        eprintln!(
            "note: analysing {count} snapshots × {} nuclei; --every N or --at T1,T2,… analyses fewer",
            rec.grid.len()
        );
    }
    let report = anlage::write_basins(&model, &rec, &opts, &style, gene, &dir, &super::bar::Bar::new(false))
        .with_context(|| format!("writing basins to {}", dir.display()))?;
    anlage::page::write_page(&dir, &model.title)?;
    super::json::print_either(
        *json,
        || super::json::basins(&report, &rec, &dir),
        || print::basins(&report, &rec, &dir),
    );
    Ok(())
}

/// `anlage portrait`.
pub fn portrait(args: &PortraitArgs) -> anyhow::Result<()> {
    let PortraitArgs { source, nucleus, genes, time, out, canvas, cloud } = args;
    let (model, rec, dir) = model_and_recording(source, None)?;
    let style = Style::with_options(&rec, &model.title, &canvas.options())?;
    let index = |name: &str| {
        model.gene_index(name).ok_or_else(|| StyleError::UnknownGene {
            option: "--genes".into(),
            name: name.into(),
            known: rec.genes.join(", "),
        })
    };
    let [a, b] = match genes.as_slice() {
        [a, b] if a != b => [index(a)?, index(b)?],
        _ => {
            return Err(StyleError::OutOfRange {
                option: "--genes".into(),
                value: genes.join(","),
                fix: "name two different genes, e.g. --genes amber,cobalt".into(),
            }
            .into());
        }
    };
    if *nucleus >= rec.grid.len() {
        return Err(StyleError::OutOfRange {
            option: "--nucleus".into(),
            value: nucleus.to_string(),
            fix: format!("give 0 to {}", rec.grid.len() - 1),
        }
        .into());
    }
    let s = match time {
        Some(t) => (0..rec.times.len())
            .min_by(|&i, &j| (rec.times[i] - t).abs().total_cmp(&(rec.times[j] - t).abs()))
            .expect("snapshots"),
        None => rec.times.len() - 1,
    };
    let path =
        out.clone().unwrap_or_else(|| dir.join(format!("portrait_n{nucleus}_{}_{}.png", rec.genes[a], rec.genes[b])));
    require_png(&path, "--svg writes NAME.svg beside it and --cloud NAME_cloud.gif")?;
    std::fs::create_dir_all(path.parent().unwrap_or(Path::new("."))).ok();
    let data = anlage::write_portrait(&model, &rec, *nucleus, [a, b], s, &style, &path, *cloud)
        .with_context(|| format!("writing {}", path.display()))?;
    print!("{}", print::portrait(&data, &rec, &path));
    Ok(())
}

/// `anlage figure`.
pub fn figure(args: &FigureArgs) -> anyhow::Result<()> {
    let FigureArgs { run_dir, gene, out, quiet, canvas } = args;
    let model = anlage::model::Model::load(&run_dir.join("model.toml"))?;
    let saved = anlage::run_folder::load(run_dir)?;
    let rec = &saved.recording;
    let mut opts = canvas.options();
    // The figure is two panels wide: by default each panel at its own 720 px.
    let width = opts.width.unwrap_or(1500);
    if !(320..=8192).contains(&width) {
        return Err(StyleError::OutOfRange {
            option: "--width".into(),
            value: width.to_string(),
            fix: "give 320 to 8192 px for the whole figure".into(),
        }
        .into());
    }
    opts.width = None;
    let mut style = Style::with_options(rec, &saved.summary.title, &opts)?;
    style.pixel_width = Some(width);
    let g = gene_or_first(&model, rec, gene.as_deref())?;
    let path = out.clone().unwrap_or_else(|| run_dir.join("figure.png"));
    require_png(&path, "--svg writes NAME.svg beside it")?;
    let written =
        anlage::write_figure(&model, rec, g, &style, &path).with_context(|| format!("writing {}", path.display()))?;
    if path.parent() == Some(run_dir.as_path()) {
        // In the run folder the figure joins the page (not the run's own set:
        // it can be deleted or redrawn without touching the run).
        anlage::page::write_page(run_dir, &saved.summary.title)?;
    }
    if !quiet {
        for p in &written {
            println!("wrote {}", p.display());
        }
    }
    Ok(())
}

/// The gene named by `--gene`, or the first.
fn gene_or_first(
    model: &anlage::model::Model,
    rec: &anlage::Recording,
    gene: Option<&str>,
) -> Result<usize, StyleError> {
    match gene {
        Some(name) => model.gene_index(name).ok_or_else(|| StyleError::UnknownGene {
            option: "--gene".into(),
            name: name.to_string(),
            known: rec.genes.join(", "),
        }),
        None => Ok(0),
    }
}
