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
/// would not hold if text and lines kept their pixel sizes. From 720 down
/// to 560 px the layout itself narrows and nothing is scaled; narrower, the
/// 560-px layout is scaled down. Every picture is as wide as asked.
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
    let narrow = draw(Some(600));
    assert_eq!((narrow.pixel_width(), narrow.width(), narrow.scale()), (600, 600, 1.0));
    let small = draw(Some(400));
    assert_eq!((small.pixel_width(), small.width()), (400, 560));
    // Pictures laid out wider than asked (a screen's chart needs 480 px, a
    // fit's 720) are scaled to the width asked too.
    let style = Style::with_options(&rec, "t", &StyleOptions { width: Some(400), ..Default::default() }).unwrap();
    let screen = anlage::screen::run_screen(&load("patterns/ribbon.toml"), &[], false).unwrap();
    let chart = render::shift_chart(&screen, &rec.genes, &style);
    assert_eq!(chart.pixel_width(), 400);
}

/// `--gif-max-mb`: an animation three times too large keeps every k-th
/// frame and the last (at least [`render::MIN_FRAMES`]) and fits; one that
/// cannot fit gives up colours down to 16 and says it could not. What is
/// reported is what was written (frames counted by decoding the GIF).
#[test]
fn animations_meet_a_size_by_giving_up_frames_then_colours() {
    let rec = run(&load("patterns/ribbon.toml")).recording;
    let make = |mb: Option<f64>| {
        let opts = StyleOptions { gif_max_mb: mb, width: Some(1080), ..Default::default() };
        let style = Style::with_options(&rec, "Ribbon", &opts).unwrap();
        let mut bytes = Vec::new();
        let made = render::write_gif(&rec, &style, &mut bytes).unwrap();
        assert_eq!(made.bytes, bytes.len());
        let mut decoder = gif::DecodeOptions::new().read_info(bytes.as_slice()).unwrap();
        let mut frames = 0;
        while decoder.read_next_frame().unwrap().is_some() {
            frames += 1;
        }
        assert_eq!(frames, made.frames);
        made
    };
    let full = make(None);
    assert_eq!((full.frames, full.every, full.colours), (rec.times.len(), 1, 256));
    assert_eq!(full.describe("pattern.gif"), None);
    let target = full.bytes as f64 / 3.0 / 1e6;
    let third = make(Some(target));
    assert!(third.fits() && third.bytes as f64 <= target * 1e6, "{third:?}");
    assert!(third.every >= 3 && third.frames >= render::MIN_FRAMES, "{third:?}");
    let note = third.describe("pattern.gif").unwrap();
    assert!(note.contains(&format!("{} frames", third.frames)) && !note.contains("NOT"), "{note}");
    let tiny = make(Some(0.05));
    assert!(!tiny.fits() && tiny.colours == 16, "{tiny:?}");
    assert!(tiny.describe("pattern.gif").unwrap().contains("could NOT"));
}

