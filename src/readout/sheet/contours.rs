//! Boundary contours on a sheet: the curves where a gene's level crosses its
//! boundary level θ, traced by marching squares through the nucleus centres
//! (Lorensen & Cline 1987, Computer Graphics 21:163, the two-dimensional
//! case; from memory) and chained into polylines.
//!
//! A cell is the square between four neighbouring nuclei. On each of its
//! sides whose two nuclei lie on opposite sides of θ ("high" is ≥ θ, as along
//! a row), the crossing lies where linear interpolation between the two
//! nuclei reaches θ, exactly as along a row. A cell with four crossings (a
//! saddle) is resolved by the mean of its four corners: when the mean is high
//! the high corners are joined through the cell. A contour that reaches the
//! outer ring of nuclei of a sealed sheet is carried on straight to the wall,
//! half a spacing further (no flux through the wall makes the level
//! symmetric about it), so a straight boundary across a sheet of side W has
//! length W. On a periodic sheet, cells also join the last nuclei to the
//! first, and points along a contour are unwrapped so that lengths and
//! spreads are those of the curve, not of its pieces.

use super::SheetField;

/// One contour: a polyline of points (x, y) in µm.
#[derive(Debug, Clone, PartialEq)]
pub struct Polyline {
    /// Points along the contour, µm; on a periodic sheet unwrapped (they may
    /// lie outside the sheet by up to its size). A closed contour ends where
    /// it began (on a periodic sheet possibly at an image of its start, one
    /// sheet further, when it winds around the sheet).
    pub points: Vec<[f64; 2]>,
    /// True when the contour closes on itself.
    pub closed: bool,
}

impl Polyline {
    /// The segments, as pairs of points.
    fn segments(&self) -> impl Iterator<Item = ([f64; 2], [f64; 2])> + '_ {
        self.points.windows(2).map(|w| (w[0], w[1]))
    }

    /// Length, µm.
    pub fn length_um(&self) -> f64 {
        self.segments().map(|(a, b)| (b[0] - a[0]).hypot(b[1] - a[1])).sum()
    }

    /// Arc-length-weighted moments of the contour: mean (x, y) and the
    /// covariance (xx, yy, xy), µm and µm², with each segment counted as a
    /// uniform line (its own spread along itself included).
    pub fn moments(&self) -> ([f64; 2], [f64; 3]) {
        let (mut w, mut sx, mut sy) = (0.0, 0.0, 0.0);
        for (a, b) in self.segments() {
            let l = (b[0] - a[0]).hypot(b[1] - a[1]);
            w += l;
            sx += l * (a[0] + b[0]) / 2.0;
            sy += l * (a[1] + b[1]) / 2.0;
        }
        if w <= 0.0 {
            let p = self.points.first().copied().unwrap_or([0.0, 0.0]);
            return (p, [0.0; 3]);
        }
        let m = [sx / w, sy / w];
        // Second moments about the mean (two passes, so that a boundary far
        // from the origin keeps its small spread): over a uniform segment
        // from a to b, ∫ u v = l (2 a_u a_v + a_u b_v + b_u a_v + 2 b_u b_v)/6.
        let (mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0);
        for (a, b) in self.segments() {
            let l = (b[0] - a[0]).hypot(b[1] - a[1]);
            let (a, b) = ([a[0] - m[0], a[1] - m[1]], [b[0] - m[0], b[1] - m[1]]);
            let second =
                |u: usize, v: usize| l * (2.0 * a[u] * a[v] + a[u] * b[v] + b[u] * a[v] + 2.0 * b[u] * b[v]) / 6.0;
            sxx += second(0, 0);
            syy += second(1, 1);
            sxy += second(0, 1);
        }
        (m, [sxx / w, syy / w, sxy / w])
    }
}

/// Which side of a cell a crossing is on.
#[derive(Clone, Copy)]
enum Side {
    Bottom,
    Right,
    Top,
    Left,
}

