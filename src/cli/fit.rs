//! `fit`: parameters from measured boundaries.

use anyhow::Context;

use anlage::model::Model;

use super::args::*;
use super::common::*;
use super::print;

/// `anlage fit`.
pub fn fit(args: &FitArgs) -> anyhow::Result<()> {
    let FitArgs { model: path, out, threads, starts, light, quiet, json } = args;
    if let Some(n) = threads {
        rayon::ThreadPoolBuilder::new().num_threads((*n).max(1)).build_global().context("setting threads")?;
    }
    let model = Model::load(path)?;
    let mut problem = anlage::fit::FitProblem::from_model(&model)?;
    if let Some(n) = starts {
        if !(1..=64).contains(n) {
            anyhow::bail!("--starts is {n}; give 1 to 64 starts");
        }
        problem.starts = *n;
    }
    let start = std::time::Instant::now();
    let bar = (!quiet).then(|| {
        let bar = indicatif::ProgressBar::new((problem.evaluations * problem.starts) as u64);
        bar.set_style(
            indicatif::ProgressStyle::with_template("{bar:40} {pos}/{len} evaluations, best {msg}, {elapsed}")
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        bar
    });
    let result = anlage::fit::fit(&problem, true, &mut |evaluations, best| {
        if let Some(bar) = &bar {
            bar.set_position(evaluations as u64);
            bar.set_message(format!("{best:.4}"));
        }
    });
    if let Some(bar) = bar {
        bar.finish_and_clear();
    }
    let dir = out.clone().unwrap_or_else(|| beside_model(path, "fit"));
    let bg = if *light { anlage::render::Background::Light } else { anlage::render::Background::Dark };
    anlage::write_fit(&problem, &result, bg, &dir).with_context(|| format!("writing the fit to {}", dir.display()))?;
    if *json {
        println!("{}", super::json::fit(&problem, &result, &dir));
    } else if !quiet {
        print!("{}", print::fit(&problem, &result, start.elapsed().as_secs_f64(), &dir));
    }
    Ok(())
}
