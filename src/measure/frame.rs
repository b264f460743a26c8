//! The part of an image that holds a picture: a frame rotated or shifted in
//! an editor is padded with a constant (usually black) that is not the
//! microscope's background. Padding is found, kept out of every background
//! estimate, filled with the background's level, and an embryo touching it
//! counts as cut by the edge.

use std::collections::VecDeque;

/// Padding smaller than this fraction of the image is ignored.
pub const MIN_PADDING: f64 = 0.005;

/// Pixels reached from the image border through pixels whose every plane
/// holds exactly the image's smallest (or largest) value: the padding, or
/// None when there is none (or it would cover 90 % of the image or more).
pub fn padding(planes: &[Vec<f64>], width: usize) -> Option<Vec<bool>> {
    let n = planes[0].len();
    let height = n / width;
    let mut best: Option<Vec<bool>> = None;
    for pick_max in [false, true] {
        let value: Vec<f64> = planes
            .iter()
            .map(|p| {
                let it = p.iter().copied();
                if pick_max { it.fold(f64::NEG_INFINITY, f64::max) } else { it.fold(f64::INFINITY, f64::min) }
            })
            .collect();
        let same = |i: usize| planes.iter().zip(&value).all(|(p, v)| p[i] == *v);
        let mut pad = vec![false; n];
        let mut queue = VecDeque::new();
        for i in 0..n {
            let (x, y) = (i % width, i / width);
            if (x == 0 || y == 0 || x + 1 == width || y + 1 == height) && same(i) {
                pad[i] = true;
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
                if ok && !pad[j] && same(j) {
                    pad[j] = true;
                    queue.push_back(j);
                }
            }
        }
        let area = pad.iter().filter(|p| **p).count();
        if area as f64 >= MIN_PADDING * n as f64
            && area * 10 < n * 9
            && best.as_ref().is_none_or(|b| area > b.iter().filter(|p| **p).count())
        {
            best = Some(pad);
        }
    }
    best
}

/// The planes with the padding set to the median of the unpadded pixels
/// next to it, so that no step at the frame's edge looks like an object.
pub fn fill(planes: &[Vec<f64>], width: usize, pad: &[bool]) -> Vec<Vec<f64>> {
    let height = pad.len() / width;
    let edge: Vec<usize> = (0..pad.len())
        .filter(|&i| {
            let (x, y) = (i % width, i / width);
            !pad[i]
                && ((x > 0 && pad[i - 1])
                    || (x + 1 < width && pad[i + 1])
                    || (y > 0 && pad[i - width])
                    || (y + 1 < height && pad[i + width]))
        })
        .collect();
    planes
        .iter()
        .map(|p| {
            let mut v: Vec<f64> = edge.iter().map(|&i| p[i]).collect();
            let level = super::background::median(&mut v);
            p.iter().zip(pad).map(|(x, pd)| if *pd { level } else { *x }).collect()
        })
        .collect()
}

/// True when pixel i touches the padding (4-neighbours).
pub fn touches(pad: &[bool], width: usize, i: usize) -> bool {
    let height = pad.len() / width;
    let (x, y) = (i % width, i / width);
    (x > 0 && pad[i - 1])
        || (x + 1 < width && pad[i + 1])
        || (y > 0 && pad[i - width])
        || (y + 1 < height && pad[i + width])
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A frame rotated with black corners: the corners are padding; a plain
    /// image with a dark background is not.
    #[test]
    fn black_corners_are_padding() {
        let (w, h) = (100, 80);
        let plane: Vec<f64> = (0..w * h)
            .map(|i| {
                let (x, y) = ((i % w) as f64, (i / w) as f64);
                if x + y < 20.0 || (w as f64 - x) + (h as f64 - y) < 20.0 {
                    0.0
                } else {
                    0.1 + 0.001 * ((i * 37) % 11) as f64
                }
            })
            .collect();
        let pad = padding(std::slice::from_ref(&plane), w).unwrap();
        assert!(pad[0] && pad[w * h - 1] && !pad[40 * w + 50]);
        let filled = fill(std::slice::from_ref(&plane), w, &pad);
        assert!(filled[0][0] > 0.09);
        let plain: Vec<f64> = (0..w * h).map(|i| 0.1 + 0.001 * ((i * 37) % 11) as f64).collect();
        assert!(padding(&[plain], w).is_none());
    }
}
