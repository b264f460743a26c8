//! Ragged boundaries: with intrinsic noise a gene's profile near its
//! boundary can cross the boundary level several times, so that one
//! boundary reads as three (or five) crossings. Counted as they are, such an
//! embryo has more boundaries than the noise-free one and drops out of the
//! statistics, and the embryos that drop out are the noisiest ones: the
//! spread of the others understates the positional error.
//!
//! Only a gene that has **more** crossings at a snapshot than in the
//! noise-free embryo of the same model (the wild type's for the wild type,
//! the mutant's own for a mutant) is repaired; an embryo whose count
//! matches is never touched, so smooth profiles under extrinsic noise keep
//! every boundary wherever it moves. In a gene with extra crossings, every
//! flicker — two neighbouring crossings closer than a flicker width
//! ([`Flickers::width`]) — is removed, narrowest first, until the count is
//! the noise-free one or no flicker is left. The nearest remaining crossing
//! of that gene, when it is within the same distance of the flicker, moves
//! toward it by the flicker's width: that keeps the length of the tissue on
//! each side of the level, so the boundary sits where a clean step with the
//! same expressed length would (the boundary as the edge of an equal-area
//! step; common practice, no source). On a sealed row a crossing within
//! [`FLICKER_NUCLEI`] spacings of an edge, with nothing between it and the
//! edge, is a flicker too (a nucleus or two at the end of the row); a
//! periodic row has no edge.

use crate::readout::{Boundary, same_time};

/// The smallest flicker width, in nucleus spacings: a domain of one or two
/// nuclei is never a stripe (common practice, no source).
pub const FLICKER_NUCLEI: f64 = 3.0;

/// The flicker widths and crossing counts of one model, from its noise-free
/// embryo.
#[derive(Debug, Clone, PartialEq)]
pub struct Flickers {
    spacing_um: f64,
    length_um: f64,
    periodic: bool,
    /// The noise-free boundaries: time, gene, position and ramp width, µm.
    reference: Vec<(f64, String, f64, f64)>,
}

/// A flicker that was merged: snapshot, gene and where it was, µm.
#[derive(Debug, Clone, PartialEq)]
pub struct Merged {
    /// Snapshot, min.
    pub time_min: f64,
    /// Gene.
    pub gene: String,
    /// The middle of the removed flicker, µm.
    pub at_um: f64,
}

impl Flickers {
    /// Flicker widths for embryos of a model with these noise-free
    /// boundaries, nucleus spacing, axis length and edges.
    pub fn new(reference: &[Boundary], spacing_um: f64, length_um: f64, periodic: bool) -> Flickers {
        let reference = reference.iter().map(|b| (b.time_min, b.gene.clone(), b.position_um, b.width_um)).collect();
        Flickers { spacing_um, length_um, periodic, reference }
    }

    /// The noise-free crossings of a gene at a snapshot, by position.
    fn own(&self, t: f64, gene: &str) -> Vec<(f64, f64)> {
        let mut own: Vec<(f64, f64)> = self
            .reference
            .iter()
            .filter(|(rt, g, _, _)| same_time(*rt, t) && g == gene)
            .map(|(_, _, x, w)| (*x, *w))
            .collect();
        own.sort_by(|a, b| a.0.total_cmp(&b.0));
        own
    }

    /// The flicker width of a gene at a snapshot, µm: the ramp width of its
    /// narrowest noise-free boundary then (the maximum over the |slope| at
    /// the crossing: noise of up to a quarter of the maximum makes the level
    /// cross within about that width), at least [`FLICKER_NUCLEI`] spacings,
    /// and at most half the narrowest noise-free domain or gap of the gene,
    /// so that no feature of the noise-free pattern is ever taken for a
    /// flicker.
    pub fn width(&self, t: f64, gene: &str) -> f64 {
        let own = self.own(t, gene);
        let ramp = own.iter().map(|(_, w)| *w).filter(|w| w.is_finite()).fold(f64::INFINITY, f64::min);
        let floor = FLICKER_NUCLEI * self.spacing_um;
        let width = if ramp.is_finite() { ramp.max(floor) } else { floor };
        let narrowest = own.windows(2).map(|p| p[1].0 - p[0].0).fold(f64::INFINITY, f64::min);
        width.min(0.5 * narrowest)
    }

    /// Repairs one embryo's boundaries (see the module documentation).
    /// Returns the boundaries, grouped by time and gene and sorted by
    /// position within a group, and the flickers merged.
    pub fn merge(&self, list: &[Boundary]) -> (Vec<Boundary>, Vec<Merged>) {
        let mut groups: Vec<Vec<Boundary>> = Vec::new();
        for b in list {
            match groups.iter_mut().find(|g| same_time(g[0].time_min, b.time_min) && g[0].gene == b.gene) {
                Some(g) => g.push(b.clone()),
                None => groups.push(vec![b.clone()]),
            }
        }
        let mut out = Vec::with_capacity(list.len());
        let mut merged = Vec::new();
        for mut g in groups {
            let (t, gene) = (g[0].time_min, g[0].gene.clone());
            let want = self.own(t, &gene).len();
            if g.len() > want {
                let edge = if self.periodic { 0.0 } else { FLICKER_NUCLEI * self.spacing_um };
                for at_um in merge_group(&mut g, want, self.width(t, &gene), edge, self.length_um) {
                    merged.push(Merged { time_min: t, gene: gene.clone(), at_um });
                }
            }
            out.extend(g);
        }
        (out, merged)
    }
}

