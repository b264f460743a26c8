//! Finding embryos in the outline signal: thresholds set from the
//! background's noise, connected regions, holes filled; each region's
//! geometry (moments and the equivalent ellipse), a plausibility check, and
//! its two poles placed to a fraction of a pixel.

use std::collections::VecDeque;

use super::background::quantile;
use super::profile::profile_line_n;

/// A region is detected where the smoothed outline signal exceeds this many
/// of its background sd (common practice, no source).
pub const DETECT_SD: f64 = 5.0;
/// The edge may not sit lower than this many background sd.
pub const EDGE_MIN_SD: f64 = 3.0;
/// Regions smaller than this are specks (debris, noise), not embryos, px.
pub const MIN_AREA_PX: usize = 300;

/// Plausibility limits for an embryo's outline (common practice, no source;
/// written in the README).
pub mod limits {
    /// Shortest embryo that is measured: its equivalent ellipse's major axis, px.
    /// One pixel is then 2.5 % of the length.
    pub const MIN_LENGTH_PX: f64 = 40.0;
    /// Smallest length/height of the equivalent ellipse: rounder shapes have
    /// no long axis to measure along.
    pub const MIN_ELONGATION: f64 = 1.25;
    /// Largest length/height: thinner shapes are streaks, not embryos.
    pub const MAX_ELONGATION: f64 = 6.0;
    /// Smallest overlap (intersection over union) of the outline with its
    /// equivalent ellipse: touching embryos, crescents and debris fit worse.
    pub const MIN_ELLIPSE_FIT: f64 = 0.85;
    /// Largest fraction of the frame one embryo may fill.
    pub const MAX_FRAME_FRACTION: f64 = 0.9;
}

/// Connected regions (4-connected) of a mask.
#[derive(Debug, Clone, PartialEq)]
pub struct Labels {
    /// Per pixel: 0 outside every region, k for region k (1-based).
    pub label: Vec<u32>,
    /// Pixels of each region, row-major order; region k at index k − 1.
    pub regions: Vec<Vec<usize>>,
}

/// Labels the 4-connected regions of `mask` (row-major, `width` wide).
pub fn label(mask: &[bool], width: usize) -> Labels {
    let height = mask.len() / width;
    let mut label = vec![0u32; mask.len()];
    let mut regions = Vec::new();
    let mut queue = VecDeque::new();
    for start in 0..mask.len() {
        if !mask[start] || label[start] != 0 {
            continue;
        }
        let k = regions.len() as u32 + 1;
        label[start] = k;
        queue.push_back(start);
        let mut pixels = Vec::new();
        while let Some(i) = queue.pop_front() {
            pixels.push(i);
            for j in neighbours(i, width, height) {
                if mask[j] && label[j] == 0 {
                    label[j] = k;
                    queue.push_back(j);
                }
            }
        }
        pixels.sort_unstable();
        regions.push(pixels);
    }
    Labels { label, regions }
}

/// The 4-neighbours of pixel i inside the image.
fn neighbours(i: usize, width: usize, height: usize) -> impl Iterator<Item = usize> {
    let (x, y) = (i % width, i / width);
    [
        (x > 0).then(|| i - 1),
        (x + 1 < width).then(|| i + 1),
        (y > 0).then(|| i - width),
        (y + 1 < height).then(|| i + width),
    ]
    .into_iter()
    .flatten()
}

/// Fills holes: pixels outside `mask` that the image border cannot reach
/// through other outside pixels join it.
pub fn fill_holes(mask: &[bool], width: usize) -> Vec<bool> {
    let height = mask.len() / width;
    let mut reached = vec![false; mask.len()];
    let mut queue = VecDeque::new();
    for i in 0..mask.len() {
        let (x, y) = (i % width, i / width);
        if !mask[i] && (x == 0 || y == 0 || x + 1 == width || y + 1 == height) {
            reached[i] = true;
            queue.push_back(i);
        }
    }
    while let Some(i) = queue.pop_front() {
        for j in neighbours(i, width, height) {
            if !mask[j] && !reached[j] {
                reached[j] = true;
                queue.push_back(j);
            }
        }
    }
    reached.iter().map(|r| !r).collect()
}

