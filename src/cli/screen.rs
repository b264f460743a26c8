//! `screen` and `sensitivity`: mutants and parameters.

use anyhow::Context;

use anlage::render::{Style, StyleError};

use super::args::*;
use super::cluster::Mode;
use super::common::*;
use super::print;

/// `anlage screen`.
pub fn screen(args: &ScreenArgs) -> anyhow::Result<()> {
    let ScreenArgs {
        model: path,
        mutants,
        knockouts,
        link_removals,
        dosage,
        animate,
        over_time,
        crosses,
        replicates,
        cluster,
        output,
    } = args;
    let ScreenOutputArgs { out, look, json } = output;
    if animate.is_none() {
        look.refuse(
            &[Unused::Animation, Unused::Heatmap, Unused::TimeRange],
            "screen",
            "draws no animation without --animate (its picture is the table of shifts)",
        )?;
    }
    let model = load_fixed(path, "screen")?;
    let mut list = model.mutants.clone();
    for text in mutants {
        list.push(model.parse_mutant(text)?);
    }
    list.extend(anlage::screen::families(&model, *knockouts, *link_removals, *dosage));
    if list.is_empty() {
        anyhow::bail!(StyleError::OutOfRange {
            option: "mutants".into(),
            value: "none".into(),
            fix: "declare [[mutant]] tables, give --mutant, or ask for --knockouts, --link-removals or --dosage".into(),
        });
    }
    // Mutants are told apart by name (shifts, epistasis): a name given twice is refused.
    for (i, m) in list.iter().enumerate() {
        if list[..i].iter().any(|o| o.name == m.name) {
            anyhow::bail!(StyleError::OutOfRange {
                option: "--mutant".into(),
                value: m.name.clone(),
                fix: "give every mutant its own name (declared, --mutant and generated ones alike)".into(),
            });
        }
    }
    let (crossed, left_out): (Vec<anlage::screen::Cross>, Vec<(String, String)>) = match crosses {
        None => (Vec::new(), Vec::new()),
        Some(k @ (2 | 3)) if list.len() >= *k => anlage::screen::crosses(&list, *k, &model),
        Some(k) => anyhow::bail!(StyleError::OutOfRange {
            option: "--crosses".into(),
            value: k.to_string(),
            fix: format!("give 2 (pairs) or 3 (triples), with at least that many mutants (there are {})", list.len()),
        }),
    };
    for (name, why) in &left_out {
        eprintln!("anlage: note: cross `{name}` left out: {why}");
    }
    list.extend(crossed.iter().map(|c| c.mutant.clone()));
    let chosen = match animate {
        Some(name) => Some(list.iter().find(|m| &m.name == name).cloned().ok_or_else(|| StyleError::OutOfRange {
            option: "--animate".into(),
            value: name.clone(),
            fix: format!(
                "name one of the mutants: {}",
                list.iter().map(|m| m.name.as_str()).collect::<Vec<_>>().join(", ")
            ),
        })?),
        None => None,
    };
    refuse_json_with_stdout(out.as_deref(), *json)?;
    refuse_pictures_with_stdout(out.as_deref(), look, "screen")?;
    if *over_time {
        if table_to_stdout(out.as_deref()) {
            anyhow::bail!(StyleError::OutOfRange {
                option: "--over-time".into(),
                value: "given".into(),
                fix: "it draws a picture, and -o - writes only shifts.csv; give an output folder".into(),
            });
        }
        if list.len() > anlage::render::MOST_PANELS {
            anyhow::bail!(StyleError::OutOfRange {
                option: "--over-time".into(),
                value: format!("{} mutants", list.len()),
                fix: format!(
                    "it draws at most {} mutants, one panel each; choose them with --mutant",
                    anlage::render::MOST_PANELS
                ),
            });
        }
    }
    let mode = cluster.mode(out.as_deref())?;
    if let Some(n) = replicates {
        check_embryos("--replicates", *n)?;
    }
    let planned = planned_recording(&model);
    let style = Style::with_options(&planned, &model.title, &look.options())?;
    if table_to_stdout(out.as_deref()) {
        if let Some(n) = replicates {
            anyhow::bail!(StyleError::OutOfRange {
                option: "--replicates".into(),
                value: n.to_string(),
                fix: "it writes replicate_shifts.csv beside shifts.csv, and -o - writes only shifts.csv; give an output folder".into(),
            });
        }
        if let Some(name) = animate {
            anyhow::bail!(StyleError::OutOfRange {
                option: "--animate".into(),
                value: name.clone(),
                fix: "it writes a picture, and -o - writes nothing to disk; give an output folder".into(),
            });
        }
        let screen =
            anlage::screen::run_screen(&model, &list, true).with_context(|| format!("screening {}", path.display()))?;
        return write_table_to_stdout(|w| anlage::export::write_shifts_to(&screen, w));
    }
    let dir = out.clone().unwrap_or_else(|| beside_model(path, "screen"));
    let bar = super::bar::Bar::new(*json);
    let job = anlage::screen::shard::job(&model, &list, super::cluster::rerun_command());
    // With replicates, each shard also runs its share of the embryos (of the
    // wild type and of every mutant) into a second shard file.
    let embryo_job = replicates.map(|n| {
        let models = anlage::replicates::shard::screen_models(&model, &list);
        let passes = anlage::replicates::shard::screen_passes(&model, &models);
        let job = anlage::replicates::shard::job(
            "screen_embryos",
            &model,
            &passes,
            job.settings.clone(),
            n,
            super::cluster::rerun_command(),
        );
        (passes, job)
    });
    let larger = embryo_job.as_ref().map(|(_, j)| j).filter(|j| j.total > job.total).unwrap_or(&job);
    super::cluster::check_cut(&mode, cluster, larger, *json)?;
    let mut saved_embryos = None;
    let (screen, gif_note) = match mode {
        Mode::Slurm => return super::cluster::write_slurm(cluster, &dir, *json),
        Mode::Shard(shard) => {
            let stop = super::cluster::stop_flag()?;
            let wild_type = anlage::readout::predicted_final_boundaries(&model)
                .with_context(|| format!("the wild type of {}", path.display()))?;
            let mut ran = vec![(
                anlage::screen::shard::run_shard(&model, &list, &wild_type, &job, shard, &dir, &stop, &bar)?,
                &job,
            )];
            if let Some((passes, embryos)) = &embryo_job
                && !matches!(ran[0].0, anlage::shard::Ran::Stopped { .. })
            {
                let (r, failed) = anlage::replicates::shard::run_shard(passes, embryos, shard, &dir, &stop, &bar)?;
                note_failed(failed);
                ran.push((r, embryos));
            }
            return super::cluster::report_shards(&ran, shard, &dir, *json);
        }
        Mode::Merge => {
            let wild_type = anlage::screen::final_outcome(&model)
                .with_context(|| format!("the wild type of {}", path.display()))?;
            let screen = anlage::screen::shard::merge(&list, wild_type, &job, &dir)?;
            // Every shard file is checked before anything is written.
            saved_embryos = embryo_job.as_ref().map(|(_, j)| anlage::replicates::shard::merge(j, &dir)).transpose()?;
            let note = anlage::write_screen_files(&model, &screen, &style, &dir, chosen.as_ref(), true)
                .with_context(|| format!("merging into {}", dir.display()))?;
            (screen, note)
        }
        Mode::Whole => anlage::write_screen(&model, &list, &style, &dir, chosen.as_ref(), true, &bar)
            .with_context(|| format!("screening {}", path.display()))?,
    };
    if let Some(note) = gif_note {
        eprintln!("anlage: note: {note}");
    }
    if replicates.is_some() && anlage::replicates::Sources::each(&model).is_empty() && !*json {
        eprintln!("anlage: note: the model declares no noise ([noise] or initial_noise): every embryo is the same");
    }
    if *over_time {
        anlage::write_shifts_over_time(&model, &list, &style, &dir, true)
            .with_context(|| format!("boundaries over time of {}", path.display()))?;
    } else {
        // A picture of an earlier screen must not pass for this one's.
        for ext in ["png", "svg"] {
            let _ = std::fs::remove_file(dir.join(anlage::SHIFTS_OVER_TIME).with_extension(ext));
        }
    }
    let epistasis = anlage::screen::epistasis(&screen, &crossed);
    if crosses.is_some() {
        anlage::export::write_rows(&epistasis, &dir.join("epistasis.csv"))?;
    } else {
        let _ = std::fs::remove_file(dir.join("epistasis.csv"));
    }
    let paired = match replicates {
        Some(n) => {
            let rows =
                anlage::write_screen_replicates(&model, &list, *n, &dir, embryo_source(saved_embryos.as_ref()), &bar);
            if rows.is_err() {
                // A table from an earlier screen must not stand beside this one's shifts.
                let _ = std::fs::remove_file(dir.join(anlage::SCREEN_REPLICATES));
            }
            Some(rows.with_context(|| format!("replicates of the screen of {}", path.display()))?)
        }
        None => {
            // A table from an earlier screen with replicates must not pass for this one's.
            let _ = std::fs::remove_file(dir.join(anlage::SCREEN_REPLICATES));
            None
        }
    };
    anlage::page::write_page(&dir, &model.title)?;
    super::json::print_either(
        *json,
        || super::json::screen(&screen, paired.as_deref(), &epistasis, &dir),
        || print::screen(&screen, paired.as_deref(), &epistasis, &dir),
    );
    Ok(())
}

