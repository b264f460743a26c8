//! Recipes: what kind of picture to make. [`build`] draws every parameter of a [`Scene`] from a
//! recipe and a seed (Pcg64), within the ranges documented on the scene's fields.

use rand::seq::SliceRandom;
use rand::{RngExt, SeedableRng};
use rand_pcg::Pcg64;

use super::{
    BrightField, Camera, Domain, Edge, Embryo, FluorPlane, Illumination, Imaging, PlaneContent, Profile, Scene,
};

/// Invented gene names.
const GENE_NAMES: [&str; 7] = ["amber", "cobalt", "teal", "russet", "slate", "pewter", "sorrel"];

/// The kind of picture; every unspecified parameter is drawn by [`build`].
#[derive(Clone, Debug, PartialEq)]
pub struct Recipe {
    pub bright_field: bool,
    /// Fluorescent: 1–3 planes; bright-field: 1 (grey) or 3 (RGB).
    pub planes: usize,
    /// One of the fluorescent planes holds a nuclear counterstain (needs planes ≥ 2).
    pub counterstain: bool,
    /// 1 or 2.
    pub embryos: usize,
    /// The last embryo lies partly outside the frame (by 10–35 % of its extent across that edge).
    pub cut: bool,
    pub bits: u8,
    pub tiff: bool,
    /// Range of the autofluorescence per plane, in background noise sd.
    pub autofluorescence: (f64, f64),
    /// Range of the stain plateau per plane, in background noise sd.
    pub stain: (f64, f64),
    /// Patterns of the genes (else drawn, all different).
    pub patterns: Vec<Pattern>,
    /// Axis angle of the first embryo, degrees (else drawn from −90…90).
    pub angle_deg: Option<f64>,
    /// Edges bow by up to ±3 % of length (else straight).
    pub bowed: bool,
}

impl Default for Recipe {
    fn default() -> Recipe {
        Recipe {
            bright_field: false,
            planes: 2,
            counterstain: false,
            embryos: 1,
            cut: false,
            bits: 16,
            tiff: false,
            autofluorescence: (2.0, 10.0),
            stain: (8.0, 40.0),
            patterns: Vec::new(),
            angle_deg: None,
            bowed: true,
        }
    }
}

impl Recipe {
    /// One plane, one gene (head domain for even seeds, a single stripe for odd), autofluorescence
    /// 2–3 sd, stain 8–12 sd, 16-bit PNG.
    pub fn faint_single_plane(seed: u64) -> Recipe {
        let pattern = if seed.is_multiple_of(2) { Pattern::HeadDomain } else { Pattern::Stripe };
        Recipe {
            planes: 1,
            autofluorescence: (2.0, 3.0),
            stain: (8.0, 12.0),
            patterns: vec![pattern],
            ..Recipe::default()
        }
    }

    /// Bright-field RGB, 8-bit PNG, one gene.
    pub fn bright_field() -> Recipe {
        Recipe { bright_field: true, planes: 3, bits: 8, ..Recipe::default() }
    }

    /// Two embryos fully inside, a gene and a counterstain, 16-bit TIFF.
    pub fn two_embryos() -> Recipe {
        Recipe { planes: 2, counterstain: true, embryos: 2, tiff: true, ..Recipe::default() }
    }

    /// Two embryos, the second partly outside the frame, two genes, 8-bit PNG.
    pub fn one_cut_by_edge() -> Recipe {
        Recipe { planes: 2, embryos: 2, cut: true, bits: 8, ..Recipe::default() }
    }
}

/// Kinds of expression pattern along the axis (positions in % of length from the head).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Pattern {
    /// 1 from the head to 20–65 %.
    HeadDomain,
    /// 1 from 35–85 % to the tail.
    TailDomain,
    /// One stripe 14–30 % wide.
    Stripe,
    /// Two stripes 9–16 % wide, 8–25 % apart.
    TwoStripes,
    /// Three stripes 7.5–10 % wide, 6–12 % apart, sharper edges (scale ≤ 0.8 %).
    ThreeStripes,
    /// One broad central domain 28–50 % wide.
    Central,
    /// A head domain to 12–35 % and a stripe 10–20 % wide behind it.
    HeadAndStripe,
    /// Caps at both poles, to 8–25 % and from 75–92 %.
    BothEnds,
}

impl Pattern {
    pub const ALL: [Pattern; 8] = [
        Pattern::HeadDomain,
        Pattern::Stripe,
        Pattern::TailDomain,
        Pattern::TwoStripes,
        Pattern::HeadAndStripe,
        Pattern::Central,
        Pattern::BothEnds,
        Pattern::ThreeStripes,
    ];

