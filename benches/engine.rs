//! Engine throughput: nucleus·gene·steps per second for fixed-step SBDF2.
//!
//! `cargo bench --bench engine` (add `-- quick` for a short run). Each case is
//! a problem from `anlage::reference` (the ones the tests check), run through
//! `anlage::simulate` including set-up; the best of several repeats is shown.
//! Compare with the NumPy peer side by side: see README ("Speed").

use std::time::Instant;

use anlage::{RunOptions, reference, simulate};

struct Case {
    name: &'static str,
    text: String,
    repeats: usize,
}

fn main() {
    let quick = std::env::args().any(|a| a == "quick");
    let scale = if quick { 10 } else { 1 };
    let cases = [
        Case { name: "P1 row, 100 nuclei x 4 genes, 1000 steps", text: reference::peer_p1(100, 1000), repeats: 20 },
        Case {
            name: "P1 row, 10^5 nuclei x 4 genes, 1000 steps",
            text: reference::peer_p1(100_000, 1000 / scale),
            repeats: 3,
        },
        Case {
            name: "P1 as rate expressions, 10^5 x 4, 1000 steps",
            text: reference::peer_p1_as_rates(100_000, 1000 / scale),
            repeats: 3,
        },
        Case {
            name: "toggle sheet, 512x512 x 2 genes, 100 steps",
            text: reference::toggle_sheet(512, 100 / scale),
            repeats: 2,
        },
    ];
    println!("{:<46} {:>10} {:>16} {:>10}", "case", "best s", "nuc*gene*steps/s", "threads");
    for case in cases {
        let model = reference::parse(&case.text, case.name).expect("reference model");
        let steps = model.clock.fixed_steps().expect("fixed steps");
        let work = (model.grid.len() * model.genes.len() * steps) as f64;
        let mut best = f64::INFINITY;
        let mut checksum = 0.0;
        for _ in 0..case.repeats {
            let start = Instant::now();
            let run = simulate(&model, &RunOptions { parallel: true, ..Default::default() }).expect("run");
            best = best.min(start.elapsed().as_secs_f64());
            checksum = reference::checksum(run.recording.final_state());
        }
        println!(
            "{:<46} {:>10.4} {:>16.3e} {:>10}   checksum {checksum:.17}",
            case.name,
            best,
            work / best,
            rayon::current_num_threads()
        );
    }
}