/// `anlage sensitivity`.
pub fn sensitivity(args: &SensitivityArgs) -> anyhow::Result<()> {
    let SensitivityArgs { model: path, step, cluster, output } = args;
    let ScreenOutputArgs { out, look, json } = output;
    look.refuse(
        &[Unused::Animation, Unused::Heatmap, Unused::TimeRange],
        "sensitivity",
        "draws one still picture of sensitivities read at the end of the run",
    )?;
    let model = load_fixed(path, "sensitivity")?;
    if !*json {
        for why in model.constants_fixed_by_starts() {
            eprintln!("anlage: note: left out: {why}");
        }
    }
    if !(step.is_finite() && *step > 0.0 && *step < 1.0) {
        anyhow::bail!(StyleError::OutOfRange {
            option: "--step".into(),
            value: step.to_string(),
            fix: "give a step in ln(parameter) between 0 and 1, e.g. 0.01".into(),
        });
    }
    refuse_json_with_stdout(out.as_deref(), *json)?;
    refuse_pictures_with_stdout(out.as_deref(), look, "sensitivity")?;
    let mode = cluster.mode(out.as_deref())?;
    let planned = planned_recording(&model);
    let style = Style::with_options(&planned, &model.title, &look.options())?;
    if table_to_stdout(out.as_deref()) {
        let rows = anlage::screen::sensitivity(&model, *step, true)
            .with_context(|| format!("sensitivity of {}", path.display()))?;
        return write_table_to_stdout(|w| anlage::export::write_rows_to(&rows, w));
    }
    let dir = out.clone().unwrap_or_else(|| beside_model(path, "screen"));
    let bar = super::bar::Bar::new(*json);
    let job = anlage::screen::shard::sensitivity_job(&model, *step, super::cluster::rerun_command());
    super::cluster::check_cut(&mode, cluster, &job, *json)?;
    let rows = match mode {
        Mode::Slurm => return super::cluster::write_slurm(cluster, &dir, *json),
        Mode::Shard(shard) => {
            let stop = super::cluster::stop_flag()?;
            let wild_type = anlage::readout::predicted_final_boundaries(&model)
                .with_context(|| format!("the wild type of {}", path.display()))?;
            let ran = anlage::screen::shard::run_sensitivity_shard(
                &model, *step, &wild_type, &job, shard, &dir, &stop, &bar,
            )?;
            return super::cluster::report_shards(&[(ran, &job)], shard, &dir, *json);
        }
        Mode::Merge => {
            let rows = anlage::screen::shard::merge_sensitivity(&job, &dir)?;
            anlage::write_sensitivity_files(&rows, &style, &dir)
                .with_context(|| format!("merging into {}", dir.display()))?;
            rows
        }
        Mode::Whole => anlage::write_sensitivity(&model, *step, &style, &dir, true, &bar)
            .with_context(|| format!("sensitivity of {}", path.display()))?,
    };
    anlage::page::write_page(&dir, &model.title)?;
    super::json::print_either(*json, || super::json::sensitivity(&rows, &dir), || print::sensitivity(&rows, &dir));
    Ok(())
}

