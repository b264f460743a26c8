//! Engine throughput: nucleus·gene·steps per second, fixed-step SBDF2 first,
//! then the ARK4 scheme and error-controlled steps of both schemes.
//!
//! `cargo bench --bench engine` (add `-- quick` for a short run). Each case is
//! a problem from `anlage::reference` (the ones the tests check), run through
//! `anlage::simulate` including set-up; the best of several repeats is shown,
//! with ns per nucleus·gene·step (accepted steps; an ARK4 step is five stage
//! solves and rate evaluations). Compare with the NumPy peer side by side:
//! see README ("Speed").

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
        Case {
            name: "P1 row ARK4, 10^5 nuclei x 4 genes, 200 steps",
            text: with_scheme(&reference::peer_p1(100_000, 200 / scale), "ark4"),
            repeats: 3,
        },
        Case {
            name: "P1 row, 10^5 x 4, error control 1e-6",
            text: with_tolerance(&reference::peer_p1(100_000, 1000), 1e-6),
            repeats: 3,
        },
        Case {
            name: "P1 row ARK4, 10^5 x 4, error control 1e-6",
            text: with_scheme(&with_tolerance(&reference::peer_p1(100_000, 1000), 1e-6), "ark4"),
            repeats: 3,
        },
    ];
    println!("{:<46} {:>10} {:>16} {:>8} {:>10}", "case", "best s", "nuc*gene*steps/s", "ns each", "threads");
    for case in cases {
        let model = reference::parse(&case.text, case.name).expect("reference model");
        let mut best = f64::INFINITY;
        let mut checksum = 0.0;
        let mut steps = 0;
        for _ in 0..case.repeats {
            let start = Instant::now();
            let run = simulate(&model, &RunOptions { parallel: true, ..Default::default() }).expect("run");
            best = best.min(start.elapsed().as_secs_f64());
            checksum = reference::checksum(run.recording.final_state());
            steps = run.stats.steps;
        }
        let work = (model.grid.len() * model.genes.len() * steps) as f64;
        println!(
            "{:<46} {:>10.4} {:>16.3e} {:>8.2} {:>10}   {steps} steps, checksum {checksum:.17}",
            case.name,
            best,
            work / best,
            1e9 * best / work,
            rayon::current_num_threads()
        );
    }
}

/// The model text with `scheme` in its clock.
fn with_scheme(text: &str, scheme: &str) -> String {
    text.replacen("[clock]\n", &format!("[clock]\nscheme = \"{scheme}\"\n"), 1)
}

/// The model text with error-controlled steps at `tol` instead of its fixed step.
fn with_tolerance(text: &str, tol: f64) -> String {
    let step = text.lines().find(|l| l.starts_with("step_min = ")).expect("a fixed step");
    text.replacen(step, &format!("tolerance = {tol:e}"), 1)
}
