//! The physics of the picture: the embryo's outline, the stain along its axis, the optics (blur by
//! the point-spread function, uneven illumination) and the camera (photon counts, read noise,
//! offset, quantisation).
//!
//! Units: lengths and positions in pixels of the final image, with pixel centres at integer
//! (column, row) coordinates, so pixel (i, j) covers the square [i − ½, i + ½] × [j − ½, j + ½];
//! positions along the embryo in % of its head-to-tail length; intensities in grey levels of the
//! final image unless a name says photons.

use std::io::Cursor;

use image::{ImageBuffer, ImageFormat, Luma, Rgb};
use rand::RngExt;
use rand_distr::{Distribution, Poisson, StandardNormal};
use rand_pcg::Pcg64;

use super::{EmbryoTruth, TrueBoundary};

/// The logistic step 1 / (1 + e^(−z)).
fn logistic(z: f64) -> f64 {
    1.0 / (1.0 + (-z).exp())
}

/// One edge of an expression domain.
#[derive(Clone, Debug, PartialEq)]
pub struct Edge {
    /// Position on the midline, % of length from the head pole.
    pub at_pct: f64,
    /// Logistic scale w, % of length (0.3–1.5): the level across the edge is 1 / (1 + e^(−Δs/w)).
    pub width_pct: f64,
    /// Bow, % of length (|bow| ≤ 3): at lateral offset v (px) the edge lies at
    /// `at_pct + bow_pct·(v/b)²`, b the embryo's nominal half-width (px).
    pub bow_pct: f64,
}

impl Edge {
    /// Edge position (% of length) at squared relative lateral offset (v/b)².
    fn at(&self, vr2: f64) -> f64 {
        self.at_pct + self.bow_pct * vr2
    }
}

/// A domain of expression: level 1 between its edges, 0 beyond; an absent edge means the domain
/// runs past that pole. Level = σ((s − from)/w₁)·σ((to − s)/w₂), σ the logistic step.
#[derive(Clone, Debug, PartialEq)]
pub struct Domain {
    /// Head-side edge (the level rises across it going head → tail).
    pub from: Option<Edge>,
    /// Tail-side edge (the level falls across it).
    pub to: Option<Edge>,
}

impl Domain {
    fn level(&self, s: f64, vr2: f64) -> f64 {
        let mut l = 1.0;
        if let Some(e) = &self.from {
            l *= logistic((s - e.at(vr2)) / e.width_pct);
        }
        if let Some(e) = &self.to {
            l *= logistic((e.at(vr2) - s) / e.width_pct);
        }
        l
    }
}

/// A gene's stain level (0 to about 1) along one embryo: the largest of its domains' levels.
#[derive(Clone, Debug, PartialEq)]
pub struct Profile {
    pub domains: Vec<Domain>,
}

/// Grid step (% of length) for scanning the midline profile.
const SCAN_STEP: f64 = 0.01;

impl Profile {
    /// Level at s (% of length from the head) and relative lateral offset v/b.
    pub fn level(&self, s: f64, v_rel: f64) -> f64 {
        let vr2 = v_rel * v_rel;
        self.domains.iter().map(|d| d.level(s, vr2)).fold(0.0, f64::max)
    }

    /// Noise-free level on the midline (v = 0), sampled every 0.01 % from head (0) to tail (100).
    fn scan(&self) -> Vec<f64> {
        (0..=(100.0 / SCAN_STEP).round() as usize).map(|i| self.level(i as f64 * SCAN_STEP, 0.0)).collect()
    }

    /// Largest midline level.
    pub fn peak(&self) -> f64 {
        self.scan().into_iter().fold(0.0, f64::max)
    }

