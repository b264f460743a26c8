//! Phase space of each nucleus: fixed points and their stability, where the
//! nucleus's state flows (its basin), when its fate is decided, and how the
//! landscape changes along the axis (continuation in position).
//!
//! Everything here looks at an *isolated nucleus*: its inputs (gradient
//! values, and optionally the diffusion influx of that moment) are frozen,
//! so its own circuit is an autonomous system.

pub mod continuation;
pub mod fixed;
pub mod flow;
pub mod system;

pub use continuation::{Branch, BranchPoint, Fold, continue_branch};
pub use fixed::{FixedPoint, Kind, box_starts, find_fixed_points};
pub use flow::{Fate, fate};
pub use system::{AtParameter, Family, Frozen, System};
