//! Reading one embryo: which end is the head, each gene's profile along the
//! axis, and its half-level crossings.

use super::MeasuredBoundary;
use super::background::quantile;

/// Strip width as a fraction of the embryo's height (common practice, no source).
pub const STRIP_FRACTION: f64 = 0.2;

/// Fraction of the length at each pole where no boundary is read, because the
/// embryo's edge dims every channel there (common practice, no source).
pub const POLE_FRACTION: f64 = 0.03;

/// A gene whose top stands less than this many profile-noise sd above its
/// baseline has no pattern to read (common practice, no source).
pub const MIN_CONTRAST_SD: f64 = 8.0;

/// A head guess whose gene differs by less than this (as a fraction of its
/// range) between the two end fifths is flagged as weak (common practice, no source).
pub const WEAK_HEAD: f64 = 0.3;

/// A side of the image.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    /// Smaller column.
    Left,
    /// Larger column.
    Right,
    /// Smaller row.
    Top,
    /// Larger row.
    Bottom,
}

impl Side {
    /// Lower-case name, as on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Side::Left => "left",
            Side::Right => "right",
            Side::Top => "top",
            Side::Bottom => "bottom",
        }
    }
}

/// How the head end is chosen.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum HeadRule {
    /// The user says where the head is.
    Given(Side),
    /// Guessed: the end where `gene` (None: the first channel, assumed) is higher.
    Guess {
        /// The head-high gene, if the user stated one.
        gene: Option<String>,
    },
}

/// Which end was taken as the head, and how.
#[derive(Debug, Clone, PartialEq)]
pub struct HeadCall {
    /// In words, e.g. "given: left" or "guessed: amber higher there".
    pub how: String,
    /// For a guess, how much higher the gene is at the head than at the tail,
    /// as a fraction of its range (0–1); None when given.
    pub confidence: Option<f64>,
    /// A guess too weak to trust (confidence below [`WEAK_HEAD`]).
    pub weak: bool,
    /// A guess from the first channel, which the user did not state to be
    /// head-high: right only if it is.
    pub assumed: bool,
}

/// Mean of the normalised level over the first and last fifth of the read range.
pub fn end_means(level: &[f64]) -> (f64, f64) {
    let n = level.len();
    let (k0, k1) = read_range(n);
    let fifth = ((k1 - k0) / 5).max(1);
    let mean = |s: &[f64]| s.iter().sum::<f64>() / s.len() as f64;
    (mean(&level[k0..k0 + fifth]), mean(&level[k1 + 1 - fifth..=k1]))
}

/// First and last sample read (the poles' [`POLE_FRACTION`] left out).
pub fn read_range(n: usize) -> (usize, usize) {
    let last = (n - 1) as f64;
    ((POLE_FRACTION * last).ceil() as usize, ((1.0 - POLE_FRACTION) * last).floor() as usize)
}

/// Decides which of the poles `a` and `b` is the head. `guess_level` is the
/// head gene's normalised level sampled from a to b (used by a guess), and
/// `gene_name` its name. Returns true when a is the head, or why the rule
/// cannot decide.
pub fn decide_head(
    rule: &HeadRule,
    a: (f64, f64),
    b: (f64, f64),
    guess_level: Option<(&str, &[f64], bool)>,
) -> Result<(bool, HeadCall), String> {
    let len = (b.0 - a.0).hypot(b.1 - a.1).max(1e-9);
    match rule {
        HeadRule::Given(side) => {
            let (d, across) = match side {
                Side::Left | Side::Right => (b.0 - a.0, "top or bottom"),
                Side::Top | Side::Bottom => (b.1 - a.1, "left or right"),
            };
            if d.abs() < 0.2 * len {
                return Err(format!(
                    "its axis runs {} the image, so `--head {}` cannot tell its ends apart; give --head {across}",
                    if matches!(side, Side::Left | Side::Right) { "up and down" } else { "across" },
                    side.name()
                ));
            }
            let a_first = match side {
                Side::Left | Side::Top => d > 0.0,
                Side::Right | Side::Bottom => d < 0.0,
            };
            Ok((
                a_first,
                HeadCall { how: format!("given: {}", side.name()), confidence: None, weak: false, assumed: false },
            ))
        }
        HeadRule::Guess { gene } => {
            let Some((name, level, patterned)) = guess_level else {
                return Err("no gene to guess the head from".into());
            };
            let (first, last) = end_means(level);
            let confidence = if patterned { (first - last).abs().min(1.0) } else { 0.0 };
            let stated = if gene.is_some() { "stated head-high" } else { "first channel, assumed head-high" };
            Ok((
                first >= last,
                HeadCall {
                    how: format!("guessed: {name} higher there ({stated})"),
                    confidence: Some(confidence),
                    weak: confidence < WEAK_HEAD,
                    assumed: gene.is_none(),
                },
            ))
        }
    }
}

