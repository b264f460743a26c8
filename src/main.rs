//! The `anlage` command: parses arguments and calls the library.

mod cli;
mod measure_cli;
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
    // A reader that stops early (`anlage … | head`) closes standard output:
    // stop with exit 1 and say so, instead of a panic's backtrace.
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        let message = info.payload_as_str().unwrap_or("");
        if message.contains("failed printing to stdout") {
            eprintln!(
                "anlage: standard output was closed before the command finished; stopped (outputs may be incomplete)"
            );
            std::process::exit(1);
        }
        default_hook(info);
    }));
    let cli = Cli::parse();
    match run(&cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("anlage: {e:#}");
            // 2: the input is wrong; 1: the computation or output failed.
            let bad_input = e.chain().any(|c| {
                c.is::<ModelError>()
                    || c.is::<StyleError>()
                    || c.is::<RunDirError>()
                    || c.is::<anlage::measure::MeasureError>()
                    || c.is::<anlage::compare::CompareError>()
                    || c.is::<anlage::integrate::CheckpointError>()
                    || c.is::<anlage::fit::FitSetupError>()
            });
            if bad_input { ExitCode::from(2) } else { ExitCode::from(1) }
        }
    }
}

fn default_out(model: &Path) -> PathBuf {
    sibling(model, "run")
}

/// `<model stem>_<what>` next to the model file.
fn sibling(model: &Path, what: &str) -> PathBuf {
    let stem = model.file_stem().map_or_else(|| "model".into(), |s| s.to_string_lossy().into_owned());
    model.with_file_name(format!("{stem}_{what}"))
}

/// A recording with the model's genes and snapshot times but no states, to
/// check picture options before anything is simulated.
fn planned_recording(model: &Model) -> anlage::Recording {
    let mut planned = anlage::Recording::for_model(model);
    planned.times = model.clock.snapshot_times();
    planned
}

/// A model file is simulated (quietly, with a progress bar on a terminal);
/// a run folder is read back with the model copy it holds. Returns the model,
/// the recording and the folder outputs go to.
fn model_and_recording(source: &Path, out: Option<&Path>) -> anyhow::Result<(Model, anlage::Recording, PathBuf)> {
    if source.is_dir() {
        let model = Model::load(&source.join("model.toml"))?;
        let saved = anlage::run_dir::load(source)?;
        Ok((model, saved.recording, out.map_or_else(|| source.to_path_buf(), Path::to_path_buf)))
    } else {
        let model = Model::load(source)?;
        let options = anlage::RunOptions { parallel: true, progress: true, ..Default::default() };
        let run = anlage::simulate(&model, &options).with_context(|| format!("simulating {}", source.display()))?;
        Ok((model, run.recording, out.map_or_else(|| default_out(source), Path::to_path_buf)))
    }
}

/// Name of the checkpoint file in a run folder.
const CHECKPOINT: &str = "checkpoint.bin";

