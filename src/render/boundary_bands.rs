//! `boundary_bands.png`: a kymograph of each boundary's band over replicate
//! embryos. Position along the axis across, time down (as [`super::kymograph`]);
//! per boundary of the noise-free embryo, a band of mean ± 1 sd over the
//! embryos that have it, its mean as a solid line and the noise-free
//! position dashed. A boundary is followed from snapshot to snapshot by its
//! gene, direction and rank along the axis, and broken where fewer than two
//! embryos have it.

use super::Style;
use super::canvas::{Align, Canvas};
use super::kymograph::space_time;
use crate::replicates::{BoundaryPrecision, Replicates};

/// One boundary followed over the snapshots: (time, mean %, sd %, noise-free %).
type Track = Vec<(f64, f64, f64, f64)>;

/// The tracks of the shown genes, each with its gene index.
fn tracks(r: &Replicates, style: &Style) -> Vec<(usize, Vec<Track>)> {
    let mut out: Vec<(usize, Vec<Track>)> = Vec::new();
    for &g in &style.genes {
        for dir in ["rising", "falling"] {
            // rank → pieces; a piece ends where the boundary is missing.
            let mut pieces: Vec<Track> = Vec::new();
            let mut open: Vec<Option<usize>> = Vec::new();
            for &t in &r.times {
                let here: Vec<&BoundaryPrecision> = r
                    .boundaries
                    .iter()
                    .filter(|b| b.gene == r.genes[g] && b.direction == dir && crate::readout::same_time(b.time_min, t))
                    .collect();
                open.resize(open.len().max(here.len()), None);
                for (rank, slot) in open.iter_mut().enumerate() {
                    match here.get(rank).filter(|b| b.embryos >= 2 && b.mean_pct.is_finite() && b.sd_pct.is_finite()) {
                        Some(b) => {
                            let point = (t, b.mean_pct, b.sd_pct, 100.0 * b.reference_um / r.length_um);
                            match slot {
                                Some(k) => pieces[*k].push(point),
                                None => {
                                    pieces.push(vec![point]);
                                    *slot = Some(pieces.len() - 1);
                                }
                            }
                        }
                        None => *slot = None,
                    }
                }
            }
            if !pieces.is_empty() {
                out.push((g, pieces));
            }
        }
    }
    out
}

/// Draws the picture (genes and colours from `style`; every snapshot of the
/// replicates is shown).
pub fn boundary_bands(r: &Replicates, style: &Style) -> Canvas {
    let bg = style.background;
    let times = if r.times.is_empty() { vec![0.0] } else { r.times.clone() };
    let (mut c, a) =
        space_time(&times, style, "position along the axis (% length)", "time (min)", 20.0, |_, _| bg.rgb());
    let tracks = tracks(r, style);
    // Bands first, so that every line is drawn over every band.
    for (g, pieces) in &tracks {
        let col = style.colors[*g];
        for piece in pieces {
            if piece.len() == 1 {
                let (t, m, s, _) = piece[0];
                c.polyline(&[(a.px(m - s), a.py(t)), (a.px(m + s), a.py(t))], 3.0, col, 110, None);
                continue;
            }
            for w in piece.windows(2) {
                let ((t0, m0, s0, _), (t1, m1, s1, _)) = (w[0], w[1]);
                let (y0, y1) = (a.py(t0), a.py(t1));
                // Pixel rows centred in [y0, y1): each row is drawn once.
                let mut y = (y0 - 0.5).ceil() + 0.5;
                while y < y1 {
                    let f = f64::from((y - y0) / (y1 - y0).max(1e-6));
                    let (m, s) = (m0 + f * (m1 - m0), s0 + f * (s1 - s0));
                    c.polyline(&[(a.px(m - s), y), (a.px(m + s), y)], 1.0, col, 90, None);
                    y += 1.0;
                }
            }
        }
    }
    for (g, pieces) in &tracks {
        let col = style.colors[*g];
        for piece in pieces {
            let mean: Vec<(f32, f32)> = piece.iter().map(|p| (a.px(p.1), a.py(p.0))).collect();
            let reference: Vec<(f32, f32)> = piece.iter().map(|p| (a.px(p.3), a.py(p.0))).collect();
            c.polyline(&reference, 1.0, bg.ink(), 200, Some([4.0, 3.0]));
            c.polyline(&mean, 2.0, col, 255, None);
        }
    }
    // The key: genes on the legend line, what the marks mean beneath the plot.
    let right = c.width() as f32 - 24.0;
    let item = |g: usize| 17.0 + Canvas::text_width(13.0, &r.genes[g]) + 16.0;
    let mut pen = right - style.genes.iter().map(|&g| item(g)).sum::<f32>() + 16.0;
    for &g in &style.genes {
        c.rect(pen, 39.0, 12.0, 12.0, style.colors[g]);
        c.text(pen + 17.0, 50.0, 13.0, bg.ink(), Align::Left, &r.genes[g]);
        pen += item(g);
    }
    let strip = if r.sheet { ", central strip" } else { "" };
    let key =
        format!("band: mean ± 1 sd over {} embryos{strip}; solid: their mean; dashed: the noise-free embryo", r.n);
    c.text(a.left, c.height() as f32 - 8.0, 12.0, bg.muted(), Align::Left, &key);
    c
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::render::Background;
    use crate::replicates::ProfileStats;

    /// A boundary moving from 30 % to 50 % of a 100 µm row with sd 5 %:
    /// the band covers mean ± sd in the gene's colour (blended over the
    /// background), and stops at the snapshot after which no embryo has it.
    #[test]
    fn the_band_spans_one_sd_around_the_mean() {
        let times = vec![0.0, 10.0, 20.0, 30.0];
        let b = |t: f64, mean: f64, embryos: usize| BoundaryPrecision {
            time_min: t,
            gene: "fern".into(),
            direction: "falling".into(),
            reference_um: mean,
            present_fraction: embryos as f64 / 10.0,
            embryos,
            ragged_fraction: 0.0,
            miscounted_fraction: 0.0,
            mean_um: mean,
            sd_um: 5.0,
            mean_pct: mean,
            sd_pct: 5.0,
        };
        let r = Replicates {
            n: 10,
            genes: vec!["fern".into()],
            times: times.clone(),
            length_um: 100.0,
            spacing_um: 1.0,
            sheet: false,
            boundaries: vec![b(0.0, 30.0, 10), b(10.0, 40.0, 10), b(20.0, 50.0, 10), b(30.0, 50.0, 1)],
            widths: Vec::new(),
            unreferenced: vec![0; 4],
            profiles: ProfileStats::new(1, 100),
            decoded_um: vec![f64::NAN; 100],
        };
        let style =
            Style { title: "bands".into(), genes: vec![0], colors: vec![[230, 159, 0]], width: 600, ..Style::plain() };
        let c = boundary_bands(&r, &style);
        let (_, a) =
            space_time(&times, &style, "position along the axis (% length)", "time (min)", 20.0, |_, _| [0, 0, 0]);
        let at = |pct: f64, t: f64| c.get(a.px(pct).round() as u32, a.py(t).round() as u32);
        let bg = Background::Dark.rgb();
        // At t = 5 min the mean is 35 %: 32 % is inside the band, 25 % outside.
        let inside = at(32.0, 5.0);
        assert!(inside != bg && inside[0] > inside[2], "{inside:?}");
        assert_eq!(at(25.0, 5.0), bg);
        assert_eq!(at(45.0, 5.0), bg);
        // After 20 min only one embryo has it: nothing is drawn.
        assert_eq!(at(50.0, 27.0), bg);
    }
}