    pub fn label(self) -> &'static str {
        match self {
            Pattern::HeadDomain => "head domain",
            Pattern::TailDomain => "tail domain",
            Pattern::Stripe => "stripe",
            Pattern::TwoStripes => "2 stripes",
            Pattern::ThreeStripes => "3 stripes",
            Pattern::Central => "central domain",
            Pattern::HeadAndStripe => "head domain + stripe",
            Pattern::BothEnds => "both ends",
        }
    }

    /// A profile of this pattern; redrawn until [`valid`].
    pub fn draw(self, rng: &mut Pcg64, bowed: bool) -> Profile {
        loop {
            let p = self.try_draw(rng, bowed);
            if valid(&p) {
                return p;
            }
        }
    }

    fn try_draw(self, rng: &mut Pcg64, bowed: bool) -> Profile {
        let max_w = if self == Pattern::ThreeStripes { 0.8 } else { 1.5 };
        let edge = |rng: &mut Pcg64, at: f64| {
            Some(Edge {
                at_pct: at,
                width_pct: rng.random_range(0.3..=max_w),
                bow_pct: if bowed { rng.random_range(-3.0..=3.0) } else { 0.0 },
            })
        };
        let stripe =
            |rng: &mut Pcg64, from: f64, width: f64| Domain { from: edge(rng, from), to: edge(rng, from + width) };
        let domains = match self {
            Pattern::HeadDomain => {
                let at = rng.random_range(20.0..=65.0);
                vec![Domain { from: None, to: edge(rng, at) }]
            }
            Pattern::TailDomain => {
                let at = rng.random_range(35.0..=85.0);
                vec![Domain { from: edge(rng, at), to: None }]
            }
            Pattern::Stripe => {
                let w = rng.random_range(14.0..=30.0);
                let from = rng.random_range(12.0..=88.0 - w);
                vec![stripe(rng, from, w)]
            }
            Pattern::Central => {
                let w = rng.random_range(28.0..=50.0);
                let from = rng.random_range(10.0..=90.0 - w);
                vec![stripe(rng, from, w)]
            }
            Pattern::TwoStripes | Pattern::ThreeStripes => {
                let (n, widths, gaps) =
                    if self == Pattern::TwoStripes { (2, 9.0..=16.0, 8.0..=25.0) } else { (3, 7.5..=10.0, 6.0..=12.0) };
                let ws: Vec<f64> = (0..n).map(|_| rng.random_range(widths.clone())).collect();
                let gs: Vec<f64> = (1..n).map(|_| rng.random_range(gaps.clone())).collect();
                let total = ws.iter().sum::<f64>() + gs.iter().sum::<f64>();
                let mut at = rng.random_range(7.0..=93.0 - total);
                let mut out = Vec::new();
                for (k, w) in ws.iter().enumerate() {
                    out.push(stripe(rng, at, *w));
                    at += w + gs.get(k).copied().unwrap_or(0.0);
                }
                out
            }
            Pattern::HeadAndStripe => {
                let e = rng.random_range(12.0..=35.0);
                let from = e + rng.random_range(10.0..=22.0);
                let w = rng.random_range(10.0..=20.0);
                vec![Domain { from: None, to: edge(rng, e) }, stripe(rng, from, w)]
            }
            Pattern::BothEnds => {
                let (head, tail) = (rng.random_range(8.0..=25.0), rng.random_range(75.0..=92.0));
                vec![Domain { from: None, to: edge(rng, head) }, Domain { from: edge(rng, tail), to: None }]
            }
        };
        Profile { domains }
    }
}

/// A usable profile: peak ≥ 0.95, at most 0.1 × peak on ≥ 10 % of the midline and at least
/// 0.9 × peak on ≥ 10 %, at least one boundary between 3 % and 97 %.
pub fn valid(p: &Profile) -> bool {
    let (off, on) = p.off_on_fractions();
    p.peak() >= 0.95 && off >= 0.1 && on >= 0.1 && !p.boundaries().is_empty()
}

/// The same pattern in another embryo: all edges shifted together by up to ±1.5 % and each by up
/// to ±0.5 % more, bows redrawn; redrawn until [`valid`].
fn jitter(p: &Profile, rng: &mut Pcg64, bowed: bool) -> Profile {
    loop {
        let mut q = p.clone();
        let shift = rng.random_range(-1.5..=1.5);
        for e in q.edges_mut() {
            e.at_pct += shift + rng.random_range(-0.5..=0.5);
            e.bow_pct = if bowed { rng.random_range(-3.0..=3.0) } else { 0.0 };
        }
        if valid(&q) {
            return q;
        }
    }
}

