//! Synthetic microscope images of stained embryos with known truth, made from the physics of the
//! picture and independent of the measuring code, to benchmark boundary measurement.
//!
//! A [`Scene`] holds everything: one or two embryos (outline, pose, stain profiles of invented
//! genes), the optics and the camera. [`render`] turns it into an encoded PNG or TIFF plus the
//! truth. How each step works, with units, is in [`physics`]. Fluorescent picture of plane k, in
//! grey levels: μ_k(x, y) = offset + I(x, y)·[PSF ∗ (B_k + A_k·inside + S_k·level)](x, y), with
//! background emission B_k, tissue autofluorescence A_k, stain (or counterstain) amplitude S_k,
//! illumination I and inside/level area-averaged per pixel; bright-field (Beer–Lambert):
//! μ_c = offset + L_c·I(x, y)·[PSF ∗ 10^(−(D_t·t_c·inside + D_s·d_c·level))](x, y). Each pixel is then
//! read by a [`Camera`] (Poisson photons, read noise, offset, rounding, clipping).
//!
//! Benchmark: [`cases`] (72 fixed cases) or [`case`]`(i)`; special scenes via [`Recipe`] and
//! [`build`], or [`faint_single_plane`], [`bright_field`], [`two_embryos`], [`one_cut_by_edge`].

mod checks;
mod physics;
mod recipe;

pub use physics::{Camera, Canvas, Domain, Edge, Embryo, Illumination, Profile};
pub use recipe::{Pattern, Recipe, build, valid};

use physics::{blur, encode, quantise, rasterise};
use rand::SeedableRng;
use rand_pcg::Pcg64;

/// One true boundary of one gene in one embryo.
#[derive(Clone, Debug, PartialEq)]
pub struct TrueBoundary {
    pub gene: String,
    /// "rising" or "falling", going head → tail.
    pub direction: &'static str,
    /// Midline position where the noise-free level crosses half its peak, % of length from the head.
    pub position_pct: f64,
}

/// The truth about one embryo in an image.
#[derive(Clone, Debug, PartialEq)]
pub struct EmbryoTruth {
    /// Head pole, (column, row) px, pixel centres at integers.
    pub head: (f64, f64),
    /// Tail pole, (column, row) px.
    pub tail: (f64, f64),
    /// Head-to-tail distance, px.
    pub length_px: f64,
    /// Part of the embryo lies outside the frame.
    pub cut_by_edge: bool,
    /// Every boundary of every stained gene between 3 % and 97 % of the length.
    pub boundaries: Vec<TrueBoundary>,
}

/// One benchmark image with its truth.
#[derive(Clone, Debug)]
pub struct Case {
    /// Unique, file-name safe.
    pub name: String,
    /// The parameters in a few words.
    pub description: String,
    /// "png" or "tif".
    pub extension: &'static str,
    /// The encoded image file.
    pub bytes: Vec<u8>,
    /// 8 or 16.
    pub bits: u8,
    /// Image planes in use: 1 = grey; 2 or 3 stored as RGB, planes 0..planes used, the rest black.
    pub planes: usize,
    /// (plane index, gene name) of each stained gene.
    pub channels: Vec<(usize, String)>,
    /// Plane holding a uniform nuclear counterstain, if any.
    pub counterstain_plane: Option<usize>,
    /// Bright-field absorbing stain (dark on a light background).
    pub dark_on_light: bool,
    /// A gene whose midline level over the head 10 % exceeds that over the tail 10 % by at least half
    /// its peak in every embryo, if the scene has one.
    pub head_high_gene: Option<String>,
    pub embryos: Vec<EmbryoTruth>,
}

/// What a fluorescent plane shows besides background and autofluorescence.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum PlaneContent {
    /// The stain of the scene's gene with this index.
    Gene(usize),
    /// A uniform nuclear counterstain filling every embryo.
    Counterstain,
}

