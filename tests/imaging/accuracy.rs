//! Scoring `measure` against the generator's truth: each case is written to
//! disk, read back and measured as a user would (contrast detected, the
//! counterstain as outline where there is one, the head from the head-high
//! gene where the scene has one, else given as the side of the image), and
//! every true boundary is paired with the measured one of the same gene and
//! direction.

use std::path::Path;

use anlage::measure::{self, Channel, Contrast, HeadRule, MeasureOptions, Outline, Side};

use super::generator::{Case, EmbryoTruth};

/// What measuring one case gave.
#[derive(Debug, Clone, Default)]
pub struct CaseResult {
    /// Case name.
    pub name: String,
    /// Its description (printed by the bench).
    #[allow(dead_code)]
    pub description: String,
    /// |measured − true| of each true boundary found, % of length.
    pub errors: Vec<f64>,
    /// True boundaries not found.
    pub missed: usize,
    /// Measured boundaries with no true one.
    pub extra: usize,
    /// Embryos whose head was taken at the wrong end.
    pub flips: usize,
    /// Of those, flips not flagged (as a weak guess, or one assumed from the first channel).
    pub silent_flips: usize,
    /// Embryos cut by the frame and skipped, as they should be.
    pub cut_skipped: usize,
    /// Whole embryos refused or not found, with the reason.
    pub refused: Vec<String>,
    /// The image could not be measured at all.
    pub failed: Option<String>,
    /// The contrast was detected wrongly.
    pub wrong_contrast: bool,
}

fn centre(t: &EmbryoTruth) -> (f64, f64) {
    (0.5 * (t.head.0 + t.tail.0), 0.5 * (t.head.1 + t.tail.1))
}

/// The side of the image the heads point to, when every embryo agrees.
fn common_side(truth: &[&EmbryoTruth]) -> Option<Side> {
    let side = |t: &EmbryoTruth| {
        let (dx, dy) = (t.tail.0 - t.head.0, t.tail.1 - t.head.1);
        if dx.abs() >= 0.3 * t.length_px {
            Some(if dx > 0.0 { Side::Left } else { Side::Right })
        } else if dy.abs() >= 0.3 * t.length_px {
            Some(if dy > 0.0 { Side::Top } else { Side::Bottom })
        } else {
            None
        }
    };
    let first = side(truth.first()?)?;
    truth.iter().all(|t| side(t) == Some(first)).then_some(first)
}