/// One gene read along the axis, head to tail.
#[derive(Debug, Clone, PartialEq)]
pub struct GeneReading {
    /// Gene.
    pub gene: String,
    /// Strip mean of the stain signal (intensity above background, or
    /// optical density), one sample per px from head to tail pole.
    pub signal: Vec<f64>,
    /// The signal smoothed and normalised: 0 at its baseline, 1 at its top.
    pub level: Vec<f64>,
    /// Baseline and top of the signal (2nd and 98th percentiles over the read range).
    pub range: (f64, f64),
    /// Noise sd of one signal sample.
    pub noise: f64,
    /// False when the top stands less than [`MIN_CONTRAST_SD`] noise sd above the baseline.
    pub patterned: bool,
    /// Half-level crossings.
    pub boundaries: Vec<MeasuredBoundary>,
}

/// Reads a gene's strip profile `signal` (head to tail, one sample per px).
///
/// The profile is smoothed by a 5-point moving mean (symmetric, so it moves
/// no crossing), and normalised between its 2nd and 98th percentiles over the
/// read range (robust to noise; common practice, no source). The noise sd of
/// one sample is estimated from successive differences, 1.4826·MAD(Δ)/√2.
/// A boundary is where the normalised level crosses ½, counted only when the
/// level passes from below ½ − h to above ½ + h (or back), with h the larger
/// of 0.1 and 3 sd of the smoothed level, so noise near ½ makes no extra
/// boundaries. Where the level wanders across ½ inside one such passage, the
/// boundary is the mean of the first and last crossing.
pub fn read_gene(gene: &str, signal: Vec<f64>) -> GeneReading {
    let n = signal.len();
    let (k0, k1) = read_range(n);
    let smooth: Vec<f64> = (0..n)
        .map(|i| {
            let (lo, hi) = (i.saturating_sub(2), (i + 3).min(n));
            signal[lo..hi].iter().sum::<f64>() / (hi - lo) as f64
        })
        .collect();
    let mut diffs: Vec<f64> = signal[k0..=k1].windows(2).map(|w| (w[1] - w[0]).abs()).collect();
    let noise = super::background::MAD_TO_SD * quantile(&mut diffs, 0.5) / std::f64::consts::SQRT_2;
    let mut inside: Vec<f64> = smooth[k0..=k1].to_vec();
    let (lo, hi) = (quantile(&mut inside, 0.02), quantile(&mut inside, 0.98));
    let patterned = hi - lo > MIN_CONTRAST_SD * noise && hi > lo;
    let scale = if hi > lo { hi - lo } else { 1.0 };
    let level: Vec<f64> = smooth.iter().map(|v| (v - lo) / scale).collect();
    let mut boundaries = Vec::new();
    if patterned {
        let h = (3.0 * noise / scale / 5f64.sqrt()).max(0.1);
        for (t, rising) in crossings(&level, k0, k1, h) {
            boundaries.push(MeasuredBoundary {
                gene: gene.to_string(),
                direction: if rising { "rising" } else { "falling" },
                position_pct: 100.0 * t / (n - 1) as f64,
            });
        }
    }
    GeneReading { gene: gene.to_string(), signal, level, range: (lo, hi), noise, patterned, boundaries }
}

