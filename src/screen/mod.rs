//! Mutant screens and parameter sensitivity: predict where boundaries move.
//!
//! Each mutant is simulated on one thread, keeping only its final state (no
//! histories), and mutants run in parallel; results do not depend on the
//! thread count. Everything here is a model prediction.

mod crosses;
mod sensitivity;
pub mod shard;

pub use crosses::{Cross, Epistasis, crosses, epistasis};

pub use sensitivity::{SENSITIVITY_STEP, SensitivityRow, sensitivity, sensitivity_with};

use rayon::prelude::*;

use crate::integrate::StepError;
use crate::model::{Edit, GradientParam, Model, Mutant, Param};
use crate::readout::{Boundary, Shift, boundaries_at, match_boundaries};

/// A boundary whose shift is smaller than this, % of the axis length, is
/// "unchanged": it rounds to 0.00 % in the tables (common practice, no source).
pub const UNCHANGED_PCT: f64 = 0.005;

/// What a mutant did to one boundary, in words for the tables.
pub mod outcome {
    /// Matched, moved by at least [`super::UNCHANGED_PCT`].
    pub const MOVED: &str = "moved";
    /// Matched, moved by less than [`super::UNCHANGED_PCT`].
    pub const UNCHANGED: &str = "unchanged";
    /// The gene is below its expression floor everywhere.
    pub const GENE_LOST: &str = "gene lost everywhere";
    /// The gene is above its boundary level everywhere.
    pub const GENE_FILLS: &str = "gene expanded to fill";
    /// The gene is expressed, but below its (absolute) boundary level everywhere.
    pub const GENE_BELOW: &str = "gene below its level everywhere";
    /// The gene keeps a pattern, but not this boundary.
    pub const BOUNDARY_LOST: &str = "boundary lost";
    /// A boundary the wild type does not have.
    pub const NEW: &str = "new boundary";
    /// The mutant's run failed (see the reason).
    pub const FAILED: &str = "failed";
}

/// How a gene ends up in a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GeneState {
    /// Below its expression floor everywhere.
    NotExpressed,
    /// At or above its boundary level everywhere.
    Everywhere,
    /// Expressed, but below its boundary level everywhere (an absolute
    /// level that the profile never reaches).
    Below,
    /// Crosses its level somewhere.
    Patterned,
}

/// What a model's run ends with: the final boundaries, each gene's state,
/// and the first gene still changing at the end, if any
/// ([`crate::sweep::changing_gene`]).
#[derive(Debug, Clone)]
pub struct FinalOutcome {
    /// Boundaries of the last snapshot.
    pub boundaries: Vec<Boundary>,
    /// Per gene.
    pub states: Vec<GeneState>,
    /// The first gene whose levels still change at the end of the run.
    pub changing: Option<String>,
}

/// Runs `model` (one thread, only the last snapshot kept) and reads
/// its [`FinalOutcome`].
///
/// # Errors
/// [`StepError`] if the run fails.
pub fn final_outcome(model: &Model) -> Result<FinalOutcome, StepError> {
    let rec = crate::readout::recording_at(model, &[model.clock.until_min])?;
    let last = rec.times.len() - 1;
    let profiles = rec.axis_profiles(last, 0..rec.genes.len())?;
    let states = profiles
        .iter()
        .enumerate()
        .map(|(g, p)| {
            let max = p.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let min = p.iter().copied().fold(f64::INFINITY, f64::min);
            match rec.levels[g].threshold(max) {
                _ if max < rec.floor[g] => GeneState::NotExpressed,
                None => GeneState::NotExpressed,
                Some(theta) if min >= theta => GeneState::Everywhere,
                Some(theta) if max < theta => GeneState::Below,
                Some(_) => GeneState::Patterned,
            }
        })
        .collect();
    let changing = crate::sweep::changing_gene(model, &rec)?.map(|g| rec.genes[g].clone());
    Ok(FinalOutcome { boundaries: boundaries_at(&rec, last)?, states, changing })
}

/// The note put in the `reason` of every row of a mutant (or said of the
/// wild type) whose `gene` still changes at the end of a run ending at
/// `until_min`.
pub fn not_settled_note(gene: &str, until_min: f64) -> String {
    format!(
        "not settled: {gene} still changes at the end of the run (t = {until_min} min), so this is a snapshot, \
         not a steady state; run longer (until_min)"
    )
}

/// The mutants of `screen` whose rows carry the not-settled note, in order.
pub fn unsettled_mutants(screen: &Screen) -> Vec<String> {
    screen
        .shifts
        .iter()
        .zip(&screen.mutants)
        .filter(|(rows, _)| rows.iter().any(|r| r.reason.as_deref().is_some_and(|w| w.starts_with("not settled:"))))
        .map(|(_, name)| name.clone())
        .collect()
}

/// Renames the raw statuses of [`match_boundaries`] by what happened:
/// unchanged or moved; for a lost boundary, whether its gene vanished, filled
/// the tissue or only lost that boundary; gained as new.
pub fn describe_outcomes(shifts: &mut [Shift], genes: &[String], states: &[GeneState]) {
    for sh in shifts {
        let state = genes.iter().position(|g| g == &sh.gene).and_then(|g| states.get(g)).copied();
        sh.status = match (sh.status.as_str(), state) {
            ("moved", _) if sh.shift_pct.is_some_and(|d| d.abs() < UNCHANGED_PCT) => outcome::UNCHANGED,
            ("moved", _) => outcome::MOVED,
            ("lost", Some(GeneState::NotExpressed)) => outcome::GENE_LOST,
            ("lost", Some(GeneState::Everywhere)) => outcome::GENE_FILLS,
            ("lost", Some(GeneState::Below)) => outcome::GENE_BELOW,
            ("lost", _) => outcome::BOUNDARY_LOST,
            ("gained", _) => outcome::NEW,
            (other, _) => other,
        }
        .to_string();
    }
}

