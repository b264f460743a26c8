use anlage::model::Model;
use anlage::{RunOptions, simulate};
fn main() {
    let path = std::env::args().nth(1).unwrap();
    let reps: usize = std::env::args().nth(2).map_or(300, |s| s.parse().unwrap());
    let m = Model::load(std::path::Path::new(&path)).unwrap();
    let t = std::time::Instant::now();
    for _ in 0..reps {
        simulate(&m, &RunOptions { parallel: true, ..Default::default() }).unwrap();
    }
    println!("{:.3} ms per run", t.elapsed().as_secs_f64() * 1e3 / reps as f64);
}
