//! An embryo's geometry from its outline: centroid and principal axes (the
//! equivalent ellipse), how embryo-like the outline is (the plausibility
//! limits), dents where something is attached, and the two poles placed to a
//! fraction of a pixel.

use super::outline::distance_to_outside;
use super::profile::profile_line_n;

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

/// The deepest dent in an outline: the convex hull of its pixels (Andrew's
/// monotone chain) is filled, and the deepest hull pixel outside the outline
/// — its distance to the outline, px — is returned with its position. An
/// embryo is convex but for the pixel grid; a cell or debris stuck to it
/// leaves a dent where the two meet.
pub fn deepest_dent(pixels: &[usize], width: usize, height: usize) -> (f64, (f64, f64)) {
    let mut pts: Vec<(i64, i64)> = pixels.iter().map(|&i| ((i % width) as i64, (i / width) as i64)).collect();
    pts.sort_unstable();
    let cross = |o: (i64, i64), a: (i64, i64), b: (i64, i64)| (a.0 - o.0) * (b.1 - o.1) - (a.1 - o.1) * (b.0 - o.0);
    let mut hull: Vec<(i64, i64)> = Vec::new();
    for pass in 0..2 {
        let start = hull.len();
        let iter: Box<dyn Iterator<Item = &(i64, i64)>> =
            if pass == 0 { Box::new(pts.iter()) } else { Box::new(pts.iter().rev()) };
        for &p in iter {
            while hull.len() >= start + 2 && cross(hull[hull.len() - 2], hull[hull.len() - 1], p) <= 0 {
                hull.pop();
            }
            hull.push(p);
        }
        hull.pop();
    }
    if hull.len() < 3 {
        return (0.0, (0.0, 0.0));
    }
    let inside_hull = |x: i64, y: i64| (0..hull.len()).all(|k| cross(hull[k], hull[(k + 1) % hull.len()], (x, y)) >= 0);
    let mut outside = vec![true; width * height];
    for &i in pixels {
        outside[i] = false;
    }
    // Distance of every pixel to the outline.
    let distance = distance_to_outside(&outside, width);
    let (x0, x1) = (pts.iter().map(|p| p.0).min().unwrap_or(0), pts.iter().map(|p| p.0).max().unwrap_or(0));
    let (y0, y1) = (pts.iter().map(|p| p.1).min().unwrap_or(0), pts.iter().map(|p| p.1).max().unwrap_or(0));
    let mut best = (0.0, (0.0, 0.0));
    for y in y0..=y1 {
        for x in x0..=x1 {
            let i = y as usize * width + x as usize;
            if outside[i] && distance[i] > best.0 && inside_hull(x, y) {
                best = (distance[i], (x as f64, y as f64));
            }
        }
    }
    best
}

/// A dent deeper than this many px, and than [`DENT_FRACTION`] of the
/// height, means something is attached (common practice, no source).
pub const DENT_PX: f64 = 5.0;
/// A dent deeper than this fraction of the height (and [`DENT_PX`]).
pub const DENT_FRACTION: f64 = 0.03;

/// Width of the strip along the axis in which the poles are placed, px.
pub const POLE_STRIP_PX: usize = 5;