    /// True boundaries: the midline positions s (% of length) where the level crosses half its peak,
    /// found by bisection to 1e-12 % between scan points, kept if 3 ≤ s ≤ 97; `true` = rising
    /// (low at the head side, high at the tail side).
    pub fn boundaries(&self) -> Vec<(f64, bool)> {
        let half = 0.5 * self.peak();
        let g = |s: f64| self.level(s, 0.0) - half;
        let scan = self.scan();
        let mut out = Vec::new();
        for i in 1..scan.len() {
            let (g0, g1) = (scan[i - 1] - half, scan[i] - half);
            if (g0 < 0.0) == (g1 < 0.0) {
                continue;
            }
            let (mut lo, mut hi) = ((i - 1) as f64 * SCAN_STEP, i as f64 * SCAN_STEP);
            for _ in 0..64 {
                let mid = 0.5 * (lo + hi);
                if (g(mid) < 0.0) == (g0 < 0.0) {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            let s = 0.5 * (lo + hi);
            if (3.0..=97.0).contains(&s) {
                out.push((s, g0 < 0.0));
            }
        }
        out
    }

    /// Fractions of the midline at most 0.1 × peak ("at 0") and at least 0.9 × peak ("at 1").
    pub fn off_on_fractions(&self) -> (f64, f64) {
        let scan = self.scan();
        let peak = scan.iter().copied().fold(0.0, f64::max);
        let n = scan.len() as f64;
        let off = scan.iter().filter(|&&l| l <= 0.1 * peak).count() as f64 / n;
        let on = scan.iter().filter(|&&l| l >= 0.9 * peak).count() as f64 / n;
        (off, on)
    }

    /// Mean midline level over the head 10 % minus that over the tail 10 %, in units of the peak.
    pub fn head_minus_tail(&self) -> f64 {
        let scan = self.scan();
        let peak = scan.iter().copied().fold(0.0, f64::max);
        let k = scan.len() / 10;
        let mean = |xs: &[f64]| xs.iter().sum::<f64>() / xs.len() as f64;
        (mean(&scan[..k]) - mean(&scan[scan.len() - k..])) / peak
    }

    /// All edges of all domains.
    pub fn edges(&self) -> impl Iterator<Item = &Edge> {
        self.domains.iter().flat_map(|d| d.from.iter().chain(d.to.iter()))
    }

    /// All edges, mutable.
    pub fn edges_mut(&mut self) -> impl Iterator<Item = &mut Edge> {
        self.domains.iter_mut().flat_map(|d| d.from.iter_mut().chain(d.to.iter_mut()))
    }
}

/// One embryo: an egg-like outline, a tapered superellipse. In body coordinates u (px along the
/// long axis, from the centre towards `centre + a·axis`) and v (px across it) the inside is
/// |u/a|^p + |v/b(u)|^p ≤ 1 with a = length/2, b = a/aspect and b(u) = b·(1 + taper·u/a), so one end
/// is blunter than the other; the poles are exactly (u, v) = (±a, 0), the extreme points along
/// the axis, since |u| ≤ a everywhere inside.
#[derive(Clone, Debug, PartialEq)]
pub struct Embryo {
    /// Centre (column, row), px.
    pub centre: (f64, f64),
    /// Direction of the long axis, degrees from the +column direction towards +row (−90 to 90).
    pub angle_deg: f64,
    /// Pole-to-pole length 2a, px (150–420).
    pub length_px: f64,
    /// a/b (2–3.2).
    pub aspect: f64,
    /// Superellipse exponent p (1.8–2.6; 2 would be an ellipse).
    pub exponent: f64,
    /// Taper τ (|τ| ≤ 0.2): the half-width is b·(1 ± τ) near the two poles.
    pub taper: f64,
    /// The head pole is at centre + a·axis (true) or centre − a·axis (false).
    pub head_at_plus: bool,
    /// One stain profile per gene of the scene (same order as the scene's genes).
    pub profiles: Vec<Profile>,
}

impl Embryo {
    /// Half-length a, px.
    pub fn a(&self) -> f64 {
        0.5 * self.length_px
    }

    /// Nominal half-width b, px.
    pub fn b(&self) -> f64 {
        self.a() / self.aspect
    }

    /// Unit vector of the long axis (column, row).
    pub fn axis(&self) -> (f64, f64) {
        let t = self.angle_deg.to_radians();
        (t.cos(), t.sin())
    }

    fn head_sign(&self) -> f64 {
        if self.head_at_plus { 1.0 } else { -1.0 }
    }

    /// Head pole (column, row), px.
    pub fn head(&self) -> (f64, f64) {
        self.pole(self.head_sign())
    }

    /// Tail pole (column, row), px.
    pub fn tail(&self) -> (f64, f64) {
        self.pole(-self.head_sign())
    }

    fn pole(&self, sign: f64) -> (f64, f64) {
        let (ex, ey) = self.axis();
        (self.centre.0 + sign * self.a() * ex, self.centre.1 + sign * self.a() * ey)
    }

    /// Body coordinates (u, v) of the frame point (x, y).
    fn body(&self, x: f64, y: f64) -> (f64, f64) {
        let (ex, ey) = self.axis();
        let (dx, dy) = (x - self.centre.0, y - self.centre.1);
        (dx * ex + dy * ey, -dx * ey + dy * ex)
    }

    fn half_width_at(&self, u: f64) -> f64 {
        self.b() * (1.0 + self.taper * u / self.a())
    }

    fn inside_body(&self, u: f64, v: f64) -> bool {
        let a = self.a();
        u.abs() <= a && (u.abs() / a).powf(self.exponent) + (v.abs() / self.half_width_at(u)).powf(self.exponent) <= 1.0
    }

    /// Whether the frame point (x, y) lies inside the outline.
    pub fn contains(&self, x: f64, y: f64) -> bool {
        let (u, v) = self.body(x, y);
        self.inside_body(u, v)
    }

    /// Position along the embryo, % of length from the head pole, of body coordinate u.
    fn s_pct(&self, u: f64) -> f64 {
        50.0 * (1.0 - self.head_sign() * u / self.a())
    }

    /// The frame point at s % of length from the head on the midline.
    pub fn midline_point(&self, s_pct: f64) -> (f64, f64) {
        let (h, t) = (self.head(), self.tail());
        let f = s_pct / 100.0;
        (h.0 + f * (t.0 - h.0), h.1 + f * (t.1 - h.1))
    }

    /// n points on the outline, from u = a·sgn(cos φ)|cos φ|^(2/p), v = b(u)·sgn(sin φ)|sin φ|^(2/p).
    pub fn outline(&self, n: usize) -> Vec<(f64, f64)> {
        let (ex, ey) = self.axis();
        let q = 2.0 / self.exponent;
        let sp = |c: f64| c.signum() * c.abs().powf(q);
        (0..n)
            .map(|i| {
                let phi = std::f64::consts::TAU * i as f64 / n as f64;
                let u = self.a() * sp(phi.cos());
                let v = self.half_width_at(u) * sp(phi.sin());
                (self.centre.0 + u * ex - v * ey, self.centre.1 + u * ey + v * ex)
            })
            .collect()
    }

    /// Extent [column min, column max, row min, row max] of the outline, px (from 20 000 points).
    pub fn extent(&self) -> [f64; 4] {
        self.outline(20_000).iter().fold([f64::MAX, f64::MIN, f64::MAX, f64::MIN], |e, &(x, y)| {
            [e[0].min(x), e[1].max(x), e[2].min(y), e[3].max(y)]
        })
    }

    /// Whether any part of the embryo lies outside a frame of `width` × `height` pixels, whose
    /// pixels cover columns [−½, width − ½] and rows [−½, height − ½].
    pub fn cut_by_frame(&self, width: usize, height: usize) -> bool {
        let e = self.extent();
        e[0] < -0.5 || e[1] > width as f64 - 0.5 || e[2] < -0.5 || e[3] > height as f64 - 0.5
    }

    /// Whether the two outlines come closer than `gap` px (checked on the outline of each, pushed
    /// outwards from its centre by `gap`, against the other's inside).
    pub fn near(&self, other: &Embryo, gap: f64) -> bool {
        let grown = |e: &Embryo| -> Vec<(f64, f64)> {
            e.outline(720)
                .into_iter()
                .map(|(x, y)| {
                    let (dx, dy) = (x - e.centre.0, y - e.centre.1);
                    let k = 1.0 + gap / dx.hypot(dy);
                    (e.centre.0 + k * dx, e.centre.1 + k * dy)
                })
                .collect()
        };
        self.contains(other.centre.0, other.centre.1)
            || other.contains(self.centre.0, self.centre.1)
            || grown(self).iter().any(|&(x, y)| other.contains(x, y))
            || grown(other).iter().any(|&(x, y)| self.contains(x, y))
    }

    /// The truth for this embryo in a frame of `width` × `height` pixels; `genes` are the scene's
    /// gene names, every one of them stained.
    pub fn truth(&self, genes: &[String], width: usize, height: usize) -> EmbryoTruth {
        let boundaries = genes
            .iter()
            .zip(&self.profiles)
            .flat_map(|(gene, profile)| {
                profile.boundaries().into_iter().map(move |(s, rising)| TrueBoundary {
                    gene: gene.clone(),
                    direction: if rising { "rising" } else { "falling" },
                    position_pct: s,
                })
            })
            .collect();
        EmbryoTruth {
            head: self.head(),
            tail: self.tail(),
            length_px: self.length_px,
            cut_by_edge: self.cut_by_frame(width, height),
            boundaries,
        }
    }
}

/// A rectangle of pixels in frame coordinates: its pixel (i, j) is the frame pixel (x0 + i, y0 + j).
#[derive(Clone, Copy, Debug)]
pub struct Canvas {
    pub x0: isize,
    pub y0: isize,
    pub w: usize,
    pub h: usize,
}

/// Area-weighted rasterisation. Each canvas pixel is sampled at n × n sub-pixel points (spacing 1/n px,
/// symmetric about the pixel centre); `f` maps a sample to k values (`None` outside every embryo,
/// else the stain levels of the embryo holding it, one per gene), and the pixel gets their mean,
/// which is the area-weighted average over the pixel. Returns k maps of w·h values, row-major.
pub fn rasterise(
    embryos: &[Embryo],
    canvas: Canvas,
    n: usize,
    k: usize,
    f: impl Fn(Option<&[f64]>, &mut [f64]),
) -> Vec<Vec<f64>> {
    let mut outside = vec![0.0; k];
    f(None, &mut outside);
    let mut maps: Vec<Vec<f64>> = outside.iter().map(|&o| vec![o; canvas.w * canvas.h]).collect();
    let mut done = vec![false; canvas.w * canvas.h];
    let genes = embryos.first().map_or(0, |e| e.profiles.len());
    let (mut levels, mut sample, mut acc) = (vec![0.0; genes], vec![0.0; k], vec![0.0; k]);
    for embryo in embryos {
        let ext = embryo.extent();
        let range = |lo: f64, hi: f64, origin: isize, len: usize| {
            let a = ((lo.floor() as isize - 1 - origin).max(0) as usize).min(len);
            let b = ((hi.ceil() as isize + 2 - origin).max(0) as usize).min(len);
            a..b
        };
        for j in range(ext[2], ext[3], canvas.y0, canvas.h) {
            for i in range(ext[0], ext[1], canvas.x0, canvas.w) {
                let idx = j * canvas.w + i;
                if std::mem::replace(&mut done[idx], true) {
                    continue;
                }
                acc.fill(0.0);
                for sj in 0..n {
                    for si in 0..n {
                        let x = (canvas.x0 + i as isize) as f64 + (si as f64 + 0.5) / n as f64 - 0.5;
                        let y = (canvas.y0 + j as isize) as f64 + (sj as f64 + 0.5) / n as f64 - 0.5;
                        let holder = embryos.iter().find_map(|e| {
                            let (u, v) = e.body(x, y);
                            e.inside_body(u, v).then_some((e, u, v))
                        });
                        match holder {
                            Some((e, u, v)) => {
                                let (s, v_rel) = (e.s_pct(u), v / e.b());
                                for (l, p) in levels.iter_mut().zip(&e.profiles) {
                                    *l = p.level(s, v_rel);
                                }
                                f(Some(&levels), &mut sample);
                            }
                            None => sample.copy_from_slice(&outside),
                        }
                        acc.iter_mut().zip(&sample).for_each(|(a, s)| *a += s);
                    }
                }
                for (map, a) in maps.iter_mut().zip(&acc) {
                    map[idx] = a / (n * n) as f64;
                }
            }
        }
    }
    maps
}

/// Blurs a w × h image in place by a Gaussian point-spread function of standard deviation `sigma`
/// px: separable convolution with the kernel e^(−i²/2σ²) (|i| ≤ ⌈4σ⌉, normalised to sum 1), edge
/// pixels repeated beyond the border.
pub fn blur(img: &mut [f64], w: usize, h: usize, sigma: f64) {
    let r = (4.0 * sigma).ceil() as isize;
    let mut kernel: Vec<f64> = (-r..=r).map(|i| (-((i * i) as f64) / (2.0 * sigma * sigma)).exp()).collect();
    let sum: f64 = kernel.iter().sum();
    kernel.iter_mut().for_each(|k| *k /= sum);
    let mut tmp = vec![0.0; w * h];
    let clamp = |i: isize, n: usize| i.clamp(0, n as isize - 1) as usize;
    for y in 0..h {
        for x in 0..w {
            tmp[y * w + x] =
                kernel.iter().enumerate().map(|(k, c)| c * img[y * w + clamp(x as isize + k as isize - r, w)]).sum();
        }
    }
    for y in 0..h {
        for x in 0..w {
            img[y * w + x] =
                kernel.iter().enumerate().map(|(k, c)| c * tmp[clamp(y as isize + k as isize - r, h) * w + x]).sum();
        }
    }
}

/// Smooth illumination field (vignetting), a multiplier about 1 at its peak:
/// I(x, y) = (1 − fall·ρ²/R²)·(1 + tilt·(ρ·t̂)/R), ρ the offset of (x, y) from the off-centre peak,
/// R the distance from the peak to the farthest frame corner (so, tilt aside, the light falls by
/// `fall` there) and t̂ the unit vector at `tilt_deg`.
#[derive(Clone, Debug, PartialEq)]
pub struct Illumination {
    /// Peak (column, row), px.
    pub centre: (f64, f64),
    /// Fraction lost at the farthest corner (0.05–0.25).
    pub fall: f64,
    /// Distance from the peak to the farthest corner, px.
    pub reach: f64,
    /// Linear tilt across one `reach` (|tilt| ≤ 0.04).
    pub tilt: f64,
    /// Direction of the tilt, degrees.
    pub tilt_deg: f64,
}

impl Illumination {
    /// A random field for a `width` × `height` frame: peak within 12 % of the frame size from the
    /// centre, `fall` 0.05–0.25, tilt up to ±0.04.
    pub fn random(rng: &mut Pcg64, width: usize, height: usize) -> Illumination {
        let (w, h) = (width as f64, height as f64);
        let centre = (
            (w - 1.0) / 2.0 + rng.random_range(-0.12..=0.12) * w,
            (h - 1.0) / 2.0 + rng.random_range(-0.12..=0.12) * h,
        );
        let reach = [(-0.5, -0.5), (w - 0.5, -0.5), (-0.5, h - 0.5), (w - 0.5, h - 0.5)]
            .iter()
            .map(|&(x, y): &(f64, f64)| (x - centre.0).hypot(y - centre.1))
            .fold(0.0, f64::max);
        Illumination {
            centre,
            fall: rng.random_range(0.05..=0.25),
            reach,
            tilt: rng.random_range(-0.04..=0.04),
            tilt_deg: rng.random_range(-180.0..180.0),
        }
    }

    /// The multiplier at frame point (x, y).
    pub fn at(&self, x: f64, y: f64) -> f64 {
        let (dx, dy) = (x - self.centre.0, y - self.centre.1);
        let t = self.tilt_deg.to_radians();
        (1.0 - self.fall * (dx * dx + dy * dy) / (self.reach * self.reach))
            * (1.0 + self.tilt * (dx * t.cos() + dy * t.sin()) / self.reach)
    }
}

/// The camera of one image plane. A pixel whose expected grey level is μ reads
/// offset + gain·N + read_noise·Z, with N ~ Poisson((μ − offset)/gain) photons and Z ~ N(0, 1),
/// then rounds to an integer and clips to [0, 2^bits − 1]; its variance before rounding is
/// gain·(μ − offset) + read_noise² (grey levels²), plus 1/12 from rounding.
#[derive(Clone, Debug, PartialEq)]
pub struct Camera {
    /// Grey level with no light.
    pub offset: f64,
    /// Grey levels per detected photon.
    pub gain: f64,
    /// Standard deviation of the Gaussian read noise, grey levels.
    pub read_noise: f64,
}

impl Camera {
    /// One noisy reading (before rounding) of a pixel with expected grey level `mean`.
    pub fn expose(&self, mean: f64, rng: &mut Pcg64) -> f64 {
        let photons = (mean - self.offset) / self.gain;
        let n = if photons > 0.0 { Poisson::new(photons).expect("finite photon count").sample(rng) } else { 0.0 };
        let z: f64 = rng.sample(StandardNormal);
        self.offset + self.gain * n + self.read_noise * z
    }

    /// Variance (grey levels²) of a reading with expected grey level `mean`, before rounding.
    pub fn variance(&self, mean: f64) -> f64 {
        self.gain * (mean - self.offset).max(0.0) + self.read_noise * self.read_noise
    }
}

/// Rounds a reading to the nearest grey level and clips it to [0, 2^bits − 1].
pub fn quantise(x: f64, bits: u8) -> u16 {
    x.round().clamp(0.0, ((1u32 << bits) - 1) as f64) as u16
}

/// Encodes planes (row-major, `width` × `height` each) as PNG or TIFF: one plane as grey, two or
/// three as RGB with the missing planes black.
pub fn encode(planes: &[Vec<u16>], width: usize, height: usize, bits: u8, tiff: bool) -> Vec<u8> {
    let format = if tiff { ImageFormat::Tiff } else { ImageFormat::Png };
    let (w, h) = (width as u32, height as u32);
    let rgb = || -> Vec<u16> {
        (0..width * height).flat_map(|i| (0..3).map(move |p| planes.get(p).map_or(0, |pl| pl[i]))).collect()
    };
    let mut out = Cursor::new(Vec::new());
    match (planes.len(), bits) {
        (1, 8) => ImageBuffer::<Luma<u8>, _>::from_raw(w, h, planes[0].iter().map(|&v| v as u8).collect::<Vec<u8>>())
            .expect("size")
            .write_to(&mut out, format),
        (1, _) => {
            ImageBuffer::<Luma<u16>, _>::from_raw(w, h, planes[0].clone()).expect("size").write_to(&mut out, format)
        }
        (_, 8) => ImageBuffer::<Rgb<u8>, _>::from_raw(w, h, rgb().into_iter().map(|v| v as u8).collect::<Vec<u8>>())
            .expect("size")
            .write_to(&mut out, format),
        _ => ImageBuffer::<Rgb<u16>, _>::from_raw(w, h, rgb()).expect("size").write_to(&mut out, format),
    }
    .expect("encoding an in-memory image");
    out.into_inner()
}