/// Chamfer (3-4) distance from each pixel to the nearest pixel where `mask`
/// is false, in px (≈ Euclidean within 8 %; Borgefors 1986, Comput. Vision
/// Graph. Image Process. 34:344, from memory). Pixels at the image edge count
/// as next to an outside pixel.
pub fn distance_to_outside(mask: &[bool], width: usize) -> Vec<f64> {
    let height = mask.len() / width;
    let big = u32::MAX / 4;
    let mut d: Vec<u32> = mask.iter().map(|m| if *m { big } else { 0 }).collect();
    let at = |d: &Vec<u32>, x: isize, y: isize| -> u32 {
        if x < 0 || y < 0 || x >= width as isize || y >= height as isize {
            0
        } else {
            d[y as usize * width + x as usize]
        }
    };
    for y in 0..height as isize {
        for x in 0..width as isize {
            let i = y as usize * width + x as usize;
            if d[i] == 0 {
                continue;
            }
            let v = [at(&d, x - 1, y) + 3, at(&d, x, y - 1) + 3, at(&d, x - 1, y - 1) + 4, at(&d, x + 1, y - 1) + 4];
            d[i] = d[i].min(*v.iter().min().unwrap_or(&big));
        }
    }
    for y in (0..height as isize).rev() {
        for x in (0..width as isize).rev() {
            let i = y as usize * width + x as usize;
            if d[i] == 0 {
                continue;
            }
            let v = [at(&d, x + 1, y) + 3, at(&d, x, y + 1) + 3, at(&d, x + 1, y + 1) + 4, at(&d, x - 1, y + 1) + 4];
            d[i] = d[i].min(*v.iter().min().unwrap_or(&big));
        }
    }
    d.iter().map(|v| *v as f64 / 3.0).collect()
}

/// What thresholding the outline signal found.
#[derive(Debug, Clone, PartialEq)]
pub struct Segmentation {
    /// Candidate embryos: pixel lists (holes filled), each at least
    /// [`MIN_AREA_PX`].
    pub regions: Vec<Vec<usize>>,
    /// Every pixel above the detection threshold, specks included (kept out
    /// of the background estimate).
    pub detected: Vec<bool>,
    /// Regions too small to be embryos.
    pub specks: usize,
}

/// Thresholds the smoothed outline signal `o` (background sd `noise`).
///
/// Regions are detected at [`DETECT_SD`]·noise. Each is then grown to its
/// edge: half of its dimmest tissue (the 10th percentile of `o` more than
/// 4 px inside it), so that the edge sits at the half-maximum of blurred
/// unstained tissue however bright the stain elsewhere, and never below
/// [`EDGE_MIN_SD`]·noise. Regions that grow into each other become one.
pub fn segment(o: &[f64], width: usize, noise: f64) -> Segmentation {
    let height = o.len() / width;
    let noise = noise.max(1e-12);
    let detected: Vec<bool> = o.iter().map(|v| *v > DETECT_SD * noise).collect();
    let found = label(&detected, width);
    let depth = distance_to_outside(&detected, width);
    let mut owner = vec![0u32; o.len()];
    let mut parent: Vec<usize> = Vec::new();
    let mut specks = 0;
    let mut queue = VecDeque::new();
    for pixels in &found.regions {
        if pixels.len() < MIN_AREA_PX {
            specks += 1;
            continue;
        }
        let k = parent.len();
        parent.push(k);
        let mut inner: Vec<f64> = pixels.iter().filter(|&&i| depth[i] >= 4.0).map(|&i| o[i]).collect();
        if inner.len() < 20 {
            inner = pixels.iter().map(|&i| o[i]).collect();
        }
        let floor = quantile(&mut inner, 0.1);
        let edge = (0.5 * floor).max(EDGE_MIN_SD * noise);
        for &i in pixels {
            if owner[i] == 0 {
                owner[i] = k as u32 + 1;
                queue.push_back(i);
            }
        }
        while let Some(i) = queue.pop_front() {
            for j in neighbours(i, width, height) {
                if o[j] <= edge {
                    continue;
                }
                if owner[j] == 0 {
                    owner[j] = k as u32 + 1;
                    queue.push_back(j);
                } else if owner[j] != k as u32 + 1 {
                    // Grown into another region: the two are one.
                    let (a, b) = (root(&mut parent, owner[j] as usize - 1), root(&mut parent, k));
                    parent[a.max(b)] = a.min(b);
                }
            }
        }
    }
    let mut merged: Vec<Vec<bool>> = Vec::new();
    let mut slot = vec![usize::MAX; parent.len()];
    for (i, &w) in owner.iter().enumerate() {
        if w == 0 {
            continue;
        }
        let r = root(&mut parent, w as usize - 1);
        if slot[r] == usize::MAX {
            slot[r] = merged.len();
            merged.push(vec![false; o.len()]);
        }
        merged[slot[r]][i] = true;
    }
    let regions = merged
        .iter()
        .map(|m| fill_holes(m, width).iter().enumerate().filter(|(_, v)| **v).map(|(i, _)| i).collect())
        .collect();
    Segmentation { regions, detected, specks }
}

