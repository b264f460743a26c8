//! The model: what a model file says, checked.
//!
//! `model file (TOML) ──parse──▶ ModelSpec ──validate──▶ Model`. A [`Model`]
//! cannot be invalid: every name resolves, every rate is finite and of the
//! right sign, and the clock fits the snapshots.

mod edge;
mod error;
pub mod expr;
pub mod gradient_table;
pub mod growth;
mod level;
mod mutant;
pub mod noise;
mod param;
mod source;
pub mod spec;
mod validate;
mod validate_circuit;

use std::path::{Path, PathBuf};

pub use crate::integrate::Scheme;
pub use edge::{EdgeRule, GeneEdges};
pub use error::ModelError;
pub use level::{BLANK, Level};
pub use mutant::{Ectopic, Edit, Mutant};
pub use param::{EdgeParam, GeneParam, GradientParam, LinkParam, Param, names_in};
pub use source::Source;
pub use validate::PALETTE;
pub use validate_circuit::{MAX_HOPS_PER_MIN, parse_color};

/// A checked model.
#[derive(Debug, Clone)]
pub struct Model {
    /// Title from the file, or the file stem.
    pub title: String,
    /// The file the model came from (for messages).
    pub file: PathBuf,
    /// The model file's text (copied into run folders as `model.toml`).
    pub text: String,

    /// Seed for the initial noise.
    pub seed: u64,
    /// Tissue geometry.
    pub grid: Grid,
    /// Time span and step control.
    pub clock: Clock,
    /// Gradients, in file order.
    pub gradients: Vec<Gradient>,
    /// Genes, in file order (this is the gene axis of every state array).
    pub genes: Vec<Gene>,
    /// Regulatory circuit.
    pub circuit: Circuit,
    /// Mutants declared in the file.
    pub mutants: Vec<Mutant>,
    /// Genes held at a level (by a mutant), per gene.
    pub clamps: Vec<Option<f64>>,
    /// Ectopic expression (by a mutant).
    pub ectopic: Vec<Ectopic>,
    /// How replicate embryos differ (`[noise]`).
    pub noise: noise::Noise,
    /// Growth and division cycles (`[growth]`), if the row grows.
    pub growth: Option<growth::Growth>,
}

impl Model {
    /// SHA-256 (hex) of everything the model was read from: its text and
    /// every gene's initial levels (which may come from an `initial_file`
    /// that the text only names). Two models with the same digest run alike.
    pub fn inputs_sha256(&self) -> String {
        use sha2::{Digest, Sha256};
        let mut h = Sha256::new();
        h.update(self.text.as_bytes());
        for g in &self.gradients {
            let mut digest = |points: &[(f64, f64)]| {
                points.iter().for_each(|(x, v)| {
                    h.update(x.to_le_bytes());
                    h.update(v.to_le_bytes());
                });
            };
            match &g.shape {
                Shape::Table { points } => digest(points),
                Shape::TableInTime { frames } => frames.iter().for_each(|(t, points)| {
                    digest(&[(*t, f64::NAN)]);
                    digest(points);
                }),
                _ => {}
            }
        }
        for g in &self.genes {
            match &g.initial {
                Initial::Uniform(v) => h.update(v.to_le_bytes()),
                Initial::Profile(p) => p.iter().for_each(|v| h.update(v.to_le_bytes())),
            }
        }
        h.finalize().iter().map(|b| format!("{b:02x}")).collect()
    }

    /// Reads and validates a model file.
    ///
    /// # Errors
    /// [`ModelError`] naming the file, line, column and field of the first problem.
    pub fn load(path: &Path) -> Result<Model, ModelError> {
        let text = crate::files::read_text(path, crate::files::MAX_MODEL_BYTES)
            .map_err(|source| ModelError::Read { file: path.to_path_buf(), source })?;
        Model::from_toml(&text, path)
    }

    /// Parses and validates model text; `file` is used in messages only.
    ///
    /// # Errors
    /// [`ModelError`] naming the file, line, column and field of the first problem.
    pub fn from_toml(text: &str, file: &Path) -> Result<Model, ModelError> {
        let source = Source::new(file, text);
        let spec: spec::ModelSpec = toml::from_str(text).map_err(|e| source.syntax_error(&e))?;
        validate::validate(spec, &source)
    }

    /// Index of a gene by name.
    pub fn gene_index(&self, name: &str) -> Option<usize> {
        self.genes.iter().position(|g| g.name == name)
    }

    /// Number of snapshots the run records (t = 0 included).
    pub fn snapshot_count(&self) -> usize {
        self.clock.snapshot_times().len()
    }
}

