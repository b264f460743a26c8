//! Pictures at any size and as SVG: a wider picture is the same layout with
//! more pixels (text and lines scaled with it), and `--svg` writes each
//! picture as a vector document whose text is text.

use std::path::Path;

use anlage::readout::find_boundaries;
use anlage::render::{self, Style, StyleOptions};

use crate::common::{anlage, load, root, run, temp_dir};

/// Every text node of an SVG document, in order.
fn svg_texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants().filter(|n| n.has_tag_name("text")).filter_map(|n| n.text().map(str::to_string)).collect()
}

fn png_size(path: &Path) -> (u32, u32) {
    let img = image::open(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    (img.width(), img.height())
}

/// `run --svg` writes an SVG beside every PNG. Each parses as XML (roxmltree,
/// an independent parser); its page size is its PNG's and its viewBox the
/// layout; its text holds the gene names, the axis labels and the model
/// prediction notice; the kymograph's colour field is an embedded PNG that
/// decodes to the plot area. One and two threads give the same bytes.
#[test]
fn run_svgs_parse_hold_their_text_and_do_not_depend_on_threads() {
    let dir = temp_dir("svg-run");
    let model = root().join("patterns/ribbon.toml");
    let mut outs = Vec::new();
    for threads in ["1", "2"] {
        let out = dir.join(format!("t{threads}"));
        let o = anlage(&[
            "run",
            model.to_str().unwrap(),
            "-o",
            out.to_str().unwrap(),
            "--threads",
            threads,
            "-q",
            "--svg",
            "--width",
            "1080",
        ]);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        outs.push(out);
    }
    let names = ["kymograph", "boundary_positions", "pattern", "profiles"];
    for name in names {
        let [a, b] = [0, 1].map(|k| {
            (
                std::fs::read(outs[k].join(format!("{name}.png"))).unwrap(),
                std::fs::read_to_string(outs[k].join(format!("{name}.svg"))).unwrap(),
            )
        });
        assert!(a.0 == b.0, "{name}.png differs between 1 and 2 threads");
        assert!(a.1 == b.1, "{name}.svg differs between 1 and 2 threads");
        let doc = roxmltree::Document::parse(&a.1).unwrap_or_else(|e| panic!("{name}.svg: {e}"));
        let svg = doc.root_element();
        assert!(svg.has_tag_name("svg"), "{name}");
        let (w, h) = png_size(&outs[0].join(format!("{name}.png")));
        assert_eq!(svg.attribute("width"), Some(w.to_string().as_str()), "{name}");
        assert_eq!(svg.attribute("height"), Some(h.to_string().as_str()), "{name}");
        let view: Vec<f64> = svg.attribute("viewBox").unwrap().split(' ').map(|v| v.parse().unwrap()).collect();
        assert_eq!(view[2], 720.0, "{name}: laid out at 720, drawn at 1080");
        assert!((view[3] * 1.5 - h as f64).abs() <= 1.0, "{name}: {view:?} against {h} px");
        let texts = svg_texts(&doc).join("\n");
        for want in ["amber", "cobalt", "model prediction"] {
            assert!(texts.contains(want), "{name}.svg has no text `{want}`:\n{texts}");
        }
    }
    let doc_text = std::fs::read_to_string(outs[0].join("kymograph.svg")).unwrap();
    let doc = roxmltree::Document::parse(&doc_text).unwrap();
    let texts = svg_texts(&doc);
    for label in ["time (min)", "position along the axis (% length)"] {
        assert!(texts.iter().any(|t| t == label), "kymograph.svg lacks the axis label `{label}`");
    }
    let image = doc.descendants().find(|n| n.has_tag_name("image")).expect("the colour field");
    let href = image.attribute("href").unwrap();
    let bytes = {
        use base64::Engine as _;
        base64::engine::general_purpose::STANDARD.decode(href.strip_prefix("data:image/png;base64,").unwrap()).unwrap()
    };
    let field = image::load_from_memory(&bytes).unwrap();
    let width: f64 = image.attribute("width").unwrap().parse().unwrap();
    assert!((field.width() as f64 - 1.5 * width).abs() <= 1.0, "{} px for {width} layout units", field.width());
}

/// The mean absolute difference per channel between `small` and `big`
/// reduced by `k × k` box averaging, over rows `rows` of `small`.
fn reduced_difference(small: &render::Canvas, big: &render::Canvas, k: u32, rows: std::ops::Range<u32>) -> f64 {
    let (sw, bw) = (small.pixel_width() as usize, big.pixel_width() as usize);
    let (s, b) = (small.rgba(), big.rgba());
    let (mut total, mut count) = (0.0, 0usize);
    for y in rows {
        for x in 0..sw as u32 {
            for c in 0..3 {
                let mut sum = 0.0;
                for dy in 0..k {
                    for dx in 0..k {
                        sum += b[4 * (((y * k + dy) as usize) * bw + (x * k + dx) as usize) + c] as f64;
                    }
                }
                let reduced = sum / (k * k) as f64;
                total += (reduced - s[4 * (y as usize * sw + x as usize) + c] as f64).abs();
                count += 1;
            }
        }
    }
    total / count as f64
}

/// Asked twice as wide (1440 px), a kymograph is the 720-px picture with
/// twice the pixels along each side: reduced 2 × 2 it matches the small one
/// to half a level on average, also over the title and the axis labels alone, which
/// would not hold if text and lines kept their pixel sizes. Below 720 px the
/// layout itself narrows and nothing is scaled.
#[test]
fn wider_pictures_scale_text_and_lines_with_them() {
    let rec = run(&load("patterns/ribbon.toml")).recording;
    let boundaries = find_boundaries(&rec).unwrap();
    let draw = |width: Option<u32>| {
        let style = Style::with_options(&rec, "Ribbon", &StyleOptions { width, ..Default::default() }).unwrap();
        render::kymograph(&rec, &boundaries, &style).unwrap().0
    };
    let (small, big) = (draw(None), draw(Some(1440)));
    assert_eq!((big.pixel_width(), big.pixel_height()), (2 * small.pixel_width(), 2 * small.pixel_height()));
    assert_eq!((big.width(), big.height()), (small.width(), small.height()), "the same layout");
    let whole = reduced_difference(&small, &big, 2, 0..small.pixel_height());
    let title = reduced_difference(&small, &big, 2, 0..40);
    let bottom = reduced_difference(&small, &big, 2, small.pixel_height() - 50..small.pixel_height());
    // Measured 0.12, 0.03 and 0.08 levels; with text left at its pixel size
    // (the defect this guards against) 1.2, 2.0 and 4.7.
    assert!(whole < 0.5 && title < 0.5 && bottom < 0.5, "whole {whole:.2}, title {title:.2}, labels {bottom:.2}");
    let narrow = draw(Some(480));
    assert_eq!((narrow.pixel_width(), narrow.scale()), (480, 1.0));
}
