//! Sanity checks of the generator itself: geometry, truth, files, noise, determinism.

use std::collections::HashSet;

use image::{ColorType, DynamicImage, ImageFormat};

use super::physics::rasterise;
use super::*;

/// The planes of a decoded image as grey levels, row-major.
fn decoded_planes(bytes: &[u8]) -> Vec<Vec<f64>> {
    let img = image::load_from_memory(bytes).expect("decodes");
    let split = |raw: Vec<f64>, n: usize| (0..n).map(|p| raw.iter().skip(p).step_by(n).copied().collect()).collect();
    match img {
        DynamicImage::ImageLuma8(b) => vec![b.into_raw().into_iter().map(f64::from).collect()],
        DynamicImage::ImageLuma16(b) => vec![b.into_raw().into_iter().map(f64::from).collect()],
        DynamicImage::ImageRgb8(b) => split(b.into_raw().into_iter().map(f64::from).collect(), 3),
        DynamicImage::ImageRgb16(b) => split(b.into_raw().into_iter().map(f64::from).collect(), 3),
        other => panic!("unexpected colour type {:?}", other.color()),
    }
}

/// Pixels farther than `r` px (square window) from any pixel touched by an embryo.
fn far_from_embryos(scene: &Scene, r: usize) -> Vec<bool> {
    let (w, h) = (scene.width, scene.height);
    let cov = scene.coverage();
    // Integral image of touched pixels.
    let mut sum = vec![0usize; (w + 1) * (h + 1)];
    for y in 0..h {
        for x in 0..w {
            sum[(y + 1) * (w + 1) + x + 1] =
                (cov[y * w + x] > 0.0) as usize + sum[y * (w + 1) + x + 1] + sum[(y + 1) * (w + 1) + x]
                    - sum[y * (w + 1) + x];
        }
    }
    (0..w * h)
        .map(|i| {
            let (x, y) = (i % w, i / w);
            let (x0, x1, y0, y1) = (x.saturating_sub(r), (x + r + 1).min(w), y.saturating_sub(r), (y + r + 1).min(h));
            sum[y1 * (w + 1) + x1] + sum[y0 * (w + 1) + x0] - sum[y0 * (w + 1) + x1] - sum[y1 * (w + 1) + x0] == 0
        })
        .collect()
}

#[test]
fn poles_are_the_outline_extremes() {
    for i in 0..CASES {
        let sc = scene(i);
        for (e, t) in sc.embryos.iter().zip(sc.truth()) {
            let (hx, hy) = t.head;
            let length = (t.tail.0 - hx).hypot(t.tail.1 - hy);
            assert!((length - t.length_px).abs() < 1e-9, "{}: pole distance {length} vs {}", sc.name, t.length_px);
            let (dx, dy) = ((t.tail.0 - hx) / length, (t.tail.1 - hy) / length);
            let along = |x: f64, y: f64| (x - hx) * dx + (y - hy) * dy;
            // The exact outline stays between the poles.
            for (x, y) in e.outline(4000) {
                let s = along(x, y);
                assert!((-1e-9..=length + 1e-9).contains(&s), "{}: outline point at {s} of {length}", sc.name);
            }
            // So do the rendered (noise-free, area-weighted) inside pixels, and they reach the poles.
            let ext = e.extent();
            let canvas = Canvas {
                x0: ext[0].floor() as isize - 2,
                y0: ext[2].floor() as isize - 2,
                w: (ext[1] - ext[0]).ceil() as usize + 6,
                h: (ext[3] - ext[2]).ceil() as usize + 6,
            };
            let cov =
                rasterise(std::slice::from_ref(e), canvas, sc.supersample, 1, |l, o| o[0] = l.is_some() as u8 as f64)
                    .remove(0);
            let (mut lo, mut hi) = (f64::MAX, f64::MIN);
            for (k, _) in cov.iter().enumerate().filter(|(_, c)| **c >= 0.5) {
                let (x, y) = (canvas.x0 + (k % canvas.w) as isize, canvas.y0 + (k / canvas.w) as isize);
                let s = along(x as f64, y as f64);
                (lo, hi) = (lo.min(s), hi.max(s));
            }
            assert!(lo >= -0.5 && hi <= length + 0.5, "{}: inside pixels span {lo}..{hi} of {length}", sc.name);
            assert!(lo <= 1.5 && hi >= length - 1.5, "{}: inside pixels span only {lo}..{hi} of {length}", sc.name);
        }
    }
}

