//! `check`, `run` and `render`.

use anyhow::Context;

use anlage::model::Model;
use anlage::render::{Style, StyleError};

use super::args::*;
use super::common::*;
use super::print;

/// `anlage check`.
pub fn check(args: &CheckArgs) -> anyhow::Result<()> {
    let CheckArgs { model } = args;
    let model = Model::load(model)?;
    print!("{}", print::describe(&model));
    Ok(())
}

/// `anlage run`.
pub fn run(args: &RunArgs) -> anyhow::Result<()> {
    let RunArgs {
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
    } = args;
    if *no_pictures {
        look.refuse_all("run --no-pictures", "draws no picture")?;
    }
    if let Some(n) = threads {
        rayon::ThreadPoolBuilder::new().num_threads((*n).max(1)).build_global().context("setting threads")?;
    }
    // Extra timed solves (--repeat): model loading, set-up, all steps and the checksum.
    let mut fastest = f64::INFINITY;
    if let Some(path) = path.as_ref().filter(|_| *timing) {
        for _ in 1..*repeat {
            let start = std::time::Instant::now();
            let model = Model::load(path)?;
            if model.growth.is_some() {
                break; // refused below, with the reason
            }
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
    if model.growth.is_some() {
        return super::grow::run_growth(&model, args, &dir);
    }
    let style_options = look.options();
    // Check the picture options before a long run, against the snapshot times to come.
    Style::with_options(&planned_recording(&model), &model.title, &style_options)?;
    let streams = *stream || anlage::integrate::MemoryPlan::of(&model).streams;
    let options = anlage::RunOptions {
        parallel: true,
        progress: Some(std::sync::Arc::new(super::bar::Bar::new(*quiet))),
        stochastic: false,
        stream_to: streams.then(|| dir.clone()),
    };
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
            print::duration(seconds)
        );
    }
    // The output folder is reserved (created, checked writable, marked
    // busy) before anything is simulated, so a bad folder costs nothing.
    let _reserved = anlage::run_folder::reserve(&dir)?;
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
    let (summary, picture_notes) = anlage::write_run(&model, &run, &dir, &style_options, !no_pictures)
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
        print!("{}", print::final_boundaries(&summary, run.wall_time_s, &dir));
    }
    if !quiet {
        for note in &picture_notes {
            eprintln!("anlage: note: {note}");
        }
    }
    Ok(())
}

/// `anlage render`.
pub fn render(args: &RenderArgs) -> anyhow::Result<()> {
    let RenderArgs { run_dir, kind, out, quiet, look } = args;
    if matches!(kind, KindArg::Animation) && look.canvas.svg {
        look.canvas.refuse("render --kind animation", "draws only the GIF, which has no vector form")?;
    }
    let saved = anlage::run_folder::load(run_dir)?;
    let rec = &saved.recording;
    if matches!(kind, KindArg::Contours) && !rec.grid.is_sheet() {
        anyhow::bail!(
            "{}: `--kind contours` draws a sheet's boundary contours, and this run is a row ({}); \
             its boundaries are in kymograph.png and boundary_positions.png",
            run_dir.display(),
            saved.summary.tissue
        );
    }
    let style = Style::with_options(rec, &saved.summary.title, &look.options())?;
    let dir = out.clone().unwrap_or_else(|| run_dir.clone());
    std::fs::create_dir_all(&dir).with_context(|| format!("creating {}", dir.display()))?;
    let boundaries = anlage::readout::find_boundaries(rec)?;
    let drawn = anlage::write_pictures(rec, &boundaries, &style, &dir, (*kind).into())?;
    for note in &drawn.notes {
        eprintln!("anlage: note: {note}");
    }
    let written = drawn.files;
    for path in written.iter().filter(|_| !quiet) {
        println!("wrote {}", path.display());
    }
    let page = anlage::page::write_page(&dir, &saved.summary.title)?;
    if !quiet {
        println!("wrote {}", page.display());
    }
    if &dir == run_dir {
        // The pictures drawn, and the SVG beside each PNG (written or, without
        // --svg, removed).
        let names: Vec<String> = written
            .iter()
            .flat_map(|p| {
                let png = p.extension().is_some_and(|e| e == "png");
                [Some(p.clone()), png.then(|| p.with_extension("svg"))]
            })
            .flatten()
            .filter_map(|p| p.file_name().map(|n| n.to_string_lossy().into_owned()))
            .collect::<std::collections::BTreeSet<_>>()
            .into_iter()
            .collect();
        anlage::run_folder::add_to_manifest(&dir, &names)?;
    }
    Ok(())
}
