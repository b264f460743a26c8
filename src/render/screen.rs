//! Pictures of screens: the shift chart (each mutant a row, each boundary a
//! marker moved from its wild-type place) and the sensitivity heat map.

use super::axes::{self, Axes};
use super::canvas::{Align, Canvas};
use super::colour::diverging;
use super::{Style, title_and_label};
use crate::screen::{Screen, SensitivityRow};

/// Most mutant rows a chart shows.
pub const MAX_ROWS: usize = 60;

fn gene_color(genes: &[String], style: &Style, name: &str) -> [u8; 3] {
    genes.iter().position(|g| g == name).map_or(style.background.muted(), |g| style.colors[g])
}

/// Vertical offset of a gene's markers within a row, px, so coinciding
/// boundaries of different genes stay visible.
fn gene_offset(genes: &[String], name: &str) -> f32 {
    let n = genes.len() as f32;
    genes.iter().position(|g| g == name).map_or(0.0, |g| (g as f32 - (n - 1.0) / 2.0) * 5.0)
}

/// The shift chart: a row per mutant (the wild type on top): hollow rings at
/// the wild-type boundaries, filled dots where the mutant has them, a line
/// from one to the other; lost boundaries crossed out.
pub fn shift_chart(s: &Screen, genes: &[String], style: &Style) -> Canvas {
    let bg = style.background;
    let rows = s.mutants.len().min(MAX_ROWS);
    let label_w = s
        .mutants
        .iter()
        .take(rows)
        .map(|m| Canvas::text_width(12.0, m))
        .fold(Canvas::text_width(12.0, "wild type"), f32::max);
    let (left, top, right, bottom) = (label_w + 24.0, 70.0, 24.0, 64.0);
    let row_h = 22.0;
    let width = style.width.max(480);
    let plot_h = row_h * (rows + 1) as f32;
    let mut c = style.canvas(width, (top + plot_h + bottom) as u32);
    let a = Axes::along_axis(left, top, right, width, plot_h, (0.0, 1.0), true);
    let y_of = |k: usize| top + row_h * (k as f32 + 0.5);
    for k in 0..=rows {
        if k % 2 == 1 {
            c.rect(
                left,
                top + row_h * k as f32,
                a.width,
                row_h,
                if bg == super::Background::Dark { [22, 22, 22] } else { [240, 240, 240] },
            );
        }
    }
    c.text(left - 8.0, y_of(0) + 4.0, 12.0, bg.ink(), Align::Right, "wild type");
    for b in &s.wild_type {
        let col = gene_color(genes, style, &b.gene);
        c.ellipse(a.px(b.position_pct), y_of(0) + gene_offset(genes, &b.gene), 4.5, 4.5, 0.0, col, Some(col));
    }
    for (k, (name, rows_k)) in s.mutants.iter().zip(&s.shifts).take(rows).enumerate() {
        let row_y = y_of(k + 1);
        c.text(left - 8.0, row_y + 4.0, 12.0, bg.ink(), Align::Right, name);
        for r in rows_k {
            let col = gene_color(genes, style, &r.gene);
            let y = row_y + gene_offset(genes, &r.gene);
            if let Some(w) = r.wild_type_pct {
                c.ellipse(a.px(w), y, 4.5, 4.5, 1.5, col, None);
            }
            match (r.wild_type_pct, r.mutant_pct) {
                (Some(w), Some(m)) => {
                    c.line(a.px(w), y, a.px(m), y, 1.5, col);
                    c.ellipse(a.px(m), y, 4.5, 4.5, 0.0, col, Some(col));
                }
                (Some(w), None) => {
                    let x = a.px(w);
                    c.line(x - 5.0, y - 5.0, x + 5.0, y + 5.0, 1.5, bg.ink());
                    c.line(x - 5.0, y + 5.0, x + 5.0, y - 5.0, 1.5, bg.ink());
                }
                (None, Some(m)) => c.ellipse(a.px(m), y, 4.5, 4.5, 0.0, col, Some(col)),
                (None, None) => c.text(a.px(50.0), row_y + 4.0, 12.0, bg.muted(), Align::Centre, &r.status),
            }
        }
    }
    let ink = bg.ink();
    let (l, t, r, b) = (left, top, left + a.width, top + plot_h);
    c.polyline(&[(l, t), (r, t), (r, b), (l, b), (l, t)], 1.0, ink, 255, None);
    for x in axes::nice_ticks(0.0, 100.0, 5) {
        let px = a.px(x);
        c.line(px, b, px, b + 5.0, 1.0, ink);
        c.text(px, b + 19.0, 13.0, ink, Align::Centre, &format!("{x}"));
    }
    c.text(l + a.width / 2.0, b + 40.0, 14.0, ink, Align::Centre, "boundary position (% length)");
    let heading = format!("{}: boundary shifts in mutants", style.title);
    title_and_label(&mut c, 16.0, width as f32 - right, 26.0, bg, &heading);
    let note = "ring: wild type; dot: mutant; cross: lost";
    c.text(16.0, 48.0, 12.0, bg.muted(), Align::Left, note);
    let mut pen = width as f32 - right;
    for (g, name) in genes.iter().enumerate().rev() {
        let w = Canvas::text_width(13.0, name);
        c.text(pen, 50.0, 13.0, ink, Align::Right, name);
        c.rect(pen - w - 16.0, 40.0, 11.0, 11.0, style.colors[g]);
        pen -= w + 30.0;
    }
    if s.mutants.len() > rows {
        let note = format!("first {rows} of {} mutants shown", s.mutants.len());
        c.text(l + a.width, b + 40.0, 12.0, bg.muted(), Align::Right, &note);
    }
    c
}