/// Draws a scene. `index` names it as benchmark case `index`; otherwise the name carries the seed.
pub fn build(recipe: &Recipe, seed: u64, index: Option<usize>) -> Scene {
    let mut rng = Pcg64::seed_from_u64(seed);
    let rng = &mut rng;
    let n_genes = if recipe.bright_field { 1 } else { recipe.planes - recipe.counterstain as usize };
    let mut names = GENE_NAMES.to_vec();
    names.shuffle(rng);
    let genes: Vec<String> = names[..n_genes].iter().map(|s| s.to_string()).collect();
    let patterns = if recipe.patterns.len() == n_genes {
        recipe.patterns.clone()
    } else {
        let mut all = Pattern::ALL.to_vec();
        all.shuffle(rng);
        all[..n_genes].to_vec()
    };
    let psf_sigma: f64 = rng.random_range(0.8..=2.5);
    let max_len = if recipe.embryos > 1 { 330.0 } else { 420.0 };
    let mut embryos: Vec<Embryo> = Vec::new();
    for k in 0..recipe.embryos {
        let profiles = match embryos.first() {
            None => patterns.iter().map(|p| p.draw(rng, recipe.bowed)).collect(),
            Some(first) => first.profiles.iter().map(|p| jitter(p, rng, recipe.bowed)).collect(),
        };
        let angle = rng.random_range(-90.0..=90.0);
        embryos.push(Embryo {
            centre: (0.0, 0.0),
            angle_deg: if k == 0 { recipe.angle_deg.unwrap_or(angle) } else { angle },
            length_px: rng.random_range(150.0..=max_len),
            aspect: rng.random_range(2.0..=3.2),
            exponent: rng.random_range(1.8..=2.6),
            taper: rng.random_range(0.04..=0.18) * if rng.random_bool(0.5) { 1.0 } else { -1.0 },
            head_at_plus: rng.random_bool(0.5),
            profiles,
        });
    }
    let margin = (4.0 * psf_sigma).ceil() + 4.0;
    let (width, height) = layout(rng, &mut embryos, recipe.cut, margin);
    let illumination = Illumination::random(rng, width, height);
    let imaging = if recipe.bright_field { bright(rng, recipe) } else { fluorescent(rng, recipe, n_genes) };
    let mut scene = Scene {
        name: String::new(),
        description: String::new(),
        width,
        height,
        genes,
        embryos,
        psf_sigma,
        illumination,
        imaging,
        supersample: 5,
        bits: recipe.bits,
        tiff: recipe.tiff,
        noise_seed: rng.random(),
    };
    scene.name = name(recipe, seed, index);
    scene.description = describe(&scene, &patterns);
    scene
}

fn name(r: &Recipe, seed: u64, index: Option<usize>) -> String {
    let kind = match (r.bright_field, r.planes) {
        (true, 1) => "bfgrey".to_string(),
        (true, _) => "bfrgb".to_string(),
        (false, p) => format!("fl{p}p"),
    };
    let cs = if r.counterstain { "_cs" } else { "" };
    let faint = if !r.bright_field && r.autofluorescence.1 <= 3.0 { "_faint" } else { "" };
    let emb = match (r.embryos, r.cut) {
        (1, false) => "",
        (1, true) => "_cut",
        (_, false) => "_x2",
        (_, true) => "_x2cut",
    };
    let prefix = index.map_or(format!("s{seed}"), |i| format!("c{i:02}"));
    format!("{prefix}_{kind}{cs}{faint}{emb}_{}bit_{}", r.bits, if r.tiff { "tif" } else { "png" })
}

fn describe(s: &Scene, patterns: &[Pattern]) -> String {
    let imaging = match &s.imaging {
        Imaging::Fluorescent(planes) => {
            let sd = |p: &FluorPlane| p.camera.variance(p.camera.offset + p.background).sqrt();
            let parts: Vec<String> = planes
                .iter()
                .enumerate()
                .map(|(i, p)| {
                    let what = match p.content {
                        PlaneContent::Gene(g) => format!("{} {}", s.genes[g], patterns[g].label()),
                        PlaneContent::Counterstain => "counterstain".to_string(),
                    };
                    format!("{i}: {what} {:.0} sd, af {:.1} sd", p.amplitude / sd(p), p.autofluorescence / sd(p))
                })
                .collect();
            format!("fluorescent [{}]", parts.join("; "))
        }
        Imaging::BrightField(b) => format!(
            "bright-field {} [{} {}], OD tissue {:.2} stain {:.2}",
            if b.rgb { "rgb" } else { "grey" },
            s.genes[0],
            patterns[0].label(),
            b.od_tissue,
            b.od_stain
        ),
    };
    let embryos: Vec<String> = s
        .embryos
        .iter()
        .map(|e| {
            let cut = if e.cut_by_frame(s.width, s.height) { " cut" } else { "" };
            format!("{:.0} px at {:.0}° head {}{cut}", e.length_px, e.angle_deg, if e.head_at_plus { "+" } else { "-" })
        })
        .collect();
    let bowed = s.embryos[0].profiles.iter().flat_map(|p| p.edges()).any(|e| e.bow_pct != 0.0);
    format!(
        "{imaging}; {}; psf {:.1} px, vignette {:.0} %, {}; {}×{} {}-bit {}",
        embryos.join(" + "),
        s.psf_sigma,
        100.0 * s.illumination.fall,
        if bowed { "bowed" } else { "straight edges" },
        s.width,
        s.height,
        s.bits,
        if s.tiff { "tif" } else { "png" }
    )
}

