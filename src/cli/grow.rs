//! `anlage run` on a growing row ([`anlage::growth`]).

use std::fmt::Write as _;
use std::path::Path;

use anyhow::Context;

use anlage::model::Model;
use anlage::run_folder::GrowthSummary;

use super::args::RunArgs;

/// Runs a growing row and writes its folder; refuses the options that are
/// for fixed grids (checkpoints, streaming, timing repeats).
pub fn run_growth(model: &Model, args: &RunArgs, dir: &Path) -> anyhow::Result<()> {
    let refused = [
        (args.checkpoint_every.is_some(), "--checkpoint-every"),
        (args.resume.is_some(), "--resume"),
        (args.stream, "--stream"),
        (args.timing, "--timing"),
    ];
    if let Some((_, option)) = refused.iter().find(|(given, _)| *given) {
        return Err(anlage::render::StyleError::OutOfRange {
            option: (*option).into(),
            value: "given".into(),
            fix: format!(
                "it is for rows and sheets of fixed size, and {} grows ([growth]): a growing row's runs are not \
                 checkpointed, streamed or timed; leave it out",
                model.file.display()
            ),
        }
        .into());
    }
    args.look.refuse(
        &[super::args::Unused::Animation],
        "run (of a growing row)",
        "draws no animation (its snapshots differ in size)",
    )?;
    let style_options = args.look.options();
    let _reserved = anlage::run_folder::reserve(dir)?;
    let start = std::time::Instant::now();
    let run = anlage::growth::grow(model, true)
        .with_context(|| format!("simulating {} (nothing was written)", model.file.display()))?;
    let seconds = start.elapsed().as_secs_f64();
    let summary = anlage::run_folder::write_growth_run(model, &run, dir, &style_options, !args.no_pictures)
        .with_context(|| format!("writing outputs to {}", dir.display()))?;
    if !args.quiet {
        print!("{}", describe(&summary, seconds, dir));
    }
    Ok(())
}

/// What the terminal shows after a growing row's run.
fn describe(s: &GrowthSummary, seconds: f64, dir: &Path) -> String {
    let mut out = String::new();
    let t_end = s.snapshot_times_min.last().copied().unwrap_or(0.0);
    let _ = writeln!(
        out,
        "{}: {} steps ({} rejected) to t = {t_end} min in {seconds:.3} s",
        s.title, s.steps, s.rejected_steps
    );
    let refinements = s.events.iter().filter(|e| e.event == "refinement").count();
    if refinements == 0 {
        let _ = writeln!(
            out,
            "the row grew from {:.1} to {:.1} µm and from {} to {} nuclei",
            s.length_um[0], s.length_um[1], s.nuclei[0], s.nuclei[1]
        );
    } else {
        let divisions = s.events.iter().filter(|e| e.event == "division").count();
        let _ = writeln!(
            out,
            "the row grew from {:.1} to {:.1} µm; {} nuclei became {} by division, on a grid refined {refinements} \
             time{} to {} points (refinement splits the grid, not the nuclei)",
            s.length_um[0],
            s.length_um[1],
            s.nuclei[0],
            s.nuclei[0] << divisions,
            if refinements == 1 { "" } else { "s" },
            s.nuclei[1]
        );
    }
    for e in s.events.iter().filter(|e| e.event != "mitosis_start") {
        let what = if refinements > 0 { "grid points" } else { "nuclei" };
        let _ = writeln!(
            out,
            "  {:<10} at {:>7.2} min: {} {what}, {:.1} µm long",
            e.event, e.time_min, e.nuclei_after, e.length_um
        );
    }
    if s.final_boundaries.is_empty() {
        let _ = writeln!(out, "no boundaries at the final time");
    } else {
        let _ = writeln!(out, "boundaries at t = {t_end} min, in µm and % of the length then (model prediction):");
        for b in &s.final_boundaries {
            let _ = writeln!(
                out,
                "  {:<12} {:<8} {:>8.1} µm  {:>6.2} %  width {:>5.1} µm",
                b.gene, b.direction, b.position_um, b.position_pct, b.width_um
            );
        }
    }
    let _ = writeln!(
        out,
        "outputs in {} (boundaries.csv, growth_frames.csv, growth_events.csv, growth_profiles.csv)",
        dir.display()
    );
    out
}
