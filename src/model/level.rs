//! The level that defines a gene's boundaries (read by `readout`).

/// Below this maximum a profile is treated as blank (no boundaries), a.u.
pub const BLANK: f64 = 1e-9;

/// The level that defines a gene's boundaries.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Level {
    /// A fraction (0–1) of the gene's maximum along the axis at that time.
    FractionOfMax(f64),
    /// A fixed level, a.u.
    Absolute(f64),
}

impl Level {
    /// Half of each gene's own maximum: the default.
    pub const HALF_MAX: Level = Level::FractionOfMax(0.5);

    /// The threshold θ for a profile whose maximum is `max`, or None for a
    /// blank profile (maximum ≤ [`BLANK`]).
    pub fn threshold(self, max: f64) -> Option<f64> {
        if !(max.is_finite() && max > BLANK) {
            return None;
        }
        Some(match self {
            Level::FractionOfMax(f) => f * max,
            Level::Absolute(v) => v,
        })
    }

    /// In words, e.g. "½ of its maximum" or "level 2 a.u.".
    pub fn describe(self) -> String {
        match self {
            Level::FractionOfMax(f) if f == 0.5 => "half of its maximum".into(),
            Level::FractionOfMax(f) => format!("{f} of its maximum"),
            Level::Absolute(v) => format!("the level {v} a.u."),
        }
    }
}

impl Default for Level {
    fn default() -> Level {
        Level::HALF_MAX
    }
}

impl super::Model {
    /// Sets boundary levels from `GENE=SPEC`, SPEC one of `max:F` (a fraction
    /// 0 < F < 1 of the gene's maximum), `level:A` (a.u., > 0) or `capacity:F`
    /// (0 < F < 1 of its capacity p/d, a fixed level); GENE `*` sets every gene.
    ///
    /// # Errors
    /// How to write it, when the text is not understood or the gene unknown.
    pub fn set_boundary_level(&mut self, text: &str) -> Result<(), String> {
        let form = "write GENE=max:F, GENE=level:A or GENE=capacity:F (GENE `*` for every gene)";
        let (gene, spec) = text.split_once('=').ok_or(form)?;
        let (kind, value) = spec.split_once(':').ok_or(form)?;
        let v: f64 = value.trim().parse().map_err(|_| form.to_string())?;
        let genes: Vec<usize> = match gene.trim() {
            "*" => (0..self.genes.len()).collect(),
            name => vec![self.gene_index(name).ok_or_else(|| {
                let known: Vec<&str> = self.genes.iter().map(|g| g.name.as_str()).collect();
                format!("no gene `{name}`; genes: {}", known.join(", "))
            })?],
        };
        for g in genes {
            let gene = &self.genes[g];
            self.genes[g].boundary = match kind.trim() {
                "max" if v > 0.0 && v < 1.0 => Level::FractionOfMax(v),
                "level" if v.is_finite() && v > 0.0 => Level::Absolute(v),
                "capacity" if v > 0.0 && v < 1.0 => {
                    if gene.rate.is_some() || !(gene.production > 0.0 && gene.decay > 0.0) {
                        return Err(format!("`{}` has no capacity p/d; give level:A instead", gene.name));
                    }
                    Level::Absolute(v * gene.production / gene.decay)
                }
                _ => return Err(form.to_string()),
            };
        }
        Ok(())
    }
}
