//! Checks that turn a doubtful picture into a refusal or a flag instead of a
//! confident number: a clipped background, a saturated stain, a stain that
//! reaches beyond a user's mask, an outline that may be the stain itself.

use super::background::Contrast;
use super::outline::distance_to_outside;
use super::{Channel, GeneReading};

/// A background with more than this fraction of its pixels at the top of
/// the range is clipped (common practice, no source).
pub const CLIPPED_BACKGROUND: f64 = 0.2;
/// An embryo with more than this fraction of a channel's pixels at the end of
/// the range has a saturated stain (common practice, no source).
pub const SATURATED: f64 = 0.01;

/// Why the background cannot be used, when more than [`CLIPPED_BACKGROUND`]
/// of the pixels in `set` sit at the top of the range in some plane (an
/// over-exposed bright field: its optical density would be read as 0).
pub fn clipped_background(image: &[Vec<f64>], set: &[usize], step: f64) -> Option<String> {
    image.iter().enumerate().find_map(|(k, p)| {
        let top = set.iter().filter(|&&i| p[i] >= 1.0 - 0.5 * step).count() as f64 / set.len().max(1) as f64;
        (top > CLIPPED_BACKGROUND).then(|| {
            format!(
                "the background is clipped: {:.0} % of it is at the top of the range in plane {k}; take the picture again \
                 with less light or a shorter exposure",
                100.0 * top
            )
        })
    })
}

/// Flags for the channels whose stain is saturated inside the embryo
/// (`pixels`): at the top of the range for bright stains, at zero for dark ones.
pub fn saturated(
    image: &[Vec<f64>],
    pixels: &[usize],
    channels: &[Channel],
    contrast: Contrast,
    step: f64,
) -> Vec<String> {
    channels
        .iter()
        .filter_map(|c| {
            let p = &image[c.plane];
            let at_end = |v: f64| match contrast {
                Contrast::Bright => v >= 1.0 - 0.5 * step,
                Contrast::Dark => v <= 0.5 * step,
            };
            let share = pixels.iter().filter(|&&i| at_end(p[i])).count() as f64 / pixels.len().max(1) as f64;
            (share > SATURATED).then(|| {
                format!(
                    "{}: {:.1} % of the embryo's pixels are saturated, so its boundaries can be shifted; take the picture \
                     again with a shorter exposure",
                    c.gene,
                    100.0 * share
                )
            })
        })
        .collect()
}

/// A flag when the image's light reaches beyond a user's mask: around the
/// outline, in 16 sectors of a ring 3–10 px outside it, the mean signal of
/// some plane exceeds 30 % of that plane's top inside the outline (its 98th
/// percentile; blur alone leaves a few per cent), so the mask may not match
/// the image (`centre` is the outline's centroid).
pub fn beyond_mask(signals: &[(Vec<f64>, f64)], width: usize, pixels: &[usize], centre: (f64, f64)) -> Option<String> {
    let mut outside = vec![true; signals[0].0.len()];
    pixels.iter().for_each(|&i| outside[i] = false);
    let distance = distance_to_outside(&outside, width);
    let sector = |i: usize| {
        let a = ((i / width) as f64 - centre.1).atan2((i % width) as f64 - centre.0);
        (((a + std::f64::consts::PI) / (2.0 * std::f64::consts::PI) * 16.0) as usize).min(15)
    };
    let ring: Vec<usize> = (0..outside.len()).filter(|&i| outside[i] && (3.0..=10.0).contains(&distance[i])).collect();
    let mut worst: Option<(f64, usize)> = None;
    for (k, (plane, _)) in signals.iter().enumerate() {
        let mut inside: Vec<f64> = pixels.iter().map(|&i| plane[i]).collect();
        let top = super::background::quantile(&mut inside, 0.98);
        if top <= 0.0 {
            continue;
        }
        let (mut sum, mut count) = ([0.0; 16], [0usize; 16]);
        for &i in &ring {
            sum[sector(i)] += plane[i];
            count[sector(i)] += 1;
        }
        for s in 0..16 {
            let share = sum[s] / count[s].max(1) as f64 / top;
            if count[s] > 0 && share > 0.3 && worst.is_none_or(|w| share > w.0) {
                worst = Some((share, k));
            }
        }
    }
    worst.map(|(share, k)| {
        format!(
            "the image's light reaches beyond the mask (plane {k}: {:.0} % of its top just outside one side): is the mask aligned with the image?",
            100.0 * share
        )
    })
}

/// A flag when no gene read varies along an outline found from the planes
/// themselves: if the unstained tissue does not show, the outline is the stain
/// and not the embryo.
pub fn maybe_the_stain(genes: &[GeneReading]) -> Option<String> {
    genes.iter().all(|g| !g.patterned).then(|| {
        "no gene varies along this outline: if the unstained tissue does not show, the outline is the stain itself, not \
         the embryo; give a counterstain with --outline, or --mask"
            .to_string()
    })
}