/// One fluorescent plane; emissions in grey levels above the offset at the illumination peak.
#[derive(Clone, Debug, PartialEq)]
pub struct FluorPlane {
    pub content: PlaneContent,
    pub camera: Camera,
    /// Background emission B (medium, out-of-focus light) everywhere.
    pub background: f64,
    /// Tissue autofluorescence A, added inside every embryo (2–10 background noise sd).
    pub autofluorescence: f64,
    /// Stain plateau S (8–40 sd), or counterstain level, added inside in proportion to the level.
    pub amplitude: f64,
}

/// Bright-field transmitted light through an absorbing stain (Beer–Lambert).
#[derive(Clone, Debug, PartialEq)]
pub struct BrightField {
    /// Index of the stained gene.
    pub gene: usize,
    /// RGB (3 planes) or grey (1 plane).
    pub rgb: bool,
    pub camera: Camera,
    /// Lamp level L at the illumination peak with no specimen, grey levels above the offset.
    pub lamp: f64,
    /// Relative lamp level per colour plane (R, G, B); grey uses the first.
    pub lamp_colour: [f64; 3],
    /// Optical density of the tissue D_t (0.02–0.08) and its relative weights t_c per plane.
    pub od_tissue: f64,
    pub tissue_colour: [f64; 3],
    /// Optical density of the stain plateau D_s (0.3–1.0) and its relative weights d_c per plane
    /// (purple: green absorbs most, weight 1); grey uses weight 1 for both.
    pub od_stain: f64,
    pub stain_colour: [f64; 3],
}

/// How the picture is formed.
#[derive(Clone, Debug, PartialEq)]
pub enum Imaging {
    Fluorescent(Vec<FluorPlane>),
    BrightField(BrightField),
}

/// Everything needed to render one image.
#[derive(Clone, Debug, PartialEq)]
pub struct Scene {
    pub name: String,
    pub description: String,
    /// Frame size, px.
    pub width: usize,
    pub height: usize,
    /// Names of the stained genes (invented).
    pub genes: Vec<String>,
    pub embryos: Vec<Embryo>,
    /// Standard deviation of the Gaussian point-spread function, px (0.8–2.5).
    pub psf_sigma: f64,
    pub illumination: Illumination,
    pub imaging: Imaging,
    /// Sub-pixel samples per pixel side for the area-weighted inside test (≥ 4).
    pub supersample: usize,
    pub bits: u8,
    pub tiff: bool,
    pub noise_seed: u64,
}

impl Scene {
    /// Number of image planes.
    pub fn planes(&self) -> usize {
        match &self.imaging {
            Imaging::Fluorescent(p) => p.len(),
            Imaging::BrightField(b) => 1 + 2 * b.rgb as usize,
        }
    }

    /// The camera of plane `p`.
    pub fn camera(&self, p: usize) -> &Camera {
        match &self.imaging {
            Imaging::Fluorescent(planes) => &planes[p].camera,
            Imaging::BrightField(b) => &b.camera,
        }
    }

    /// Frame-sized maps, area-weighted per pixel, without blur: `k` values per sample from `f`.
    fn raster(&self, pad: usize, k: usize, f: impl Fn(Option<&[f64]>, &mut [f64])) -> (Canvas, Vec<Vec<f64>>) {
        let canvas =
            Canvas { x0: -(pad as isize), y0: -(pad as isize), w: self.width + 2 * pad, h: self.height + 2 * pad };
        (canvas, rasterise(&self.embryos, canvas, self.supersample, k, f))
    }

    /// Fraction of each pixel inside an embryo (frame-sized, row-major).
    pub fn coverage(&self) -> Vec<f64> {
        self.raster(0, 1, |l, out| out[0] = l.is_some() as u8 as f64).1.remove(0)
    }

    /// Area-weighted stain level of each gene per pixel, before blur (frame-sized, row-major).
    pub fn gene_maps(&self) -> Vec<Vec<f64>> {
        self.raster(0, self.genes.len(), |l, out| match l {
            None => out.fill(0.0),
            Some(l) => out.copy_from_slice(l),
        })
        .1
    }

