//! Picture options as a user gives them (names, not indices), checked.

use super::{Background, Style};
use crate::integrate::Recording;

/// A picture option that cannot be used.
#[derive(Debug, thiserror::Error)]
pub enum StyleError {
    /// A gene name not in the run.
    #[error("`{option}` names unknown gene `{name}`; the run has: {known}")]
    UnknownGene {
        /// The option.
        option: String,
        /// The name.
        name: String,
        /// The genes there are.
        known: String,
    },
    /// A colour that is not `#rrggbb`.
    #[error("`--color {text}`: write GENE=#rrggbb, e.g. amber=#e69f00")]
    BadColor {
        /// What was given.
        text: String,
    },
    /// A size or rate out of range.
    #[error("`{option}` is {value}; {fix}")]
    OutOfRange {
        /// The option.
        option: String,
        /// The value.
        value: String,
        /// What is allowed.
        fix: String,
    },
    /// No snapshot in the time range.
    #[error("no snapshot between {from} and {to} min; the run has snapshots from {first} to {last} min")]
    EmptyTimeRange {
        /// Range start.
        from: f64,
        /// Range end.
        to: f64,
        /// First snapshot.
        first: f64,
        /// Last snapshot.
        last: f64,
    },
}

/// The width pictures are laid out at, px: a wider picture is the same
/// layout with everything scaled up (common practice, no source).
pub const LAYOUT_WIDTH: u32 = 720;

/// The narrowest layout, px: a narrower picture is this layout scaled down,
/// so that labels never collide (common practice, no source).
pub const LAYOUT_MIN_WIDTH: u32 = 560;

/// Picture options by name.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct StyleOptions {
    /// Genes to show (default all).
    pub genes: Option<Vec<String>>,
    /// Colour overrides `GENE=#rrggbb`.
    pub colors: Vec<String>,
    /// White background.
    pub light: bool,
    /// Width, px.
    pub width: Option<u32>,
    /// Also write SVG.
    pub svg: bool,
    /// Frames per second.
    pub fps: Option<u32>,
    /// Animations show every this many snapshots (and the last).
    pub frame_every: Option<usize>,
    /// Largest animation, MB (10⁶ bytes).
    pub gif_max_mb: Option<f64>,
    /// First time shown, min.
    pub from_min: Option<f64>,
    /// Last time shown, min.
    pub to_min: Option<f64>,
    /// Heat map of the one shown gene.
    pub heatmap: bool,
}

impl Style {
    /// The default style for a run, changed by `opts`.
    ///
    /// # Errors
    /// [`StyleError`] for unknown genes, bad colours, sizes out of range or an empty time range.
    pub fn with_options(rec: &Recording, title: &str, opts: &StyleOptions) -> Result<Style, StyleError> {
        let mut style = Style::for_genes(&rec.genes, &rec.colors, title, opts)?;
        style.time_range = (opts.from_min.unwrap_or(f64::NEG_INFINITY), opts.to_min.unwrap_or(f64::INFINITY));
        if style.snapshots(rec).is_empty() {
            return Err(StyleError::EmptyTimeRange {
                from: style.time_range.0,
                to: style.time_range.1,
                first: rec.times[0],
                last: *rec.times.last().unwrap_or(&0.0),
            });
        }
        Ok(style)
    }

    /// The style of pictures of genes `names` (colours `colors`) drawn
    /// without a recording (a fit's), changed by `opts`; its time range is
    /// all times.
    ///
    /// # Errors
    /// [`StyleError`] for unknown genes, bad colours or sizes out of range.
    pub fn for_genes(
        names: &[String],
        colors: &[[u8; 3]],
        title: &str,
        opts: &StyleOptions,
    ) -> Result<Style, StyleError> {
        let mut style = Style { genes: (0..names.len()).collect(), colors: colors.to_vec(), ..Style::plain() };
        style.title = title.to_string();
        let known = || names.join(", ");
        let index = |option: &str, name: &str| {
            names.iter().position(|g| g == name).ok_or_else(|| StyleError::UnknownGene {
                option: option.into(),
                name: name.into(),
                known: known(),
            })
        };
        if let Some(genes) = &opts.genes {
            style.genes = genes.iter().map(|n| index("--genes", n.trim())).collect::<Result<_, _>>()?;
        }
        for text in &opts.colors {
            let (name, hex) = text.split_once('=').ok_or_else(|| StyleError::BadColor { text: text.clone() })?;
            let g = index("--color", name.trim())?;
            style.colors[g] =
                crate::model::parse_color(hex.trim()).ok_or_else(|| StyleError::BadColor { text: text.clone() })?;
        }
        if opts.heatmap {
            if style.genes.len() != 1 {
                return Err(StyleError::OutOfRange {
                    option: "--heatmap".into(),
                    value: format!("asked with {} genes shown", style.genes.len()),
                    fix: "choose one gene with --genes NAME".into(),
                });
            }
            style.heatmap = true;
        }
        if opts.light {
            style.background = Background::Light;
        }
        if let Some(w) = opts.width {
            let w = within("--width", w, 320..=4096, "give 320 to 4096 px")?;
            // Between the narrowest and the widest layout, pictures are laid
            // out at the width asked; outside, the nearest layout is drawn
            // with more (or fewer) pixels, text and lines scaled with it.
            // Pictures whose layout needs more room are scaled to it too.
            style.width = w.clamp(LAYOUT_MIN_WIDTH, LAYOUT_WIDTH);
            style.pixel_width = Some(w);
        }
        style.svg = opts.svg;
        if let Some(f) = opts.fps {
            style.fps = within("--fps", f, 1..=50, "give 1 to 50 frames per second")?;
        }
        if let Some(k) = opts.frame_every {
            style.frame_every = within("--frame-every", k, 1..=1000, "give 1 (every snapshot) to 1000")?;
        }
        if let Some(mb) = opts.gif_max_mb {
            let mb = within("--gif-max-mb", mb, 0.05..=2000.0, "give 0.05 to 2000 MB")?;
            style.gif_max_bytes = Some((mb * 1e6) as u64);
        }
        Ok(style)
    }
}

/// `value` of `option` if it lies in `range`, else the error with `fix`.
fn within<T: PartialOrd + std::fmt::Display>(
    option: &str,
    value: T,
    range: std::ops::RangeInclusive<T>,
    fix: &str,
) -> Result<T, StyleError> {
    if range.contains(&value) {
        Ok(value)
    } else {
        Err(StyleError::OutOfRange { option: option.into(), value: value.to_string(), fix: fix.into() })
    }
}
