//! Finding the embryo in an image: pixels above a fitted background, largest connected region,
//! holes filled, principal axes.

use std::collections::VecDeque;

/// Pixels brighter than the background: a plane a + b·x + c·y is fitted by
/// least squares to the image border (where the embryo must not be), so an
/// uneven background is allowed for; the noise s = 1.4826·MAD of the border's
/// residuals; a pixel is foreground when its residual exceeds
/// max(5s, 0.1·(p99 − median border)), p99 the 99th percentile of the image
/// (common practice, no source). Unlike a plain Otsu threshold this keeps
/// unstained parts of the embryo, dimmer than stained domains but brighter
/// than the background.
pub fn foreground(values: &[f64], width: usize) -> (Vec<bool>, Vec<f64>) {
    let height = values.len() / width;
    let border: Vec<(f64, f64, f64)> = values
        .iter()
        .enumerate()
        .filter(|(i, _)| {
            let (x, y) = (i % width, i / width);
            x < 2 || y < 2 || x + 2 >= width || y + 2 >= height
        })
        .map(|(i, v)| ((i % width) as f64, (i / width) as f64, *v))
        .collect();
    // Normal equations of the plane fit.
    let mut ata = nalgebra::Matrix3::<f64>::zeros();
    let mut atb = nalgebra::Vector3::<f64>::zeros();
    for (x, y, v) in &border {
        let r = nalgebra::Vector3::new(1.0, *x, *y);
        ata += r * r.transpose();
        atb += r * *v;
    }
    let coef = ata.lu().solve(&atb).unwrap_or_else(|| nalgebra::Vector3::new(0.0, 0.0, 0.0));
    let plane = |x: f64, y: f64| coef[0] + coef[1] * x + coef[2] * y;
    let median = |v: &mut Vec<f64>| {
        v.sort_by(f64::total_cmp);
        v[v.len() / 2]
    };
    let mut residuals: Vec<f64> = border.iter().map(|(x, y, v)| v - plane(*x, *y)).collect();
    let centre = median(&mut residuals);
    let mut dev: Vec<f64> = residuals.iter().map(|r| (r - centre).abs()).collect();
    let s = 1.4826 * median(&mut dev);
    let mut levels: Vec<f64> = border.iter().map(|b| b.2).collect();
    let m = median(&mut levels);
    let mut all = values.to_vec();
    all.sort_by(f64::total_cmp);
    let p99 = all[((all.len() - 1) as f64 * 0.99) as usize];
    let cut = (5.0 * s).max(0.1 * (p99 - m));
    let residual: Vec<f64> =
        values.iter().enumerate().map(|(i, v)| v - plane((i % width) as f64, (i / width) as f64)).collect();
    // Second pass: the edge at half of the embryo's dimmest interior level
    // (10th percentile of the first mask) above the background, so blur moves it
    // by nothing on average.
    let mut inside: Vec<f64> = residual.iter().copied().filter(|r| *r > cut).collect();
    if inside.is_empty() {
        return (vec![false; values.len()], residual);
    }
    inside.sort_by(f64::total_cmp);
    let floor = inside[inside.len() / 10];
    let edge = (0.5 * floor).max(cut.min(floor));
    (residual.iter().map(|r| *r > edge).collect(), residual)
}

/// Refines the two poles of the long axis: along the axis (a strip `strip`
/// px wide), each pole is placed where the background-free intensity
/// `residual` falls to half of its local interior level (the median between 2
/// and 8 % of the length inside that pole), interpolated between samples, so
/// blur and uneven staining move it by nothing on average (common practice,
/// no source). Returns the two poles (column, row) in the order of `ends`.
pub fn refine_poles(residual: &[f64], width: usize, e: &Embryo, strip: usize) -> [(f64, f64); 2] {
    let height = residual.len() / width;
    let [a, b] = e.ends();
    let len = e.length();
    let mut out = [a, b];
    for (k, (pole, other)) in [(a, b), (b, a)].into_iter().enumerate() {
        // From 20 % inside this pole to 10 % beyond it, 4 samples per px.
        let dir = ((pole.0 - other.0) / len, (pole.1 - other.1) / len);
        let at = |t: f64| (pole.0 + t * dir.0, pole.1 + t * dir.1);
        let (from, to) = (at(-0.2 * len), at(0.1 * len));
        let p = super::profile::profile_line(residual, width, height, (from.1, from.0), (to.1, to.0), strip);
        let n = p.len();
        let t_of = |i: usize| -0.2 * len + 0.3 * len * i as f64 / (n - 1) as f64;
        let mut interior: Vec<f64> =
            (0..n).filter(|&i| (-0.08 * len..=-0.02 * len).contains(&t_of(i))).map(|i| p[i]).collect();
        if interior.is_empty() {
            continue;
        }
        interior.sort_by(f64::total_cmp);
        let half = 0.5 * interior[interior.len() / 2];
        let start = (0..n).find(|&i| t_of(i) >= -0.05 * len).unwrap_or(0);
        if let Some(i) = (start..n - 1).find(|&i| p[i] >= half && p[i + 1] < half) {
            let f = (p[i] - half) / (p[i] - p[i + 1]);
            out[k] = at(t_of(i) + f * (t_of(i + 1) - t_of(i)));
        }
    }
    out
}

