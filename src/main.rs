//! The `anlage` command: parses arguments and calls the library.

mod cli;
mod report;

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Context;
use clap::Parser;

use anlage::model::{Model, ModelError};
use anlage::render::{Style, StyleError};
use anlage::run_dir::RunDirError;
use cli::{Cli, Command};

fn main() -> ExitCode {
    let cli = Cli::parse();
    match run(&cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("anlage: {e:#}");
            // 2: the input is wrong; 1: the computation or output failed.
            let bad_input = e.chain().any(|c| c.is::<ModelError>() || c.is::<StyleError>() || c.is::<RunDirError>());
            if bad_input { ExitCode::from(2) } else { ExitCode::from(1) }
        }
    }
}

fn default_out(model: &Path) -> PathBuf {
    let stem = model.file_stem().map_or_else(|| "model".into(), |s| s.to_string_lossy().into_owned());
    model.with_file_name(format!("{stem}_run"))
}

fn run(cli: &Cli) -> anyhow::Result<()> {
    match &cli.command {
        Command::Check { model } => {
            let model = Model::load(model)?;
            print!("{}", report::describe(&model));
            Ok(())
        }
        Command::Run { model: path, out, threads, quiet, look } => {
            if let Some(n) = threads {
                rayon::ThreadPoolBuilder::new().num_threads((*n).max(1)).build_global().context("setting threads")?;
            }
            let model = Model::load(path)?;
            let style_options = look.options();
            // Check the picture options before a long run, against the snapshot times to come.
            let mut planned = anlage::Recording::for_model(&model);
            planned.times = model.clock.snapshot_times();
            Style::with_options(&planned, &model.title, &style_options)?;
            let options = anlage::RunOptions { parallel: true, progress: !quiet };
            let run = anlage::simulate(&model, &options).with_context(|| format!("simulating {}", path.display()))?;
            let dir = out.clone().unwrap_or_else(|| default_out(path));
            let summary = anlage::write_run(&model, &run, &dir, &style_options)
                .with_context(|| format!("writing outputs to {}", dir.display()))?;
            if !quiet {
                print!("{}", report::final_boundaries(&summary, &dir));
            }
            Ok(())
        }
        Command::Render { run_dir, kind, out, look } => {
            let saved = anlage::run_dir::load(run_dir)?;
            let rec = &saved.recording;
            let style = Style::with_options(rec, &saved.title, &look.options())?;
            let dir = out.clone().unwrap_or_else(|| run_dir.clone());
            std::fs::create_dir_all(&dir).with_context(|| format!("creating {}", dir.display()))?;
            let boundaries = anlage::readout::find_boundaries(rec);
            let written = anlage::write_pictures(rec, &boundaries, &style, &dir, *kind)?;
            for path in written {
                println!("wrote {}", path.display());
            }
            Ok(())
        }
    }
}
