//! Boundaries predicted for a model without keeping its history: the model
//! is simulated on one thread and only the wanted snapshots are kept (for
//! screens, sensitivities, comparisons and fits, which run many models).

use crate::integrate::{self, Recording, StepError};
use crate::model::Model;

use super::{Boundary, boundaries_at, same_time};

/// Boundaries of a model's final state, simulated on one thread with only the
/// last snapshot kept.
///
/// # Errors
/// [`StepError`] if the run fails.
pub fn predicted_final_boundaries(model: &Model) -> Result<Vec<Boundary>, StepError> {
    predicted_boundaries(model, &[model.clock.until_min])
}

/// Boundaries at the given snapshot times (min), simulated on one thread
/// keeping only those snapshots; times that are not snapshot times give none.
///
/// # Errors
/// [`StepError`] if the run fails.
pub fn predicted_boundaries(model: &Model, times: &[f64]) -> Result<Vec<Boundary>, StepError> {
    let rec = recording_at(model, times)?;
    Ok((0..rec.times.len()).map(|s| boundaries_at(&rec, s)).collect::<Result<Vec<_>, _>>()?.concat())
}

/// The model simulated on one thread, keeping only the snapshots at the
/// given times (min); times that are not snapshot times give none.
///
/// # Errors
/// [`StepError`] if the run fails.
pub fn recording_at(model: &Model, times: &[f64]) -> Result<Recording, StepError> {
    let tissue = crate::tissue::Tissue::new(model);
    let kinetics = crate::kinetics::build(model);
    let mut rec = Recording::for_model(model);
    // Every snapshot's largest levels, kept or not, so that a gene without a
    // capacity gets the floor a full run would give it (Recording::floor_from_run).
    let mut top = vec![0.0f64; model.genes.len()];
    integrate::integrate(model, kinetics.as_ref(), &tissue, false, |t, state| {
        integrate::raise_to_maxima(&mut top, state);
        if times.iter().any(|&w| same_time(w, t)) {
            // An in-memory recording: pushing cannot fail.
            let _ = rec.push(t, state);
        }
    })?;
    rec.floor_from_levels(&top);
    Ok(rec)
}