/// Removes flickers narrower than `width_um` (and crossings closer than
/// `edge_um` to an edge, with nothing between them and it) from one gene's
/// crossings at one snapshot of a row `length_um` long, narrowest first,
/// until `want` crossings are left or none is that narrow. Returns where
/// each removed flicker was (its middle, µm).
fn merge_group(g: &mut Vec<Boundary>, want: usize, width_um: f64, edge_um: f64, length_um: f64) -> Vec<f64> {
    g.sort_by(|a, b| a.position_um.total_cmp(&b.position_um));
    let mut merged = Vec::new();
    while g.len() > want {
        // Candidates: (first index removed, how many, lo, hi, widest allowed).
        let pairs = (0..g.len().saturating_sub(1))
            .filter(|&i| g[i].direction != g[i + 1].direction)
            .map(|i| (i, 2, g[i].position_um, g[i + 1].position_um, width_um));
        let edges = g
            .first()
            .map(|b| (0, 1, 0.0, b.position_um, edge_um))
            .into_iter()
            .chain(g.last().map(|b| (g.len() - 1, 1, b.position_um, length_um, edge_um)));
        let narrowest = pairs
            .chain(edges)
            .filter(|&(_, count, lo, hi, widest)| hi - lo < widest && g.len() - count >= want)
            .min_by(|a, b| (a.3 - a.2).total_cmp(&(b.3 - b.2)));
        let Some((i, count, lo, hi, _)) = narrowest else { break };
        g.drain(i..i + count);
        merged.push(0.5 * (lo + hi));
        // The nearest remaining crossing on either side absorbs it.
        let left = i.checked_sub(1).map(|k| (k, lo - g[k].position_um));
        let right = (i < g.len()).then(|| (i, g[i].position_um - hi));
        let nearest = [left, right].into_iter().flatten().min_by(|a, b| a.1.total_cmp(&b.1));
        if let Some((k, _)) = nearest.filter(|&(_, d)| d < width_um) {
            g[k].position_um += if g[k].position_um < lo { hi - lo } else { lo - hi };
            g[k].position_pct = 100.0 * g[k].position_um / length_um;
        }
        g.sort_by(|a, b| a.position_um.total_cmp(&b.position_um));
    }
    merged
}

