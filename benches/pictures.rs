//! Picture speed: a 200-frame GIF of a 256×256 sheet (frames drawn and
//! quantised in parallel), and the three PNGs of the ribbon demo.
//! `cargo bench --bench pictures`.

use std::time::Instant;

use anlage::readout::find_boundaries;
use anlage::render::{self, Style};
use anlage::{RunOptions, reference, simulate};

fn main() {
    let model = reference::parse(&reference::toggle_sheet_movie(256, 199), "movie").expect("reference model");
    let rec = simulate(&model, &RunOptions::default()).expect("run").recording;
    let style = Style::for_recording(&rec);
    let mut best = f64::INFINITY;
    let mut frames = 0;
    let mut size = 0;
    for _ in 0..2 {
        let mut out = Vec::new();
        let start = Instant::now();
        frames = render::write_gif(&rec, &style, &mut out).expect("gif").frames;
        best = best.min(start.elapsed().as_secs_f64());
        size = out.len();
    }
    println!(
        "GIF, 256x256 sheet, {frames} frames: {best:.2} s ({:.1} ms/frame, {:.1} MB) on {} threads",
        1e3 * best / frames as f64,
        size as f64 / 1e6,
        rayon::current_num_threads()
    );

    let ribbon = anlage::model::Model::load("patterns/ribbon.toml".as_ref()).expect("demo");
    let rec = simulate(&ribbon, &RunOptions::default()).expect("run").recording;
    let boundaries = find_boundaries(&rec).expect("in memory");
    let style = Style::for_recording(&rec);
    let start = Instant::now();
    let last = rec.times.len() - 1;
    let k = render::kymograph(&rec, &boundaries, &style).expect("in memory").0.png().expect("png");
    let max = render::gene_maxima(&rec, &[last]).expect("in memory");
    let p = render::pattern(&rec, last, &style, &max).expect("in memory").0.png().expect("png");
    let q = render::profiles(&rec, &boundaries, &style).expect("in memory").png().expect("png");
    println!(
        "ribbon kymograph + pattern + profiles PNGs: {:.3} s ({} bytes)",
        start.elapsed().as_secs_f64(),
        k.len() + p.len() + q.len()
    );
}
