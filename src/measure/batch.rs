//! From measured images to tables: one row per boundary of each embryo, the
//! mean and sd of each boundary over a batch of embryos, and each embryo's
//! profiles along the axis as a tidy table.

use std::path::{Path, PathBuf};

use serde::Serialize;

use super::{EmbryoMeasurement, ImageMeasurement};
use crate::compare::MeasuredRow;

/// Images in a folder that `measure` reads (PNG and TIFF), sorted by name,
/// leaving out the check pictures it writes (`*_check.png`).
///
/// # Errors
/// The folder cannot be listed.
pub fn images_in(folder: &Path) -> std::io::Result<Vec<PathBuf>> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(folder)?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            p.extension().is_some_and(|x| ["png", "tif", "tiff"].contains(&x.to_string_lossy().to_lowercase().as_str()))
        })
        .filter(|p| !p.file_stem().is_some_and(|s| s.to_string_lossy().ends_with("_check")))
        .collect();
    v.sort();
    Ok(v)
}

/// When the embryos were fixed: minutes, or a stage label (kept as written).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct When {
    /// Minutes.
    pub time_min: Option<f64>,
    /// Stage label.
    pub stage: Option<String>,
}

impl When {
    /// A number of minutes, or else a stage label.
    pub fn parse(text: Option<&str>) -> When {
        match text.map(str::trim).filter(|t| !t.is_empty()) {
            None => When::default(),
            Some(t) => match t.parse::<f64>() {
                Ok(m) if m.is_finite() => When { time_min: Some(m), stage: None },
                _ => When { time_min: None, stage: Some(t.to_string()) },
            },
        }
    }
}

/// The sample name of embryo `e` of an image named `stem`: the stem alone
/// when the image holds one candidate, else `stem_e<number>`.
pub fn sample_name(stem: &str, m: &ImageMeasurement, e: &EmbryoMeasurement) -> String {
    if m.embryos.len() + m.skipped.len() > 1 { format!("{stem}_e{}", e.number) } else { stem.to_string() }
}

/// One row per boundary of every embryo measured in an image.
pub fn embryo_rows(stem: &str, m: &ImageMeasurement, when: &When) -> Vec<MeasuredRow> {
    let mut rows = Vec::new();
    for e in &m.embryos {
        let flags = e.flags();
        for b in &e.boundaries {
            rows.push(MeasuredRow {
                sample: sample_name(stem, m, e),
                embryo: Some(e.number as u32),
                time_min: when.time_min,
                stage: when.stage.clone(),
                gene: b.gene.clone(),
                direction: b.direction.to_string(),
                position_pct: b.position_pct,
                sd_pct: None,
                n: Some(1),
                resolution_pct: Some(e.resolution_pct()),
                head: Some(e.head.how.clone()),
                head_confidence: e.head.confidence,
                flag: (!flags.is_empty()).then(|| flags.join("; ")),
                line: 0,
                at_min: when.time_min,
            });
        }
    }
    rows
}

/// Two boundaries of different embryos farther apart than this are not the
/// same boundary, % of the length (common practice, no source).
pub const SAME_BOUNDARY_PCT: f64 = 5.0;

