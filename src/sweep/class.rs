//! The class of a final pattern, by rules a reader can check (they are in
//! the README): first whether it has settled, then what its domains look
//! like along the axis.

use crate::integrate::Recording;
use crate::readout::{Boundary, Domain};

/// A level that changes faster than this fraction of its gene's largest
/// level per decay time (1/decay, or the run's length for a gene that does
/// not decay), at the end of the run, means the pattern has not settled
/// (common practice, no source).
pub const SETTLED_REL: f64 = 1e-2;

/// What kind of pattern a run ends with.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum PatternClass {
    /// No gene crosses its boundary level.
    NoBoundary,
    /// Boundaries, every domain reaching an edge of the row: no stripe.
    Boundary,
    /// One gene has one domain away from both edges (and none has more).
    Stripe,
    /// Some gene has two or more domains away from both edges.
    SeveralStripes,
    /// Levels still move between the last two snapshots (oscillating, or a
    /// front still travelling): the run ends before a steady pattern.
    Changing,
    /// The run failed.
    Failed,
    /// Sheets: a few domains, not a repeating pattern.
    Domains,
    /// Sheets: spots (of high or low level).
    Spots,
    /// Sheets: stripes sharing one orientation.
    ParallelStripes,
    /// Sheets: elongated domains turning every way.
    Labyrinth,
}

impl PatternClass {
    /// Every class, in legend order.
    pub const ALL: [PatternClass; 10] = [
        PatternClass::NoBoundary,
        PatternClass::Boundary,
        PatternClass::Stripe,
        PatternClass::SeveralStripes,
        PatternClass::Domains,
        PatternClass::Spots,
        PatternClass::ParallelStripes,
        PatternClass::Labyrinth,
        PatternClass::Changing,
        PatternClass::Failed,
    ];

    /// Its name in tables and pictures.
    pub fn name(self) -> &'static str {
        match self {
            PatternClass::NoBoundary => "no boundary",
            PatternClass::Boundary => "boundary",
            PatternClass::Stripe => "stripe",
            PatternClass::SeveralStripes => "several stripes",
            PatternClass::Changing => "changing",
            PatternClass::Failed => "failed",
            PatternClass::Domains => "domains",
            PatternClass::Spots => "spots",
            PatternClass::ParallelStripes => "parallel stripes",
            PatternClass::Labyrinth => "labyrinth",
        }
    }
}

/// Each gene's settling rate, 1/min: its decay rate, or 1/(run length) for
/// a gene that does not decay (rule 1 of [`classify`]).
pub fn settle_rates(model: &crate::model::Model) -> Vec<f64> {
    model.genes.iter().map(|g| g.decay.max(1.0 / model.clock.until_min.max(1e-12))).collect()
}

/// [`settle_rates`] at the state `u` (time `t`, min): a gene given by a
/// rate expression has no decay constant, so its settling rate is its own
/// linear relaxation rate there, the mean over nuclei of |∂f_g/∂u_g| (what
/// the decay rate is for a gene with production and decay), when that is
/// faster than 1/(run length).
fn settle_rates_at(model: &crate::model::Model, u: &ndarray::Array2<f64>, t: f64) -> Vec<f64> {
    let mut rates = settle_rates(model);
    if model.genes.iter().all(|g| g.rate.is_none()) {
        return rates;
    }
    let tissue = crate::tissue::Tissue::new(model);
    let kinetics = crate::kinetics::build(model);
    let inputs = tissue.inputs_with_state(t, u);
    let n = model.genes.len();
    let (mut jac, mut own) = (vec![0.0; n * n], vec![0.0; n]);
    for (one, m) in u.columns().into_iter().zip(inputs.columns()) {
        kinetics.jacobian(&one.to_vec(), &m.to_vec(), &mut jac);
        for (g, o) in own.iter_mut().enumerate() {
            *o += jac[g * n + g].abs() / u.ncols() as f64;
        }
    }
    for (g, gene) in model.genes.iter().enumerate() {
        if gene.rate.is_some() && own[g].is_finite() {
            rates[g] = rates[g].max(own[g]);
        }
    }
    rates
}

