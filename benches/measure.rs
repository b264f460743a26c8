//! Measuring accuracy (not a timing): `cargo bench --bench measure` measures
//! the synthetic stained-embryo images of tests/imaging (invented data, drawn
//! from the physics of the picture by a generator that shares no code with
//! `measure`) and prints the boundary error of every image against the
//! generator's truth, then totals: the 72-image benchmark set, and 10 seeds of
//! each hard case (faint single plane, bright-field, two embryos, one cut by
//! the frame). Errors are in % of the embryo's length.

#[allow(dead_code, unused_imports)]
#[path = "../tests/imaging/mod.rs"]
mod imaging;

use imaging::accuracy::{CaseResult, Summary, evaluate, summarise};
use imaging::generator;

fn row(r: &CaseResult) {
    let mean = r.errors.iter().sum::<f64>() / r.errors.len().max(1) as f64;
    let worst = r.errors.iter().copied().fold(0.0, f64::max);
    let mut notes = Vec::new();
    if r.missed > 0 {
        notes.push(format!("{} missed", r.missed));
    }
    if r.extra > 0 {
        notes.push(format!("{} extra", r.extra));
    }
    if r.flips > 0 {
        notes.push(format!("{} head flips ({} not flagged)", r.flips, r.silent_flips));
    }
    if r.cut_skipped > 0 {
        notes.push(format!("{} cut embryo skipped", r.cut_skipped));
    }
    notes.extend(r.refused.iter().cloned());
    if let Some(f) = &r.failed {
        notes.push(f.clone());
    }
    println!("| {} | {} | {} | {mean:.3} | {worst:.3} | {} |", r.name, r.description, r.errors.len(), notes.join("; "));
}

fn total(label: &str, s: &Summary) {
    println!(
        "{label}: {} images, {} boundaries found, {} missed, {} extra; mean |error| {:.3} %, worst {:.3} % ({}); \
         head flips {} ({} not flagged); contrast wrong {}; cut embryos skipped {}; refusals {}",
        s.images,
        s.found,
        s.missed,
        s.extra,
        s.mean_error,
        s.worst.0,
        s.worst.1,
        s.flips.0,
        s.flips.1,
        s.wrong_contrast,
        s.cut_skipped,
        s.refusals.len()
    );
    for r in &s.refusals {
        println!("  refused: {r}");
    }
}

fn main() {
    let dir = std::env::temp_dir().join(format!("anlage-bench-measure-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    println!("| image | scene | boundaries | mean error % | worst % | notes |");
    println!("| --- | --- | --- | --- | --- | --- |");
    let set: Vec<CaseResult> = (0..generator::CASES).map(|k| evaluate(&generator::case(k), &dir)).collect();
    set.iter().for_each(row);
    let builders: [(&str, fn(u64) -> generator::Case); 4] = [
        ("faint single plane", generator::faint_single_plane),
        ("bright-field", generator::bright_field),
        ("two embryos", generator::two_embryos),
        ("one cut by the frame", generator::one_cut_by_edge),
    ];
    let mut hard = Vec::new();
    for (_, build) in builders {
        for seed in 100..110 {
            let r = evaluate(&build(seed), &dir);
            row(&r);
            hard.push(r);
        }
    }
    println!();
    total("benchmark set", &summarise(&set));
    total("hard cases", &summarise(&hard));
    let all: Vec<CaseResult> = set.into_iter().chain(hard).collect();
    total("all", &summarise(&all));
    let _ = std::fs::remove_dir_all(&dir);
}
