//! Finding embryos in the outline signal: thresholds set from the
//! background's noise, connected regions split where they barely touch,
//! holes filled. Their geometry is in `geometry.rs`.

use std::collections::VecDeque;

use super::background::quantile;

/// A region is detected where the smoothed outline signal exceeds this many
/// of its background sd (common practice, no source).
pub const DETECT_SD: f64 = 5.0;
/// The edge may not sit lower than this many background sd.
pub const EDGE_MIN_SD: f64 = 3.0;
/// The quantile of a region's interior taken as its dimmest tissue: low, so
/// that faint unstained tissue covering only a few per cent of an embryo (a
/// gap between domains, an unstained cap) still sets the edge.
pub const DIMMEST: f64 = 0.01;
/// Regions smaller than this are specks (debris, noise), not embryos, px.
pub const MIN_AREA_PX: usize = 300;

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
    /// The level of `o` at each region's edge.
    pub edges: Vec<f64>,
    /// Every pixel above the detection threshold, specks included (kept out
    /// of the background estimate).
    pub detected: Vec<bool>,
    /// Regions too small to be embryos.
    pub specks: usize,
}

/// Depth of the cores that seed one embryo each, px: touching or nearly
/// touching embryos are joined by thin bridges, which this much erosion cuts
/// (common practice, no source).
pub const CORE_DEPTH_PX: f64 = 4.0;
/// Smallest core that seeds an embryo, px.
pub const MIN_CORE_PX: usize = 30;

/// Thresholds the smoothed outline signal `o` (background sd `noise`).
///
/// Pixels above [`DETECT_SD`]·noise are detected. Within each detected
/// patch, the pixels above its edge level (below) have cores (pixels at
/// least [`CORE_DEPTH_PX`] inside) that seed one region each, and every region
/// is flooded outwards in order of falling `o` (a marker-controlled
/// watershed: Beucher & Meyer 1993, from memory), down to its own edge
/// level: half of its dimmest tissue (the [`DIMMEST`] quantile of `o` over its
/// core), never below [`EDGE_MIN_SD`]·noise. So the edge sits at the
/// half-maximum of blurred unstained tissue however bright the stain
/// elsewhere, and embryos that nearly touch are split along the valley
/// between them. A detected patch without a core (a streak) is a region of
/// its own, to be judged by [`super::geometry::implausible`]; holes are filled.
pub fn segment(o: &[f64], width: usize, noise: f64) -> Segmentation {
    let height = o.len() / width;
    let noise = noise.max(1e-12);
    let detected: Vec<bool> = o.iter().map(|v| *v > DETECT_SD * noise).collect();
    // Each detected patch at its own edge level, so that blur between two
    // near embryos does not join their cores.
    let depth = distance_to_outside(&detected, width);
    let mut level = vec![false; o.len()];
    for patch in label(&detected, width).regions {
        let mut inner: Vec<f64> = patch.iter().filter(|&&i| depth[i] >= CORE_DEPTH_PX).map(|&i| o[i]).collect();
        if inner.is_empty() {
            continue;
        }
        let edge = (0.5 * quantile(&mut inner, DIMMEST)).max(EDGE_MIN_SD * noise);
        patch.iter().filter(|&&i| o[i] > edge).for_each(|&i| level[i] = true);
    }
    let depth = distance_to_outside(&level, width);
    let cores = label(&depth.iter().map(|d| *d >= CORE_DEPTH_PX).collect::<Vec<_>>(), width);
    let mut owner = vec![0u32; o.len()];
    let mut edges: Vec<f64> = Vec::new();
    let mut heap = std::collections::BinaryHeap::new();
    for core in cores.regions.iter().filter(|c| c.len() >= MIN_CORE_PX) {
        let mut values: Vec<f64> = core.iter().map(|&i| o[i]).collect();
        edges.push((0.5 * quantile(&mut values, DIMMEST)).max(EDGE_MIN_SD * noise));
        for &i in core {
            owner[i] = edges.len() as u32;
            heap.push(Flood(o[i], i));
        }
    }
    while let Some(Flood(_, i)) = heap.pop() {
        let k = owner[i];
        for j in neighbours(i, width, height) {
            if owner[j] == 0 && o[j] > edges[k as usize - 1] {
                owner[j] = k;
                heap.push(Flood(o[j], j));
            }
        }
    }
    let mut masks: Vec<Vec<bool>> = vec![vec![false; o.len()]; edges.len()];
    for (i, &k) in owner.iter().enumerate() {
        if k > 0 {
            masks[k as usize - 1][i] = true;
        }
    }
    // Detected patches no core reached.
    let mut specks = 0;
    for patch in label(&detected, width).regions {
        if patch.iter().any(|&i| owner[i] != 0) {
            continue;
        }
        if patch.len() < MIN_AREA_PX {
            specks += 1;
            continue;
        }
        let mut m = vec![false; o.len()];
        patch.iter().for_each(|&i| m[i] = true);
        masks.push(m);
        edges.push(DETECT_SD * noise);
    }
    let mut regions = Vec::new();
    let mut kept = Vec::new();
    for (m, edge) in masks.iter().zip(&edges) {
        let r: Vec<usize> = fill_holes(m, width).iter().enumerate().filter(|(_, v)| **v).map(|(i, _)| i).collect();
        if r.len() < MIN_AREA_PX {
            specks += 1;
        } else {
            regions.push(r);
            kept.push(*edge);
        }
    }
    Segmentation { regions, edges: kept, detected, specks }
}

/// A pixel waiting to flood its neighbours, ordered by its value (highest first).
struct Flood(f64, usize);

impl PartialEq for Flood {
    fn eq(&self, other: &Self) -> bool {
        self.cmp(other) == std::cmp::Ordering::Equal
    }
}
impl Eq for Flood {}
impl PartialOrd for Flood {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}
impl Ord for Flood {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        // Ties broken by pixel index, so the flooding is deterministic.
        self.0.total_cmp(&other.0).then(other.1.cmp(&self.1))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

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