/// Heat map of d(position)/d ln(parameter), % length per unit ln p: a row per
/// parameter, a column per wild-type boundary; diverging colours, values written in.
pub fn sensitivity_map(rows: &[SensitivityRow], style: &Style) -> Canvas {
    let bg = style.background;
    let mut params: Vec<&str> = Vec::new();
    let mut cols: Vec<(String, String, f64)> = Vec::new();
    for r in rows {
        if !params.contains(&r.parameter.as_str()) {
            params.push(&r.parameter);
        }
        if !cols.iter().any(|(g, d, p)| g == &r.gene && d == &r.direction && *p == r.position_pct) {
            cols.push((r.gene.clone(), r.direction.clone(), r.position_pct));
        }
    }
    let label_w = params.iter().map(|p| Canvas::text_width(12.0, p)).fold(60.0, f32::max);
    let (left, top) = (label_w + 24.0, 106.0);
    let cell_w = ((style.width.max(480) as f32 - left - 24.0) / cols.len().max(1) as f32).clamp(60.0, 140.0);
    let cell_h = 20.0;
    let width = (left + cell_w * cols.len() as f32 + 24.0).max(640.0) as u32;
    let height = (top + cell_h * params.len() as f32 + 80.0) as u32;
    let mut c = style.canvas(width, height);
    let max = rows.iter().filter_map(|r| r.d_pct_per_ln).map(f64::abs).fold(1e-12, f64::max);
    for (j, (g, d, p)) in cols.iter().enumerate() {
        let x = left + cell_w * (j as f32 + 0.5);
        c.text(x, top - 24.0, 12.0, bg.ink(), Align::Centre, &format!("{g} {d}"));
        c.text(x, top - 8.0, 12.0, bg.muted(), Align::Centre, &format!("at {p:.1}%"));
    }
    for (i, p) in params.iter().enumerate() {
        let y = top + cell_h * i as f32;
        c.text(left - 8.0, y + 14.0, 12.0, bg.ink(), Align::Right, p);
        for (j, (g, d, pos)) in cols.iter().enumerate() {
            let x = left + cell_w * j as f32;
            let r =
                rows.iter().find(|r| &r.parameter == p && &r.gene == g && &r.direction == d && r.position_pct == *pos);
            match r.and_then(|r| r.d_pct_per_ln.map(|v| (v, r.kind.as_str()))) {
                Some((v, kind)) => {
                    c.rect(x + 1.0, y + 1.0, cell_w - 2.0, cell_h - 2.0, diverging(v / max));
                    let mark = match kind {
                        "pinned" => " p",
                        "unresolved" => " ?",
                        _ => "",
                    };
                    c.text(x + cell_w / 2.0, y + 14.0, 11.0, [20, 20, 20], Align::Centre, &format!("{v:+.2}{mark}"));
                }
                None => {
                    c.rect(x + 1.0, y + 1.0, cell_w - 2.0, cell_h - 2.0, bg.muted());
                    c.text(x + cell_w / 2.0, y + 14.0, 11.0, bg.rgb(), Align::Centre, "lost");
                }
            }
        }
    }
    title_and_label(&mut c, 16.0, width as f32 - 24.0, 26.0, bg, &format!("{}: boundary sensitivity", style.title));
    let lines = [
        "d position / d ln parameter, % length: central differences, the step checked against twice it",
        "p: pinned, moves in jumps of one nucleus (a secant over the jumps); ?: the two steps disagree",
    ];
    for (k, line) in lines.iter().enumerate() {
        c.text(16.0, 46.0 + 15.0 * k as f32, 12.0, bg.muted(), Align::Left, line);
    }
    let yb = height as f32 - 40.0;
    for k in 0..160 {
        c.rect(left + k as f32, yb, 1.0, 12.0, diverging(k as f64 / 79.5 - 1.0));
    }
    c.text(left - 6.0, yb + 11.0, 12.0, bg.ink(), Align::Right, &format!("{:.2}", -max));
    c.text(left + 166.0, yb + 11.0, 12.0, bg.ink(), Align::Left, &format!("+{max:.2} % per unit ln p"));
    c
}
