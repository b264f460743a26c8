//! Screen speed and memory: the ribbon demo with 100 and then 1,000 mutants
//! (dosage series over all its parameters), rayon over mutants, each run on
//! one thread keeping only its final state. Prints the time and the process's
//! peak resident memory (VmHWM) after each size, which should stay flat.
//! `cargo bench --bench screen`.

use std::time::Instant;

use anlage::model::{Edit, Model, Mutant};
use anlage::screen::run_screen;

fn peak_rss_mib() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines().find(|l| l.starts_with("VmHWM:")).and_then(|l| l.split_whitespace().nth(1)?.parse::<f64>().ok())
        })
        .map_or(f64::NAN, |kib| kib / 1024.0)
}

fn mutants(model: &Model, count: usize) -> Vec<Mutant> {
    let params = model.parameters();
    (0..count)
        .map(|k| {
            let p = params[k % params.len()];
            // Factors spread over ×0.5 … ×2 (log-uniform), different for each mutant.
            let f = (-(2f64.ln()) + 2.0 * 2f64.ln() * (k as f64 + 0.5) / count as f64).exp();
            Mutant { name: format!("{} x{f:.4}", model.param_name(p)), edits: vec![Edit::Scale(p, f)] }
        })
        .collect()
}

fn main() {
    let model = Model::load("patterns/ribbon.toml".as_ref()).expect("demo");
    for count in [100, 1000] {
        let list = mutants(&model, count);
        let start = Instant::now();
        let screen = run_screen(&model, &list, true).expect("screen");
        let secs = start.elapsed().as_secs_f64();
        let rows: usize = screen.shifts.iter().map(Vec::len).sum();
        println!(
            "ribbon screen, {count} mutants: {secs:.2} s ({:.2} ms per mutant) on {} threads, {rows} shift rows, peak RSS {:.1} MiB",
            1e3 * secs / count as f64,
            rayon::current_num_threads(),
            peak_rss_mib()
        );
    }
}