/// `anlage sweep`.
pub fn sweep(args: &SweepArgs) -> anyhow::Result<()> {
    let SweepArgs { model: path, axes: axes_text, cluster, output } = args;
    let ScreenOutputArgs { out, look, json } = output;
    look.refuse(
        &[Unused::Animation, Unused::Heatmap, Unused::TimeRange],
        "sweep",
        "draws one still picture of pattern classes read at the end of each run",
    )?;
    let model = load_fixed(path, "sweep")?;
    let axes: Vec<anlage::sweep::Axis> =
        axes_text.iter().map(|t| anlage::sweep::Axis::parse(&model, t)).collect::<Result<_, _>>()?;
    anlage::sweep::check_axes(&axes)?;
    let mode = cluster.mode(out.as_deref())?;
    if model.grid.is_sheet() && !*json {
        eprintln!(
            "anlage: note: on a sheet, classes are read over the whole sheet (domains, spots, parallel stripes, labyrinth); the boundaries in sweep_boundaries.csv are read along x over the central strip of rows"
        );
    }
    let total = axes.iter().map(|a| a.values.len()).try_fold(1usize, |n, k| n.checked_mul(k));
    if total.is_none_or(|n| n > anlage::sweep::MAX_POINTS) {
        anyhow::bail!(StyleError::OutOfRange {
            option: "--axis".into(),
            value: axes.iter().map(|a| a.values.len().to_string()).collect::<Vec<_>>().join(" x "),
            fix: format!("give at most {} points in all", anlage::sweep::MAX_POINTS),
        });
    }
    refuse_json_with_stdout(out.as_deref(), *json)?;
    refuse_pictures_with_stdout(out.as_deref(), look, "sweep")?;
    let planned = planned_recording(&model);
    let style = Style::with_options(&planned, &model.title, &look.options())?;
    if table_to_stdout(out.as_deref()) {
        let s = anlage::sweep::run_sweep(&model, &axes, true, &anlage::progress::Silent);
        return write_table_to_stdout(|w| anlage::export::write_sweep_to(&s, w));
    }
    let dir = out.clone().unwrap_or_else(|| beside_model(path, "sweep"));
    let job = anlage::sweep::shard::job(&model, &axes, super::cluster::rerun_command());
    super::cluster::check_cut(&mode, cluster, &job, *json)?;
    match mode {
        Mode::Whole => {}
        Mode::Slurm => return super::cluster::write_slurm(cluster, &dir, *json),
        Mode::Shard(shard) => {
            let stop = super::cluster::stop_flag()?;
            let bar = super::bar::Bar::new(*json);
            let ran = anlage::sweep::shard::run_shard(&model, &axes, &job, shard, &dir, &stop, &bar)?;
            return super::cluster::report_shards(&[(ran, &job)], shard, &dir, *json);
        }
        Mode::Merge => {
            let s = anlage::sweep::shard::merge(&model, &axes, &job, &dir)?;
            anlage::write_sweep_files(&s, &style, &dir).with_context(|| format!("merging into {}", dir.display()))?;
            anlage::page::write_page(&dir, &model.title)?;
            super::json::print_either(*json, || super::json::sweep(&s, &dir), || print::sweep(&s, &dir));
            return Ok(());
        }
    }
    let s = anlage::write_sweep(&model, &axes, &style, &dir, true, &super::bar::Bar::new(*json))
        .with_context(|| format!("sweeping {}", path.display()))?;
    anlage::page::write_page(&dir, &model.title)?;
    super::json::print_either(*json, || super::json::sweep(&s, &dir), || print::sweep(&s, &dir));
    Ok(())
}

