//! The names a model's rate expressions may use.

use super::{Expr, Names};
use crate::model::{Gene, Gradient};

/// Names an expression may use: genes (levels), gradients (values) and parameters (constants).
pub struct ModelNames<'a> {
    /// Genes.
    pub genes: &'a [Gene],
    /// Gradients.
    pub gradients: &'a [Gradient],
    /// Parameters.
    pub parameters: &'a [(String, f64)],
}

impl Names for ModelNames<'_> {
    fn resolve(&self, name: &str) -> Option<Expr> {
        if let Some(g) = self.genes.iter().position(|g| g.name == name) {
            return Some(Expr::Gene(g));
        }
        if let Some(k) = self.gradients.iter().position(|g| g.name == name) {
            return Some(Expr::Input(k));
        }
        if let Some((_, v)) = self.parameters.iter().find(|(n, _)| n == name) {
            return Some(Expr::Num(*v));
        }
        match name {
            "x" => Some(Expr::Input(self.gradients.len())),
            "t" => Some(Expr::Input(self.gradients.len() + 1)),
            "pi" => Some(Expr::Num(std::f64::consts::PI)),
            _ => None,
        }
    }
    fn known(&self) -> String {
        let mut all: Vec<&str> = self.genes.iter().map(|g| g.name.as_str()).collect();
        all.extend(self.gradients.iter().map(|g| g.name.as_str()));
        all.extend(self.parameters.iter().map(|(n, _)| n.as_str()));
        all.extend(["x", "t", "pi"]);
        all.join(", ")
    }
    fn neighbour(&self, gene: usize) -> Option<Expr> {
        Some(Expr::Input(self.gradients.len() + 2 + gene))
    }
}

/// Names an initial formula may use: the position of a nucleus's centre
/// `x` (along the axis) and `y` (across a sheet), µm; the axis length `L`
/// and the sheet's height `W`, µm; `pi`; and the model's named constants
/// (which come first, so a constant may be called `L`).
pub struct InitialNames<'a> {
    /// The `[circuit] parameters`.
    pub parameters: &'a [(String, f64)],
    /// Axis length, µm.
    pub length_um: f64,
    /// Sheet height, µm (one spacing for a row).
    pub height_um: f64,
}

impl Names for InitialNames<'_> {
    fn resolve(&self, name: &str) -> Option<Expr> {
        match name {
            "x" => return Some(Expr::Input(0)),
            "y" => return Some(Expr::Input(1)),
            _ => {}
        }
        if let Some((_, v)) = self.parameters.iter().find(|(n, _)| n == name) {
            return Some(Expr::Num(*v));
        }
        match name {
            "L" => Some(Expr::Num(self.length_um)),
            "W" => Some(Expr::Num(self.height_um)),
            "pi" => Some(Expr::Num(std::f64::consts::PI)),
            _ => None,
        }
    }
    fn known(&self) -> String {
        let mut all = vec!["x", "y", "L", "W", "pi"];
        all.extend(self.parameters.iter().map(|(n, _)| n.as_str()));
        all.join(", ")
    }
}