/// Crossings of ½ by `level` between samples k0 and k1, with hysteresis `h`
/// (see [`read_gene`]): (fractional sample index, rising).
pub fn crossings(level: &[f64], k0: usize, k1: usize, h: f64) -> Vec<(f64, bool)> {
    let (lo, hi) = (0.5 - h, 0.5 + h);
    let mut out = Vec::new();
    let mut side: Option<bool> = None;
    let mut last = k0;
    for i in k0..=k1 {
        let now = if level[i] >= hi {
            Some(true)
        } else if level[i] <= lo {
            Some(false)
        } else {
            None
        };
        let Some(now) = now else { continue };
        if side.is_some_and(|s| s != now) {
            let at: Vec<f64> = (last..i)
                .filter(|&j| (level[j] - 0.5) * (level[j + 1] - 0.5) <= 0.0 && level[j] != level[j + 1])
                .map(|j| j as f64 + (0.5 - level[j]) / (level[j + 1] - level[j]))
                .collect();
            if let (Some(first), Some(end)) = (at.first(), at.last()) {
                out.push((0.5 * (first + end), now));
            }
        }
        side = Some(now);
        last = i;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A logistic edge read with noise near its middle gives one boundary at
    /// the edge's centre; a flat noisy profile gives none.
    #[test]
    fn hysteresis_keeps_one_crossing_per_edge() {
        let n = 401;
        let edge = |i: usize| 1.0 / (1.0 + (-(i as f64 - 150.3) / 3.0).exp());
        // Deterministic ±0.04 wiggle: several raw crossings of ½ near the edge.
        let signal: Vec<f64> = (0..n).map(|i| 2.0 + 10.0 * edge(i) + 0.4 * ((i * 7919) % 13) as f64 / 13.0).collect();
        let r = read_gene("amber", signal);
        assert!(r.patterned);
        assert_eq!(r.boundaries.len(), 1, "{:?}", r.boundaries);
        let want = 100.0 * 150.3 / 400.0;
        assert!((r.boundaries[0].position_pct - want).abs() < 0.3, "{:?} vs {want}", r.boundaries);
        assert_eq!(r.boundaries[0].direction, "rising");
        let flat: Vec<f64> = (0..n).map(|i| 5.0 + 0.4 * ((i * 7919) % 13) as f64 / 13.0).collect();
        let r = read_gene("amber", flat);
        assert!(!r.patterned && r.boundaries.is_empty(), "{:?}", r.boundaries);
    }

    /// `--head left` on a vertical embryo cannot decide; on a slanted one it
    /// takes the end with the smaller column.
    #[test]
    fn given_sides_need_an_axis_across_them() {
        let rule = HeadRule::Given(Side::Left);
        assert!(decide_head(&rule, (100.0, 20.0), (104.0, 220.0), None).unwrap_err().contains("--head top or bottom"));
        let (a_first, call) = decide_head(&rule, (300.0, 20.0), (104.0, 220.0), None).unwrap();
        assert!(!a_first);
        assert_eq!(call.how, "given: left");
        let (a_first, _) = decide_head(&HeadRule::Given(Side::Top), (300.0, 20.0), (104.0, 220.0), None).unwrap();
        assert!(a_first);
    }

    /// A guess is the end where the gene is higher, with its contrast as the
    /// confidence; a gene nearly as high at both ends makes a weak guess.
    #[test]
    fn head_guess_confidence() {
        let rule = HeadRule::Guess { gene: None };
        let falling: Vec<f64> = (0..200).map(|i| if i < 80 { 1.0 } else { 0.0 }).collect();
        let (a_first, call) = decide_head(&rule, (0.0, 0.0), (199.0, 0.0), Some(("amber", &falling, true))).unwrap();
        assert!(a_first && !call.weak && call.assumed && call.confidence.unwrap() > 0.99);
        let stated = HeadRule::Guess { gene: Some("amber".into()) };
        let (_, call) = decide_head(&stated, (0.0, 0.0), (199.0, 0.0), Some(("amber", &falling, true))).unwrap();
        assert!(!call.assumed && call.how.contains("stated head-high"));
        let stripe: Vec<f64> = (0..200).map(|i| if (90..110).contains(&i) { 1.0 } else { 0.0 }).collect();
        let (_, call) = decide_head(&rule, (0.0, 0.0), (199.0, 0.0), Some(("amber", &stripe, true))).unwrap();
        assert!(call.weak, "{call:?}");
    }
}