#[test]
fn profiles_and_shapes_keep_to_their_ranges() {
    for i in 0..CASES {
        let sc = scene(i);
        for e in &sc.embryos {
            assert!((150.0..=420.0).contains(&e.length_px) && (2.0..=3.2).contains(&e.aspect), "{}", sc.name);
            assert!((1.8..=2.6).contains(&e.exponent) && e.taper.abs() <= 0.2, "{}", sc.name);
            for p in &e.profiles {
                assert!(valid(p), "{}: {p:?}", sc.name);
                assert!(p.edges().all(|x| (0.3..=1.5).contains(&x.width_pct) && x.bow_pct.abs() <= 3.0), "{}", sc.name);
            }
        }
        assert!((0.8..=2.5).contains(&sc.psf_sigma) && (0.05..=0.25).contains(&sc.illumination.fall), "{}", sc.name);
    }
}

/// The truth sits where the rendered (area-weighted, unblurred) stain crosses half its peak on the
/// midline, and rises or falls head → tail as stated: checks the orientation of s in the picture.
#[test]
fn true_boundaries_lie_on_the_rendered_half_maximum() {
    for i in 0..CASES {
        let sc = scene(i);
        let maps = sc.gene_maps();
        let (w, h) = (sc.width as f64, sc.height as f64);
        let sample = |map: &[f64], (x, y): (f64, f64)| -> Option<f64> {
            if x < 1.0 || y < 1.0 || x > w - 2.0 || y > h - 2.0 {
                return None;
            }
            let (x0, y0) = (x.floor() as usize, y.floor() as usize);
            let (fx, fy) = (x - x0 as f64, y - y0 as f64);
            let at = |xx: usize, yy: usize| map[yy * sc.width + xx];
            Some(
                (1.0 - fy) * ((1.0 - fx) * at(x0, y0) + fx * at(x0 + 1, y0))
                    + fy * ((1.0 - fx) * at(x0, y0 + 1) + fx * at(x0 + 1, y0 + 1)),
            )
        };
        let mut checked = 0;
        for (e, t) in sc.embryos.iter().zip(sc.truth()) {
            for b in &t.boundaries {
                let g = sc.genes.iter().position(|n| *n == b.gene).unwrap();
                let peak = e.profiles[g].peak();
                let s = b.position_pct;
                let (Some(mid), Some(before), Some(after)) = (
                    sample(&maps[g], e.midline_point(s)),
                    sample(&maps[g], e.midline_point((s - 2.5).max(4.0))),
                    sample(&maps[g], e.midline_point((s + 2.5).min(96.0))),
                ) else {
                    continue;
                };
                assert!((mid - 0.5 * peak).abs() < 0.12, "{} {} at {s:.2} %: level {mid:.3}", sc.name, b.gene);
                let rise = if b.direction == "rising" { after - before } else { before - after };
                assert!(rise > 0.3, "{} {} {} at {s:.2} %: {before:.2} -> {after:.2}", sc.name, b.gene, b.direction);
                checked += 1;
            }
        }
        assert!(checked > 0, "{}: no boundary inside the frame", sc.name);
    }
}

