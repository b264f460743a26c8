//! Sharded multi-start fits ([`crate::shard`]): each start (global search
//! from its own seed, then polish) runs in any shard on any machine; the
//! merge finishes the fit from all of them (best start, profiles,
//! judgement, spread of the optima), which gives exactly the result of an
//! unsharded fit.

use std::path::Path;
use std::sync::atomic::AtomicBool;

use serde::{Deserialize, Serialize};

use super::{DeResult, FitProblem, Polish, Start, StartRun};
use crate::progress::Progress;
use crate::shard::{Job, Ran, Real, Shard, ShardError};

/// A start as a shard file keeps it: everything [`super::finish`] reads.
#[derive(Debug, Clone, Serialize, Deserialize)]
struct SavedStart {
    seed: u64,
    search_best: Vec<Real>,
    search_value: Real,
    search_trace: Vec<(usize, Real)>,
    search_evaluations: usize,
    search_converged: bool,
    polish_u: Vec<Real>,
    polish_value: Real,
    polish_iterations: usize,
    polish_evaluations: usize,
    polish_converged: bool,
    polish_reason: String,
}

fn reals(v: &[f64]) -> Vec<Real> {
    v.iter().copied().map(Real).collect()
}

fn floats(v: &[Real]) -> Vec<f64> {
    v.iter().map(|r| r.0).collect()
}

fn save(run: StartRun) -> SavedStart {
    let StartRun { start, search } = run;
    SavedStart {
        seed: start.seed,
        search_best: reals(&search.best),
        search_value: Real(search.value),
        search_trace: search.trace.iter().map(|&(n, v)| (n, Real(v))).collect(),
        search_evaluations: search.evaluations,
        search_converged: search.converged,
        polish_u: reals(&start.polish.u),
        polish_value: Real(start.polish.value),
        polish_iterations: start.polish.iterations,
        polish_evaluations: start.polish.evaluations,
        polish_converged: start.polish.converged,
        polish_reason: start.polish.reason,
    }
}

fn restore(s: SavedStart, problem: &FitProblem) -> StartRun {
    let search = DeResult {
        best: floats(&s.search_best),
        value: s.search_value.0,
        trace: s.search_trace.iter().map(|&(n, v)| (n, v.0)).collect(),
        evaluations: s.search_evaluations,
        converged: s.search_converged,
    };
    let polish = Polish {
        u: floats(&s.polish_u),
        value: s.polish_value.0,
        iterations: s.polish_iterations,
        evaluations: s.polish_evaluations,
        converged: s.polish_converged,
        reason: s.polish_reason,
    };
    StartRun { start: Start::new(s.seed, &search, polish, problem), search }
}

/// The sharded job of fitting `problem`: one item per start; rerun by `rerun`.
pub fn job(problem: &FitProblem, rerun: String) -> Job {
    let settings = vec![
        format!("starts {}", problem.starts.max(1)),
        format!("seed {}", problem.seed),
        format!("evaluations {}", problem.evaluations),
        format!("restarts {}", problem.restarts),
        format!("sd floor {} %", problem.sd_floor_pct),
        // The measured tables are files of their own: a shard made from other
        // data is refused even when the model text is the same.
        format!("measured data sha256 {}", crate::replicates::text_sha256(&format!("{:?}", problem.genotypes))),
    ];
    Job::new("fit", &problem.model, settings, problem.starts.max(1), rerun)
}

/// Runs shard `shard` of the fit `job` into `dir`: its starts, one after
/// another's global search evaluating in parallel ([`crate::shard::run`]).
///
/// # Errors
/// [`ShardError::Bad`] if the file cannot be written.
pub fn run_shard(
    problem: &FitProblem,
    job: &Job,
    shard: Shard,
    dir: &Path,
    stop: &AtomicBool,
    progress: &dyn Progress,
) -> Result<Ran, ShardError> {
    crate::shard::run(job, shard, dir, stop, "starts", progress, |k| {
        save(super::run_start(problem, k, true, &mut |_, _| {}))
    })
}

/// Merges the shards of the fit `job` in `dir` and finishes the fit.
///
/// # Errors
/// As [`crate::shard::merge`].
pub fn merge(problem: &FitProblem, job: &Job, dir: &Path) -> Result<super::FitResult, ShardError> {
    let runs = crate::shard::merge::<SavedStart>(job, dir)?.into_iter().map(|s| restore(s, problem)).collect();
    Ok(super::finish(problem, runs, true))
}
