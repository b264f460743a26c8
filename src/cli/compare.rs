//! The `compare` verb: a run against measured boundaries, and optionally
//! the measured spreads against replicate embryos.

use std::collections::HashMap;

use anyhow::{Context, bail};

use anlage::compare;
use anlage::render::Style;

use super::args::CompareArgs;
use super::common::{Report, refuse_json_with_stdout, say, table_to_stdout, write_table_to_stdout};
use super::measure::bad_option;

/// `anlage compare`.
pub fn compare(args: &CompareArgs) -> anyhow::Result<()> {
    let CompareArgs { run_dir, measured, stages, sd_floor, replicates, out, canvas, json } = args;
    let (sd_floor, json) = (*sd_floor, *json);
    refuse_json_with_stdout(out.as_deref(), json)?;
    let to_stdout = table_to_stdout(out.as_deref());
    if to_stdout {
        canvas.refuse("compare -o -", "writes only its table, to standard output")?;
    }
    let report = Report::for_out(out.as_deref());
    let mut map = HashMap::new();
    for s in stages {
        let (label, min) = s.split_once('=').ok_or_else(|| bad_option("--stage", s, "write LABEL=MINUTES"))?;
        let min: f64 = min
            .trim()
            .parse()
            .ok()
            .filter(|m: &f64| m.is_finite() && *m >= 0.0)
            .ok_or_else(|| bad_option("--stage", s, "write LABEL=MINUTES with a number of minutes >= 0"))?;
        if map.insert(label.trim().to_string(), min).is_some() {
            bail!(bad_option("--stage", s, "map each stage label once"));
        }
    }
    if !(sd_floor.is_finite() && sd_floor > 0.0) {
        bail!(bad_option("--sd-floor", &sd_floor.to_string(), "give a number > 0, % of the length"));
    }
    let saved = anlage::run_folder::load(run_dir)?;
    let rows = compare::read_measured(measured, &map, "--stage LABEL=MINUTES")?;
    let rec = &saved.recording;
    compare::check_genes(measured, &rows, &rec.genes)?;
    compare::check_times(measured, &rows, &rec.times)?;
    let mut cmp = compare::compare(rec, &rows, sd_floor)?;
    let spread = match replicates {
        Some(dir) => {
            compare::spread::check_origin(run_dir, dir)?;
            let table = compare::spread::precision_table(dir);
            let predicted = compare::spread::read_predicted(&table)?;
            Some(compare::spread::score_spread(&mut cmp, &predicted, rec.grid.length_um(), &table)?)
        }
        None => None,
    };
    let dir = out.clone().unwrap_or_else(|| run_dir.to_path_buf());
    if to_stdout {
        write_table_to_stdout(|w| anlage::export::write_comparison_to(&cmp, w))?;
    } else {
        std::fs::create_dir_all(&dir).with_context(|| format!("creating {}", dir.display()))?;
        anlage::export::write_comparison(&cmp, &dir.join("comparison.csv"))?;
        // One picture per time the table measures: the last is comparison.png,
        // earlier ones comparison_t<MIN>min.png.
        let times: Vec<usize> =
            (0..rec.times.len()).filter(|&s| cmp.rows.iter().any(|r| r.time_min == rec.times[s])).collect();
        let times = if times.is_empty() { vec![rec.times.len() - 1] } else { times };
        // Pictures of an earlier comparison at other times would pass for this one's.
        for entry in std::fs::read_dir(&dir).into_iter().flatten().flatten() {
            let name = entry.file_name().to_string_lossy().into_owned();
            if name.starts_with("comparison_t") && (name.ends_with("min.png") || name.ends_with("min.svg")) {
                let _ = std::fs::remove_file(entry.path());
            }
        }
        for (k, &s) in times.iter().enumerate().rev() {
            let at = anlage::render::time_text(rec.times[s]);
            let title = format!("{}: simulated vs measured at t = {at} min", saved.summary.title);
            let style = Style::with_options(rec, &title, &canvas.options())?;
            let overlay = anlage::render::comparison_overlay(rec, s, &cmp, &style)?;
            let name =
                if k + 1 == times.len() { "comparison.png".to_string() } else { format!("comparison_t{at}min.png") };
            anlage::write_picture(&dir.join(name), &overlay, style.svg)?;
        }
        anlage::page::write_page(&dir, &saved.summary.title)?;
    }
    if json {
        println!("{}", super::json::compare(&cmp, &dir));
        return Ok(());
    }
    say!(report, "simulated (model prediction) vs measured boundaries:");
    for r in &cmp.rows {
        let f = |v: Option<f64>| v.map_or_else(|| "-".into(), |x| format!("{x:.2}"));
        say!(
            report,
            "  {:<10} t = {:<6} {:<10} {:<8} measured {:>7} sim {:>7} diff {:>7} z {:>6}  {}",
            r.sample,
            r.time_min,
            r.gene,
            r.direction,
            f(r.measured_pct),
            f(r.simulated_pct),
            f(r.difference_pct),
            f(r.z),
            r.status
        );
    }
    match cmp.rmse_pct {
        Some(e) => say!(
            report,
            "root-mean-square difference: {e:.3} % of axis length over {} matched boundaries",
            cmp.rows.iter().filter(|r| r.status == "matched").count()
        ),
        None => say!(report, "no boundary could be matched"),
    }
    if let Some(notes) = &spread {
        spread_report(&report, &cmp, notes);
    }
    if cmp.raised_sds > 0 {
        say!(
            report,
            "note: {} sd(s) below the resolution or the floor ({sd_floor} % of length) were raised to it for z",
            cmp.raised_sds
        );
    }
    if cmp.at_last_snapshot > 0 {
        say!(
            report,
            "note: {} row(s) give no time and were compared at the last snapshot, t = {} min",
            cmp.at_last_snapshot,
            rec.times[rec.times.len() - 1]
        );
    }
    let rms = |r: Option<f64>| r.map_or_else(|| "-".into(), |x| format!("{x:.2} %"));
    for h in &cmp.mirror {
        say!(
            report,
            "warning: {} (t = {} min) matches much better read the other way round: {} matched, rms {} mirrored; {} matched, rms {} as given. Was its head taken at the wrong end? Check its picture, and measure with --head or --head-high.",
            h.sample,
            h.time_min,
            h.mirrored.0,
            rms(h.mirrored.1),
            h.as_given.0,
            rms(h.as_given.1)
        );
    }
    if !to_stdout {
        say!(report, "wrote {}", dir.join("comparison.csv").display());
    }
    Ok(())
}