/// Places the two poles of the long axis. Along the axis (in a strip
/// [`POLE_STRIP_PX`] wide, 4 samples per px, from 20 % of the length inside
/// each end of the equivalent ellipse to 10 % beyond it) the smoothed outline
/// signal `o` is read from the inside out, and the first place where it falls
/// below the region's edge level `edge` (half its dimmest tissue) for good
/// marks the edge roughly. The pole is the steepest descent of the signal nearest to
/// that place (within 8 px), found to a fraction of a sample by a parabola
/// through the slope: the middle of the blurred edge, wherever the stain is
/// bright or faint near the pole (common practice, no source). The ends of the
/// equivalent ellipse only start the search, because a bulging or pointed
/// outline puts them several pixels off.
///
/// Returns the poles (column, row) in the order of `e.ends()`, or the end
/// whose edge could not be found.
pub fn place_poles(o: &[f64], width: usize, e: &Embryo, edge: f64) -> Result<[(f64, f64); 2], (f64, f64)> {
    let height = o.len() / width;
    let [a, b] = e.ends();
    let len = e.length();
    let mut out = [a, b];
    for (k, (pole, other)) in [(a, b), (b, a)].into_iter().enumerate() {
        let dir = ((pole.0 - other.0) / len, (pole.1 - other.1) / len);
        let at = |t: f64| (pole.0 + t * dir.0, pole.1 + t * dir.1);
        let (t0, t1) = (-0.2 * len, 0.1 * len);
        let n = (4.0 * (t1 - t0)).ceil() as usize + 1;
        let (from, to) = (at(t0), at(t1));
        let raw = profile_line_n(o, width, height, (from.1, from.0), (to.1, to.0), POLE_STRIP_PX, n);
        let step = (t1 - t0) / (n - 1) as f64;
        // Gaussian of 1 px (4 samples) before the slope is taken.
        let p: Vec<f64> = (0..n)
            .map(|i| {
                let (lo, hi) = (i.saturating_sub(12), (i + 13).min(n));
                let (mut sum, mut weight) = (0.0, 0.0);
                for (j, v) in raw.iter().enumerate().take(hi).skip(lo) {
                    let w = (-((j as f64 - i as f64) / 4.0).powi(2) / 2.0).exp();
                    sum += w * v;
                    weight += w;
                }
                sum / weight
            })
            .collect();
        // First fall below the edge level, going out from 20 % inside, with
        // 2 px below it beyond (a neighbour farther out is never reached).
        let Some(coarse) =
            (0..n.saturating_sub(9)).find(|&i| p[i] >= edge && p[i + 1..i + 9].iter().all(|v| *v < edge))
        else {
            return Err(pole);
        };
        let slope = |i: usize| p[(i + 1).min(n - 1)] - p[i.saturating_sub(1)];
        let reach = 32usize;
        let is_descent =
            |i: usize| i > 0 && i + 1 < n && slope(i) < 0.0 && slope(i) <= slope(i - 1) && slope(i) <= slope(i + 1);
        let window = coarse.saturating_sub(reach)..(coarse + reach + 1).min(n);
        let strongest = window.clone().map(slope).fold(0.0f64, f64::min);
        // The nearest clear descent: at least 15 % as steep as the steepest nearby.
        let Some(j) =
            window.filter(|&i| is_descent(i) && slope(i) <= 0.15 * strongest).min_by_key(|&i| i.abs_diff(coarse))
        else {
            return Err(pole);
        };
        let (d0, d1, d2) = (slope(j - 1), slope(j), slope(j + 1));
        let curvature = d0 - 2.0 * d1 + d2;
        let shift = if curvature.abs() > 1e-300 { (0.5 * (d0 - d2) / curvature).clamp(-1.0, 1.0) } else { 0.0 };
        out[k] = at(t0 + (j as f64 + shift) * step);
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

    /// A round cell stuck to one pole leaves a dent where it meets the
    /// embryo; a plain ellipse has none deeper than the pixel grid.
    #[test]
    fn a_cell_at_the_pole_leaves_a_dent() {
        let (w, h) = (500, 300);
        let plain = ellipse(w, h, (220.0, 150.0), 160.0, 60.0, 10.0);
        assert!(deepest_dent(&plain, w, h).0 < 2.0);
        let (c, s) = (10f64.to_radians().cos(), 10f64.to_radians().sin());
        let mut stuck = plain.clone();
        stuck.extend(ellipse(w, h, (220.0 + 175.0 * c, 150.0 + 175.0 * s), 22.0, 22.0, 0.0));
        stuck.sort_unstable();
        stuck.dedup();
        let (depth, at) = deepest_dent(&stuck, w, h);
        assert!(depth > 5.0 && at.0 > 330.0, "{depth} at {at:?}");
    }
}
