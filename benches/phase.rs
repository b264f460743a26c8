//! Basin analysis speed: a 100-nucleus, 4-gene row (the P1 circuit) at 60
//! snapshots, with gradients frozen (fixed points shared over time) and with
//! each snapshot's diffusion influx frozen too (every nucleus and time distinct).
//! `cargo bench --bench phase`.

use std::time::Instant;

use anlage::phase::{BasinOptions, analyse};
use anlage::{RunOptions, reference, simulate};

fn main() {
    let model = reference::parse(&reference::peer_p1_recorded(100, 1200, 60), "p1").expect("reference model");
    let rec = simulate(&model, &RunOptions::default()).expect("run").recording;
    assert_eq!(rec.times.len(), 61);
    for with_influx in [false, true] {
        let mut best = f64::INFINITY;
        let mut labels = Vec::new();
        for _ in 0..3 {
            let start = Instant::now();
            let a = analyse(&model, &rec, &BasinOptions { with_influx, ..Default::default() }).expect("in memory");
            best = best.min(start.elapsed().as_secs_f64());
            labels = a.labels.clone();
        }
        println!(
            "basins, 100 nuclei x 4 genes x {} snapshots, influx frozen: {with_influx}: {best:.3} s on {} threads (attractors: {})",
            rec.times.len(),
            rayon::current_num_threads(),
            labels.join(", ")
        );
    }
}
