//! Pairing the boundaries of two runs (or of a run and a measurement):
//! which boundary became which, and how far it moved.

use serde::Serialize;

use super::Boundary;

/// Two times that name the same snapshot (relative 1e-9).
pub fn same_time(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(1.0)
}

/// How one boundary moved in a mutant: a row of `shifts.csv` (numbers in
/// the csv crate's form, `5.0`; an empty cell for None).
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize, Default)]
pub struct Shift {
    /// Mutant name.
    pub mutant: String,
    /// Gene.
    pub gene: String,
    /// "rising" or "falling".
    pub direction: String,
    /// Wild-type position, µm (None when gained).
    pub wild_type_um: Option<f64>,
    /// Wild-type position, % of axis length.
    pub wild_type_pct: Option<f64>,
    /// Mutant position, µm (None when lost).
    pub mutant_um: Option<f64>,
    /// Mutant position, % of axis length.
    pub mutant_pct: Option<f64>,
    /// Mutant − wild type, µm.
    pub shift_um: Option<f64>,
    /// Mutant − wild type, % of axis length.
    pub shift_pct: Option<f64>,
    /// What happened: "moved", "lost" or "gained" from [`match_boundaries`];
    /// a screen puts its outcome in words here (see `crate::screen::outcome`).
    pub status: String,
    /// Why a mutant failed (status "failed").
    pub reason: Option<String>,
}

/// Pairs mutant boundaries with wild-type ones of the same gene and direction,
/// nearest first (greedy on distance); the rest are lost or gained.
pub fn match_boundaries(mutant: &str, wt: &[Boundary], mt: &[Boundary]) -> Vec<Shift> {
    let mut pairs: Vec<(f64, usize, usize)> = Vec::new();
    for (i, a) in wt.iter().enumerate() {
        for (j, b) in mt.iter().enumerate() {
            if a.gene == b.gene && a.direction == b.direction {
                pairs.push(((a.position_um - b.position_um).abs(), i, j));
            }
        }
    }
    pairs.sort_by(|p, q| p.0.total_cmp(&q.0).then(p.1.cmp(&q.1)).then(p.2.cmp(&q.2)));
    let (mut used_w, mut used_m) = (vec![false; wt.len()], vec![false; mt.len()]);
    let mut matched: Vec<(usize, usize)> = Vec::new();
    for (_, i, j) in pairs {
        if !used_w[i] && !used_m[j] {
            used_w[i] = true;
            used_m[j] = true;
            matched.push((i, j));
        }
    }
    let row = |w: Option<&Boundary>, m: Option<&Boundary>, status: &str| {
        let any = w.or(m).expect("one side");
        Shift {
            mutant: mutant.to_string(),
            gene: any.gene.clone(),
            direction: any.direction.to_string(),
            wild_type_um: w.map(|b| b.position_um),
            wild_type_pct: w.map(|b| b.position_pct),
            mutant_um: m.map(|b| b.position_um),
            mutant_pct: m.map(|b| b.position_pct),
            shift_um: w.zip(m).map(|(a, b)| b.position_um - a.position_um),
            shift_pct: w.zip(m).map(|(a, b)| b.position_pct - a.position_pct),
            status: status.to_string(),
            reason: None,
        }
    };
    let mut out: Vec<Shift> = Vec::new();
    for (i, w) in wt.iter().enumerate() {
        match matched.iter().find(|(a, _)| *a == i) {
            Some(&(_, j)) => out.push(row(Some(w), Some(&mt[j]), "moved")),
            None => out.push(row(Some(w), None, "lost")),
        }
    }
    for (j, m) in mt.iter().enumerate() {
        if !used_m[j] {
            out.push(row(None, Some(m), "gained"));
        }
    }
    out
}

/// Pairs an embryo's boundaries with a reference's **in order along the
/// axis**, gene by gene and direction by direction: the k-th rising boundary
/// of a gene with the reference's k-th. Where the embryo has a different
/// number of boundaries of that gene and direction than the reference (a
/// stripe lost or gained, or a ragged boundary that noise makes cross its
/// level several times), none of them is paired: which one is "the same"
/// boundary is not defined, and nearest-position pairing would pick
/// whichever crossing happens to lie closest and understate the spread.
/// Returns, per reference boundary in order, the embryo's position (µm)
/// and whether its gene and direction had a different count.
pub fn pair_in_order(reference: &[Boundary], embryo: &[Boundary]) -> Vec<(Option<f64>, bool)> {
    let same = |a: &Boundary, b: &Boundary| a.gene == b.gene && a.direction == b.direction;
    let sorted = |list: &[Boundary], like: &Boundary| -> Vec<f64> {
        let mut v: Vec<f64> = list.iter().filter(|b| same(b, like)).map(|b| b.position_um).collect();
        v.sort_by(f64::total_cmp);
        v
    };
    reference
        .iter()
        .map(|r| {
            let (refs, mine) = (sorted(reference, r), sorted(embryo, r));
            if refs.len() != mine.len() {
                return (None, true);
            }
            // The rank of this reference boundary among its gene's and direction's.
            let rank = refs.iter().position(|x| *x == r.position_um).expect("r is in the reference");
            (Some(mine[rank]), false)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn b(gene: &str, direction: &'static str, x: f64) -> Boundary {
        Boundary {
            time_min: 0.0,
            gene: gene.into(),
            direction,
            position_um: x,
            position_pct: x / 5.0,
            steepness_per_um: 0.1,
            width_um: 10.0,
        }
    }

    /// A whole stripe pattern shifted by more than half a stripe pairs by
    /// order (nearest-position pairing would pair each with its neighbour).
    #[test]
    fn shifted_stripes_pair_in_order() {
        let reference = [b("s", "rising", 100.0), b("s", "falling", 140.0), b("s", "rising", 180.0)];
        let embryo = [b("s", "rising", 165.0), b("s", "falling", 205.0), b("s", "rising", 245.0)];
        let p = pair_in_order(&reference, &embryo);
        assert_eq!(p, vec![(Some(165.0), false), (Some(205.0), false), (Some(245.0), false)]);
    }

    /// A ragged boundary (three crossings for one) is not paired at all.
    #[test]
    fn a_ragged_boundary_is_not_paired() {
        let reference = [b("s", "falling", 100.0), b("t", "rising", 100.0)];
        let embryo =
            [b("s", "falling", 90.0), b("s", "rising", 95.0), b("s", "falling", 104.0), b("t", "rising", 97.0)];
        let p = pair_in_order(&reference, &embryo);
        assert_eq!(p, vec![(None, true), (Some(97.0), false)]);
    }
}
