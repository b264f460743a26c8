//! Phase space of each nucleus: fixed points and their stability, where the
//! nucleus's state flows (its basin), when its fate is decided, and how the
//! landscape changes along the axis (continuation in position).
//!
//! Everything here looks at an *isolated nucleus*: its inputs (gradient
//! values, and optionally the diffusion influx of that moment) are frozen,
//! so its own circuit is an autonomous system.

pub mod arclength;
pub mod basins;
pub mod bifurcation;
pub mod continuation;
pub mod fixed;
pub mod flow;
pub mod fold_curves;
pub mod landscape;
pub mod plane;
pub mod portrait;

pub mod system;

pub use basins::{BasinAnalysis, BasinOptions, Commitment, NucleusBasin, analyse};
pub use bifurcation::{
    Diagram, DiagramError, DiagramRequest, ParameterFamily, Second, Special, SpecialPoint, check_parameter, diagram,
};
pub use continuation::{Branch, BranchPoint, Crossing, Fold, Hopf, continue_branch};

pub use fixed::{FixedPoint, Kind, box_starts, find_fixed_points};
pub use flow::{Fate, HORIZON_GROWTH, fate, fate_with};
pub use fold_curves::{FoldCurve, FoldCurvePoint, FoldCurveRequest, SeedLines, fold_curves, seed_lines, stable_counts};
pub use landscape::{Landscape, PositionFamily, landscape};
pub use portrait::{PortraitData, portrait_data};

pub use system::{AtParameter, Family, Frozen, Slice, System};