/// Measures `case` (written into `dir`) and scores it against its truth.
pub fn evaluate(case: &Case, dir: &Path) -> CaseResult {
    let mut r = CaseResult { name: case.name.clone(), description: case.description.clone(), ..Default::default() };
    let path = dir.join(format!("{}.{}", case.name, case.extension));
    std::fs::write(&path, &case.bytes).unwrap();
    let planes = match measure::load(&path) {
        Ok(p) => p,
        Err(e) => {
            r.failed = Some(e.to_string());
            return r;
        }
    };
    let inside: Vec<&EmbryoTruth> = case.embryos.iter().filter(|t| !t.cut_by_edge).collect();
    let head = match (&case.head_high_gene, common_side(&inside)) {
        (Some(g), _) => HeadRule::Guess { gene: Some(g.clone()) },
        (None, Some(side)) => HeadRule::Given(side),
        (None, None) => HeadRule::Guess { gene: None },
    };
    let options = MeasureOptions {
        channels: case.channels.iter().map(|(p, g)| Channel { gene: g.clone(), plane: *p }).collect(),
        head,
        contrast: None,
        outline: case.counterstain_plane.map_or(Outline::AllPlanes, Outline::Plane),
    };
    let m = match measure::measure(&planes, &options) {
        Ok(m) if !m.embryos.is_empty() || inside.is_empty() => m,
        Ok(m) => {
            r.failed = m.none_measured(&path).map(|e| e.to_string());
            r.missed = inside.iter().map(|t| t.boundaries.len()).sum();
            return r;
        }
        Err(e) => {
            r.failed = Some(e.to_string());
            r.missed = inside.iter().map(|t| t.boundaries.len()).sum();
            return r;
        }
    };
    r.wrong_contrast = (m.contrast == Contrast::Dark) != case.dark_on_light;
    for t in &case.embryos {
        let c = centre(t);
        let near = |x: (f64, f64)| (x.0 - c.0).hypot(x.1 - c.1) < 0.25 * t.length_px;
        let found = m.embryos.iter().find(|e| near((e.embryo.cx, e.embryo.cy)));
        let skipped = m.skipped.iter().find(|s| near(s.centre));
        if t.cut_by_edge {
            if skipped.is_some_and(|s| s.cut) {
                r.cut_skipped += 1;
            } else if found.is_some() {
                r.refused.push("an embryo cut by the frame was measured".into());
            }
            continue;
        }
        let Some(e) = found else {
            r.refused.push(skipped.map_or_else(|| "embryo not found".into(), |s| s.reason.clone()));
            r.missed += t.boundaries.len();
            continue;
        };
        let (hx, hy) = e.head_tail[0];
        if (hx - t.head.0).hypot(hy - t.head.1) > (hx - t.tail.0).hypot(hy - t.tail.1) {
            r.flips += 1;
            if !e.head.weak && !e.head.assumed {
                r.silent_flips += 1;
            }
            r.missed += t.boundaries.len();
            continue;
        }
        let mut used = vec![false; e.boundaries.len()];
        for b in &t.boundaries {
            let nearest = (0..e.boundaries.len())
                .filter(|&k| !used[k] && e.boundaries[k].gene == b.gene && e.boundaries[k].direction == b.direction)
                .min_by(|&a, &c| {
                    (e.boundaries[a].position_pct - b.position_pct)
                        .abs()
                        .total_cmp(&(e.boundaries[c].position_pct - b.position_pct).abs())
                });
            match nearest {
                Some(k) if (e.boundaries[k].position_pct - b.position_pct).abs() < 5.0 => {
                    used[k] = true;
                    r.errors.push((e.boundaries[k].position_pct - b.position_pct).abs());
                }
                _ => r.missed += 1,
            }
        }
        r.extra += used.iter().filter(|u| !**u).count();
    }
    r
}

/// Totals over cases.
#[derive(Debug, Clone, Default)]
pub struct Summary {
    /// Images.
    pub images: usize,
    /// True boundaries found.
    pub found: usize,
    /// Mean absolute error, % of length.
    pub mean_error: f64,
    /// Largest error, % of length, and its case.
    pub worst: (f64, String),
    /// True boundaries missed.
    pub missed: usize,
    /// Extra boundaries.
    pub extra: usize,
    /// Head flips, and those not flagged.
    pub flips: (usize, usize),
    /// Images that failed or embryos refused, with reasons.
    pub refusals: Vec<String>,
    /// Contrast detected wrongly.
    pub wrong_contrast: usize,
    /// Cut embryos skipped.
    pub cut_skipped: usize,
}

/// Sums up results.
pub fn summarise(results: &[CaseResult]) -> Summary {
    let mut s = Summary { images: results.len(), ..Default::default() };
    let mut total = 0.0;
    for r in results {
        for e in &r.errors {
            total += e;
            if *e > s.worst.0 {
                s.worst = (*e, r.name.clone());
            }
        }
        s.found += r.errors.len();
        s.missed += r.missed;
        s.extra += r.extra;
        s.flips.0 += r.flips;
        s.flips.1 += r.silent_flips;
        s.wrong_contrast += usize::from(r.wrong_contrast);
        s.cut_skipped += r.cut_skipped;
        if let Some(f) = &r.failed {
            s.refusals.push(format!("{}: {f}", r.name));
        }
        s.refusals.extend(r.refused.iter().map(|x| format!("{}: {x}", r.name)));
    }
    s.mean_error = total / s.found.max(1) as f64;
    s
}