    /// Expected grey level of every pixel of every plane, before noise and rounding.
    pub fn noise_free(&self) -> Vec<Vec<f64>> {
        let pad = (4.0 * self.psf_sigma).ceil() as usize + 2;
        // Blurs a padded map, crops it to the frame and maps each value with the pixel's position.
        let finish = |canvas: Canvas, mut map: Vec<f64>, g: &dyn Fn(f64, f64, f64) -> f64| -> Vec<f64> {
            blur(&mut map, canvas.w, canvas.h, self.psf_sigma);
            (0..self.width * self.height)
                .map(|i| {
                    let (x, y) = (i % self.width, i / self.width);
                    g(x as f64, y as f64, map[(y + pad) * canvas.w + x + pad])
                })
                .collect()
        };
        let light = |x: f64, y: f64| self.illumination.at(x, y);
        match &self.imaging {
            Imaging::Fluorescent(planes) => {
                let (canvas, maps) = self.raster(pad, 1 + self.genes.len(), |l, out| match l {
                    None => out.fill(0.0),
                    Some(l) => {
                        out[0] = 1.0;
                        out[1..].copy_from_slice(l);
                    }
                });
                planes
                    .iter()
                    .map(|p| {
                        let stain = match p.content {
                            PlaneContent::Gene(g) => &maps[1 + g],
                            PlaneContent::Counterstain => &maps[0],
                        };
                        let emitted = (0..maps[0].len())
                            .map(|i| p.background + p.autofluorescence * maps[0][i] + p.amplitude * stain[i])
                            .collect();
                        finish(canvas, emitted, &|x, y, e| p.camera.offset + light(x, y) * e)
                    })
                    .collect()
            }
            Imaging::BrightField(b) => {
                let n = self.planes();
                let weights = |c: usize| if b.rgb { (b.tissue_colour[c], b.stain_colour[c]) } else { (1.0, 1.0) };
                let (canvas, maps) = self.raster(pad, n, |l, out| {
                    for (c, o) in out.iter_mut().enumerate() {
                        let (t, d) = weights(c);
                        *o = l.map_or(1.0, |l| 10f64.powf(-(b.od_tissue * t + b.od_stain * d * l[b.gene])));
                    }
                });
                maps.into_iter()
                    .enumerate()
                    .map(|(c, t)| {
                        let lamp = b.lamp * b.lamp_colour[c];
                        finish(canvas, t, &|x, y, t| b.camera.offset + lamp * light(x, y) * t)
                    })
                    .collect()
            }
        }
    }

    /// The truth for every embryo.
    pub fn truth(&self) -> Vec<EmbryoTruth> {
        self.embryos.iter().map(|e| e.truth(&self.genes, self.width, self.height)).collect()
    }

    /// (plane, gene) of each stained gene and the counterstain plane.
    pub fn channels(&self) -> (Vec<(usize, String)>, Option<usize>) {
        match &self.imaging {
            Imaging::Fluorescent(planes) => {
                let genes = planes
                    .iter()
                    .enumerate()
                    .filter_map(|(i, p)| match p.content {
                        PlaneContent::Gene(g) => Some((i, self.genes[g].clone())),
                        PlaneContent::Counterstain => None,
                    })
                    .collect();
                (genes, planes.iter().position(|p| p.content == PlaneContent::Counterstain))
            }
            // Green absorbs a purple stain most, so an RGB picture is read in plane 1.
            Imaging::BrightField(b) => (vec![(if b.rgb { 1 } else { 0 }, self.genes[b.gene].clone())], None),
        }
    }
}

/// Renders a scene: expected picture, camera noise (seeded by `noise_seed`), encoding, truth.
pub fn render(scene: &Scene) -> Case {
    let mut rng = Pcg64::seed_from_u64(scene.noise_seed);
    let planes: Vec<Vec<u16>> = scene
        .noise_free()
        .iter()
        .enumerate()
        .map(|(p, mean)| {
            let camera = scene.camera(p);
            mean.iter().map(|&m| quantise(camera.expose(m, &mut rng), scene.bits)).collect()
        })
        .collect();
    let (channels, counterstain_plane) = scene.channels();
    let head_high_gene = scene.genes.iter().enumerate().find_map(|(g, name)| {
        scene.embryos.iter().all(|e| e.profiles[g].head_minus_tail() >= 0.5).then(|| name.clone())
    });
    Case {
        name: scene.name.clone(),
        description: scene.description.clone(),
        extension: if scene.tiff { "tif" } else { "png" },
        bytes: encode(&planes, scene.width, scene.height, scene.bits, scene.tiff),
        bits: scene.bits,
        planes: planes.len(),
        channels,
        counterstain_plane,
        dark_on_light: matches!(scene.imaging, Imaging::BrightField(_)),
        head_high_gene,
        embryos: scene.truth(),
    }
}