/// Frame size and embryo centres. Fully inside embryos keep `margin` px (≥ 4 PSF sd + 4) from every
/// frame edge; with `cut` the last embryo reaches 10–35 % of its extent beyond one edge. Two
/// embryos stay at least 8 px apart.
fn layout(rng: &mut Pcg64, embryos: &mut [Embryo], cut: bool, margin: f64) -> (usize, usize) {
    let rel: Vec<[f64; 4]> = embryos.iter().map(|e| e.extent()).collect();
    let size = |e: &[f64; 4]| (e[1] - e[0], e[3] - e[2]);
    let (mut w, mut h) = if embryos.len() == 1 {
        let (ew, eh) = size(&rel[0]);
        (
            ew + 2.0 * margin + rng.random_range(16.0..=0.8 * ew + 16.0),
            eh + 2.0 * margin + rng.random_range(16.0..=0.8 * eh + 16.0),
        )
    } else {
        let ((w0, h0), (w1, h1)) = (size(&rel[0]), size(&rel[1]));
        (
            ((w0 + w1) * rng.random_range(0.8..=1.05)).max(w0.max(w1) + 8.0) + 2.0 * margin,
            h0.max(h1) * rng.random_range(1.1..=1.5) + 2.0 * margin,
        )
    };
    loop {
        let (wu, hu) = (w.ceil().max(96.0) as usize, h.ceil().max(96.0) as usize);
        for _ in 0..400 {
            let last = embryos.len() - 1;
            for (k, e) in embryos.iter_mut().enumerate() {
                e.centre = if cut && k == last {
                    cut_position(rng, &rel[k], wu, hu, margin)
                } else {
                    inside_position(rng, &rel[k], wu, hu, margin)
                };
            }
            if embryos.len() == 1 || !embryos[0].near(&embryos[1], 8.0) {
                return (wu, hu);
            }
        }
        (w, h) = (w * 1.08, h * 1.08);
    }
}

/// A position along one frame axis of `len` px for an embryo of relative extent [lo, hi] keeping
/// `margin` px inside (or centred if it cannot).
fn along(rng: &mut Pcg64, lo: f64, hi: f64, len: usize, margin: f64) -> f64 {
    let (a, b) = (margin - lo, len as f64 - 1.0 - margin - hi);
    if a <= b { rng.random_range(a..=b) } else { (len as f64 - 1.0) / 2.0 - (lo + hi) / 2.0 }
}

fn inside_position(rng: &mut Pcg64, rel: &[f64; 4], w: usize, h: usize, margin: f64) -> (f64, f64) {
    (along(rng, rel[0], rel[1], w, margin), along(rng, rel[2], rel[3], h, margin))
}

fn cut_position(rng: &mut Pcg64, rel: &[f64; 4], w: usize, h: usize, margin: f64) -> (f64, f64) {
    let frac = rng.random_range(0.1..=0.35);
    let (ew, eh) = (rel[1] - rel[0], rel[3] - rel[2]);
    match rng.random_range(0..4) {
        0 => (-0.5 - frac * ew - rel[0], along(rng, rel[2], rel[3], h, margin)),
        1 => (w as f64 - 0.5 + frac * ew - rel[1], along(rng, rel[2], rel[3], h, margin)),
        2 => (along(rng, rel[0], rel[1], w, margin), -0.5 - frac * eh - rel[2]),
        _ => (along(rng, rel[0], rel[1], w, margin), h as f64 - 0.5 + frac * eh - rel[3]),
    }
}