/// What happens at the edges of the tissue.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Edges {
    /// No flux through the edges (mirror ghost nuclei).
    Sealed,
    /// The last nucleus neighbours the first.
    Periodic,
}

/// A row (`ny == 1`) or sheet of nuclei on a square lattice.
///
/// Nucleus `(ix, iy)` has index `iy * nx + ix` and sits at the centre of its
/// cell, `x = (ix + ½) h`, `y = (iy + ½) h`; the axis is `L = nx h` long.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Grid {
    /// Nuclei along the axis.
    pub nx: usize,
    /// Nuclei across (1 for a row).
    pub ny: usize,
    /// Spacing h, µm.
    pub spacing_um: f64,
    /// Edge condition.
    pub edges: Edges,
}

impl Grid {
    /// Total nuclei.
    pub fn len(&self) -> usize {
        self.nx * self.ny
    }
    /// Always false: a validated grid has at least one nucleus.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    /// True for a sheet.
    pub fn is_sheet(&self) -> bool {
        self.ny > 1
    }
    /// Axis length L = nx·h, µm.
    pub fn length_um(&self) -> f64 {
        self.nx as f64 * self.spacing_um
    }
    /// Sheet height ny·h, µm.
    pub fn height_um(&self) -> f64 {
        self.ny as f64 * self.spacing_um
    }
    /// Position of column `ix` along the axis, µm.
    pub fn x_um(&self, ix: usize) -> f64 {
        (ix as f64 + 0.5) * self.spacing_um
    }
    /// Position of row `iy` across the sheet, µm.
    pub fn y_um(&self, iy: usize) -> f64 {
        (iy as f64 + 0.5) * self.spacing_um
    }
    /// Shape for display: `[n]` or `[nx, ny]`.
    pub fn shape_text(&self) -> String {
        if self.is_sheet() { format!("{} x {} sheet", self.nx, self.ny) } else { format!("row of {}", self.nx) }
    }
}

/// How the integrator chooses its steps.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Stepping {
    /// A fixed step Δt, min.
    Fixed {
        /// Step, min.
        step_min: f64,
    },
    /// Steps chosen so the estimated local error stays below `atol + rtol·|u|`.
    Adaptive {
        /// Relative tolerance.
        rtol: f64,
        /// Absolute tolerance, a.u.
        atol: f64,
        /// Largest step, min.
        max_step_min: f64,
    },
}

/// Time span, snapshots and step control.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Clock {
    /// End time, min.
    pub until_min: f64,
    /// Snapshot interval, min.
    pub snapshot_every_min: f64,
    /// Step control.
    pub stepping: Stepping,
    /// Time-stepping scheme.
    pub scheme: Scheme,
}

impl Clock {
    /// Times at which snapshots are recorded: 0, Δs, 2Δs, …, and the end time.
    pub fn snapshot_times(&self) -> Vec<f64> {
        let n = (self.until_min / self.snapshot_every_min * (1.0 + 1e-12)).floor() as usize;
        let mut times: Vec<f64> = (0..=n).map(|i| i as f64 * self.snapshot_every_min).collect();
        let last = *times.last().expect("at least t = 0");
        if self.until_min - last > 1e-9 * self.until_min {
            times.push(self.until_min);
        } else if let Some(t) = times.last_mut() {
            *t = self.until_min;
        }
        times
    }

    /// Number of steps for fixed stepping, `None` when steps are error-controlled.
    pub fn fixed_steps(&self) -> Option<usize> {
        match self.stepping {
            Stepping::Fixed { step_min } => Some((self.until_min / step_min).round() as usize),
            Stepping::Adaptive { .. } => None,
        }
    }
}

/// Where a gradient's source is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    /// x = 0 (the head end of a row).
    Left,
    /// x = L.
    Right,
    /// y = 0 (sheets only).
    Bottom,
    /// y = ny·h (sheets only).
    Top,
    /// The centre of the tissue (radial distance on a sheet).
    Centre,
}

/// Spatial shape of a gradient as a function of distance d from the source.
#[derive(Debug, Clone, PartialEq)]
pub enum Shape {
    /// `peak·exp(−d/λ)`.
    Exponential {
        /// Decay length λ, µm.
        decay_length_um: f64,
    },
    /// `peak·max(0, 1 − d/ℓ)`.
    Linear {
        /// Length ℓ over which it falls to the baseline, µm.
        length_um: f64,
    },
    /// `peak` for `d < w`, else the baseline.
    Step {
        /// Width w, µm.
        width_um: f64,
    },
    /// A measured profile: levels at distances from the source, linear in
    /// between and held beyond the ends (`gradient_table::level_at`).
    Table {
        /// (distance from the source, µm; level), increasing distance.
        points: std::sync::Arc<[(f64, f64)]>,
    },
    /// Measured profiles at several times: linear in time between them and
    /// held before the first and after the last
    /// (`gradient_table::level_in_time`).
    TableInTime {
        /// (time, min; a profile as in [`Shape::Table`]), increasing time, at least two.
        frames: std::sync::Arc<[(f64, std::sync::Arc<[(f64, f64)]>)]>,
    },
}

