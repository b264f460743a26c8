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
pub fn screen(
    s: &anlage::screen::Screen,
    paired: Option<&[anlage::replicates::PairedShift]>,
    epistasis: &[anlage::screen::Epistasis],
    dir: &Path,
) -> Value {
    let mutants: Vec<Value> = s
        .mutants
        .iter()
        .zip(&s.shifts)
        .map(|(name, shifts)| {
            let mut v = json!({ "name": name, "shifts": shifts });
            if let Some(rows) = paired {
                let mine: Vec<_> = rows.iter().filter(|r| &r.mutant == name).collect();
                v["shifts_over_embryos"] = json!(mine);
            }
            v
        })
        .collect();
    json!({
        "kind": "screen",
        "model_prediction": true,
        "wild_type": s.wild_type,
        "wild_type_not_settled": s.wild_type_changing,
        "not_settled_mutants": anlage::screen::unsettled_mutants(s),
        "mutants": mutants,
        "epistasis": epistasis,
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

/// `basins`: per attractor, how many nuclei end in it and when the last of
/// them commits; every nucleus's commitment; the folds of the landscape
/// along the axis; and the files written.
pub fn basins(r: &anlage::BasinReport, rec: &anlage::Recording, dir: &Path) -> Value {
    let a = &r.analysis;
    let last = a.times.len() - 1;
    let commitment = a.commitment();
    let attractors: Vec<Value> = a
        .labels
        .iter()
        .map(|label| {
            let mine = commitment.iter().filter(|c| &c.label == label);
            json!({
                "label": label,
                "nuclei_at_end": a.basins[last].iter().filter(|b| &b.label == label).count(),
                "last_commitment_min": mine.map(|c| c.time_min).fold(None, |m: Option<f64>, t| Some(m.map_or(t, |m| m.max(t)))),
            })
        })
        .collect();
    let nuclei: Vec<Value> = commitment
        .iter()
        .map(|c| json!({ "nucleus": c.nucleus, "label": c.label, "committed_min": c.time_min }))
        .collect();
    let length = rec.grid.length_um();
    let folds: Vec<Value> = r
        .landscape
        .branches
        .iter()
        .flat_map(|b| &b.folds)
        .map(|f| json!({ "position_pct": f.s, "position_um": f.s / 100.0 * length, "levels": f.x }))
        .collect();
    let on_level: serde_json::Map<String, Value> =
        rec.genes.iter().cloned().zip(a.on_level.iter().map(|v| json!(v))).collect();
    json!({
        "kind": "basins",
        "model_prediction": true,
        "frozen": a.frozen,
        "times_min": a.times,
        "on_level": on_level,
        "attractors": attractors,
        "commitment": nuclei,
        "folds": folds,
        "files": r.files,
        "outputs": dir,
    })
}

/// `replicates`: the rows of `precision.csv` and `widths.csv`, the decoded
/// error at each final boundary, and the shares of `attribution.csv`.
pub fn replicates(report: &anlage::ReplicateReport, dir: &Path) -> Value {
    let (r, shares) = (&report.replicates, &report.shares);
    let finite = |v: f64| if v.is_finite() { json!(v) } else { Value::Null };
    // As precision.csv: the decoded error at the mean position, last snapshot only.
    let last_time = r.times.last().copied().unwrap_or(0.0);
    let decoded = |b: &anlage::replicates::BoundaryPrecision| {
        if b.mean_um.is_finite() && anlage::readout::same_time(b.time_min, last_time) {
            finite(r.decoded_at(b.mean_um))
        } else {
            Value::Null
        }
    };
    let rows: Vec<Value> = r
        .boundaries
        .iter()
        .map(|b| {
            json!({
                "time_min": b.time_min, "gene": b.gene, "direction": b.direction,
                "reference_um": b.reference_um, "present_fraction": b.present_fraction,
                "embryos": b.embryos, "ragged_fraction": b.ragged_fraction,
                "miscounted_fraction": b.miscounted_fraction,
                "mean_um": finite(b.mean_um), "sd_um": finite(b.sd_um),
                "mean_pct": finite(b.mean_pct), "sd_pct": finite(b.sd_pct),
                "decoded_sd_um": decoded(b),
            })
        })
        .collect();
    let last: Vec<Value> = r
        .final_boundaries()
        .map(|b| {
            json!({
                "gene": b.gene, "direction": b.direction, "mean_um": finite(b.mean_um), "sd_um": finite(b.sd_um),
                "present_fraction": b.present_fraction, "embryos": b.embryos,
                "decoded_sd_um": decoded(b),
            })
        })
        .collect();
    let widths: Vec<Value> = r
        .widths
        .iter()
        .map(|w| {
            json!({
                "gene": w.gene, "reference_width_um": w.reference_width_um, "present_fraction": w.present_fraction,
                "mean_width_um": finite(w.mean_width_um), "sd_width_um": finite(w.sd_width_um),
            })
        })
        .collect();
    json!({
        "kind": "replicates",
        "model_prediction": true,
        "embryos": r.n,
        "unreferenced_at_end": r.unreferenced.last(),
        "final": last,
        "boundaries": rows,
        "widths": widths,
        "attribution": shares,
        "step_check": report.step,
        "shifts": report.shifts,
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
        "optima_spread": r.spread.as_ref().map(|x| json!({
            "agreeing_starts": x.agreeing.iter().map(|k| k + 1).collect::<Vec<_>>(),
            "parameters": problem.params.iter().enumerate().map(|(j, p)| json!({
                "parameter": p.name, "lowest": x.range[j].0, "highest": x.range[j].1,
                "fraction_of_range": x.fraction[j], "pinned": x.pinned[j],
            })).collect::<Vec<_>>(),
            "trade_offs": x.trade_offs.iter().map(|&(a, b, r)| json!({
                "parameters": [problem.params[a].name, problem.params[b].name], "correlation": r,
            })).collect::<Vec<_>>(),
        })),
        "correlation": r.correlation,
        "parameters": parameters,
        "combinations": combinations,
        "residuals": residuals,
        "outputs": dir,
    })
}

/// `sweep`: the axes, and per point its parameter values, class, failure,
/// final boundaries, and on a sheet the dominant wavelength of a repeating
/// pattern (null otherwise).
pub fn sweep(s: &anlage::sweep::Sweep, dir: &Path) -> Value {
    let axes: Vec<Value> =
        s.axes.iter().map(|a| json!({ "parameter": a.name, "values": a.values, "log": a.log })).collect();
    let points: Vec<Value> = s
        .points
        .iter()
        .map(|p| {
            json!({
                "values": p.values,
                "class": p.class.name(),
                "failure": p.failure,
                "boundaries": p.boundaries,
                "pattern_gene": p.wavelength.as_ref().map(|w| &w.gene),
                "wavelength_um": p.wavelength.as_ref().map(|w| w.wavelength_um),
            })
        })
        .collect();
    json!({ "kind": "sweep", "model_prediction": true, "axes": axes, "points": points, "outputs": dir })
}

/// `bifurcation`: the special points (fold, branch point, Hopf with its
/// period at onset) and how many branches; the files hold every point.
pub fn bifurcation(d: &anlage::phase::Diagram, genes: &[String], dir: &Path) -> Value {
    let points: Vec<Value> = d
        .special_points()
        .iter()
        .map(|p| {
            json!({
                "point": p.kind.name(),
                "value": p.s,
                "levels": genes.iter().zip(&p.x).map(|(g, v)| (g.clone(), json!(v))).collect::<serde_json::Map<_, _>>(),
                "period_min": p.period_min,
                "branch": p.branch,
            })
        })
        .collect();
    json!({
        "kind": "bifurcation",
        "outputs": dir,
        "model_prediction": true,
        "isolated_nucleus": true,
        "parameter": d.parameter,
        "from": d.request.from,
        "to": d.request.to,
        "x_pct": d.request.x_pct,
        "frozen_at_min": d.request.t_min,
        "branches": d.branches.len(),
        "special_points": points,
    })
}