/// The spread section of the report: each scored row's measured and
/// predicted sd, the ratio and its interval.
fn spread_report(report: &Report, cmp: &compare::Comparison, notes: &compare::spread::SpreadNotes) {
    say!(
        report,
        "positional error, measured sd vs model prediction over replicate embryos (ratio measured/predicted, 95 % interval; the measured sd also holds measurement error):"
    );
    let f = |v: Option<f64>| v.map_or_else(|| "-".into(), |x| format!("{x:.2}"));
    for r in cmp.rows.iter().filter(|r| r.predicted_sd_pct.is_some()) {
        say!(
            report,
            "  {:<10} t = {:<6} {:<10} {:<8} measured {:>6} % (n {}) predicted {:>6} % ({} embryos) ratio {} [{}, {}] {}",
            r.sample,
            r.time_min,
            r.gene,
            r.direction,
            f(r.sd_pct),
            r.n.map_or_else(|| "not given".into(), |n| n.to_string()),
            f(r.predicted_sd_pct),
            r.predicted_embryos.unwrap_or(0),
            f(r.sd_ratio),
            f(r.sd_ratio_low),
            f(r.sd_ratio_high),
            if r.spread.is_empty() { "(give n for an interval)" } else { r.spread.as_str() }
        );
    }
    if notes.scored == 0 {
        say!(report, "note: no matched boundary with a measured sd had a predicted spread");
    }
    if notes.no_prediction > 0 {
        say!(
            report,
            "note: {} matched boundary(ies) with a measured sd have no predicted spread at their snapshot (the replicates recorded other times, or no embryo had the boundary)",
            notes.no_prediction
        );
    }
}