/// A morphogen gradient: value(x, t) = baseline + a(t)·(shape(d(x)) − baseline·[shape part]).
///
/// Precisely: `m(x, t) = a(t) · (baseline + (peak − baseline) · s(d))` with `s`
/// the unit shape (1 at the source), `a(t)` the amplitude time course.
#[derive(Debug, Clone, PartialEq)]
pub struct Gradient {
    /// Name.
    pub name: String,
    /// Shape.
    pub shape: Shape,
    /// Source side.
    pub from: Side,
    /// Value at the source, a.u.
    pub peak: f64,
    /// Value far away, a.u.
    pub baseline: f64,
    /// Amplitude time course `(t_min, factor)`, ascending in t; empty = constant 1.
    pub amplitude: Vec<(f64, f64)>,
}

/// How a Hill gene combines its activators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Combine {
    /// All of them are needed: product of activation terms.
    All,
    /// Any of them suffices: sum of activation terms.
    Any,
}

/// Initial level of a gene.
#[derive(Debug, Clone, PartialEq)]
pub enum Initial {
    /// The same level in every nucleus, a.u.
    Uniform(f64),
    /// One level per nucleus, a.u.
    Profile(Vec<f64>),
}

/// A gene product: one dynamic species.
#[derive(Debug, Clone, PartialEq)]
pub struct Gene {
    /// Name.
    pub name: String,
    /// Display colour (sRGB).
    pub color: [u8; 3],
    /// Maximal production p, a.u./min.
    pub production: f64,
    /// Decay rate d, 1/min.
    pub decay: f64,
    /// Diffusion coefficient D, µm²/min.
    pub diffusion: f64,
    /// Initial level.
    pub initial: Initial,
    /// Half-width of uniform initial noise, a.u.
    pub initial_noise: f64,
    /// Hill kinetics: activator combination.
    pub combine: Combine,
    /// Sigmoid kinetics: bias h.
    pub bias: f64,
    /// Rate expression replacing the circuit's rate law for this gene (checked).
    pub rate: Option<String>,
    /// The formula [`Self::initial`] was computed from when the model was
    /// read, if any (its constants cannot then be varied: see `no_effect`).
    pub initial_formula: Option<String>,
    /// The level that defines its boundaries and domains (default half of its maximum).
    pub boundary: Level,
    /// The production p a knock-out took away, a.u./min: the knocked-out
    /// gene keeps its wild type's expression floor, so that noise about zero
    /// is not read as expression.
    pub knocked_out_production: Option<f64>,
    /// What happens at each edge of the tissue (no flux unless given).
    pub edges: GeneEdges,
}

/// What regulates a link.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Regulator {
    /// A gene (index into [`Model::genes`]).
    Gene(usize),
    /// A gradient (index into [`Model::gradients`]).
    Gradient(usize),
}

/// The parameters of one link under the chosen rate law.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LinkEffect {
    /// Hill term `r/(1+r)` (activation) or `1/(1+r)` (repression), `r = (x/K)^n`.
    Hill {
        /// True for activation.
        activates: bool,
        /// Threshold K, a.u.
        threshold: f64,
        /// Hill coefficient n.
        hill: f64,
    },
    /// Weight w in the sigmoid's argument.
    Weight(f64),
}

/// One regulatory link.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Link {
    /// Regulator.
    pub from: Regulator,
    /// Target gene index.
    pub to: usize,
    /// Parameters.
    pub effect: LinkEffect,
}

/// Which rate law the circuit uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum KineticsKind {
    /// Products of Hill terms.
    Hill,
    /// Sigmoid of a weighted sum.
    Sigmoid,
    /// Every gene's rate written as an expression.
    Rates,
}

/// The regulatory circuit.
#[derive(Debug, Clone, PartialEq)]
pub struct Circuit {
    /// Rate law.
    pub kinetics: KineticsKind,
    /// Links, in file order.
    pub links: Vec<Link>,
    /// Named constants for rate expressions.
    pub parameters: Vec<(String, f64)>,
    /// True when a rate expression reads neighbour means (contact signalling).
    pub neighbours: bool,
}