/// `anlage replicates`.
pub fn replicates(args: &ReplicatesArgs) -> anyhow::Result<()> {
    let ReplicatesArgs { model: path, embryos, attribute, check_step, animate, mutant, cluster, output } = args;
    let ScreenOutputArgs { out, look, json } = output;
    if animate.is_none() {
        look.refuse(
            &[Unused::Animation, Unused::Heatmap, Unused::TimeRange],
            "replicates",
            "draws no animation without --animate (its pictures are spreads of boundaries)",
        )?;
    }
    let wild_type = load_fixed(path, "replicates")?;
    let model = wild_type.clone();
    let (name, model) = match mutant {
        None => (None, model),
        Some(text) => {
            let m = match model.mutants.iter().find(|m| &m.name == text) {
                Some(m) => m.clone(),
                None if text.trim_start().starts_with('{') => model.parse_mutant(text)?,
                None => anyhow::bail!(StyleError::OutOfRange {
                    option: "--mutant".into(),
                    value: text.clone(),
                    fix: format!(
                        "name one of the model's mutants ({}) or write one as {{ name = \"…\", … }}",
                        model.mutants.iter().map(|m| m.name.as_str()).collect::<Vec<_>>().join(", ")
                    ),
                }),
            };
            (Some(m.clone()), model.with_mutant(&m))
        }
    };
    let n = embryos.unwrap_or(model.noise.replicates);
    check_embryos("-n/--embryos", n)?;
    if let Some(k) = animate
        && !((2..=9).contains(k) && *k <= n)
    {
        anyhow::bail!(StyleError::OutOfRange {
            option: "--animate".into(),
            value: k.to_string(),
            fix: format!("give 2 to 9 embryos, and no more than the {n} run"),
        });
    }
    let planned = planned_recording(&model);
    let style = Style::with_options(&planned, &model.title, &look.options())?;
    let dir = out.clone().unwrap_or_else(|| beside_model(path, "replicates"));
    let mode = cluster.mode(out.as_deref())?;
    let bar = super::bar::Bar::new(*json);
    let passes =
        anlage::replicates::shard::replicate_passes(&model, *attribute, *check_step, name.as_ref().map(|_| &wild_type));
    let mutant_words = name.as_ref().map_or_else(
        || "no mutant".into(),
        |m| {
            let edits: Vec<String> = m.edits.iter().map(|e| wild_type.describe_edit(e)).collect();
            format!("mutant {}: {}", m.name, edits.join(", "))
        },
    );
    let shard_job = anlage::replicates::shard::job(
        "replicates",
        &wild_type,
        &passes,
        vec![mutant_words],
        n,
        super::cluster::rerun_command(),
    );
    super::cluster::check_cut(&mode, cluster, &shard_job, *json)?;
    let saved = match mode {
        Mode::Slurm => return super::cluster::write_slurm(cluster, &dir, *json),
        Mode::Shard(shard) => {
            let stop = super::cluster::stop_flag()?;
            let (ran, failed) = anlage::replicates::shard::run_shard(&passes, &shard_job, shard, &dir, &stop, &bar)?;
            note_failed(failed);
            return super::cluster::report_shards(&[(ran, &shard_job)], shard, &dir, *json);
        }
        Mode::Merge => Some(anlage::replicates::shard::merge(&shard_job, &dir)?),
        Mode::Whole => None,
    };
    let job = anlage::ReplicateJob { n, attribute: *attribute, check_step: *check_step, animate: animate.unwrap_or(0) };
    let paired = name.as_ref().map(|m| (m.name.as_str(), &wild_type));
    let report = anlage::write_replicates(&model, job, paired, &style, &dir, embryo_source(saved.as_ref()), &bar)
        .with_context(|| format!("replicates of {}", path.display()))?;
    for note in &report.notes {
        eprintln!("anlage: note: {note}");
    }
    anlage::page::write_page(&dir, &model.title)?;
    super::json::print_either(
        *json,
        || super::json::replicates(&report, &dir),
        || print::replicates(&model, &report, &dir),
    );
    Ok(())
}

/// Refuses a number of embryos outside 2..=MAX_REPLICATES.
fn check_embryos(option: &str, n: usize) -> Result<(), StyleError> {
    if (2..=anlage::model::noise::MAX_REPLICATES).contains(&n) {
        return Ok(());
    }
    Err(StyleError::OutOfRange {
        option: option.into(),
        value: n.to_string(),
        fix: format!("give 2 to {} embryos", anlage::model::noise::MAX_REPLICATES),
    })
}

/// Where a command's embryos come from: the shards merged, or simulated here.
fn embryo_source(saved: Option<&anlage::replicates::shard::Saved>) -> &dyn anlage::replicates::Embryos {
    match saved {
        Some(s) => s,
        None => &anlage::replicates::Simulated,
    }
}

/// Says on standard error that embryos of a shard failed, and what follows.
fn note_failed((count, first): anlage::replicates::shard::Failed) {
    if let Some((i, set, why)) = first {
        eprintln!(
            "anlage: warning: {count} embryo run(s) of this shard failed (first: embryo {i}, set `{set}`: {why}); \
             they are saved as failed, and the merge will refuse the set as an unsharded run would — make the noise \
             smaller or the steps safer"
        );
    }
}