/// The largest 4-connected region of `mask` (row-major, `width` wide).
pub fn largest_region(mask: &[bool], width: usize) -> Vec<bool> {
    let height = mask.len() / width;
    let mut label = vec![0u32; mask.len()];
    let (mut best, mut best_size, mut next) = (0u32, 0usize, 0u32);
    let mut queue = VecDeque::new();
    for start in 0..mask.len() {
        if !mask[start] || label[start] != 0 {
            continue;
        }
        next += 1;
        label[start] = next;
        queue.push_back(start);
        let mut size = 0;
        while let Some(i) = queue.pop_front() {
            size += 1;
            let (x, y) = (i % width, i / width);
            let mut visit = |j: usize| {
                if mask[j] && label[j] == 0 {
                    label[j] = next;
                    queue.push_back(j);
                }
            };
            if x > 0 {
                visit(i - 1);
            }
            if x + 1 < width {
                visit(i + 1);
            }
            if y > 0 {
                visit(i - width);
            }
            if y + 1 < height {
                visit(i + width);
            }
        }
        if size > best_size {
            best_size = size;
            best = next;
        }
    }
    label.iter().map(|l| *l == best && best != 0).collect()
}

/// Fills holes: background pixels not connected to the image border join the region.
pub fn fill_holes(mask: &[bool], width: usize) -> Vec<bool> {
    let outside: Vec<bool> = mask.iter().map(|m| !m).collect();
    let height = mask.len() / width;
    let mut reached = vec![false; mask.len()];
    let mut queue = VecDeque::new();
    for i in 0..mask.len() {
        let (x, y) = (i % width, i / width);
        if outside[i] && (x == 0 || y == 0 || x + 1 == width || y + 1 == height) {
            reached[i] = true;
            queue.push_back(i);
        }
    }
    while let Some(i) = queue.pop_front() {
        let (x, y) = (i % width, i / width);
        for (ok, j) in [
            (x > 0, i.wrapping_sub(1)),
            (x + 1 < width, i + 1),
            (y > 0, i.wrapping_sub(width)),
            (y + 1 < height, i + width),
        ] {
            if ok && outside[j] && !reached[j] {
                reached[j] = true;
                queue.push_back(j);
            }
        }
    }
    reached.iter().map(|r| !r).collect()
}

/// The embryo's geometry from its mask.
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
    /// coordinates' covariance (as scikit-image's `regionprops` defines
    /// `major_axis_length`); robust to single pixels at the tips.
    pub fn length(&self) -> f64 {
        4.0 * self.variances.0.sqrt()
    }
    /// Height across, px: the equivalent ellipse's minor axis, 4·√λ₂.
    pub fn height(&self) -> f64 {
        4.0 * self.variances.1.sqrt()
    }
    /// Angle of the long axis from the image's x axis, degrees in (−90, 90].
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
}

/// Principal axes of a region: centroid, and the eigenvector of the largest
/// eigenvalue of the coordinates' covariance as the long axis.
pub fn principal_axes(mask: &[bool], width: usize) -> Option<Embryo> {
    let pts: Vec<(f64, f64)> =
        mask.iter().enumerate().filter(|(_, m)| **m).map(|(i, _)| ((i % width) as f64, (i / width) as f64)).collect();
    if pts.len() < 3 {
        return None;
    }
    let n = pts.len() as f64;
    let (cx, cy) = pts.iter().fold((0.0, 0.0), |(a, b), (x, y)| (a + x, b + y));
    let (cx, cy) = (cx / n, cy / n);
    let (mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0);
    for (x, y) in &pts {
        sxx += (x - cx) * (x - cx);
        syy += (y - cy) * (y - cy);
        sxy += (x - cx) * (y - cy);
    }
    let (sxx, syy, sxy) = (sxx / n, syy / n, sxy / n);
    let theta = 0.5 * (2.0 * sxy).atan2(sxx - syy);
    let mean = 0.5 * (sxx + syy);
    let spread = (0.25 * (sxx - syy) * (sxx - syy) + sxy * sxy).sqrt();
    let variances = (mean + spread, (mean - spread).max(0.0));
    let axis = (theta.cos(), theta.sin());
    Some(Embryo { cx, cy, axis, area: pts.len(), variances })
}