/// The first gene of `model` still changing at the end of its run: where
/// |du/dt| = |f(u) + D∇²u|, evaluated at the last snapshot of `rec`
/// ([`crate::integrate::time_derivative`]), exceeds [`SETTLED_REL`] of the
/// gene's largest final level per settling time ([`settle_rates`]; for a
/// gene given by a rate expression, its relaxation rate at the end). None
/// when every gene has settled.
///
/// # Errors
/// The last snapshot cannot be read back, or its rates are not finite.
pub fn changing_gene(
    model: &crate::model::Model,
    rec: &Recording,
) -> Result<Option<usize>, crate::integrate::StepError> {
    let last = rec.len().saturating_sub(1);
    let end = rec.state(last)?;
    let rate = crate::integrate::time_derivative(model, &end, rec.times[last])?;
    let rates = settle_rates_at(model, &end, rec.times[last]);
    for g in 0..rec.genes.len() {
        let top = end.row(g).iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let fastest = rate.row(g).iter().fold(0.0f64, |m, v| m.max(v.abs()));
        // A gene below its expression floor everywhere (a knock-out decaying
        // from a noisy start) is not expressed: how fast it still falls does
        // not change any readout.
        let expressed = top >= rec.floor.get(g).copied().unwrap_or(0.0);
        if top > 0.0 && expressed && fastest > SETTLED_REL * top * rates[g] {
            return Ok(Some(g));
        }
    }
    Ok(None)
}

/// Classifies a run from its last snapshot (kept in `rec`), whether it is
/// still `changing` ([`changing_gene`]), its final `boundaries` and
/// `domains`:
/// 1. "changing" if some level still changes at the end of the run faster
///    than [`SETTLED_REL`] of its gene's largest level per settling time
///    (decay time, or the run's length for a gene that does not decay);
/// 2. "no boundary" if there is no boundary;
/// 3. "several stripes" if some gene has two or more domains that touch
///    neither edge (on a periodic row every domain counts);
/// 4. "stripe" if some gene has one;
/// 5. otherwise "boundary".
///
/// A sheet is classed by its whole area instead ([`crate::readout::sheet`]),
/// after rule 1: the first gene (in model order) whose pattern repeats gives
/// "spots", "parallel stripes" or "labyrinth"; else "domains" if some gene
/// has one or a few domains; else "no boundary". A repeating class comes
/// with its gene's dominant wavelength.
pub fn classify(
    rec: &Recording,
    changing: bool,
    boundaries: &[Boundary],
    domains: &[Domain],
) -> (PatternClass, Option<SheetWavelength>) {
    if changing {
        return (PatternClass::Changing, None);
    }
    if rec.grid.is_sheet() {
        let patterns = crate::readout::sheet::final_sheet(rec).patterns;
        let repeating = patterns.iter().find_map(|p| {
            let class = match p.class.as_str() {
                "spots" => PatternClass::Spots,
                "stripes" => PatternClass::ParallelStripes,
                "labyrinth" => PatternClass::Labyrinth,
                _ => return None,
            };
            let wavelength =
                p.wavelength_um.map(|wavelength_um| SheetWavelength { gene: p.gene.clone(), wavelength_um });
            Some((class, wavelength))
        });
        return repeating.unwrap_or(if patterns.iter().any(|p| p.class == "domains") {
            (PatternClass::Domains, None)
        } else {
            (PatternClass::NoBoundary, None)
        });
    }
    if boundaries.is_empty() {
        return (PatternClass::NoBoundary, None);
    }
    let length = rec.grid.length_um();
    let periodic = rec.grid.edges == crate::model::Edges::Periodic;
    let edge = 1e-9 * length;
    let interior = |d: &Domain| periodic || (d.start_um > edge && d.end_um < length - edge);
    let most =
        rec.genes.iter().map(|g| domains.iter().filter(|d| &d.gene == g && interior(d)).count()).max().unwrap_or(0);
    let class = match most {
        0 => PatternClass::Boundary,
        1 => PatternClass::Stripe,
        _ => PatternClass::SeveralStripes,
    };
    (class, None)
}

/// The dominant wavelength of a repeating sheet pattern, read on the gene
/// that gave the point its class.
#[derive(Debug, Clone, PartialEq)]
pub struct SheetWavelength {
    /// The gene.
    pub gene: String,
    /// λ = 2π/|q| of the peak of the radially averaged power spectrum, µm.
    pub wavelength_um: f64,
}