fn root(parent: &mut [usize], mut k: usize) -> usize {
    while parent[k] != k {
        parent[k] = parent[parent[k]];
        k = parent[k];
    }
    k
}

/// An embryo's geometry from its pixels: centroid and second central moments.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Embryo {
    /// Centroid column, px.
    pub cx: f64,
    /// Centroid row, px.
    pub cy: f64,
    /// Unit vector of the long axis (columns, rows).
    pub axis: (f64, f64),
    /// Pixels in the region.
    pub area: usize,
    /// Variances of the coordinates along and across the long axis, px².
    pub variances: (f64, f64),
}

impl Embryo {
    /// Length along the long axis, px: the major axis of the region's
    /// equivalent ellipse, 4·√λ₁ with λ₁ the larger eigenvalue of the
    /// coordinates' covariance. A filled ellipse with semi-axes a ≥ b has
    /// λ₁ = a²/4 and λ₂ = b²/4 (Haralick & Shapiro, Computer and Robot Vision,
    /// vol. 1, 1992, ch. 3; from memory).
    pub fn length(&self) -> f64 {
        4.0 * self.variances.0.sqrt()
    }
    /// Height across, px: the equivalent ellipse's minor axis, 4·√λ₂.
    pub fn height(&self) -> f64 {
        4.0 * self.variances.1.sqrt()
    }
    /// Length over height of the equivalent ellipse.
    pub fn elongation(&self) -> f64 {
        (self.variances.0 / self.variances.1.max(1e-12)).sqrt()
    }
    /// Angle of the long axis from the image's x axis, degrees in (−90, 90]
    /// (rows grow downwards, so positive angles turn clockwise on screen).
    pub fn angle_deg(&self) -> f64 {
        let a = self.axis.1.atan2(self.axis.0).to_degrees();
        if a <= -90.0 {
            a + 180.0
        } else if a > 90.0 {
            a - 180.0
        } else {
            a
        }
    }
    /// The two ends of the equivalent ellipse's long axis (column, row), the
    /// first on the side of negative projections.
    pub fn ends(&self) -> [(f64, f64); 2] {
        let (ux, uy) = self.axis;
        let half = self.length() / 2.0;
        [(self.cx - half * ux, self.cy - half * uy), (self.cx + half * ux, self.cy + half * uy)]
    }
    /// Whether (x, y) lies inside the equivalent ellipse.
    pub fn in_ellipse(&self, x: f64, y: f64) -> bool {
        let (dx, dy) = (x - self.cx, y - self.cy);
        let (u, v) = (dx * self.axis.0 + dy * self.axis.1, -dx * self.axis.1 + dy * self.axis.0);
        let (a, b) = (self.length() / 2.0, self.height() / 2.0);
        (u / a).powi(2) + (v / b.max(1e-9)).powi(2) <= 1.0
    }
}