/// Fluorescent planes, genes and counterstain in random plane order. Per plane, in units of the
/// background noise sd σ (at the illumination peak): background B = k·σ (k 2–10) above the offset,
/// autofluorescence and stain from the recipe, counterstain 25–50 σ (≥ 3 × autofluorescence); the
/// brightest expected level is 55–95 % of the usable top (lowered if [`headroom`] asks) (8-bit: 200; 16-bit: 4000–50000,
/// log-uniform), which fixes σ. A share f (0.4–0.9) of σ² is photon noise: gain = f·σ²/B grey
/// levels per photon, read noise √(1 − f)·σ.
fn fluorescent(rng: &mut Pcg64, recipe: &Recipe, n_genes: usize) -> Imaging {
    let top = if recipe.bits == 8 { 200.0 } else { rng.random_range(4000f64.ln()..=50000f64.ln()).exp() };
    let mut contents: Vec<PlaneContent> = (0..n_genes).map(PlaneContent::Gene).collect();
    if recipe.counterstain {
        contents.push(PlaneContent::Counterstain);
    }
    contents.shuffle(rng);
    let range = |rng: &mut Pcg64, (lo, hi): (f64, f64)| rng.random_range(lo..=hi);
    let planes = contents
        .into_iter()
        .map(|content| {
            let offset =
                if recipe.bits == 8 { rng.random_range(3.0..=12.0) } else { top * rng.random_range(0.005..=0.03) };
            let af = range(rng, recipe.autofluorescence);
            let amp = match content {
                PlaneContent::Gene(_) => range(rng, recipe.stain),
                PlaneContent::Counterstain => rng.random_range(25.0..=50.0f64).max(3.0 * af),
            };
            let (k, shot) = (rng.random_range(2.0..=10.0), rng.random_range(0.4..=0.9));
            let mut fill = rng.random_range(0.55..=0.95);
            loop {
                let sd = fill * (top - offset) / (k + af + amp);
                let camera = Camera { offset, gain: shot * sd / k, read_noise: (1.0 - shot).sqrt() * sd };
                if headroom(&camera, fill * (top - offset), recipe.bits) {
                    let (background, autofluorescence, amplitude) = (k * sd, af * sd, amp * sd);
                    break FluorPlane { content, camera, background, autofluorescence, amplitude };
                }
                fill *= 0.97;
            }
        })
        .collect();
    Imaging::Fluorescent(planes)
}

/// Bright-field: lamp 165–205 grey levels (8-bit) or 75–92 % of a 4000–50000 top (16-bit) at the
/// peak (lowered if [`headroom`] asks), 300–3000 photons there, read noise 15–50 % of the photon
/// noise; warm lamp, yellowish tissue (absorbs blue most), purple stain (absorbs green most).
fn bright(rng: &mut Pcg64, recipe: &Recipe) -> Imaging {
    let top = if recipe.bits == 8 { 255.0 } else { rng.random_range(4000f64.ln()..=50000f64.ln()).exp() };
    let offset = if recipe.bits == 8 { rng.random_range(2.0..=8.0) } else { top * rng.random_range(0.005..=0.02) };
    let mut lamp = if recipe.bits == 8 { rng.random_range(165.0..=205.0) } else { top * rng.random_range(0.75..=0.92) };
    lamp -= offset;
    let photons = rng.random_range(300.0..=3000.0f64);
    let read_share = rng.random_range(0.15..=0.5);
    let camera = |lamp: f64| {
        let gain = lamp / photons;
        Camera { offset, gain, read_noise: read_share * gain * photons.sqrt() }
    };
    while !headroom(&camera(lamp), lamp, recipe.bits) {
        lamp *= 0.97;
    }
    let mut u = |lo: f64, hi: f64| rng.random_range(lo..=hi);
    Imaging::BrightField(BrightField {
        gene: 0,
        rgb: recipe.planes == 3,
        camera: camera(lamp),
        lamp,
        lamp_colour: [1.0, u(0.93, 1.0), u(0.8, 0.95)],
        od_tissue: u(0.02, 0.08),
        tissue_colour: [u(0.7, 0.9), u(0.85, 1.0), u(1.1, 1.4)],
        od_stain: u(0.3, 1.0),
        stain_colour: [u(0.5, 0.8), 1.0, u(0.3, 0.6)],
    })
}

/// Whether a pixel `peak` grey levels above the offset, brightened 4 % by the illumination tilt,
/// stays 5 noise sd below the ceiling (250 for 8 bits, 65 000 for 16), so that photon noise, which
/// grows with the signal, practically never clips.
fn headroom(camera: &Camera, peak: f64, bits: u8) -> bool {
    let top = camera.offset + 1.04 * peak;
    top + 5.0 * camera.variance(top).sqrt() <= if bits == 8 { 250.0 } else { 65_000.0 }
}
