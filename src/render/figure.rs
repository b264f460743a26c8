//! One multi-panel figure of a run for a paper or a talk: the final pattern,
//! the kymograph, the boundary positions over time and the attractors along
//! the axis, lettered A–D, under the model's title.

use super::canvas::{Align, Canvas};
use super::{PREDICTION_LABEL, Style};
use crate::integrate::{ReadBackError, Recording};
use crate::phase::Landscape;
use crate::readout::Boundary;

/// Layout width of one panel (the pictures' own layout).
const PANEL: f32 = 720.0;
/// Space left of each panel for its letter, and above the panels for the title.
const GUTTER: f32 = 30.0;
const HEAD: f32 = 44.0;

/// The level above which a gene counts as on in an attractor: half its
/// highest level at a stable fixed point of the landscape (as the basin
/// analysis reads its own fixed points).
pub fn on_levels(l: &Landscape, genes: usize) -> Vec<f64> {
    (0..genes)
        .map(|g| {
            let on_branches = l.branches.iter().flat_map(|b| &b.points).filter(|p| p.kind.is_stable()).map(|p| p.x[g]);
            let at_nuclei = l.per_nucleus.iter().flatten().filter(|p| p.kind.is_stable()).map(|p| p.x[g]);
            0.5 * on_branches.chain(at_nuclei).fold(0.0, f64::max)
        })
        .collect()
}

/// The figure: A the final pattern, B the kymograph, C the boundary
/// positions over time, D the attractors of gene `gene` along the axis (when
/// a landscape is given), two panels a row, each panel the picture the run
/// draws on its own with a short title. `style.pixel_width` is the figure's
/// width.
///
/// # Errors
/// [`ReadBackError`] if a streamed snapshot cannot be read back.
pub fn figure(
    rec: &Recording,
    boundaries: &[Boundary],
    landscape: Option<(&Landscape, usize)>,
    style: &Style,
) -> Result<Canvas, ReadBackError> {
    let total = 2.0 * (GUTTER + PANEL);
    let mut panel_style = style.clone();
    panel_style.width = PANEL as u32;
    // Every panel at the figure's scale.
    let scale = style.pixel_width.map_or(1.0, |p| p as f32 / total);
    panel_style.pixel_width = Some((PANEL * scale).round() as u32);
    let titled = |t: &str| Style { title: t.to_string(), ..panel_style.clone() };
    let snaps = style.snapshots(rec);
    let last = *snaps.last().expect("a snapshot in the time range");
    let max = super::gene_maxima(rec, &snaps)?;
    let mut panels = vec![
        super::pattern(rec, last, &titled("Final pattern"), &max)?.0,
        super::kymograph(rec, boundaries, &titled("Levels along the axis over time"))?.0,
        super::boundary_positions(rec, boundaries, &titled("Boundary positions over time"))?.0,
    ];
    if let Some((l, gene)) = landscape {
        let on = on_levels(l, rec.genes.len());
        panels.push(super::landscape_picture(rec, l, gene, &on, &panel_style));
    }
    let rows: Vec<f32> = panels.chunks(2).map(|r| r.iter().map(|p| p.height() as f32).fold(0.0, f32::max)).collect();
    let height = HEAD + rows.iter().sum::<f32>();
    let c = Canvas::scaled(total as u32, height.ceil() as u32, style.background.rgb(), scale);
    let mut c = if style.svg { c } else { c.without_svg() };
    let ink = style.background.ink();
    super::title(&mut c, GUTTER, 30.0, total - 2.0 * GUTTER - 140.0, ink, &style.title);
    c.text(total - GUTTER, 30.0, 13.0, style.background.muted(), Align::Right, PREDICTION_LABEL);
    let mut top = HEAD;
    for (r, row) in panels.chunks(2).enumerate() {
        for (k, p) in row.iter().enumerate() {
            let left = k as f32 * (GUTTER + PANEL);
            c.place(p, left + GUTTER, top);
            let letter = ["A", "B", "C", "D"][2 * r + k];
            c.text(left + 6.0, top + 26.0, 22.0, ink, Align::Left, letter);
        }
        top += rows[r];
    }
    Ok(c)
}