/// Principal axes of a region given by its pixel indices: centroid, and
/// the eigenvector of the larger eigenvalue of the coordinates' covariance.
pub fn principal_axes(pixels: &[usize], width: usize) -> Option<Embryo> {
    if pixels.len() < 3 {
        return None;
    }
    let n = pixels.len() as f64;
    let xy = |i: usize| ((i % width) as f64, (i / width) as f64);
    let (sx, sy) = pixels.iter().fold((0.0, 0.0), |(a, b), &i| (a + xy(i).0, b + xy(i).1));
    let (cx, cy) = (sx / n, sy / n);
    let (mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0);
    for &i in pixels {
        let (x, y) = xy(i);
        sxx += (x - cx) * (x - cx);
        syy += (y - cy) * (y - cy);
        sxy += (x - cx) * (y - cy);
    }
    let (sxx, syy, sxy) = (sxx / n, syy / n, sxy / n);
    let theta = 0.5 * (2.0 * sxy).atan2(sxx - syy);
    let mean = 0.5 * (sxx + syy);
    let spread = (0.25 * (sxx - syy) * (sxx - syy) + sxy * sxy).sqrt();
    Some(Embryo {
        cx,
        cy,
        axis: (theta.cos(), theta.sin()),
        area: pixels.len(),
        variances: (mean + spread, (mean - spread).max(0.0)),
    })
}

/// How embryo-like an outline is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Shape {
    /// Pixels.
    pub area: usize,
    /// Length over height of the equivalent ellipse.
    pub elongation: f64,
    /// Intersection over union of the outline and its equivalent ellipse.
    pub ellipse_fit: f64,
    /// Fraction of the frame covered.
    pub frame_fraction: f64,
}

/// The shape measures of a region (pixel indices) with geometry `e`.
pub fn shape(pixels: &[usize], e: &Embryo, width: usize, height: usize) -> Shape {
    let mut inside = vec![false; width * height];
    for &i in pixels {
        inside[i] = true;
    }
    let (a, _) = (e.length() / 2.0, e.height() / 2.0);
    let (x0, x1) = (((e.cx - a - 1.0).floor().max(0.0)) as usize, ((e.cx + a + 1.0).ceil() as usize).min(width));
    let (y0, y1) = (((e.cy - a - 1.0).floor().max(0.0)) as usize, ((e.cy + a + 1.0).ceil() as usize).min(height));
    let mut both = 0usize;
    let mut ellipse = 0usize;
    for y in y0..y1 {
        for x in x0..x1 {
            if e.in_ellipse(x as f64, y as f64) {
                ellipse += 1;
                if inside[y * width + x] {
                    both += 1;
                }
            }
        }
    }
    let union = pixels.len() + ellipse - both;
    Shape {
        area: pixels.len(),
        elongation: e.elongation(),
        ellipse_fit: both as f64 / union.max(1) as f64,
        frame_fraction: pixels.len() as f64 / (width * height) as f64,
    }
}

/// Why an outline is not an embryo, or None when it passes every limit in [`limits`].
pub fn implausible(s: &Shape, e: &Embryo) -> Option<String> {
    use limits::*;
    if s.frame_fraction > MAX_FRAME_FRACTION {
        return Some(format!(
            "it covers {:.0} % of the frame (more than {:.0} %): the background was taken for the embryo",
            100.0 * s.frame_fraction,
            100.0 * MAX_FRAME_FRACTION
        ));
    }
    if e.length() < MIN_LENGTH_PX {
        return Some(format!("it is {:.0} px long, shorter than {MIN_LENGTH_PX} px: too small to measure", e.length()));
    }
    if s.elongation < MIN_ELONGATION {
        return Some(format!(
            "it is nearly round (length/height {:.2} < {MIN_ELONGATION}): no long axis to measure along",
            s.elongation
        ));
    }
    if s.elongation > MAX_ELONGATION {
        return Some(format!(
            "it is a thin streak (length/height {:.1} > {MAX_ELONGATION}), not an embryo",
            s.elongation
        ));
    }
    if s.ellipse_fit < MIN_ELLIPSE_FIT {
        return Some(format!(
            "its outline fits an ellipse poorly (overlap {:.2} < {MIN_ELLIPSE_FIT}): touching embryos, a fold or debris?",
            s.ellipse_fit
        ));
    }
    None
}