/// Mean and sd of each boundary over embryos.
///
/// For each gene and direction, the number of such boundaries most embryos
/// have (k) sets k groups, whose centres are the mean positions over the
/// embryos that have exactly k. Every boundary of every embryo joins the
/// nearest group within [`SAME_BOUNDARY_PCT`]; one that is farther from all
/// is left out and reported, and so is a group that some embryos lack, one
/// whose positions spread over more than [`SAME_BOUNDARY_PCT`], and one with
/// embryos whose head was assumed or weakly guessed (flag column).
/// The sd is the sample sd (n − 1), empty for a single embryo.
///
/// `embryos` names every embryo measured (some may have no boundary at all).
/// Returns the rows (named `sample`) and the notes.
pub fn aggregate(rows: &[MeasuredRow], embryos: &[String], sample: &str) -> (Vec<MeasuredRow>, Vec<String>) {
    let mut keys: Vec<(String, String)> = Vec::new();
    for r in rows {
        let k = (r.gene.clone(), r.direction.clone());
        if !keys.contains(&k) {
            keys.push(k);
        }
    }
    let mut out = Vec::new();
    let mut notes = Vec::new();
    for (gene, direction) in keys {
        let per: Vec<(&str, Vec<f64>)> = embryos
            .iter()
            .map(|e| e.as_str())
            .map(|e| {
                let mut v: Vec<f64> = rows
                    .iter()
                    .filter(|r| r.sample == *e && r.gene == gene && r.direction == direction)
                    .map(|r| r.position_pct)
                    .collect();
                v.sort_by(f64::total_cmp);
                (e, v)
            })
            .filter(|(_, v)| !v.is_empty())
            .collect();
        let max = per.iter().map(|(_, v)| v.len()).max().unwrap_or(0);
        let mut counts = vec![0usize; max + 1];
        per.iter().for_each(|(_, v)| counts[v.len()] += 1);
        // The most common count; ties go to the larger.
        let k = (1..=max).rev().max_by_key(|&c| counts[c]).unwrap_or(0);
        let reference: Vec<&Vec<f64>> = per.iter().filter(|(_, v)| v.len() == k).map(|(_, v)| v).collect();
        let centres: Vec<f64> =
            (0..k).map(|j| reference.iter().map(|v| v[j]).sum::<f64>() / reference.len() as f64).collect();
        let mut groups: Vec<Vec<(f64, &str)>> = vec![Vec::new(); k];
        for (e, v) in &per {
            let mut taken = vec![false; k];
            for x in v {
                let nearest = (0..k)
                    .filter(|&j| !taken[j] && (centres[j] - x).abs() <= SAME_BOUNDARY_PCT)
                    .min_by(|&a, &b| (centres[a] - x).abs().total_cmp(&(centres[b] - x).abs()));
                match nearest {
                    Some(j) => {
                        taken[j] = true;
                        groups[j].push((*x, *e));
                    }
                    None => notes.push(format!(
                        "{e}: {gene} {direction} at {x:.2} % matches no boundary that most embryos have; left out of the means"
                    )),
                }
            }
        }
        for members in &groups {
            let g: Vec<f64> = members.iter().map(|m| m.0).collect();
            let n = g.len() as f64;
            let mean = g.iter().sum::<f64>() / n;
            let sd = (g.len() > 1).then(|| (g.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt());
            let mut flags = Vec::new();
            if g.len() < embryos.len() {
                flags.push(format!("found in {} of {} embryos", g.len(), embryos.len()));
            }
            let spread =
                g.iter().copied().fold(f64::NEG_INFINITY, f64::max) - g.iter().copied().fold(f64::INFINITY, f64::min);
            if spread > SAME_BOUNDARY_PCT {
                flags.push(format!("spread over {spread:.1} % across embryos: check that it is one boundary"));
            }
            let unsure = members
                .iter()
                .filter(|m| {
                    rows.iter().any(|r| r.sample == m.1 && r.flag.as_deref().is_some_and(|f| f.contains("head")))
                })
                .count();
            if unsure > 0 {
                flags.push(format!("head assumed or weakly guessed in {unsure} of them"));
            }
            let flag = (!flags.is_empty()).then(|| flags.join("; "));
            if let Some(f) = &flag {
                notes.push(format!("{gene} {direction} at {mean:.1} %: {f}"));
            }
            let first = rows.iter().find(|r| r.gene == gene);
            let res: Vec<f64> = rows.iter().filter_map(|r| r.resolution_pct).collect();
            out.push(MeasuredRow {
                sample: sample.to_string(),
                embryo: None,
                time_min: first.and_then(|r| r.time_min),
                stage: first.and_then(|r| r.stage.clone()),
                gene: gene.clone(),
                direction: direction.clone(),
                position_pct: mean,
                sd_pct: sd,
                n: Some(g.len() as u32),
                resolution_pct: (!res.is_empty()).then(|| res.iter().sum::<f64>() / res.len() as f64),
                head: None,
                head_confidence: None,
                flag,
                line: 0,
                at_min: first.and_then(|r| r.at_min),
            });
        }
    }
    (out, notes)
}

/// Positions of the exported profiles: every 0.25 % of the length.
pub const PROFILE_STEP_PCT: f64 = 0.25;

/// One sample of a measured profile: a row of `<image>_profiles.csv` or
/// `measured_profiles.csv` (numbers in the csv crate's form).
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize, Default)]
pub struct ProfileRow {
    /// Sample.
    pub sample: String,
    /// Embryo number in its image.
    pub embryo: u32,
    /// Gene.
    pub gene: String,
    /// Position, % of the length from the head.
    pub position_pct: f64,
    /// Smoothed level, normalised (0 at the gene's baseline, 1 at its top).
    pub level: f64,
    /// Stain signal above the background (fraction of the file's full scale),
    /// or optical density for dark stains; strip mean, not smoothed.
    pub signal: f64,
}