/// Every contour of `field` through the level `theta`.
pub fn contours(field: &SheetField, theta: f64) -> Vec<Polyline> {
    let SheetField { nx, ny, periodic, .. } = *field;
    if nx < 2 || ny < 2 {
        return Vec::new();
    }
    let high = |i: usize, j: usize| field.at(i, j) >= theta;
    let (cells_x, cells_y) = if periodic { (nx, ny) } else { (nx - 1, ny - 1) };
    // Each crossing is named by the lattice edge it lies on: 2·(index of its
    // lower-left nucleus) for an edge along x, + 1 for an edge along y.
    let key = |side: Side, i: usize, j: usize| -> usize {
        let (i1, j1) = ((i + 1) % nx, (j + 1) % ny);
        match side {
            Side::Bottom => 2 * (j * nx + i),
            Side::Top => 2 * (j1 * nx + i),
            Side::Left => 2 * (j * nx + i) + 1,
            Side::Right => 2 * (j * nx + i1) + 1,
        }
    };
    let mut segments: Vec<[usize; 2]> = Vec::new();
    for j in 0..cells_y {
        for i in 0..cells_x {
            let (i1, j1) = ((i + 1) % nx, (j + 1) % ny);
            let corners = [high(i, j), high(i1, j), high(i1, j1), high(i, j1)];
            let count = corners.iter().filter(|c| **c).count();
            if count == 0 || count == 4 {
                continue;
            }
            // Sides in order around the cell, each between corners k and k+1.
            let sides = [Side::Bottom, Side::Right, Side::Top, Side::Left];
            let crossed: Vec<Side> = (0..4).filter(|&k| corners[k] != corners[(k + 1) % 4]).map(|k| sides[k]).collect();
            if crossed.len() == 2 {
                segments.push([key(crossed[0], i, j), key(crossed[1], i, j)]);
                continue;
            }
            // A saddle: the corners on the side the cell's mean is on are
            // joined through the cell, so each of the others is cut off alone.
            let mean = (field.at(i, j) + field.at(i1, j) + field.at(i1, j1) + field.at(i, j1)) / 4.0;
            let cut_off_high = mean < theta;
            for k in 0..4 {
                if corners[k] == cut_off_high {
                    // Corner k sits between sides k-1 and k.
                    segments.push([key(sides[(k + 3) % 4], i, j), key(sides[k], i, j)]);
                }
            }
        }
    }
    chain(field, theta, &segments)
}

/// Joins segments that share a crossing into polylines.
fn chain(field: &SheetField, theta: f64, segments: &[[usize; 2]]) -> Vec<Polyline> {
    const NONE: u32 = u32::MAX;
    let mut touching = vec![[NONE; 2]; 2 * field.nx * field.ny];
    for (s, seg) in segments.iter().enumerate() {
        for &k in seg {
            let slot = &mut touching[k];
            if slot[0] == NONE {
                slot[0] = s as u32;
            } else {
                slot[1] = s as u32;
            }
        }
    }
    let mut used = vec![false; segments.len()];
    let mut out = Vec::new();
    // Open contours first, from a crossing that only one segment touches.
    let ends: Vec<usize> = segments.iter().flatten().copied().filter(|&k| touching[k][1] == NONE).collect();
    for start in ends {
        let s = touching[start][0] as usize;
        if used[s] {
            continue;
        }
        out.push(walk(field, theta, segments, &touching, &mut used, start, s, false));
    }
    for s in 0..segments.len() {
        if !used[s] {
            out.push(walk(field, theta, segments, &touching, &mut used, segments[s][0], s, true));
        }
    }
    out
}

/// Follows segments from crossing `start` through segment `s` until an end
/// or back to the start.
#[allow(clippy::too_many_arguments)]
fn walk(
    field: &SheetField,
    theta: f64,
    segments: &[[usize; 2]],
    touching: &[[u32; 2]],
    used: &mut [bool],
    start: usize,
    mut s: usize,
    closed: bool,
) -> Polyline {
    let mut keys = vec![start];
    let mut at = start;
    loop {
        used[s] = true;
        let next = if segments[s][0] == at { segments[s][1] } else { segments[s][0] };
        if closed && next == start {
            break;
        }
        keys.push(next);
        at = next;
        let pair = touching[at];
        let other = if pair[0] as usize == s { pair[1] } else { pair[0] };
        if other == u32::MAX || used[other as usize] {
            break;
        }
        s = other as usize;
    }
    let mut points: Vec<[f64; 2]> = Vec::with_capacity(keys.len() + 2);
    let (wx, wy) = field.size_um();
    for &k in &keys {
        let p = crossing(field, theta, k);
        points.push(match points.last() {
            Some(last) => nearest_image(p, *last, wx, wy),
            None => p,
        });
    }
    if closed {
        let last = points[points.len() - 1];
        points.push(nearest_image(points[0], last, wx, wy));
    }
    if !closed && !field.periodic {
        // Carry each end on to the wall it faces.
        if let Some(p) = wall_point(field, keys[0], points[0]) {
            points.insert(0, p);
        }
        if let Some(p) = wall_point(field, keys[keys.len() - 1], points[points.len() - 1]) {
            points.push(p);
        }
    }
    Polyline { points, closed }
}

/// The image of `p` (shifted by whole sheet sizes) nearest to `near`: on a
/// sealed sheet, consecutive points are always less than a cell apart, so
/// this is `p` itself.
fn nearest_image(p: [f64; 2], near: [f64; 2], wx: f64, wy: f64) -> [f64; 2] {
    [p[0] - wx * ((p[0] - near[0]) / wx).round(), p[1] - wy * ((p[1] - near[1]) / wy).round()]
}