#[test]
fn every_case_decodes_as_stated() {
    let all = cases();
    assert!(all.len() >= 64);
    assert_eq!(all.iter().map(|c| c.name.as_str()).collect::<HashSet<_>>().len(), all.len(), "names unique");
    for (i, c) in all.iter().enumerate() {
        let sc = scene(i);
        println!("{:<26} {}", c.name, c.description);
        assert!(c.name.chars().all(|ch| ch.is_ascii_alphanumeric() || ch == '_') && !c.description.is_empty());
        let format = if c.extension == "tif" { ImageFormat::Tiff } else { ImageFormat::Png };
        assert_eq!(image::guess_format(&c.bytes).unwrap(), format, "{}", c.name);
        let img = image::load_from_memory(&c.bytes).unwrap();
        assert_eq!((img.width() as usize, img.height() as usize), (sc.width, sc.height), "{}", c.name);
        let colour = match (c.planes, c.bits) {
            (1, 8) => ColorType::L8,
            (1, 16) => ColorType::L16,
            (2 | 3, 8) => ColorType::Rgb8,
            (2 | 3, 16) => ColorType::Rgb16,
            other => panic!("{}: {other:?}", c.name),
        };
        assert_eq!(img.color(), colour, "{}", c.name);
        let planes = decoded_planes(&c.bytes);
        if c.planes == 2 {
            assert!(planes[2].iter().all(|&v| v == 0.0), "{}: unused plane not black", c.name);
        }
        for p in &planes[..c.planes] {
            let max = p.iter().copied().fold(0.0, f64::max);
            assert!(max < if c.bits == 8 { 255.0 } else { 65535.0 } && max > 0.0, "{}: clipped, max {max}", c.name);
        }
        // The truth agrees with itself and with the recipe.
        assert_eq!(c.dark_on_light, matches!(sc.imaging, Imaging::BrightField(_)), "{}", c.name);
        assert!(
            c.channels.iter().all(|(p, g)| *p < c.planes && sc.genes.contains(g) && Some(*p) != c.counterstain_plane)
        );
        assert_eq!(c.channels.len(), sc.genes.len());
        assert!(c.head_high_gene.iter().all(|g| c.channels.iter().any(|(_, n)| n == g)));
        let r = recipe(i);
        assert_eq!(c.embryos.len(), r.embryos, "{}", c.name);
        for (k, e) in c.embryos.iter().enumerate() {
            assert_eq!(e.cut_by_edge, r.cut && k + 1 == r.embryos, "{}: embryo {k}", c.name);
            for (_, g) in &c.channels {
                assert!(e.boundaries.iter().any(|b| b.gene == *g), "{}: no boundary of {g}", c.name);
            }
            assert!(e.boundaries.iter().all(|b| (3.0..=97.0).contains(&b.position_pct)
                && ["rising", "falling"].contains(&b.direction)
                && c.channels.iter().any(|(_, n)| *n == b.gene)));
        }
    }
    // What the set covers.
    let count = |f: &dyn Fn(&Case, &Recipe) -> bool| (0..CASES).filter(|&i| f(&all[i], &recipe(i))).count();
    for p in 1..=3 {
        assert!(count(&|c, _| c.planes == p && !c.dark_on_light) >= 6, "{p} planes");
    }
    assert!(count(&|c, _| c.counterstain_plane.is_some()) >= 10);
    assert!((5..=9).contains(&count(&|c, _| c.dark_on_light)));
    assert!(count(&|c, _| c.embryos.len() == 2) >= 5);
    assert!(count(&|c, _| c.embryos.iter().any(|e| e.cut_by_edge)) >= 5);
    assert!(count(&|_, r| !r.bright_field && r.autofluorescence.1 <= 3.0) >= 8);
    assert!(count(&|c, _| c.bits == 8) >= 20 && count(&|c, _| c.bits == 16) >= 20);
    assert!(count(&|c, _| c.extension == "tif") >= 20 && count(&|c, _| c.extension == "png") >= 20);
    assert!(count(&|c, _| c.head_high_gene.is_some()) >= 10 && count(&|c, _| c.head_high_gene.is_none()) >= 10);
    let heads_left = count(&|c, _| c.embryos[0].head.0 < c.embryos[0].tail.0);
    assert!((10..=CASES - 10).contains(&heads_left), "{heads_left} heads on the left");
}

/// Residuals of the background, far from any embryo, against the camera model: returns
/// (Σ(g − μ)² / Σ(var(μ) + 1/12), mean residual in standard errors, pixel count).
fn background_noise(scene: &Scene) -> (f64, f64, usize) {
    let planes = decoded_planes(&render(scene).bytes);
    let means = scene.noise_free();
    let far = far_from_embryos(scene, (4.0 * scene.psf_sigma).ceil() as usize + 3);
    let (mut sq, mut var, mut sum, mut n) = (0.0, 0.0, 0.0, 0);
    for (p, (got, mean)) in planes.iter().zip(&means).enumerate() {
        for i in (0..got.len()).filter(|&i| far[i]) {
            let r = got[i] - mean[i];
            (sq, var, sum, n) = (sq + r * r, var + scene.camera(p).variance(mean[i]) + 1.0 / 12.0, sum + r, n + 1);
        }
    }
    (sq / var, sum / var.sqrt(), n)
}

