//! Pictures: they decode, and what they show matches the numbers.

use std::process::Command;

use anlage::readout::find_boundaries;
use anlage::render::{self, Background, PatternLayout, Style};

use crate::common::{load, root, run};

fn ribbon() -> anlage::Recording {
    run(&load("patterns/ribbon.toml")).recording
}

/// The GIF has one frame per snapshot, the pattern's size, and loops forever;
/// the PNGs decode to their canvas sizes.
#[test]
fn gif_and_pngs_decode() {
    let rec = ribbon();
    let style = Style::for_recording(&rec);
    let mut bytes = Vec::new();
    let frames = render::write_gif(&rec, &style, &mut bytes).unwrap().frames;
    assert_eq!(frames, rec.times.len());
    let (first, _) = render::pattern(&rec, 0, &style, &render::gene_maxima(&rec, &[0]).unwrap()).unwrap();
    let mut opts = gif::DecodeOptions::new();
    opts.set_color_output(gif::ColorOutput::RGBA);
    let mut dec = opts.read_info(bytes.as_slice()).unwrap();
    assert_eq!((dec.width() as u32, dec.height() as u32), (first.width(), first.height()));
    assert_eq!(dec.repeat(), gif::Repeat::Infinite);
    let mut count = 0;
    while let Some(f) = dec.read_next_frame().unwrap() {
        count += 1;
        // 10 frames per second, and a hold of 2 s on the last frame.
        let want = if count == rec.times.len() { 200 } else { 10 };
        assert_eq!(f.delay, want, "frame {count}");
    }
    assert_eq!(count, rec.times.len());
    let boundaries = find_boundaries(&rec).unwrap();
    let (k, _) = render::kymograph(&rec, &boundaries, &style).unwrap();
    for canvas in [k, first] {
        let png = canvas.png().unwrap();
        let img = image::load_from_memory(&png).unwrap();
        assert_eq!((img.width(), img.height()), (canvas.width(), canvas.height()));
    }
}

/// `--frame-every 4` keeps every fourth snapshot and the last, whose frame
/// is held; a frame equals the pattern picture of its snapshot.
#[test]
fn animations_skip_frames_and_keep_the_last() {
    let rec = ribbon();
    let opts = anlage::render::StyleOptions { frame_every: Some(4), ..Default::default() };
    let style = Style::with_options(&rec, "t", &opts).unwrap();
    let n = rec.times.len();
    let want: Vec<usize> = (0..n).filter(|k| k % 4 == 0 || *k == n - 1).collect();
    let mut bytes = Vec::new();
    assert_eq!(render::write_gif(&rec, &style, &mut bytes).unwrap().frames, want.len());
    let mut opts = gif::DecodeOptions::new();
    opts.set_color_output(gif::ColorOutput::RGBA);
    let mut dec = opts.read_info(bytes.as_slice()).unwrap();
    let max = render::gene_maxima(&rec, &(0..n).collect::<Vec<_>>()).unwrap();
    let mut k = 0;
    while let Some(f) = dec.read_next_frame().unwrap() {
        // Colours are quantised to a palette per frame: compare on average,
        // against this snapshot and against the one before it (which an
        // unskipped animation would show here).
        let diff = |s: usize| {
            let (picture, _) = render::pattern(&rec, s, &style, &max).unwrap();
            let pairs = f.buffer.iter().zip(picture.rgba());
            pairs.map(|(a, b)| a.abs_diff(*b) as f64).sum::<f64>() / f.buffer.len() as f64
        };
        let own = diff(want[k]);
        assert!(own < 3.0, "frame {k}: mean difference {own} from snapshot {}", want[k]);
        if k > 0 && k + 1 < want.len() {
            assert!(own < diff(want[k] - 1), "frame {k} is closer to snapshot {} than to {}", want[k] - 1, want[k]);
        }
        assert_eq!(f.delay, if k + 1 == want.len() { 200 } else { 10 });
        k += 1;
    }
    assert_eq!(k, want.len());
    let bad = anlage::render::StyleOptions { frame_every: Some(0), ..Default::default() };
    assert!(Style::with_options(&rec, "t", &bad).is_err());
}