/// Where crossing `k` lies, µm (in the sheet, x < nx·h, y < ny·h).
fn crossing(field: &SheetField, theta: f64, k: usize) -> [f64; 2] {
    let h = field.spacing_um;
    let n = k / 2;
    let (i, j) = (n % field.nx, n / field.nx);
    let along_x = k % 2 == 0;
    let (i1, j1) = if along_x { ((i + 1) % field.nx, j) } else { (i, (j + 1) % field.ny) };
    let (a, b) = (field.at(i, j), field.at(i1, j1));
    let t = (theta - a) / (b - a);
    let (wx, wy) = field.size_um();
    let (mut x, mut y) = ((i as f64 + 0.5) * h, (j as f64 + 0.5) * h);
    if along_x {
        x += t * h;
    } else {
        y += t * h;
    }
    [x.rem_euclid(wx), y.rem_euclid(wy)]
}

/// The point on the wall beyond crossing `k` at the end of an open contour
/// on a sealed sheet (None when the end is not on the outer ring).
fn wall_point(field: &SheetField, k: usize, p: [f64; 2]) -> Option<[f64; 2]> {
    let n = k / 2;
    let (i, j) = (n % field.nx, n / field.nx);
    let (wx, wy) = field.size_um();
    if k % 2 == 0 {
        // On an edge along x: an end there leaves through the bottom or top wall.
        if j == 0 {
            return Some([p[0], 0.0]);
        }
        if j == field.ny - 1 {
            return Some([p[0], wy]);
        }
    } else {
        if i == 0 {
            return Some([0.0, p[1]]);
        }
        if i == field.nx - 1 {
            return Some([wx, p[1]]);
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn field_of(nx: usize, ny: usize, h: f64, f: impl Fn(f64, f64) -> f64) -> Vec<f64> {
        let mut v = Vec::with_capacity(nx * ny);
        for j in 0..ny {
            for i in 0..nx {
                v.push(f((i as f64 + 0.5) * h, (j as f64 + 0.5) * h));
            }
        }
        v
    }

    /// A level set that is a straight line x = c across a sealed sheet
    /// (a linear ramp in x) is one open contour, exactly straight, of length
    /// the sheet's height, at x = c.
    #[test]
    fn a_straight_boundary_is_one_straight_contour() {
        let (nx, ny, h) = (40, 30, 2.5);
        let v = field_of(nx, ny, h, |x, _| x);
        let field = SheetField { values: &v, nx, ny, spacing_um: h, periodic: false };
        let c = contours(&field, 37.3);
        assert_eq!(c.len(), 1);
        assert!(!c[0].closed);
        assert_relative_eq!(c[0].length_um(), ny as f64 * h, epsilon = 1e-9);
        let (mean, cov) = c[0].moments();
        assert_relative_eq!(mean[0], 37.3, epsilon = 1e-9);
        assert!(cov[0] < 1e-20, "sd across the axis {}", cov[0].sqrt());
    }

    /// A circle of radius r: one closed contour whose length approaches
    /// 2πr (an inscribed polygon, a little shorter) and whose mean is the centre.
    #[test]
    fn a_disc_is_one_closed_contour_of_its_circumference() {
        let (n, h, r) = (80, 1.0, 25.0);
        let v = field_of(n, n, h, |x, y| (x - 41.3).hypot(y - 38.9));
        let field = SheetField { values: &v, nx: n, ny: n, spacing_um: h, periodic: false };
        let c = contours(&field, r);
        assert_eq!(c.len(), 1);
        assert!(c[0].closed);
        let l = c[0].length_um();
        assert!((l / (2.0 * std::f64::consts::PI * r) - 1.0).abs() < 2e-3, "length {l}");
        let (mean, _) = c[0].moments();
        assert_relative_eq!(mean[0], 41.3, epsilon = 1e-2);
        assert_relative_eq!(mean[1], 38.9, epsilon = 1e-2);
    }

    /// On a periodic sheet a band across x closes on itself through the seam:
    /// two contours (its two edges), each closed and as long as the sheet is wide.
    #[test]
    fn a_band_on_a_periodic_sheet_closes_through_the_seam() {
        let (nx, ny, h) = (32, 24, 1.0);
        let v = field_of(nx, ny, h, |_, y| (2.0 * std::f64::consts::PI * y / 24.0).cos());
        let field = SheetField { values: &v, nx, ny, spacing_um: h, periodic: true };
        let c = contours(&field, 0.0);
        assert_eq!(c.len(), 2);
        for p in &c {
            assert!(p.closed);
            assert_relative_eq!(p.length_um(), 32.0, epsilon = 1e-9);
        }
    }
}