/// Every embryo's profiles, resampled every [`PROFILE_STEP_PCT`] by linear interpolation.
pub fn profile_rows(stem: &str, m: &ImageMeasurement) -> Vec<ProfileRow> {
    let steps = (100.0 / PROFILE_STEP_PCT).round() as usize;
    let mut out = Vec::new();
    for e in &m.embryos {
        for g in &e.genes {
            let n = g.signal.len();
            let at = |v: &[f64], pct: f64| {
                let t = pct / 100.0 * (n - 1) as f64;
                let i = (t.floor() as usize).min(n.saturating_sub(2));
                let f = t - i as f64;
                v[i] * (1.0 - f) + v[(i + 1).min(n - 1)] * f
            };
            for k in 0..=steps {
                let pct = k as f64 * PROFILE_STEP_PCT;
                out.push(ProfileRow {
                    sample: sample_name(stem, m, e),
                    embryo: e.number as u32,
                    gene: g.gene.clone(),
                    position_pct: pct,
                    level: at(&g.level, pct),
                    signal: at(&g.signal, pct),
                });
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(v: &[&str]) -> Vec<String> {
        v.iter().map(|s| s.to_string()).collect()
    }

    fn row(sample: &str, gene: &str, direction: &str, pct: f64) -> MeasuredRow {
        MeasuredRow {
            sample: sample.into(),
            gene: gene.into(),
            direction: direction.into(),
            position_pct: pct,
            ..Default::default()
        }
    }

    /// An embryo that lacks one of two stripes does not shift the others'
    /// means: its boundary joins the group it is nearest to, and the group it
    /// lacks says so.
    #[test]
    fn a_missing_boundary_does_not_misalign_the_means() {
        let rows = vec![
            row("a", "amber", "rising", 30.0),
            row("a", "amber", "rising", 60.0),
            row("b", "amber", "rising", 31.0),
            row("b", "amber", "rising", 61.0),
            row("c", "amber", "rising", 62.0),
        ];
        let (out, notes) = aggregate(&rows, &names(&["a", "b", "c"]), "batch");
        assert_eq!(out.len(), 2);
        assert!((out[0].position_pct - 30.5).abs() < 1e-12 && out[0].n == Some(2));
        assert!((out[1].position_pct - 61.0).abs() < 1e-12 && out[1].n == Some(3));
        assert!((out[1].sd_pct.unwrap() - 1.0).abs() < 1e-12);
        assert!(notes.iter().any(|n| n.contains("found in 2 of 3 embryos")), "{notes:?}");
    }

    /// A lone boundary far from every group is left out and reported; one
    /// embryo gives no sd.
    #[test]
    fn outliers_are_reported_and_single_embryos_have_no_sd() {
        let rows = vec![
            row("a", "cobalt", "falling", 40.0),
            row("c", "cobalt", "falling", 40.5),
            row("b", "cobalt", "falling", 41.0),
            row("b", "cobalt", "falling", 80.0),
        ];
        let (out, notes) = aggregate(&rows, &names(&["a", "c", "b"]), "batch");
        assert_eq!(out.len(), 1, "{out:?}");
        assert!(notes.iter().any(|n| n.contains("80.00 % matches no boundary")), "{notes:?}");
        let (single, _) = aggregate(&rows[..1], &names(&["a"]), "one");
        assert_eq!(single[0].sd_pct, None);
    }
}