/// The result of a screen.
#[derive(Debug, Clone)]
pub struct Screen {
    /// Wild-type final boundaries.
    pub wild_type: Vec<Boundary>,
    /// Per mutant, in order: its shifts.
    pub shifts: Vec<Vec<Shift>>,
    /// Mutant names, in order.
    pub mutants: Vec<String>,
    /// A wild-type gene still changing at the end of the run (every shift
    /// is then between two snapshots, not two steady states).
    pub wild_type_changing: Option<String>,
}

/// Runs the wild type and every mutant (in parallel over mutants when
/// `parallel`), and matches each mutant's final boundaries to the wild type's.
///
/// # Errors
/// [`StepError`] if the wild type itself fails; a failing mutant is reported in its rows.
pub fn run_screen(model: &Model, mutants: &[Mutant], parallel: bool) -> Result<Screen, StepError> {
    run_screen_with(model, mutants, parallel, &crate::progress::Silent)
}

/// [`run_screen`], telling `progress` as mutants finish (stage "mutants").
///
/// # Errors
/// As [`run_screen`].
pub fn run_screen_with(
    model: &Model,
    mutants: &[Mutant],
    parallel: bool,
    progress: &dyn crate::progress::Progress,
) -> Result<Screen, StepError> {
    let wt = final_outcome(model)?;
    let wild_type = wt.boundaries;
    let done = crate::progress::Counter::begin(progress, "mutants", mutants.len());
    let genes: Vec<String> = model.genes.iter().map(|g| g.name.clone()).collect();
    let one = |m: &Mutant| -> Vec<Shift> {
        let rows = mutant_shifts(model, &wild_type, &genes, m);
        done.tick();
        rows
    };
    let shifts: Vec<Vec<Shift>> =
        if parallel { mutants.par_iter().map(one).collect() } else { mutants.iter().map(one).collect() };
    Ok(Screen {
        wild_type,
        shifts,
        mutants: mutants.iter().map(|m| m.name.clone()).collect(),
        wild_type_changing: wt.changing,
    })
}

/// One mutant of a screen: its final boundaries matched to the wild type's
/// (`wild_type`, of `model` with genes `genes`), outcomes in words; one
/// "failed" row with the reason when its run fails.
pub fn mutant_shifts(model: &Model, wild_type: &[Boundary], genes: &[String], m: &Mutant) -> Vec<Shift> {
    match final_outcome(&model.with_mutant(m)) {
        Ok(o) => {
            let mut shifts = match_boundaries(&m.name, wild_type, &o.boundaries);
            describe_outcomes(&mut shifts, genes, &o.states);
            if let Some(gene) = &o.changing {
                let note = not_settled_note(gene, model.clock.until_min);
                for sh in &mut shifts {
                    sh.reason = Some(note.clone());
                }
            }
            shifts
        }
        Err(e) => vec![Shift {
            mutant: m.name.clone(),
            status: outcome::FAILED.into(),
            reason: Some(e.to_string()),
            ..Shift::default()
        }],
    }
}

/// Generated mutant families: every single knock-out (`ko:gene`), every link
/// removal (`del:from->to`), and dosage: each gene's production halved and
/// doubled (`gene.production x0.5`, `x2`: heterozygote and overexpression)
/// and each gradient's peak from ×0.25 to ×4 (`gradient.peak x0.25` … `x4`),
/// as is each non-zero edge influx or held level (`gene.edge.left.influx x0.25`).
pub fn families(model: &Model, knockouts: bool, link_removals: bool, dosage: bool) -> Vec<Mutant> {
    let mut out = Vec::new();
    if knockouts {
        for (g, gene) in model.genes.iter().enumerate() {
            out.push(Mutant { name: format!("ko:{}", gene.name), edits: vec![Edit::KnockOut(g)] });
        }
    }
    if link_removals {
        for k in 0..model.circuit.links.len() {
            out.push(Mutant { name: format!("del:{}", model.link_name(k)), edits: vec![Edit::RemoveLink(k)] });
        }
    }
    if dosage {
        for (g, gene) in model.genes.iter().enumerate() {
            let p = Param::Gene(g, crate::model::GeneParam::Production);
            if model.no_effect(p).is_some() {
                continue;
            }
            for f in [0.5, 2.0] {
                out.push(Mutant { name: format!("{}.production x{f}", gene.name), edits: vec![Edit::Scale(p, f)] });
            }
        }
        for (k, g) in model.gradients.iter().enumerate() {
            for f in [0.25, 0.5, 2.0, 4.0] {
                out.push(Mutant {
                    name: format!("{}.peak x{f}", g.name),
                    edits: vec![Edit::Scale(Param::Gradient(k, GradientParam::Peak), f)],
                });
            }
        }
        // A source at an edge is a gradient the tissue makes: the same range.
        for p in model.parameters().into_iter().filter(|p| matches!(p, Param::Edge(..))) {
            for f in [0.25, 0.5, 2.0, 4.0] {
                out.push(Mutant { name: format!("{} x{f}", model.param_name(p)), edits: vec![Edit::Scale(p, f)] });
            }
        }
    }
    out
}
