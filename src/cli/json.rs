//! `--json`: what a verb found, as one JSON document on standard output, for
//! other programs (the files are written as without it). Every document has
//! `"kind"` (the verb), `"outputs"` (the folder) and, where the numbers come
//! from simulations, `"model_prediction": true`.

use std::path::Path;

use serde_json::{Value, json};

/// Prints the JSON document when `json` is asked for, else the report.
pub fn print_either(json: bool, doc: impl FnOnce() -> Value, report: impl FnOnce() -> String) {
    if json {
        println!("{}", doc());
    } else {
        print!("{}", report());
    }
}

/// `screen`: the wild type's final boundaries and, per mutant, each
/// boundary's shift and status (the rows of `shifts.csv`).
pub fn screen(s: &anlage::screen::Screen, dir: &Path) -> Value {
    let mutants: Vec<Value> =
        s.mutants.iter().zip(&s.shifts).map(|(name, shifts)| json!({ "name": name, "shifts": shifts })).collect();
    json!({
        "kind": "screen",
        "model_prediction": true,
        "wild_type": s.wild_type,
        "mutants": mutants,
        "outputs": dir,
    })
}

/// `compare`: the rows of `comparison.csv`, the rms difference, and the
/// notes (raised sds, rows compared at the last snapshot, mirrored samples).
pub fn compare(c: &anlage::compare::Comparison, dir: &Path) -> Value {
    json!({
        "kind": "compare",
        "model_prediction": true,
        "rows": c.rows,
        "rmse_pct": c.rmse_pct,
        "matched": c.rows.iter().filter(|r| r.status == "matched").count(),
        "raised_sds": c.raised_sds,
        "at_last_snapshot": c.at_last_snapshot,
        "mirrored_samples": c.mirror,
        "outputs": dir,
    })
}

/// `sensitivity`: the rows of `sensitivity.csv`.
pub fn sensitivity(rows: &[anlage::screen::SensitivityRow], dir: &Path) -> Value {
    json!({ "kind": "sensitivity", "model_prediction": true, "rows": rows, "outputs": dir })
}

/// `fit`: the verdict, the objective and its probability, each parameter's
/// value and intervals, the free combinations and the residuals.
pub fn fit(problem: &anlage::fit::FitProblem, r: &anlage::fit::FitResult, dir: &Path) -> Value {
    let c = &r.convergence;
    let verdict = if c.converged {
        "converged"
    } else if c.local {
        "converged locally only"
    } else {
        "not converged"
    };
    let parameters: Vec<Value> = problem
        .params
        .iter()
        .zip(&r.estimates)
        .map(|(p, e)| {
            json!({
                "name": p.name,
                "value": e.value,
                "start": p.start,
                "min": p.min,
                "max": p.max,
                "scale": if p.log { "log" } else { "linear" },
                "profile_interval": [e.interval.0, e.interval.1],
                "low_open": !e.closed.0,
                "high_open": !e.closed.1,
                "approx_interval": e.approx.map(|(a, b)| [a, b]),
                "at_bound": e.at_bound,
                "in_weak_combination": e.in_weak,
                "determined": e.determined,
            })
        })
        .collect();
    let residuals: Vec<Value> = r
        .residuals
        .iter()
        .map(|x| {
            json!({
                "genotype": x.genotype, "gene": x.gene, "direction": x.direction, "time_min": x.time_min,
                "measured_pct": x.measured_pct, "simulated_pct": x.simulated_pct, "sigma_pct": x.sigma_pct,
                "residual": x.value,
            })
        })
        .collect();
    let combinations: Vec<Value> = r
        .weak
        .iter()
        .map(|w| json!({ "meaning": w.text, "half_width_of_range": w.half_width, "direction": w.direction }))
        .collect();
    json!({
        "kind": "fit",
        "verdict": verdict,
        "convergence": c.lines,
        "objective": r.objective,
        "degrees_of_freedom": r.dof,
        "p_value": r.p_value,
        "evaluations": r.evaluations,
        "starts": r.starts.iter().map(|s| json!({
            "seed": s.seed, "search_objective": s.search_value, "search_converged": s.search_converged,
            "objective": s.value, "polish_converged": s.polish.converged, "polish": s.polish.reason, "values": s.values,
        })).collect::<Vec<_>>(),
        "correlation": r.correlation,
        "parameters": parameters,
        "combinations": combinations,
        "residuals": residuals,
        "outputs": dir,
    })
}
