//! Domains on a sheet: connected regions of nuclei on one side of the
//! boundary level (high: ≥ θ, as along a row; neighbours share a side, and on
//! a periodic sheet the last nucleus of a row or column neighbours the
//! first), with their areas, centres and shapes.
//!
//! Shape from the region's second moments (each nucleus a square of side h):
//! elongation = √(λ₁/λ₂), the ratio of the principal axes of the ellipse
//! with the same moments (1 for a disc or a square). A region cut by a
//! sealed wall is measured as if mirrored in that wall (no flux makes the
//! level symmetric about it) when its contact with the wall is at least as
//! long as the region reaches away from it, so that half a spot on a wall
//! counts as a spot; a spot that only grazes a wall is measured as it is.

use super::SheetField;

/// Largest elongation of a spot; longer regions are stripes (common
/// practice, no source: a spot as round as a 2:1 ellipse or rounder).
pub const SPOT_ELONGATION: f64 = 2.0;

/// The word for a region's shape.
pub type ShapeWord = &'static str;

/// One connected region.
#[derive(Debug, Clone, PartialEq)]
pub struct Region {
    /// True for a region of high nuclei (≥ θ).
    pub high: bool,
    /// Number of nuclei.
    pub nuclei: usize,
    /// Area, µm² (nuclei × h²).
    pub area_um2: f64,
    /// Centre, µm (on a periodic sheet taken back into the sheet).
    pub centre_um: [f64; 2],
    /// Elongation √(λ₁/λ₂) ≥ 1.
    pub elongation: f64,
    /// True when the region reaches from a wall to the opposite one (sealed)
    /// or winds around the sheet (periodic).
    pub spans: bool,
    /// `"spot"` (elongation < [`SPOT_ELONGATION`], not spanning), `"stripe"`
    /// (longer, or spanning), or `"field"` (more than half the sheet: the
    /// surroundings of the others).
    pub shape: ShapeWord,
}

/// Every connected region of `field`, high and low, in the order of their
/// first nucleus (x fastest).
pub fn regions(field: &SheetField, theta: f64) -> Vec<Region> {
    let (nx, ny) = (field.nx, field.ny);
    let n = nx * ny;
    let high: Vec<bool> = field.values.iter().map(|v| *v >= theta).collect();
    let mut label = vec![u32::MAX; n];
    // Unwrapped lattice coordinates of each nucleus in its region.
    let mut at = vec![[0i64; 2]; n];
    let mut out = Vec::new();
    let mut queue = Vec::new();
    for seed in 0..n {
        if label[seed] != u32::MAX {
            continue;
        }
        let id = out.len() as u32;
        let side = high[seed];
        label[seed] = id;
        at[seed] = [(seed % nx) as i64, (seed / nx) as i64];
        queue.clear();
        queue.push(seed);
        let mut members = Vec::new();
        let mut winds = false;
        while let Some(k) = queue.pop() {
            members.push(k);
            let (i, j) = (k % nx, k / nx);
            for (di, dj) in [(1i64, 0i64), (-1, 0), (0, 1), (0, -1)] {
                let (ti, tj) = (i as i64 + di, j as i64 + dj);
                let inside = (0..nx as i64).contains(&ti) && (0..ny as i64).contains(&tj);
                if !inside && !field.periodic {
                    continue;
                }
                let m = (tj.rem_euclid(ny as i64) as usize) * nx + ti.rem_euclid(nx as i64) as usize;
                if high[m] != side {
                    continue;
                }
                let want = [at[k][0] + di, at[k][1] + dj];
                if label[m] == u32::MAX {
                    label[m] = id;
                    at[m] = want;
                    queue.push(m);
                } else if at[m] != want {
                    winds = true; // met again one sheet further on
                }
            }
        }
        out.push(measure(field, side, &members, &at, winds));
    }
    out
}

