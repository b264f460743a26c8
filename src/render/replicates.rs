//! `replicates.png`: the precision of a pattern over replicate embryos.
//! Top: each gene's mean final profile with a band of ±1 sd across embryos,
//! and each boundary's mean position with a bar of ±1 sd. Bottom: the
//! positional error along the axis, decoded from all genes jointly (line),
//! against the spread of each boundary measured directly (dots).

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::{Style, title_and_label};
use crate::replicates::Replicates;

/// Draws the picture; the genes shown and their colours come from `style`.
pub fn replicates_picture(r: &Replicates, style: &Style) -> Canvas {
    let bg = style.background;
    let width = style.width.max(360);
    let (left, right) = (72.0, 24.0);
    let (top1, h1, gap, h2, bottom) = (70.0, 260.0, 70.0, 170.0, 64.0);
    let mut c = style.canvas(width, (top1 + h1 + gap + h2 + bottom) as u32);
    let p = &r.profiles;
    let nuclei = r.decoded_um.len();
    let ymax = style
        .genes
        .iter()
        .flat_map(|&g| (0..nuclei).map(move |i| p.mean[g][i] + p.sd(g, i)))
        .filter(|v| v.is_finite())
        .fold(0.0f64, f64::max);
    let ymax = if ymax > 0.0 { 1.05 * ymax } else { 1.0 };
    let a = Axes::along_axis(left, top1, right, width, h1, (0.0, ymax), false);
    let pct = |i: usize| 100.0 * (i as f64 + 0.5) * r.spacing_um / r.length_um;
    for &g in &style.genes {
        let col = style.colors[g];
        // The band: one faint vertical stroke per pixel column between mean ± sd.
        let (x0, x1) = (a.px(pct(0)), a.px(pct(nuclei - 1)));
        let mut x = x0;
        while x <= x1 {
            let f = ((x - a.left) / a.width) as f64 * r.length_um / r.spacing_um - 0.5;
            let i = (f.floor().max(0.0) as usize).min(nuclei.saturating_sub(2));
            let w = (f - i as f64).clamp(0.0, 1.0);
            let at = |v: &dyn Fn(usize) -> f64| (1.0 - w) * v(i) + w * v((i + 1).min(nuclei - 1));
            let m = at(&|k| p.mean[g][k]);
            let s = at(&|k| p.sd(g, k));
            c.polyline(&[(x, a.py((m - s).max(0.0))), (x, a.py(m + s))], 1.0, col, 70, None);
            x += 1.0;
        }
        let pts: Vec<(f32, f32)> = (0..nuclei).map(|i| (a.px(pct(i)), a.py(p.mean[g][i]))).collect();
        c.polyline(&pts, 2.0, col, 255, None);
    }
    let last: Vec<_> = r.final_boundaries().collect();
    for b in &last {
        let Some(k) = style.genes.iter().position(|&g| r.genes[g] == b.gene) else { continue };
        if !b.mean_um.is_finite() {
            continue;
        }
        let col = style.colors[style.genes[k]];
        // One row of bars per gene, so that boundaries at one place stay apart.
        let (xm, y) = (a.px(b.mean_pct), a.top + 10.0 + 8.0 * k as f32);
        let sd = if b.sd_pct.is_finite() { b.sd_pct } else { 0.0 };
        c.polyline(&[(a.px(b.mean_pct - sd), y), (a.px(b.mean_pct + sd), y)], 2.0, col, 255, None);
        c.polyline(&[(xm, a.top + a.height), (xm, a.top)], 1.0, col, 160, Some([2.0, 3.0]));
    }
    axes::draw(&mut c, &a, "", "", bg);
    let strip = if r.sheet { ", central strip" } else { "" };
    let label = format!("level (a.u.): mean ± 1 sd over {} embryos{strip}", r.n);
    c.text(left - 8.0, top1 - 10.0, 14.0, bg.ink(), Align::Left, &label);

    // The positional error: capped at 3 × the largest direct sd (or at 4 ×
    // the smallest decoded value when no boundary has a spread), so that the
    // flat parts of the profiles, where position cannot be read, do not
    // squash the rest; values above the cap run along the top.
    let direct = last.iter().map(|b| b.sd_um).filter(|v| v.is_finite()).fold(0.0f64, f64::max);
    let least = r.decoded_um.iter().copied().filter(|v| v.is_finite() && *v > 0.0).fold(f64::INFINITY, f64::min);
    let cap = if direct > 0.0 {
        3.0 * direct
    } else if least.is_finite() {
        4.0 * least
    } else {
        1.0
    };
    let top2 = top1 + h1 + gap;
    let b2 = Axes::along_axis(left, top2, right, width, h2, (0.0, cap), false);
    // The decoded line, broken where nothing can be decoded; values above the
    // cap run along the top, dashed, and a note says so.
    let mut run: Vec<(f32, f32)> = Vec::new();
    let mut clipped_run: Vec<(f32, f32)> = Vec::new();
    let mut any_clipped = false;
    for (i, v) in r.decoded_um.iter().enumerate() {
        let x = b2.px(pct(i));
        if v.is_nan() {
            c.polyline(&run, 2.0, bg.ink(), 220, None);
            c.polyline(&clipped_run, 1.5, bg.muted(), 220, Some([4.0, 3.0]));
            run.clear();
            clipped_run.clear();
            continue;
        }
        if *v > cap {
            any_clipped = true;
            clipped_run.push((x, b2.py(cap)));
            if let Some(&last) = run.last() {
                run.push((x, b2.py(cap)));
                c.polyline(&run, 2.0, bg.ink(), 220, None);
                run.clear();
                clipped_run.insert(0, last);
            }
        } else {
            if let Some(&last) = clipped_run.last() {
                c.polyline(&clipped_run, 1.5, bg.muted(), 220, Some([4.0, 3.0]));
                clipped_run.clear();
                run.push(last);
            }
            run.push((x, b2.py(*v)));
        }
    }
    c.polyline(&run, 2.0, bg.ink(), 220, None);
    c.polyline(&clipped_run, 1.5, bg.muted(), 220, Some([4.0, 3.0]));
    if any_clipped {
        let note = format!("dashed along the top: above {cap:.3} µm (off the scale, or position cannot be read)");
        c.text(left, c.height() as f32 - 10.0, 12.0, bg.muted(), Align::Left, &note);
    }
    for b in &last {
        let Some(g) = style.genes.iter().copied().find(|&g| r.genes[g] == b.gene) else { continue };
        if b.sd_um.is_finite() && b.mean_um.is_finite() {
            c.ellipse(
                b2.px(b.mean_pct),
                b2.py(b.sd_um.min(cap)),
                5.0,
                5.0,
                2.0,
                style.colors[g],
                Some(style.colors[g]),
            );
        }
    }
    axes::draw(&mut c, &b2, "position along the axis (% length)", "", bg);
    c.text(
        left - 8.0,
        top2 - 14.0,
        14.0,
        bg.ink(),
        Align::Left,
        "positional error (µm): line decoded from all genes; dots: each boundary's sd",
    );
    title_and_label(&mut c, left, width as f32 - right, 24.0, bg, &style.title);
    // The legend, right-aligned on the line of the level label.
    let item = |g: usize| 17.0 + Canvas::text_width(13.0, &r.genes[g]) + 16.0;
    let mut pen = width as f32 - right - style.genes.iter().map(|&g| item(g)).sum::<f32>() + 16.0;
    for &g in &style.genes {
        c.rect(pen, top1 - 21.0, 12.0, 12.0, style.colors[g]);
        c.text(pen + 17.0, top1 - 10.0, 13.0, bg.ink(), Align::Left, &r.genes[g]);
        pen += item(g);
    }
    c
}