/// From a user trial: picture options that would do nothing are refused
/// (exit 2, naming the option); a picture redrawn without `--svg` loses its
/// old SVG, and the run folder stays complete; `portrait -o` must be a PNG;
/// a title with control characters still gives SVGs that parse, with runs
/// of spaces kept.
#[test]
fn picture_options_are_honoured_or_refused() {
    let dir = temp_dir("svg-options");
    let model = root().join("patterns/ribbon.toml");
    let m = model.to_str().unwrap();
    let refused = |args: &[&str], option: &str| {
        let o = anlage(args);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(option), "{args:?}: {err}");
    };
    let out = dir.join("run");
    let o = out.to_str().unwrap();
    refused(&["run", m, "-o", o, "--no-pictures", "--svg"], "--svg");
    refused(&["screen", m, "--knockouts", "-o", "-", "--width", "900"], "--width");
    refused(&["sensitivity", m, "-o", "-", "--light"], "--light");
    let o_run = anlage(&["run", m, "-o", o, "-q", "--svg"]);
    assert!(o_run.status.success());
    assert!(out.join("kymograph.svg").is_file());
    refused(&["render", o, "--kind", "animation", "--svg"], "--svg");
    let o_render = anlage(&["render", o, "--kind", "kymograph", "-q"]);
    assert!(o_render.status.success(), "{}", String::from_utf8_lossy(&o_render.stderr));
    assert!(!out.join("kymograph.svg").exists(), "the old SVG of a redrawn picture is removed");
    assert!(out.join("pattern.svg").exists(), "pictures not redrawn keep theirs");
    assert_eq!(anlage::run_folder::incomplete(&out, &[]), None);
    refused(
        &["portrait", o, "--nucleus", "3", "--genes", "amber,cobalt", "-o", dir.join("p.svg").to_str().unwrap()],
        "-o",
    );
    // A title with a tab, a bell and a run of spaces.
    let text = std::fs::read_to_string(&model).unwrap();
    let first = text.lines().find(|l| l.starts_with("title")).unwrap();
    let odd = text.replacen(first, "title = \"Odd\\ttitle\\u0007 with   gaps & <marks>\"", 1);
    let odd_model = dir.join("odd.toml");
    std::fs::write(&odd_model, odd).unwrap();
    let odd_out = dir.join("odd");
    let o_odd = anlage(&["run", odd_model.to_str().unwrap(), "-o", odd_out.to_str().unwrap(), "-q", "--svg"]);
    assert!(o_odd.status.success(), "{}", String::from_utf8_lossy(&o_odd.stderr));
    let svg = std::fs::read_to_string(odd_out.join("kymograph.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("an SVG that parses");
    assert!(svg_texts(&doc).iter().any(|t| t == "Odd title  with   gaps & <marks>"), "{:?}", svg_texts(&doc));
}

/// `figure` draws a run in four lettered panels (pattern, kymograph,
/// boundary positions, attractors along the axis) at exactly the width
/// asked, with an SVG twin that names each panel; in the run folder it joins
/// the page and the manifest. The attractor branches are drawn in the
/// colours of their attractors (the genes' colours of the run).
#[test]
fn figure_has_four_lettered_panels() {
    let dir = temp_dir("figure");
    let out = dir.join("run");
    let m = root().join("patterns/ribbon.toml");
    assert!(anlage(&["run", m.to_str().unwrap(), "-o", out.to_str().unwrap(), "-q"]).status.success());
    let o = anlage(&["figure", out.to_str().unwrap(), "--svg", "--width", "1200", "-q"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(png_size(&out.join("figure.png")).0, 1200);
    let svg = std::fs::read_to_string(out.join("figure.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let texts = svg_texts(&doc);
    for want in ["A", "B", "C", "D", "Final pattern", "Boundary positions over time", "model prediction"] {
        assert!(texts.iter().any(|t| t == want), "no `{want}` in {texts:?}");
    }
    assert!(texts.iter().any(|t| t.starts_with("Attractors along the axis")));
    assert!(std::fs::read_to_string(out.join("report.html")).unwrap().contains("<code>figure.png</code>"));
    assert_eq!(anlage::run_folder::incomplete(&out, &[]), None);
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let colours: Vec<String> =
        summary["colors"].as_array().unwrap().iter().map(|c| c.as_str().unwrap().to_lowercase()).collect();
    // Panel D is the fourth group placed on the figure.
    let panel_d = doc.root_element().children().filter(|n| n.has_tag_name("g")).nth(3).expect("four panels");
    let strokes: Vec<String> = panel_d
        .descendants()
        .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke-width") == Some("2.5"))
        .filter_map(|n| n.attribute("stroke").map(str::to_string))
        .collect();
    for c in &colours {
        assert!(strokes.contains(c), "no branch in {c} among {strokes:?}");
    }
    let bad = anlage(&["figure", out.to_str().unwrap(), "-o", dir.join("f.svg").to_str().unwrap()]);
    assert_eq!(bad.status.code(), Some(2));
}

/// `screen --over-time` draws every mutant's boundaries over time against
/// the wild type's: one panel per mutant, named; its last point lies where
/// the screen's table puts that mutant's final boundary. Refused with `-o -`.
#[test]
fn screens_draw_boundaries_over_time() {
    let dir = temp_dir("over-time");
    let m = root().join("patterns/ribbon.toml");
    let out = dir.join("screen");
    let o =
        anlage(&["screen", m.to_str().unwrap(), "--knockouts", "--over-time", "--svg", "-o", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let svg = std::fs::read_to_string(out.join("shifts_over_time.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let texts = svg_texts(&doc);
    for name in ["ko:amber", "ko:cobalt"] {
        assert!(texts.iter().any(|t| t == name), "no panel `{name}` in {texts:?}");
    }
    // ko:cobalt moves the amber boundary: the amber track's last point in the
    // second panel sits at the mutant_pct of shifts.csv.
    let table = std::fs::read_to_string(out.join("shifts.csv")).unwrap();
    let header: Vec<&str> = table.lines().next().unwrap().split(',').collect();
    let col = |n: &str| header.iter().position(|h| *h == n).unwrap();
    let row: Vec<&str> = table
        .lines()
        .map(|l| l.split(',').collect::<Vec<_>>())
        .find(|r| r[col("mutant")] == "ko:cobalt" && r[col("gene")] == "amber")
        .expect("ko:cobalt moves amber");
    let want: f64 = row[col("mutant_pct")].parse().unwrap();
    let amber = "#e69f00";
    // Panel frames are the closed 5-point polylines; ko:cobalt's is the one
    // whose top-left corner its name is written above.
    let label = doc.descendants().find(|n| n.has_tag_name("text") && n.text() == Some("ko:cobalt")).unwrap();
    let at = |k: &str| label.attribute(k).unwrap().parse::<f64>().unwrap();
    let corner = (at("x"), at("y") + 6.0);
    let frames: Vec<Vec<(f64, f64)>> = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .map(|n| {
            n.attribute("points")
                .unwrap()
                .split(' ')
                .map(|p| {
                    let (x, y) = p.split_once(',').unwrap();
                    (x.parse().unwrap(), y.parse().unwrap())
                })
                .collect::<Vec<(f64, f64)>>()
        })
        .filter(|p| p.len() == 5 && p[0] == p[4])
        .collect();
    let frame = frames.iter().find(|f| (f[0].0 - corner.0).abs() < 0.1 && (f[0].1 - corner.1).abs() < 0.1).unwrap();
    let (x0, x1) = (frame[0].0, frame[1].0);
    let (y_top, y_bottom) = (frame[0].1, frame[2].1);
    let last_amber = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(amber))
        .filter_map(|n| {
            let pts = n.attribute("points").unwrap();
            let (x, y) = pts.split(' ').next_back().unwrap().split_once(',').unwrap();
            let (x, y): (f64, f64) = (x.parse().unwrap(), y.parse().unwrap());
            (x > x0 - 0.5 && x < x1 + 0.5 && y > y_top - 0.5 && y < y_bottom + 0.5).then_some((x, y))
        })
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .expect("an amber track in the ko:cobalt panel");
    let pct = 100.0 * (y_bottom - last_amber.1) / (y_bottom - y_top);
    assert!((pct - want).abs() < 0.5, "drawn at {pct:.2} %, table {want:.2} %");
    let refused = anlage(&["screen", m.to_str().unwrap(), "--knockouts", "--over-time", "-o", "-"]);
    assert_eq!(refused.status.code(), Some(2));
}