/// Area, centre and shape of one region.
fn measure(field: &SheetField, high: bool, members: &[usize], at: &[[i64; 2]], winds: bool) -> Region {
    let (nx, ny, h) = (field.nx, field.ny, field.spacing_um);
    let count = members.len() as f64;
    let (mut sx, mut sy, mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0, 0.0, 0.0);
    let (mut on_left, mut on_right, mut on_bottom, mut on_top) = (0usize, 0usize, 0usize, 0usize);
    for &k in members {
        let (x, y) = (at[k][0] as f64 + 0.5, at[k][1] as f64 + 0.5);
        sx += x;
        sy += y;
        sxx += x * x;
        syy += y * y;
        sxy += x * y;
        let (i, j) = (k % nx, k / nx);
        on_left += usize::from(i == 0);
        on_right += usize::from(i == nx - 1);
        on_bottom += usize::from(j == 0);
        on_top += usize::from(j == ny - 1);
    }
    let (mx, my) = (sx / count, sy / count);
    // A nucleus is a unit square: its own variance 1/12 along each axis.
    let mut vxx = sxx / count - mx * mx + 1.0 / 12.0;
    let mut vyy = syy / count - my * my + 1.0 / 12.0;
    let mut vxy = sxy / count - mx * my;
    let spans = if field.periodic { winds } else { (on_left > 0 && on_right > 0) || (on_bottom > 0 && on_top > 0) };
    if !field.periodic && !spans {
        // Mirrored in a wall it lies along: the moment about the wall, no
        // cross moment. Reach = how far the region extends from the wall.
        let (wx, wy) = (nx as f64, ny as f64);
        let max_x = members.iter().map(|k| (k % nx) as f64 + 1.0).fold(0.0, f64::max);
        let min_x = members.iter().map(|k| (k % nx) as f64).fold(wx, f64::min);
        let max_y = members.iter().map(|k| (k / nx) as f64 + 1.0).fold(0.0, f64::max);
        let min_y = members.iter().map(|k| (k / nx) as f64).fold(wy, f64::min);
        let mirror_x = if on_left as f64 >= max_x {
            Some(0.0)
        } else if on_right as f64 >= wx - min_x {
            Some(wx)
        } else {
            None
        };
        let mirror_y = if on_bottom as f64 >= max_y {
            Some(0.0)
        } else if on_top as f64 >= wy - min_y {
            Some(wy)
        } else {
            None
        };
        if let Some(w) = mirror_x {
            vxx = sxx / count - 2.0 * w * mx + w * w + 1.0 / 12.0;
            vxy = 0.0;
        }
        if let Some(w) = mirror_y {
            vyy = syy / count - 2.0 * w * my + w * w + 1.0 / 12.0;
            vxy = 0.0;
        }
    }
    let half_trace = (vxx + vyy) / 2.0;
    let root = (((vxx - vyy) / 2.0).powi(2) + vxy * vxy).sqrt();
    let (l1, l2) = (half_trace + root, (half_trace - root).max(1e-12));
    let elongation = (l1 / l2).sqrt();
    let field_like = count > 0.5 * (nx * ny) as f64;
    let shape = if field_like {
        "field"
    } else if spans || elongation >= SPOT_ELONGATION {
        "stripe"
    } else {
        "spot"
    };
    let (wx, wy) = field.size_um();
    Region {
        high,
        nuclei: members.len(),
        area_um2: count * h * h,
        centre_um: [(mx * h).rem_euclid(wx), (my * h).rem_euclid(wy)],
        elongation,
        spans,
        shape,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sheet(nx: usize, ny: usize, f: impl Fn(f64, f64) -> f64) -> Vec<f64> {
        (0..nx * ny).map(|k| f((k % nx) as f64 + 0.5, (k / nx) as f64 + 0.5)).collect()
    }

    /// A disc: two regions, the disc (a spot of area ≈ πr²) and its
    /// surroundings (the field).
    #[test]
    fn a_disc_is_a_spot_in_a_field() {
        let v = sheet(60, 60, |x, y| 12.0 - (x - 30.0).hypot(y - 28.0));
        let f = SheetField { values: &v, nx: 60, ny: 60, spacing_um: 2.0, periodic: false };
        let r = regions(&f, 0.0);
        assert_eq!(r.len(), 2);
        let disc = r.iter().find(|r| r.high).unwrap();
        assert_eq!(disc.shape, "spot");
        assert!(disc.elongation < 1.05);
        let area = std::f64::consts::PI * 24.0 * 24.0;
        assert!((disc.area_um2 / area - 1.0).abs() < 0.02, "{}", disc.area_um2);
        assert!((disc.centre_um[0] - 60.0).abs() < 0.1 && (disc.centre_um[1] - 56.0).abs() < 0.1);
        assert_eq!(r.iter().find(|r| !r.high).unwrap().shape, "field");
    }

    /// Half a disc on a sealed wall is a spot; a band across the sheet is a
    /// stripe that spans it.
    #[test]
    fn half_spots_on_walls_and_bands_across() {
        let v = sheet(60, 40, |x, y| 8.0 - x.hypot(y - 20.0));
        let f = SheetField { values: &v, nx: 60, ny: 40, spacing_um: 1.0, periodic: false };
        let half = regions(&f, 0.0).into_iter().find(|r| r.high).unwrap();
        assert_eq!(half.shape, "spot", "elongation {}", half.elongation);
        let v = sheet(60, 40, |x, _| 3.0 - (x - 30.0).abs());
        let f = SheetField { values: &v, nx: 60, ny: 40, spacing_um: 1.0, periodic: false };
        let band = regions(&f, 0.0).into_iter().find(|r| r.high).unwrap();
        assert!(band.spans);
        assert_eq!(band.shape, "stripe");
    }

    /// On a periodic sheet a spot across the corner is one region, and a band
    /// that closes around the sheet spans it.
    #[test]
    fn periodic_regions_join_across_the_seams() {
        let (n, c) = (40.0, 0.0);
        let d = |a: f64, b: f64| {
            let t = (a - b).abs();
            t.min(n - t)
        };
        let v = sheet(40, 40, |x, y| 6.0 - d(x, c).hypot(d(y, c)));
        let f = SheetField { values: &v, nx: 40, ny: 40, spacing_um: 1.0, periodic: true };
        let r = regions(&f, 0.0);
        let spots: Vec<_> = r.iter().filter(|r| r.high).collect();
        assert_eq!(spots.len(), 1);
        assert_eq!(spots[0].shape, "spot");
        assert!(!spots[0].spans);
        let v = sheet(40, 40, |_, y| (2.0 * std::f64::consts::PI * y / 20.0).cos());
        let f = SheetField { values: &v, nx: 40, ny: 40, spacing_um: 1.0, periodic: true };
        let r = regions(&f, 0.0);
        assert_eq!(r.len(), 4, "two high bands, two low (one across the seam)");
        assert!(r.iter().all(|r| r.spans && r.shape == "stripe"));
    }
}