/// Width of the strip along the axis in which the poles are placed, px.
pub const POLE_STRIP_PX: usize = 3;

/// Places the two poles of the long axis: along the axis (in a strip
/// [`POLE_STRIP_PX`] wide, 4 samples per px), each pole is where the
/// smoothed outline signal `o` falls to half of its local interior level (the
/// median between 2 and 8 % of the length inside that pole), interpolated
/// between samples. The crossing must stay below half for the next 2 px, so
/// noise inside the embryo cannot stop the search early. Half of the local
/// level puts the pole at the edge of the blurred embryo, however the stain
/// or illumination varies elsewhere (common practice, no source).
///
/// Returns the poles (column, row) in the order of `e.ends()`, or the end
/// whose edge could not be found.
pub fn place_poles(o: &[f64], width: usize, e: &Embryo) -> Result<[(f64, f64); 2], (f64, f64)> {
    let height = o.len() / width;
    let [a, b] = e.ends();
    let len = e.length();
    let mut out = [a, b];
    for (k, (pole, other)) in [(a, b), (b, a)].into_iter().enumerate() {
        // From 20 % inside this pole to 10 % beyond it.
        let dir = ((pole.0 - other.0) / len, (pole.1 - other.1) / len);
        let at = |t: f64| (pole.0 + t * dir.0, pole.1 + t * dir.1);
        let (t0, t1) = (-0.2 * len, 0.1 * len);
        let n = (4.0 * (t1 - t0)).ceil() as usize + 1;
        let (from, to) = (at(t0), at(t1));
        let p = profile_line_n(o, width, height, (from.1, from.0), (to.1, to.0), POLE_STRIP_PX, n);
        let t_of = |i: usize| t0 + (t1 - t0) * i as f64 / (n - 1) as f64;
        let mut interior: Vec<f64> =
            (0..n).filter(|&i| (-0.08 * len..=-0.02 * len).contains(&t_of(i))).map(|i| p[i]).collect();
        if interior.is_empty() {
            return Err(pole);
        }
        let half = 0.5 * quantile(&mut interior, 0.5);
        if half.is_nan() || half <= 0.0 {
            return Err(pole);
        }
        let start = (0..n).find(|&i| t_of(i) >= -0.05 * len).unwrap_or(0);
        let stays_below = |i: usize| p[i + 1..(i + 9).min(n)].iter().all(|v| *v < half);
        let Some(i) = (start..n - 1).find(|&i| p[i] >= half && p[i + 1] < half && stays_below(i)) else {
            return Err(pole);
        };
        let f = (p[i] - half) / (p[i] - p[i + 1]);
        out[k] = at(t_of(i) + f * (t_of(i + 1) - t_of(i)));
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Draws a filled ellipse (pixel centres inside), semi-axes a ≥ b, rotated.
    fn ellipse(w: usize, h: usize, c: (f64, f64), a: f64, b: f64, angle_deg: f64) -> Vec<usize> {
        let (ca, sa) = (angle_deg.to_radians().cos(), angle_deg.to_radians().sin());
        (0..w * h)
            .filter(|&i| {
                let (dx, dy) = ((i % w) as f64 - c.0, (i / w) as f64 - c.1);
                let (u, v) = (dx * ca + dy * sa, -dx * sa + dy * ca);
                (u / a).powi(2) + (v / b).powi(2) <= 1.0
            })
            .collect()
    }

    /// The moments of a drawn ellipse give its semi-axes and angle: for a
    /// filled ellipse λ₁ = a²/4 and λ₂ = b²/4 (Haralick & Shapiro 1992,
    /// Computer and Robot Vision vol. 1, §3.3, from memory); within the
    /// pixelisation error (0.5 %), angle within 0.2°.
    #[test]
    fn ellipse_moments_recover_semi_axes_and_angle() {
        for (a, b, angle) in [(120.0, 45.0, 0.0), (90.0, 40.0, 33.0), (150.0, 50.0, -71.0), (60.0, 30.0, 90.0)] {
            let px = ellipse(400, 360, (201.3, 178.6), a, b, angle);
            let e = principal_axes(&px, 400).unwrap();
            assert!((e.length() / (2.0 * a) - 1.0).abs() < 0.005, "{a}: {}", e.length());
            assert!((e.height() / (2.0 * b) - 1.0).abs() < 0.005, "{b}: {}", e.height());
            let mut d = (e.angle_deg() - angle).rem_euclid(180.0);
            if d > 90.0 {
                d = 180.0 - d;
            }
            assert!(d < 0.2, "{angle}: {}", e.angle_deg());
            assert!((e.cx - 201.3).abs() < 0.05 && (e.cy - 178.6).abs() < 0.05);
            let s = shape(&px, &e, 400, 360);
            assert!(s.ellipse_fit > 0.97, "{}", s.ellipse_fit);
            assert_eq!(implausible(&s, &e), None);
        }
    }

    /// Two ellipses side by side, touching, are refused as one outline; a
    /// disc and a streak are refused for their elongation.
    #[test]
    fn unlike_embryos_are_refused() {
        let (w, h) = (400, 300);
        let mut two = ellipse(w, h, (200.0, 110.0), 120.0, 40.0, 0.0);
        two.extend(ellipse(w, h, (200.0, 189.0), 120.0, 40.0, 0.0));
        two.sort_unstable();
        two.dedup();
        let e = principal_axes(&two, w).unwrap();
        let why = implausible(&shape(&two, &e, w, h), &e).unwrap();
        assert!(why.contains("nearly round") || why.contains("fits an ellipse poorly"), "{why}");
        let disc = ellipse(w, h, (200.0, 150.0), 60.0, 58.0, 0.0);
        let e = principal_axes(&disc, w).unwrap();
        assert!(implausible(&shape(&disc, &e, w, h), &e).unwrap().contains("nearly round"));
        let streak = ellipse(w, h, (200.0, 150.0), 150.0, 8.0, 20.0);
        let e = principal_axes(&streak, w).unwrap();
        assert!(implausible(&shape(&streak, &e, w, h), &e).unwrap().contains("streak"));
    }

    /// The chamfer distance of a pixel in a wide band is its distance to the
    /// band's edge, within the 3-4 chamfer's 8 %.
    #[test]
    fn chamfer_distance_inside_a_band() {
        let (w, h) = (50, 30);
        let mask: Vec<bool> = (0..w * h).map(|i| (5..45).contains(&(i % w)) && (5..25).contains(&(i / w))).collect();
        let d = distance_to_outside(&mask, w);
        assert_eq!(d[15 * w + 4], 0.0);
        assert!((d[15 * w + 5] - 1.0).abs() < 1e-9);
        assert!((d[15 * w + 14] - 10.0).abs() < 0.8, "{}", d[15 * w + 14]);
    }

    /// Holes are filled; the outside is not.
    #[test]
    fn holes_fill_but_the_outside_does_not() {
        let (w, h) = (9, 7);
        let ring: Vec<bool> = (0..w * h)
            .map(|i| {
                let (x, y) = (i % w, i / w);
                (2..=6).contains(&x) && (1..=5).contains(&y) && !(x == 4 && y == 3)
            })
            .collect();
        let filled = fill_holes(&ring, w);
        assert!(filled[3 * w + 4]);
        assert!(!filled[0] && !filled[3 * w + 8]);
    }
}