/// Number of cases in the benchmark set.
pub const CASES: usize = 72;

/// The recipe of benchmark case `index`: factors cycle so that every combination of planes (1/2/3),
/// counterstain, bit depth and format appears; every 10th case is bright-field; six hold two
/// embryos (three with one cut by the frame), three more a single embryo cut by the frame; every
/// 4th has faint autofluorescence (2–3 sd) and faint stain (8–15 sd); single-plane cases cycle
/// through all patterns.
pub fn recipe(index: usize) -> Recipe {
    let i = index;
    let mut r = Recipe::default();
    r.planes = [1, 2, 3][i % 3];
    r.counterstain = r.planes > 1 && (i / 3) % 2 == 1;
    r.bits = if (i / 6).is_multiple_of(2) { 16 } else { 8 };
    r.tiff = (i / 12) % 2 == 1;
    if i % 4 == 1 {
        r.autofluorescence = (2.0, 3.0);
        r.stain = (8.0, 15.0);
    }
    r.bowed = !i.is_multiple_of(5);
    if r.planes == 1 {
        r.patterns = vec![Pattern::ALL[(i / 3) % Pattern::ALL.len()]];
    }
    if i % 10 == 7 {
        r.bright_field = true;
        r.planes = if (i / 10).is_multiple_of(2) { 3 } else { 1 };
        r.counterstain = false;
        r.patterns = vec![Pattern::ALL[(i / 10 + 2) % Pattern::ALL.len()]];
    }
    match i {
        11 | 35 | 58 => r.embryos = 2,
        23 | 46 | 70 => (r.embryos, r.cut) = (2, true),
        5 | 41 | 63 => r.cut = true,
        _ => {}
    }
    r.angle_deg = match i {
        3 => Some(90.0),
        4 => Some(-90.0),
        6 | 16 => Some(0.0),
        _ => None,
    };
    r
}

/// The scene of benchmark case `index` (< [`CASES`]), from its recipe and a fixed seed.
pub fn scene(index: usize) -> Scene {
    assert!(index < CASES, "case {index} of {CASES}");
    build(&recipe(index), 0x616e_6c61_6765 ^ (index as u64).wrapping_mul(0x9e37_79b9_7f4a_7c15), Some(index))
}

/// One benchmark case (renders only that one).
pub fn case(index: usize) -> Case {
    render(&scene(index))
}

/// The benchmark set: [`CASES`] deterministic cases.
pub fn cases() -> Vec<Case> {
    (0..CASES).map(case).collect()
}

/// One plane, one gene (head domain or single stripe), autofluorescence 2–3 sd, stain 8–12 sd,
/// 16-bit PNG, one embryo fully inside.
pub fn faint_single_plane(seed: u64) -> Case {
    render(&build(&Recipe::faint_single_plane(seed), seed, None))
}

/// Bright-field purple stain, RGB, 8-bit PNG, one gene, one embryo fully inside.
pub fn bright_field(seed: u64) -> Case {
    render(&build(&Recipe::bright_field(), seed, None))
}

/// Two embryos fully inside; two planes (a gene and a counterstain), 16-bit TIFF.
pub fn two_embryos(seed: u64) -> Case {
    render(&build(&Recipe::two_embryos(), seed, None))
}

/// Two embryos, one fully inside and one partly outside the frame; two genes, 8-bit PNG.
pub fn one_cut_by_edge(seed: u64) -> Case {
    render(&build(&Recipe::one_cut_by_edge(), seed, None))
}