fn run(cli: &Cli) -> anyhow::Result<()> {
    match &cli.command {
        Command::Check { model } => {
            let model = Model::load(model)?;
            print!("{}", report::describe(&model));
            Ok(())
        }
        Command::Run {
            model: path,
            boundary_levels,
            out,
            threads,
            quiet,
            no_pictures,
            timing,
            checkpoint_every,
            resume,
            stream,
            repeat,
            look,
        } => {
            if let Some(n) = threads {
                rayon::ThreadPoolBuilder::new().num_threads((*n).max(1)).build_global().context("setting threads")?;
            }
            // Extra timed solves (--repeat): model loading, set-up, all steps and the checksum.
            let mut fastest = f64::INFINITY;
            if let Some(path) = path.as_ref().filter(|_| *timing) {
                for _ in 1..*repeat {
                    let start = std::time::Instant::now();
                    let model = Model::load(path)?;
                    let run = anlage::simulate(&model, &anlage::RunOptions::default())
                        .with_context(|| format!("simulating {}", model.file.display()))?;
                    std::hint::black_box(anlage::reference::checksum(run.recording.final_state()));
                    fastest = fastest.min(start.elapsed().as_secs_f64());
                }
            }
            let start = std::time::Instant::now();
            let (model, checkpoint, dir) = match resume {
                Some(dir) => {
                    let checkpoint = anlage::integrate::Checkpoint::read(&dir.join(CHECKPOINT))?;
                    let model = Model::from_toml(&checkpoint.model_text, &checkpoint.model_path)?;
                    checkpoint.check_fits(&model, &dir.join(CHECKPOINT))?;
                    (model, Some(checkpoint), out.clone().unwrap_or_else(|| dir.clone()))
                }
                None => {
                    let path = path.as_ref().expect("clap requires MODEL without --resume");
                    let mut model = Model::load(path)?;
                    for spec in boundary_levels {
                        model.set_boundary_level(spec).map_err(|fix| StyleError::OutOfRange {
                            option: "--boundary-level".into(),
                            value: spec.clone(),
                            fix,
                        })?;
                    }
                    (model, None, out.clone().unwrap_or_else(|| default_out(path)))
                }
            };
            let style_options = look.options();
            // Check the picture options before a long run, against the snapshot times to come.
            Style::with_options(&planned_recording(&model), &model.title, &style_options)?;
            let streams = *stream || model.streams_recording();
            let options =
                anlage::RunOptions { parallel: true, progress: !quiet, stream_to: streams.then(|| dir.clone()) };
            // With checkpoints on, SIGTERM (a cluster's scheduler ending a job)
            // and SIGINT (Ctrl-C) save the run and stop it cleanly.
            let stop = std::sync::Arc::new(std::sync::atomic::AtomicBool::new(false));
            let checkpointing = checkpoint_every.is_some() || checkpoint.is_some();
            if checkpointing {
                for signal in [signal_hook::consts::SIGTERM, signal_hook::consts::SIGINT] {
                    signal_hook::flag::register(signal, stop.clone()).context("installing the signal handler")?;
                }
            }
            let plan = checkpointing.then(|| anlage::Checkpointing {
                file: dir.join(CHECKPOINT),
                every: checkpoint_every.unwrap_or(std::time::Duration::MAX),
                resume: checkpoint,
                stop: Some(stop.clone()),
            });
            let seconds = anlage::integrate::least_seconds(&model);
            if seconds > 60.0 && !quiet {
                eprintln!(
                    "anlage: note: a long run: at least ~{:.0} steps, about {} of computing (`anlage check` says more)",
                    anlage::integrate::least_steps(&model),
                    report::duration(seconds)
                );
            }
            // The output folder is reserved (created, checked writable, marked
            // busy) before anything is simulated, so a bad folder costs nothing.
            let _reserved = anlage::export::folder::reserve(&dir)?;
            let run = match anlage::simulate_with(&model, &options, plan.as_ref()) {
                Err(e @ anlage::StepError::Stopped { .. }) => {
                    anyhow::bail!(
                        "{e}: the run was saved to {}; continue it with `anlage run --resume {}`",
                        dir.join(CHECKPOINT).display(),
                        dir.display()
                    )
                }
                other => other.with_context(|| format!("simulating {} (nothing was written)", model.file.display()))?,
            };
            let checksum = anlage::reference::checksum(run.recording.final_state());
            let solve_seconds = start.elapsed().as_secs_f64().min(fastest);
            let summary = anlage::write_run(&model, &run, &dir, &style_options, !no_pictures)
                .with_context(|| format!("writing outputs to {}", dir.display()))?;
            if plan.is_some() {
                // The finished outputs are complete; the checkpoint is no longer needed.
                let _ = std::fs::remove_file(dir.join(CHECKPOINT));
            }
            if *timing {
                let line = serde_json::json!({
                    "model": model.file.display().to_string(),
                    "nuclei": model.grid.len(),
                    "genes": model.genes.len(),
                    "steps": run.stats.steps,
                    "solve_seconds": solve_seconds,
                    "checksum": checksum,
                });
                println!("{line}");
            } else if !quiet {
                print!("{}", report::final_boundaries(&summary, run.wall_time_s, &dir));
            }
            Ok(())
        }
        Command::Basins { source, out, with_influx, gene, every, at, look } => {
            let (model, rec, dir) = model_and_recording(source, out.as_deref())?;
            let style = Style::with_options(&rec, &model.title, &look.options())?;
            let gene = match gene {
                Some(name) => model.gene_index(name).ok_or_else(|| StyleError::UnknownGene {
                    option: "--gene".into(),
                    name: name.clone(),
                    known: rec.genes.join(", "),
                })?,
                None => 0,
            };
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
            let report = anlage::write_basins(&model, &rec, &opts, &style, gene, &dir)
                .with_context(|| format!("writing basins to {}", dir.display()))?;
            print!("{}", report::basins(&report, &rec, &dir));
            Ok(())
        }
        Command::Portrait { source, nucleus, genes, time, out, light, width, cloud } => {
            let (model, rec, dir) = model_and_recording(source, None)?;
            let opts = anlage::render::StyleOptions { light: *light, width: *width, ..Default::default() };
            let style = Style::with_options(&rec, &model.title, &opts)?;
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
            let path = out
                .clone()
                .unwrap_or_else(|| dir.join(format!("portrait_n{nucleus}_{}_{}.png", rec.genes[a], rec.genes[b])));
            std::fs::create_dir_all(path.parent().unwrap_or(Path::new("."))).ok();
            let data = anlage::write_portrait(&model, &rec, *nucleus, [a, b], s, &style, &path, *cloud)
                .with_context(|| format!("writing {}", path.display()))?;
            print!("{}", report::portrait(&data, &rec, &path));
            Ok(())
        }
        Command::Screen { model: path, mutants, knockouts, link_removals, dosage, animate, out, look } => {
            let model = Model::load(path)?;
            let mut list = model.mutants.clone();
            for text in mutants {
                list.push(model.parse_mutant(text)?);
            }
            list.extend(anlage::screen::families(&model, *knockouts, *link_removals, *dosage));
            if list.is_empty() {
                anyhow::bail!(StyleError::OutOfRange {
                    option: "mutants".into(),
                    value: "none".into(),
                    fix:
                        "declare [[mutant]] tables, give --mutant, or ask for --knockouts, --link-removals or --dosage"
                            .into(),
                });
            }
            let chosen = match animate {
                Some(name) => {
                    Some(list.iter().find(|m| &m.name == name).cloned().ok_or_else(|| StyleError::OutOfRange {
                        option: "--animate".into(),
                        value: name.clone(),
                        fix: format!(
                            "name one of the mutants: {}",
                            list.iter().map(|m| m.name.as_str()).collect::<Vec<_>>().join(", ")
                        ),
                    })?)
                }
                None => None,
            };
            let planned = planned_recording(&model);
            let style = Style::with_options(&planned, &model.title, &look.options())?;
            let dir = out.clone().unwrap_or_else(|| sibling(path, "screen"));
            let screen = anlage::write_screen(&model, &list, &style, &dir, chosen.as_ref(), true)
                .with_context(|| format!("screening {}", path.display()))?;
            print!("{}", report::screen(&screen, &dir));
            Ok(())
        }
        Command::Sensitivity { model: path, step, out, look } => {
            let model = Model::load(path)?;
            if !(step.is_finite() && *step > 0.0 && *step < 1.0) {
                anyhow::bail!(StyleError::OutOfRange {
                    option: "--step".into(),
                    value: step.to_string(),
                    fix: "give a step in ln(parameter) between 0 and 1, e.g. 0.01".into(),
                });
            }
            let planned = planned_recording(&model);
            let style = Style::with_options(&planned, &model.title, &look.options())?;
            let dir = out.clone().unwrap_or_else(|| sibling(path, "screen"));
            let rows = anlage::write_sensitivity(&model, *step, &style, &dir, true)
                .with_context(|| format!("sensitivity of {}", path.display()))?;
            print!("{}", report::sensitivity(&rows, &dir));
            Ok(())
        }
        Command::Fit { model: path, out, threads, starts, light, quiet } => {
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
            let dir = out.clone().unwrap_or_else(|| sibling(path, "fit"));
            let bg = if *light { anlage::render::Background::Light } else { anlage::render::Background::Dark };
            anlage::write_fit(&problem, &result, bg, &dir)
                .with_context(|| format!("writing the fit to {}", dir.display()))?;
            if !quiet {
                print!("{}", report::fit(&problem, &result, start.elapsed().as_secs_f64(), &dir));
            }
            Ok(())
        }
        Command::Measure(args) => measure_cli::measure_verb(args),
        Command::Compare { run_dir, measured, stages, sd_floor, out } => {
            measure_cli::compare_verb(run_dir, measured, stages, *sd_floor, out)
        }
        Command::Synthesize { run_dir, out, count, seed } => measure_cli::synthesize_verb(run_dir, out, *count, *seed),
        Command::Render { run_dir, kind, out, look } => {
            let saved = anlage::run_dir::load(run_dir)?;
            let rec = &saved.recording;
            let style = Style::with_options(rec, &saved.title, &look.options())?;
            let dir = out.clone().unwrap_or_else(|| run_dir.clone());
            std::fs::create_dir_all(&dir).with_context(|| format!("creating {}", dir.display()))?;
            let boundaries = anlage::readout::find_boundaries(rec)?;
            let written = anlage::write_pictures(rec, &boundaries, &style, &dir, *kind)?;
            for path in &written {
                println!("wrote {}", path.display());
            }
            if &dir == run_dir {
                let names: Vec<String> =
                    written.iter().filter_map(|p| p.file_name().map(|n| n.to_string_lossy().into_owned())).collect();
                anlage::export::folder::add_to_manifest(&dir, &names)?;
            }
            Ok(())
        }
    }
}
