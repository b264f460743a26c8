//! `fit`: parameters from measured boundaries.

use anyhow::Context;

use anlage::progress::Progress;

use super::args::*;
use super::cluster::Mode;
use super::common::*;
use super::print;

/// `anlage fit`.
pub fn fit(args: &FitArgs) -> anyhow::Result<()> {
    let FitArgs { model: path, out, threads, starts, canvas, quiet, json, cluster } = args;
    if let Some(n) = threads {
        rayon::ThreadPoolBuilder::new().num_threads((*n).max(1)).build_global().context("setting threads")?;
    }
    let model = super::common::load_fixed(path, "fit")?;
    let names: Vec<String> = model.genes.iter().map(|g| g.name.clone()).collect();
    let colors: Vec<[u8; 3]> = model.genes.iter().map(|g| g.color).collect();
    let style = anlage::render::Style::for_genes(&names, &colors, &model.title, &canvas.options())?;
    let mut problem = anlage::fit::FitProblem::from_model(&model)?;
    if let Some(n) = starts {
        if !(1..=64).contains(n) {
            anyhow::bail!(anlage::render::StyleError::OutOfRange {
                option: "--starts".into(),
                value: n.to_string(),
                fix: "give 1 to 64 starts".into(),
            });
        }
        problem.starts = *n;
    }
    let start = std::time::Instant::now();
    let dir = out.clone().unwrap_or_else(|| beside_model(path, "fit"));
    let mode = cluster.mode(out.as_deref())?;
    let bar = super::bar::Bar::new(*quiet || *json);
    let job = anlage::fit::shard::job(&problem, super::cluster::rerun_command());
    super::cluster::check_cut(&mode, cluster, &job, *json)?;
    let merged = matches!(mode, Mode::Merge);
    let result = match mode {
        Mode::Slurm => return super::cluster::write_slurm(cluster, &dir, *json),
        Mode::Shard(shard) => {
            let stop = super::cluster::stop_flag()?;
            let ran = anlage::fit::shard::run_shard(&problem, &job, shard, &dir, &stop, &bar)?;
            bar.finish();
            return super::cluster::report_shards(&[(ran, &job)], shard, &dir, *json);
        }
        Mode::Merge => anlage::fit::shard::merge(&problem, &job, &dir)?,
        Mode::Whole => {
            bar.begin("evaluations", (problem.evaluations * problem.starts) as u64);
            let result = anlage::fit::fit(&problem, true, &mut |evaluations, best| {
                bar.advance(evaluations as u64, &format!("best {best:.4}"));
            });
            bar.finish();
            result
        }
    };
    anlage::write_fit(&problem, &result, &style, &dir)
        .with_context(|| format!("writing the fit to {}", dir.display()))?;
    anlage::page::write_page(&dir, &model.title)?;
    if *json {
        println!("{}", super::json::fit(&problem, &result, &dir));
    } else if !quiet {
        print!("{}", print::fit(&problem, &result, start.elapsed().as_secs_f64(), merged, &dir));
    }
    Ok(())
}