/// Inside the embryo outline, the colour at a nucleus's position is the gene's
/// colour scaled by its level there (relative to its maximum over the run),
/// on dark; on white, white minus the colour's complement scaled by the level.
#[test]
fn embryo_pixels_show_the_level_of_the_gene() {
    let rec = ribbon();
    let last = rec.times.len() - 1;
    let amber = rec.genes.iter().position(|g| g == "amber").unwrap();
    let profile: Vec<f64> = rec.state(last).unwrap().row(amber).to_vec();
    let max = rec.states().map(|s| s.unwrap().row(amber).iter().copied().fold(0.0, f64::max)).fold(0.0, f64::max);
    let color = rec.colors[amber];
    for bg in [Background::Dark, Background::Light] {
        let mut style = Style::for_recording(&rec);
        style.genes = vec![amber];
        style.background = bg;
        let maxima = render::gene_maxima(&rec, &(0..rec.times.len()).collect::<Vec<_>>()).unwrap();
        let (canvas, layout) = render::pattern(&rec, last, &style, &maxima).unwrap();
        let PatternLayout::Embryo { cx, cy, rx, .. } = layout else { panic!("a row is drawn as an embryo") };
        let h = rec.grid.spacing_um;
        let length = rec.grid.length_um();
        for i in [3usize, 20, 45, 60, 90] {
            let x_i = (i as f64 + 0.5) * h;
            let px = (cx - rx + (x_i / length) as f32 * 2.0 * rx).floor() as u32;
            // The level at this pixel's centre, interpolated here from the raw state.
            let x = ((px as f32 + 0.5 - (cx - rx)) / (2.0 * rx)) as f64 * length;
            let f = x / h - 0.5;
            let j = f.floor() as usize;
            let v = (profile[j] + (profile[j + 1] - profile[j]) * (f - j as f64)) / max;
            let want: Vec<f64> = match bg {
                Background::Dark => color.iter().map(|c| *c as f64 * v).collect(),
                Background::Light => color.iter().map(|c| 255.0 - (255.0 - *c as f64) * v).collect(),
            };
            let got = canvas.get(px, cy as u32);
            for k in 0..3 {
                assert!((got[k] as f64 - want[k]).abs() <= 1.0, "{bg:?} nucleus {i}: got {got:?}, want {want:?}");
            }
        }
    }
}

/// The boundary trace on the kymograph passes within one pixel of the
/// boundary position from the boundary table, mapped to pixels: a line in
/// the gene's colour with a dark halo on both sides, and no halo 8 px away.
/// Before the gene is expressed no trace is drawn.
#[test]
fn kymograph_trace_sits_on_the_boundary() {
    let rec = ribbon();
    let boundaries = find_boundaries(&rec).unwrap();
    let style = Style::for_recording(&rec);
    let amber = style.colors[rec.genes.iter().position(|g| g == "amber").unwrap()];
    let (canvas, layout) = render::kymograph(&rec, &boundaries, &style).unwrap();
    let a = layout.axes;
    let mut checked = 0;
    for b in boundaries.iter().filter(|b| b.gene == "amber" && b.time_min >= 80.0 && b.time_min <= 200.0) {
        let (x, y) = (a.px(b.position_pct), a.py(b.time_min));
        let at = |px: f32, dy: i32| canvas.get(px.round() as u32, (y.round() as i32 + dy) as u32);
        // Another gene's dashed trace may cover this one on some rows.
        let line = |px: f32| (-4..=4).any(|dy| at(px, dy).iter().zip(amber).all(|(v, w)| v.abs_diff(w) <= 40));
        // Dark: luminance (Rec. 709 weights) below 60 of 255.
        let dark = |px: f32| {
            let c = at(px, 0).map(f64::from);
            0.2126 * c[0] + 0.7152 * c[1] + 0.0722 * c[2] < 60.0
        };
        assert!((-1..=1).any(|d| line(x + d as f32)), "no trace near {x:.1} px at t = {}", b.time_min);
        let row: Vec<[u8; 3]> = (-6..=6).map(|d| at(x + d as f32, 0)).collect();
        assert!(
            (2..=4).any(|d| dark(x - d as f32)) && (2..=4).any(|d| dark(x + d as f32)),
            "no halo at t = {}: {row:?}",
            b.time_min
        );
        assert!(!dark(x - 8.0) && !dark(x + 8.0), "trace too wide at t = {}", b.time_min);
        checked += 1;
    }
    assert!(checked >= 20);
}

/// The boundary-position plot draws amber's track at the positions of the
/// boundary table (within a pixel and a half, at times 80–200 min), and
/// nothing before the gene is expressed: at t = 2 min, when amber is still
/// below a quarter of its highest level, its column is empty.
#[test]
fn boundary_position_plot_follows_the_table() {
    let rec = ribbon();
    let boundaries = find_boundaries(&rec).unwrap();
    let opts = anlage::render::StyleOptions { genes: Some(vec!["amber".into()]), ..Default::default() };
    let style = Style::with_options(&rec, "t", &opts).unwrap();
    let amber = style.colors[rec.genes.iter().position(|g| g == "amber").unwrap()];
    let (canvas, a) = render::boundary_positions(&rec, &boundaries, &style).unwrap();
    // Amber, perhaps dimmed by anti-aliasing: its hue (g/r) at half its brightness or more.
    let near = |c: [u8; 3]| {
        let (r, g, b) = (c[0] as f64, c[1] as f64, c[2] as f64);
        r >= 0.5 * amber[0] as f64 && (g / r - amber[1] as f64 / amber[0] as f64).abs() < 0.08 && b < 40.0
    };
    let mut checked = 0;
    for b in boundaries.iter().filter(|b| b.gene == "amber" && b.time_min >= 80.0 && b.time_min <= 200.0) {
        let (x, y) = (a.px(b.time_min).round() as i32, a.py(b.position_pct));
        assert!(
            (-1..=1).any(|d| near(canvas.get(x as u32, (y + d as f32).round() as u32))),
            "no track at t = {}, {:.2} %: {:?}",
            b.time_min,
            b.position_pct,
            (-4..=4).map(|d| canvas.get(x as u32, (y + d as f32).round() as u32)).collect::<Vec<_>>()
        );
        checked += 1;
    }
    assert!(checked >= 20);
    let early = a.px(2.0).round() as u32;
    assert!((a.top as u32..(a.top + a.height) as u32).all(|y| !near(canvas.get(early, y))), "a track at t = 2 min");
}