/// The domains of one gene at one snapshot from its boundaries there (with
/// flickers merged): from each rising boundary to the next falling one, a
/// domain touching an edge starting at 0 or ending at the axis length (a
/// sealed row; a periodic one wraps, which this does not build).
pub fn domains_from(boundaries: &[Boundary], length_um: f64) -> Vec<crate::readout::Domain> {
    let mut bs: Vec<&Boundary> = boundaries.iter().collect();
    bs.sort_by(|a, b| a.position_um.total_cmp(&b.position_um));
    let Some(first) = bs.first() else { return Vec::new() };
    let (time_min, gene) = (first.time_min, first.gene.clone());
    let domain = |start_um: f64, end_um: f64| crate::readout::Domain {
        time_min,
        gene: gene.clone(),
        start_um,
        start_pct: 100.0 * start_um / length_um,
        end_um,
        end_pct: 100.0 * end_um / length_um,
        width_um: end_um - start_um,
        width_pct: 100.0 * (end_um - start_um) / length_um,
    };
    let mut out = Vec::new();
    let mut start = (first.direction == "falling").then_some(0.0);
    for b in &bs {
        match (b.direction, start) {
            ("falling", Some(s)) => {
                out.push(domain(s, b.position_um));
                start = None;
            }
            ("rising", _) => start = Some(b.position_um),
            _ => {}
        }
    }
    if let Some(s) = start {
        out.push(domain(s, length_um));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Merges down to one crossing fewer than given for every flicker
    /// present (as many as it takes), with edge flickers up to 3 µm.
    fn merge_flickers(list: &[Boundary], width: f64, length: f64) -> (Vec<Boundary>, bool) {
        let mut g = list.to_vec();
        let merged = merge_group(&mut g, 0, width, 3.0, length);
        (g, !merged.is_empty())
    }

    fn b(direction: &'static str, x: f64) -> Boundary {
        Boundary {
            time_min: 5.0,
            gene: "fern".into(),
            direction,
            position_um: x,
            position_pct: x,
            steepness_per_um: 0.0,
            width_um: 0.0,
        }
    }

    /// A rising boundary at 50 with a gap of off nuclei from 53 to 55 inside
    /// the on domain: the expressed length over [50, 55] is 3, so the step
    /// with that length rises at 52 (equal area); a clean boundary stays put.
    #[test]
    fn a_gap_moves_the_boundary_by_its_width() {
        let (out, ragged) = merge_flickers(&[b("rising", 50.0), b("falling", 53.0), b("rising", 55.0)], 6.0, 100.0);
        assert_eq!(out.len(), 1);
        assert_eq!((out[0].direction, out[0].position_um), ("rising", 52.0));
        assert!(ragged);
        // A blip of expression from 44 to 46 before a boundary at 48 moves it
        // back by the blip's width, to 46.
        let (out, _) = merge_flickers(&[b("rising", 44.0), b("falling", 46.0), b("rising", 48.0)], 6.0, 100.0);
        assert_eq!((out[0].direction, out[0].position_um), ("rising", 46.0));
        let clean = [b("rising", 20.0), b("falling", 60.0)];
        let (out, ragged) = merge_flickers(&clean, 6.0, 100.0);
        assert_eq!(out, clean.to_vec());
        assert!(!ragged);
    }

    /// A flicker far from any boundary is removed without moving one, and a
    /// stripe wider than the flicker width is kept.
    #[test]
    fn isolated_flickers_vanish_and_stripes_stay() {
        let list = [b("rising", 10.0), b("falling", 40.0), b("rising", 70.0), b("falling", 72.0)];
        let (out, _) = merge_flickers(&list, 6.0, 100.0);
        assert_eq!(out, list[..2].to_vec());
    }

    /// The flicker width follows the noise-free ramp, never below three
    /// spacings, and never half a noise-free domain or more.
    #[test]
    fn flicker_widths_come_from_the_noise_free_embryo() {
        let with_width = |dir, x, w| Boundary { width_um: w, ..b(dir, x) };
        let f = Flickers::new(&[with_width("rising", 20.0, 8.0), with_width("falling", 30.0, 15.0)], 1.0, 100.0, false);
        // Ramp 8 µm, but the domain is 10 µm wide: less than 5.
        assert_eq!(f.width(5.0, "fern"), 5.0);
        let f = Flickers::new(&[with_width("rising", 20.0, 8.0)], 1.0, 100.0, false);
        assert_eq!(f.width(5.0, "fern"), 8.0);
        let f = Flickers::new(&[with_width("rising", 20.0, 1.0)], 1.0, 100.0, false);
        assert_eq!(f.width(5.0, "fern"), 3.0);
        assert_eq!(f.width(5.0, "moss"), 3.0, "a gene with no boundary");
        // A whole embryo: the flicker at 22–23 merges into the boundary at 20.
        let (out, ragged) = f.merge(&[b("rising", 20.0), b("falling", 22.0), b("rising", 23.0)]);
        assert_eq!(out.len(), 1);
        assert_eq!(out[0].position_um, 21.0);
        assert_eq!(ragged, vec![Merged { time_min: 5.0, gene: "fern".into(), at_um: 22.5 }]);
        // An embryo with as many crossings as the noise-free one is never
        // touched, however close they are (a boundary near an edge, a
        // narrow stripe of this embryo's own).
        let near = [b("rising", 98.5)];
        assert_eq!(f.merge(&near).0, near.to_vec());
        // A gap in a domain of an embryo with more crossings than the
        // noise-free one: merged down to the noise-free count.
        let f = Flickers::new(&[with_width("rising", 20.0, 8.0), with_width("falling", 80.0, 8.0)], 1.0, 100.0, false);
        let (out, _) = f.merge(&[b("rising", 20.0), b("falling", 23.0), b("rising", 25.0), b("falling", 80.0)]);
        assert_eq!(out, vec![b("rising", 22.0), b("falling", 80.0)]);
        // A periodic row has no edge: a crossing by the seam stays.
        let f = Flickers::new(&[with_width("rising", 50.0, 8.0)], 1.0, 100.0, true);
        let (out, _) = f.merge(&[b("falling", 1.0), b("rising", 50.0), b("rising", 99.0)]);
        assert!(out.iter().any(|b| b.position_um == 1.0) && out.iter().any(|b| b.position_um == 99.0), "{out:?}");
    }

    /// Domains from merged boundaries: on from 0 to a falling boundary, and
    /// from a rising one to the end.
    #[test]
    fn domains_follow_the_boundaries() {
        let d = domains_from(&[b("falling", 20.0), b("rising", 60.0)], 100.0);
        assert_eq!(
            d.iter().map(|d| (d.start_um, d.end_um, d.width_um)).collect::<Vec<_>>(),
            [(0.0, 20.0, 20.0), (60.0, 100.0, 40.0)]
        );
    }

    /// A nucleus at the end of the row crossing the level is an edge
    /// flicker: removed, without moving a boundary far away.
    #[test]
    fn edge_flickers_vanish() {
        let (out, merged) = merge_flickers(&[b("falling", 50.0), b("rising", 98.5)], 3.0, 100.0);
        assert!(merged);
        assert_eq!(out, vec![b("falling", 50.0)]);
        let (out, _) = merge_flickers(&[b("rising", 1.0), b("falling", 50.0)], 3.0, 100.0);
        assert_eq!(out, vec![b("falling", 50.0)]);
    }
}