#[test]
fn background_noise_follows_the_camera_model() {
    let eight_bit_three = Recipe { planes: 3, bits: 8, tiff: true, ..Recipe::default() };
    let grey_bright = Recipe { bright_field: true, planes: 1, bits: 16, ..Recipe::default() };
    let scenes = [
        build(&Recipe::faint_single_plane(1), 1, None),
        build(&Recipe::faint_single_plane(2), 2, None),
        build(&eight_bit_three, 3, None),
        build(&Recipe::bright_field(), 4, None),
        build(&grey_bright, 5, None),
        build(&Recipe::two_embryos(), 6, None),
    ];
    for sc in &scenes {
        let (ratio, z, n) = background_noise(sc);
        println!("{}: variance ratio {ratio:.4}, mean residual {z:.2} SE, {n} pixels", sc.name);
        assert!(n >= 2000, "{}: only {n} background pixels", sc.name);
        assert!((ratio - 1.0).abs() < 0.1, "{}: variance ratio {ratio}", sc.name);
        assert!(z.abs() < 5.0, "{}: mean residual {z} SE", sc.name);
    }
}

#[test]
fn rendering_is_deterministic() {
    assert_eq!(scene(40), scene(40));
    assert_eq!(case(13).bytes, case(13).bytes);
    assert_eq!(bright_field(3).bytes, bright_field(3).bytes);
    assert_ne!(faint_single_plane(3).bytes, faint_single_plane(4).bytes);
    let (a, b) = (one_cut_by_edge(9), two_embryos(9));
    assert!(a.embryos.iter().filter(|e| e.cut_by_edge).count() == 1 && b.embryos.iter().all(|e| !e.cut_by_edge));
}

/// Writes every case and an 8-bit preview (planes stretched; head green, tail red, true boundaries
/// yellow on the midline) to $ANLAGE_IMAGING_OUT (default: the temporary folder), to look at.
#[test]
#[ignore = "writes files; run by hand to look at the pictures"]
fn write_cases_to_look_at() {
    let dir = std::env::var_os("ANLAGE_IMAGING_OUT")
        .map_or_else(|| std::env::temp_dir().join("anlage-imaging"), std::path::PathBuf::from);
    std::fs::create_dir_all(&dir).unwrap();
    let extra = [faint_single_plane(1), bright_field(1), two_embryos(1), one_cut_by_edge(1)];
    for c in cases().into_iter().chain(extra) {
        std::fs::write(dir.join(format!("{}.{}", c.name, c.extension)), &c.bytes).unwrap();
        let planes = decoded_planes(&c.bytes);
        let img = image::load_from_memory(&c.bytes).unwrap();
        let (w, h) = (img.width(), img.height());
        let stretch = |p: &Vec<f64>| -> Vec<u8> {
            let (lo, hi) = p.iter().fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
            p.iter().map(|v| (255.0 * (v - lo) / (hi - lo).max(1.0)) as u8).collect()
        };
        let s: Vec<Vec<u8>> = planes.iter().map(stretch).collect();
        let mut rgb = image::RgbImage::from_fn(w, h, |x, y| {
            let i = (y * w + x) as usize;
            if s.len() == 1 { image::Rgb([s[0][i]; 3]) } else { image::Rgb([s[0][i], s[1][i], s[2][i]]) }
        });
        let mut dot = |(x, y): (f64, f64), colour: [u8; 3]| {
            for dy in -2..=2 {
                for dx in -2..=2 {
                    let (px, py) = (x.round() as i64 + dx, y.round() as i64 + dy);
                    if px >= 0 && py >= 0 && px < w as i64 && py < h as i64 {
                        rgb.put_pixel(px as u32, py as u32, image::Rgb(colour));
                    }
                }
            }
        };
        for e in &c.embryos {
            dot(e.head, [0, 255, 0]);
            dot(e.tail, [255, 0, 0]);
            for b in &e.boundaries {
                let f = b.position_pct / 100.0;
                dot((e.head.0 + f * (e.tail.0 - e.head.0), e.head.1 + f * (e.tail.1 - e.head.1)), [255, 255, 0]);
            }
        }
        rgb.save(dir.join(format!("{}_preview.png", c.name))).unwrap();
    }
}