/// The scale bar's length in pixels matches its µm label on the embryo's scale.
#[test]
fn scale_bar_length_matches_its_label() {
    for model in ["patterns/ribbon.toml", "patterns/sheet.toml"] {
        let rec = run(&load(model)).recording;
        let style = Style::for_recording(&rec);
        let last = rec.times.len() - 1;
        let (canvas, layout) =
            render::pattern(&rec, last, &style, &render::gene_maxima(&rec, &[last]).unwrap()).unwrap();
        let (bar, um_per_px) = match layout {
            PatternLayout::Embryo { rx, bar, .. } => (bar, rec.grid.length_um() / (2.0 * rx as f64)),
            PatternLayout::Sheet { cell, bar, .. } => (bar, rec.grid.spacing_um / cell as f64),
        };
        let row = bar.2.round() as u32;
        let ink: Vec<u32> = (0..canvas.width()).filter(|&x| canvas.get(x, row).iter().all(|v| *v > 200)).collect();
        let measured = (ink.last().unwrap() - ink.first().unwrap() + 1) as f64;
        assert!((measured * um_per_px - bar.3).abs() <= 1.5 * um_per_px, "{model}: {measured} px for {} µm", bar.3);
        assert_eq!(render::scale_bar_um(rec.grid.length_um()), bar.3);
    }
}

/// `anlage render` on a saved run writes the same bytes as `anlage run` did.
#[test]
fn render_reproduces_run_pictures() {
    let dir = std::env::temp_dir().join(format!("anlage-render-{}", std::process::id()));
    let redraw = dir.join("redraw");
    let _ = std::fs::remove_dir_all(&dir);
    let exe = env!("CARGO_BIN_EXE_anlage");
    for model in ["patterns/ribbon.toml", "patterns/band.toml", "patterns/sheet.toml"] {
        let m = root().join(model);
        let ok =
            Command::new(exe).args(["run", m.to_str().unwrap(), "-q", "-o", dir.to_str().unwrap()]).status().unwrap();
        assert!(ok.success());
        let ok =
            Command::new(exe).args(["render", dir.to_str().unwrap(), "-o", redraw.to_str().unwrap()]).output().unwrap();
        assert!(ok.status.success(), "{}", String::from_utf8_lossy(&ok.stderr));
        for name in ["kymograph.png", "boundary_positions.png", "pattern.png", "profiles.png", "pattern.gif"] {
            let (a, b) = (std::fs::read(dir.join(name)).unwrap(), std::fs::read(redraw.join(name)).unwrap());
            assert!(a == b, "{model}: {name} differs");
        }
    }
}

/// A single-gene heat map paints each level with the perceptually uniform
/// sequential map: the pixel at a nucleus equals `sequential(level / max)`.
#[test]
fn heatmap_uses_the_sequential_map() {
    let rec = run(&load("patterns/band.toml")).recording;
    let last = rec.times.len() - 1;
    let opts = render::StyleOptions { genes: Some(vec!["teal".into()]), heatmap: true, ..Default::default() };
    let style = Style::with_options(&rec, "band", &opts).unwrap();
    let maxima = render::gene_maxima(&rec, &(0..rec.times.len()).collect::<Vec<_>>()).unwrap();
    let (canvas, layout) = render::pattern(&rec, last, &style, &maxima).unwrap();
    let PatternLayout::Embryo { cx, cy, rx, .. } = layout else { panic!("row") };
    let teal = rec.genes.iter().position(|g| g == "teal").unwrap();
    let profile = rec.state(last).unwrap().row(teal).to_vec();
    let length = rec.grid.length_um();
    for i in [10usize, 50, 70, 100] {
        let px = (cx - rx + (((i as f64 + 0.5) * rec.grid.spacing_um / length) as f32) * 2.0 * rx).floor() as u32;
        let x = ((px as f32 + 0.5 - (cx - rx)) / (2.0 * rx)) as f64 * length;
        let f = x / rec.grid.spacing_um - 0.5;
        let j = f.floor() as usize;
        let v = (profile[j] + (profile[j + 1] - profile[j]) * (f - j as f64)) / maxima[teal];
        let want = render::colour::sequential(v);
        let got = canvas.get(px, cy as u32);
        for k in 0..3 {
            assert!((got[k] as i32 - want[k] as i32).abs() <= 2, "nucleus {i}: got {got:?}, want {want:?}");
        }
    }
    assert!(Style::with_options(&rec, "band", &render::StyleOptions { heatmap: true, ..Default::default() }).is_err());
}
