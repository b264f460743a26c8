//! Text printed to the terminal.

use std::fmt::Write;
use std::path::Path;

use anlage::Summary;
use anlage::model::{KineticsKind, LinkEffect, Model, Regulator, Shape, Side};

fn gib(bytes: u64) -> String {
    let b = bytes as f64;
    if b >= (1u64 << 30) as f64 {
        format!("{:.2} GiB", b / (1u64 << 30) as f64)
    } else {
        format!("{:.1} MiB", b / (1u64 << 20) as f64)
    }
}

/// The longest stable fixed step along a trial run ([`anlage::integrate::safety::trial`]),
/// and a warning when the model's fixed step is longer.
fn trial_lines(s: &mut String, m: &Model) {
    let over = |t: &anlage::integrate::safety::Trial| {
        if t.until_min >= m.clock.until_min {
            "the whole run".to_string()
        } else {
            format!("its first {} min", t.until_min)
        }
    };
    match anlage::integrate::safety::trial(m) {
        Ok(t) if t.stable_step.is_finite() => {
            let _ = writeln!(
                s,
                "stability along a trial run ({} error-controlled steps over {}): fixed steps must stay below {:.3e} min \
                 (the limit is met at t = {:.1} min, nucleus {})",
                t.steps,
                over(&t),
                t.stable_step,
                t.at_min,
                t.nucleus
            );
            if let anlage::model::Stepping::Fixed { step_min } = m.clock.stepping
                && step_min > t.stable_step
            {
                let _ = writeln!(
                    s,
                    "warning   step_min = {step_min} min is above that: the run may go unstable (it is stopped if it does); \
                     take step_min <= {:.3e} min or error-controlled steps",
                    0.9 * t.stable_step
                );
            }
        }
        Ok(t) => {
            let _ = writeln!(
                s,
                "stability along a trial run ({} steps over {}): no limit on fixed steps found",
                t.steps,
                over(&t)
            );
        }
        Err(e) => {
            let _ = writeln!(s, "warning   a trial run failed: {e}");
        }
    }
}

/// Seconds in words: "0.2 s", "3.1 min", "2.5 h", "4.0 days".
pub fn duration(seconds: f64) -> String {
    if seconds < 60.0 {
        format!("{seconds:.1} s")
    } else if seconds < 3600.0 {
        format!("{:.1} min", seconds / 60.0)
    } else if seconds < 86_400.0 {
        format!("{:.1} h", seconds / 3600.0)
    } else {
        format!("{:.1} days", seconds / 86_400.0)
    }
}

/// A long expression cut to its first 200 characters, with the length said.
fn shorten(text: &str) -> String {
    let n = text.chars().count();
    if n <= 200 {
        text.to_string()
    } else {
        format!("{}… ({n} characters)", text.chars().take(200).collect::<String>())
    }
}

/// `anlage check`'s line on a growing row (which has no trial run: its
/// steps are error-controlled and its grid changes).
fn growth_line(m: &Model, g: &anlage::model::growth::Growth) -> String {
    let end = m.clock.until_min;
    let divisions = if g.divide_at_min.is_empty() {
        "no divisions".to_string()
    } else {
        let times: Vec<String> = g.divide_at_min.iter().map(|t| format!("{t}")).collect();
        format!(
            "divisions at {} min ({} to {} nuclei), production paused {} min before each",
            times.join(", "),
            m.grid.nx,
            m.grid.nx << g.divide_at_min.len(),
            g.mitosis_min
        )
    };
    format!(
        "growth    {} /min: {:.1} to {:.1} µm by {end} min; {divisions}; the grid is refined wherever its spacing reaches twice the starting spacing",
        g.rate_per_min,
        m.grid.length_um(),
        g.length_at(m.grid.length_um(), end)
    )
}

/// What `anlage check` prints.
pub fn describe(m: &Model) -> String {
    let mut s = String::new();
    let g = &m.grid;
    let _ = writeln!(s, "{}: \"{}\" is valid", m.file.display(), m.title);
    let _ = writeln!(
        s,
        "tissue    {}, spacing {} µm, axis {} µm, edges {}",
        g.shape_text(),
        g.spacing_um,
        g.length_um(),
        match g.edges {
            anlage::model::Edges::Sealed if m.genes.iter().any(|gene| !gene.edges.all_sealed()) => {
                "sealed (no flux) except where a gene's edge rule says (below)"
            }
            anlage::model::Edges::Sealed => "sealed",
            anlage::model::Edges::Periodic => "periodic",
        }
    );
    let _ = writeln!(
        s,
        "clock     until {} min, snapshot every {} min ({} snapshots)",
        m.clock.until_min,
        m.clock.snapshot_every_min,
        m.snapshot_count()
    );
    let _ = writeln!(s, "stepping  {}", anlage::run_folder::stepping_text(&m.clock));
    match m.clock.fixed_steps() {
        Some(n) => {
            let _ = writeln!(
                s,
                "steps     {n} ({:.3e} nucleus·gene·steps)",
                n as f64 * g.len() as f64 * m.genes.len() as f64
            );
        }
        None => {
            let _ = writeln!(s, "steps     chosen as the run goes (error-controlled)");
        }
    }
    // The Jacobian of a large circuit is too big to examine nucleus by nucleus.
    let large = m.genes.len() > anlage::integrate::safety::MAX_GENES_CHECKED;
    let rate = if large { 0.0 } else { anlage::integrate::reaction_stiffness(m) };
    if rate > 0.0 {
        let k_max = m.clock.scheme.explicit_stability() / rate;
        let _ = writeln!(
            s,
            "stiffness fastest reaction rate {rate:.3e} /min at the start (a decay that fast alone allows fixed steps up to ~{k_max:.3e} min)"
        );
    }
    let at_least = anlage::integrate::least_steps(m);
    let seconds = anlage::integrate::least_seconds(m);
    let _ = writeln!(s, "work      at least ~{at_least:.0} steps, ~{} of computing", duration(seconds));
    if seconds > 60.0 {
        let _ = writeln!(
            s,
            "warning   a long run: at least ~{at_least:.0} steps over {} nuclei and {} genes ({} at about {:.0e} \
             nucleus·gene·steps per second); check the rates' units (per minute), the step and until_min",
            g.len(),
            m.genes.len(),
            duration(seconds),
            anlage::integrate::THROUGHPUT
        );
    }
    if large {
        let _ = writeln!(
            s,
            "stability not tried along a run: circuits of more than {} genes are checked for negative levels only",
            anlage::integrate::safety::MAX_GENES_CHECKED
        );
    } else if let Some(growth) = &m.growth {
        let _ = writeln!(s, "{}", growth_line(m, growth));
    } else if seconds < 60.0 {
        trial_lines(&mut s, m);
    } else {
        let _ = writeln!(s, "stability not tried along a run: it would take too long here");
    }
    let plan = anlage::integrate::MemoryPlan::of(m);
    let streamed = if plan.streams { " (streamed to disk)" } else { "" };
    let _ = writeln!(s, "memory    {} working + {} recording{streamed}", gib(plan.working), gib(plan.recording));
    let sources: Vec<String> = anlage::replicates::Sources::each(m).into_iter().map(|(name, _)| name).collect();
    if !sources.is_empty() {
        let step = match m.noise.step_min.filter(|_| m.noise.is_stochastic()) {
            Some(k) => format!(", stochastic steps of {k} min"),
            None => String::new(),
        };
        let _ = writeln!(
            s,
            "noise     {} ({} embryos by default{step}): `anlage replicates` runs the embryos; the other verbs run one embryo without intrinsic noise or parameter variation",
            sources.join(", "),
            m.noise.replicates
        );
    }
    let _ = writeln!(s, "genes     {}", m.genes.len());
    for gene in &m.genes {
        let [r, gg, b] = gene.color;
        let law = match &gene.rate {
            Some(rate) => format!("rate {}", shorten(rate)),
            None => format!("production {} a.u./min, decay {} /min", gene.production, gene.decay),
        };
        let start = match (&gene.initial_formula, &gene.initial) {
            (Some(f), anlage::model::Initial::Profile(p)) => {
                let (lo, hi) = p.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| (l.min(*v), h.max(*v)));
                format!("starts at {} ({lo:.4}–{hi:.4})", shorten(f))
            }
            (_, anlage::model::Initial::Uniform(v)) => format!("starts at {v}"),
            (_, anlage::model::Initial::Profile(p)) => {
                let (lo, hi) = p.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| (l.min(*v), h.max(*v)));
                format!("starts from a profile ({lo:.4}–{hi:.4})")
            }
        };
        let noise = if gene.initial_noise > 0.0 { format!(" ± {}", gene.initial_noise) } else { String::new() };
        let _ = writeln!(
            s,
            "  {:<12} {law}, diffusion {} µm²/min, {start}{noise}, colour #{r:02x}{gg:02x}{b:02x}, boundaries at {}",
            gene.name,
            gene.diffusion,
            gene.boundary.describe()
        );
        if let Some(edges) = gene.edges.describe() {
            let _ = writeln!(s, "  {:<12} edges: {edges}; no flux elsewhere", "");
        }
    }

    let _ = writeln!(s, "gradients {}", m.gradients.len());
    for gr in &m.gradients {
        let shape = match &gr.shape {
            Shape::Exponential { decay_length_um } => {
                format!("exponential, λ = {decay_length_um} µm")
            }
            Shape::Linear { length_um } => format!("linear over {length_um} µm"),
            Shape::Step { width_um } => format!("step {width_um} µm wide"),
            Shape::Table { points } => format!(
                "measured table of {} points, {}–{} µm from the source",
                points.len(),
                points[0].0,
                points[points.len() - 1].0
            ),
            Shape::TableInTime { frames } => format!(
                "measured tables at {} times ({}–{} min; linear in between, held outside)",
                frames.len(),
                frames[0].0,
                frames[frames.len() - 1].0
            ),
        };
        let side = match gr.from {
            Side::Left => "left",
            Side::Right => "right",
            Side::Top => "top",
            Side::Bottom => "bottom",
            Side::Centre => "centre",
        };
        let timed = if gr.amplitude.is_empty() {
            String::new()
        } else {
            format!(", amplitude over time ({} points)", gr.amplitude.len())
        };
        let _ =
            writeln!(s, "  {:<12} {shape} from the {side}, peak {}, baseline {}{timed}", gr.name, gr.peak, gr.baseline);
    }
    let kind = match m.circuit.kinetics {
        KineticsKind::Hill => "hill",
        KineticsKind::Sigmoid => "sigmoid",
        KineticsKind::Rates => "rates",
    };
    let _ = writeln!(s, "circuit   {kind} kinetics, {} links", m.circuit.links.len());
    for (name, v) in &m.circuit.parameters {
        let _ = writeln!(s, "  parameter {name} = {v}");
    }
    for g in m.genes.iter().filter(|g| g.rate.is_some()) {
        let _ = writeln!(s, "  d{}/dt = {} + diffusion", g.name, shorten(g.rate.as_deref().unwrap_or("")));
    }
    for l in &m.circuit.links {
        let from = match l.from {
            Regulator::Gene(k) => &m.genes[k].name,
            Regulator::Gradient(k) => &m.gradients[k].name,
        };
        let effect = match l.effect {
            LinkEffect::Hill { activates, threshold, hill } => {
                format!("{} (K = {threshold}, n = {hill})", if activates { "activates" } else { "represses" })
            }
            LinkEffect::Weight(w) => format!("weight {w}"),
        };
        let _ = writeln!(s, "  {from} -> {}: {effect}", m.genes[l.to].name);
    }
    s
}

/// What `anlage run` prints at the end.
pub fn final_boundaries(summary: &Summary, wall_time_s: f64, dir: &Path) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{}: {} steps ({} rejected) to t = {} min in {:.2} s",
        summary.title, summary.steps, summary.rejected_steps, summary.final_time_min, wall_time_s
    );
    let sheet = !summary.final_sheet.is_empty();
    if sheet {
        let _ = writeln!(
            s,
            "patterns on the whole sheet at t = {} min (model prediction; sheet_patterns.csv, contours.csv, sheet_domains.csv):",
            summary.final_time_min
        );
        for p in &summary.final_sheet {
            let _ = writeln!(s, "  {:<12} {:<10} {}", p.gene, p.class, sheet_detail(p));
        }
    }
    // A sheet's boundaries along the axis are read on its midline strip;
    // listed in full only when there are few.
    let shown = if sheet { 6 } else { usize::MAX };
    if summary.final_boundaries.is_empty() {
        let _ = writeln!(s, "no boundaries at the final time{}", if sheet { " along the midline" } else { "" });
    } else {
        let heading = if sheet {
            let band = (summary.grid.ny / 10).max(1);
            let start = (summary.grid.ny - band) / 2;
            format!(" along the midline (mean of rows {}–{})", start, start + band - 1)
        } else {
            String::new()
        };
        let _ = writeln!(s, "boundaries{heading} at t = {} min (model prediction):", summary.final_time_min);
        for b in summary.final_boundaries.iter().take(shown) {
            let _ = writeln!(
                s,
                "  {:<12} {:<8} {:>8.1} µm  {:>6.2} %  width {:>5.1} µm",
                b.gene, b.direction, b.position_um, b.position_pct, b.width_um
            );
        }
        let more = summary.final_boundaries.len().saturating_sub(shown);
        if more > 0 {
            let _ = writeln!(s, "  … and {more} more in boundaries.csv");
        }
    }
    let _ = writeln!(s, "outputs in {}", dir.display());
    s
}

/// One gene's sheet pattern in words: counts, wavelength, area.
fn sheet_detail(p: &anlage::readout::sheet::SheetPattern) -> String {
    let wavelength = p.wavelength_um.map(|l| format!(", dominant wavelength {l:.1} µm")).unwrap_or_default();
    match p.class.as_str() {
        "not expressed" => "below its expression floor".into(),
        "uniform" => format!(
            "no crossing of its boundary level: every nucleus on one side ({:.0} % of the sheet at or above it)",
            p.high_area_pct
        ),
        "spots" => format!("{} spots of {} level{wavelength}", p.spots, p.spots_are),
        "stripes" | "labyrinth" => format!("{} stripes of high level{wavelength}", p.stripes),
        _ => format!(
            "{}, {:.1} % of the sheet; {} {} µm long in all",
            plural(p.high_domains, "high domain"),
            p.high_area_pct,
            plural(p.contours, "contour"),
            (p.contour_length_um * 10.0).round() / 10.0
        ),
    }
}

/// What `anlage basins` prints.
pub fn basins(r: &anlage::BasinReport, rec: &anlage::Recording, dir: &Path) -> String {
    let mut s = String::new();
    let a = &r.analysis;
    let last = a.times.len() - 1;
    let _ = writeln!(
        s,
        "basins of {} nuclei at {} snapshots (isolated nucleus, {} frozen; model prediction)",
        a.basins[0].len(),
        a.times.len(),
        a.frozen
    );
    for label in &a.labels {
        let n = a.basins[last].iter().filter(|b| &b.label == label).count();
        let _ = writeln!(s, "  {label:<16} {n:>5} nuclei at t = {} min", a.times[last]);
    }
    let commit = a.commitment();
    let latest = commit.iter().map(|c| c.time_min).fold(0.0, f64::max);
    let _ = writeln!(s, "every nucleus committed by t = {latest} min");
    for f in r.landscape.branches.iter().flat_map(|b| &b.folds) {
        let x = f.s / 100.0 * rec.grid.length_um();
        let _ = writeln!(s, "  fold at {:.2} % ({x:.1} µm): attractors appear or vanish here", f.s);
    }
    let _ = writeln!(s, "outputs in {}", dir.display());
    s
}

/// What `anlage portrait` prints.
pub fn portrait(d: &anlage::phase::PortraitData, rec: &anlage::Recording, path: &Path) -> String {
    let mut s = String::new();
    let [a, b] = d.genes;
    let _ = writeln!(
        s,
        "nucleus {}, plane {} x {}, inputs frozen at t = {} min:",
        d.nucleus, rec.genes[a], rec.genes[b], d.t_min
    );
    for p in &d.points {
        let ev: Vec<String> = p
            .eigenvalues
            .iter()
            .map(|e| if e.im == 0.0 { format!("{:.4}", e.re) } else { format!("{:.4}{:+.4}i", e.re, e.im) })
            .collect();
        let _ = writeln!(s, "  {:<15} ({:.4}, {:.4})  eigenvalues {}", p.kind.name(), p.x[0], p.x[1], ev.join(", "));
    }
    let _ = writeln!(s, "wrote {}", path.display());
    s
}

/// What `anlage screen` prints: the moved, lost and gained boundaries (up to 40 rows).
pub fn screen(
    s: &anlage::screen::Screen,
    paired: Option<&[anlage::replicates::PairedShift]>,
    epistasis: &[anlage::screen::Epistasis],
    dir: &Path,
) -> String {
    let mut out = String::new();
    let rows: Vec<&anlage::readout::Shift> = s.shifts.iter().flatten().collect();
    let _ = writeln!(out, "{} mutants screened (model predictions)", s.mutants.len());
    if let Some(gene) = &s.wild_type_changing {
        let _ = writeln!(
            out,
            "NOT SETTLED: in the wild type {gene} still changes at the end of the run; every shift below is between \
             snapshots at that time, not steady states; run longer (until_min)"
        );
    }
    let unsettled = anlage::screen::unsettled_mutants(s);
    if !unsettled.is_empty() {
        let names: Vec<&str> = unsettled.iter().take(5).map(String::as_str).collect();
        let _ = writeln!(
            out,
            "NOT SETTLED: {} mutant{} still change at the end of the run ({}{}); their rows say so in `reason`",
            unsettled.len(),
            if unsettled.len() == 1 { "" } else { "s" },
            names.join(", "),
            if unsettled.len() > 5 { ", …" } else { "" }
        );
    }
    let width = rows.iter().take(40).map(|r| r.mutant.chars().count()).fold(28, usize::max);
    let _ = writeln!(
        out,
        "  {:<width$} {:<10} {:<8} {:>8} {:>8} {:>8} {:>9}  status",
        "mutant", "gene", "dir", "wt %", "mut %", "shift %", "shift µm"
    );
    let pct = |v: Option<f64>| v.map_or_else(|| "-".to_string(), |x| format!("{x:.2}"));
    for r in rows.iter().take(40) {
        let _ = writeln!(
            out,
            "  {:<width$} {:<10} {:<8} {:>8} {:>8} {:>8} {:>9}  {}{}",
            r.mutant,
            r.gene,
            r.direction,
            pct(r.wild_type_pct),
            pct(r.mutant_pct),
            pct(r.shift_pct),
            pct(r.shift_um),
            r.status,
            r.reason.as_ref().map_or_else(String::new, |why| format!(": {why}"))
        );
    }
    if rows.len() > 40 {
        let _ = writeln!(out, "  ... {} more rows in shifts.csv", rows.len() - 40);
    }
    if !epistasis.is_empty() {
        let _ = writeln!(out, "epistasis: the cross's shift minus the sum of the single shifts (% of length):");
        for e in epistasis.iter().take(40) {
            let f = |v: Option<f64>| v.map_or_else(|| "-".to_string(), |x| format!("{x:+.3}"));
            let _ = writeln!(
                out,
                "  {:<36} {:<10} {:<8} sum {:>8} cross {:>8} epistasis {:>8}  {}",
                e.cross,
                e.gene,
                e.direction,
                f(e.additive_pct),
                f(e.cross_pct),
                f(e.epistasis_pct),
                e.status
            );
        }
        if epistasis.len() > 40 {
            let _ = writeln!(out, "  ... {} more rows in epistasis.csv", epistasis.len() - 40);
        }
    }
    if let Some(paired) = paired {
        let _ = writeln!(
            out,
            "over replicate embryos with the same seeds (shift, 95 % interval; positional error wild type -> mutant, ratio and 95 % interval):"
        );
        for r in paired.iter().take(40) {
            let _ = writeln!(out, "  {:<28} {}", r.mutant, paired_shift_line(r));
        }
        if paired.len() > 40 {
            let _ = writeln!(out, "  ... {} more rows in {}", paired.len() - 40, anlage::SCREEN_REPLICATES);
        }
    }
    let _ = writeln!(out, "outputs in {}", dir.display());
    out
}

/// What `anlage sensitivity` prints: the largest sensitivities.
pub fn sensitivity(rows: &[anlage::screen::SensitivityRow], dir: &Path) -> String {
    let mut out = String::new();
    let mut sorted: Vec<&anlage::screen::SensitivityRow> = rows.iter().filter(|r| r.d_pct_per_ln.is_some()).collect();
    sorted.sort_by(|a, b| b.d_pct_per_ln.unwrap_or(0.0).abs().total_cmp(&a.d_pct_per_ln.unwrap_or(0.0).abs()));
    let _ = writeln!(
        out,
        "boundary sensitivities, d position / d ln parameter (model predictions; pinned: a secant over the jumps):"
    );
    for r in sorted.iter().take(12) {
        let how = match r.kind.as_str() {
            "pinned" => {
                format!("pinned, secant over ±{} in ln p; jumps at {}", r.step_ln, r.jumps_at.replace(';', ", "))
            }
            "smooth" => format!("smooth, step {} checked against twice that", r.step_ln),
            other => format!("{other}: steps {} and twice that disagree", r.step_ln),
        };
        let _ = writeln!(
            out,
            "  {:<30} {:<10} {:<8} at {:>6.2} %: {:>+8.3} % length ({:>+8.2} µm) per unit ln p  [{how}]",
            r.parameter,
            r.gene,
            r.direction,
            r.position_pct,
            r.d_pct_per_ln.unwrap_or(f64::NAN),
            r.d_um_per_ln.unwrap_or(f64::NAN)
        );
    }
    let _ = writeln!(out, "all {} rows in {}", rows.len(), dir.join("sensitivity.csv").display());
    out
}

/// What `anlage fit` prints.
/// `merged`: the starts ran in shards and `seconds` is the time to finish them.
pub fn fit(
    problem: &anlage::fit::FitProblem,
    r: &anlage::fit::FitResult,
    seconds: f64,
    merged: bool,
    dir: &Path,
) -> String {
    let mut s = String::new();
    let evals = r.evaluations;
    let plural = if r.starts.len() == 1 { "" } else { "s" };
    let _ = if merged {
        writeln!(
            s,
            "{}: {evals} evaluations, {} start{plural} run in shards and finished here in {seconds:.1} s",
            problem.model.title,
            r.starts.len()
        )
    } else {
        writeln!(
            s,
            "{}: {evals} evaluations in {seconds:.1} s ({:.0} per second), {} start{plural}",
            problem.model.title,
            evals as f64 / seconds.max(1e-9),
            r.starts.len()
        )
    };
    for line in &r.convergence.lines {
        let _ = writeln!(s, "  {line}");
    }
    for line in r.spread.iter().flat_map(|x| &x.lines) {
        let _ = writeln!(s, "  {line}");
    }
    if r.convergence.converged {
        let _ = writeln!(s, "converged");
    } else if r.convergence.local {
        let _ = writeln!(
            s,
            "CONVERGED LOCALLY ONLY: the polish reached a minimum, but the global search was still improving when its \
             budget ran out, so a better region may exist; raise `evaluations` in [fit] (now {}) or give more `starts` to check",
            problem.evaluations
        );
    } else {
        let _ = writeln!(
            s,
            "NOT CONVERGED: the values below may not be the best fit; raise `evaluations` in [fit] (now {}) or give more `starts`",
            problem.evaluations
        );
    }
    let n = r.residuals.iter().filter(|x| x.measured_pct.is_some()).count();
    let quality = match r.p_value {
        Some(p) => format!(
            "; noise of the stated size alone gives a value this large with probability {p:.3} (χ² with {} degrees of freedom)",
            r.dof
        ),
        None => "; no degrees of freedom are left to judge it".to_string(),
    };
    let _ = writeln!(
        s,
        "objective {:.4} over {n} measured boundaries and {} parameters{quality}",
        r.objective,
        problem.params.len()
    );
    if r.p_value.is_some_and(|p| p < anlage::fit::quality::POOR_FIT) {
        let _ = writeln!(
            s,
            "POOR FIT: the model misses the measured boundaries by more than their stated errors (see fit_residuals.csv)"
        );
    }
    let _ = writeln!(
        s,
        "{:<28} {:>12} {:>29} {:>27}  note",
        "parameter", "value", "95 % interval (profile)", "approx. (curvature)"
    );
    for (p, e) in problem.params.iter().zip(&r.estimates) {
        let side = |v: f64, closed: bool| if closed { format!("{v:.4}") } else { format!("[{v:.4}]") };
        let interval = format!("{} … {}", side(e.interval.0, e.closed.0), side(e.interval.1, e.closed.1));
        let approx = e.approx.map_or_else(|| "singular".to_string(), |(a, b)| format!("{a:.4} … {b:.4}"));
        let mut notes = Vec::new();
        if e.at_bound {
            notes.push("at a bound of its range");
        }
        match e.closed {
            (false, false) => notes.push("not determined on either side"),
            (false, true) => notes.push("not determined below"),
            (true, false) => notes.push("not determined above"),
            _ => {}
        }
        if e.in_weak {
            notes.push("in a combination the data do not fix");
        }
        if notes.is_empty() {
            notes.push("the fit has not converged or fits poorly, so no interval is trusted");
        }
        let note =
            if e.determined { "determined".to_string() } else { format!("poorly determined: {}", notes.join("; ")) };
        let _ = writeln!(s, "{:<28} {:>12.5} {:>29} {:>27}  {note}", p.name, e.value, interval, approx);
    }
    if r.estimates.iter().any(|e| !(e.closed.0 && e.closed.1)) {
        let _ = writeln!(
            s,
            "[value]: the profile stays within 3.84 of the best up to the search bound, not determined on that side"
        );
    }
    for c in &r.weak {
        let _ = writeln!(s, "combination: {}", c.text);
    }
    let worst = r.residuals.iter().max_by(|a, b| a.value.abs().total_cmp(&b.value.abs()));
    if let Some(w) = worst {
        let _ = writeln!(
            s,
            "largest residual: {} {} {} at t = {} min: {:+.2} σ (all in fit_residuals.csv)",
            w.genotype, w.gene, w.direction, w.time_min, w.value
        );
    }
    let raised = problem
        .genotypes
        .iter()
        .flat_map(|g| &g.rows)
        .filter(|row| row.sd_pct.is_some_and(|sd| anlage::compare::floored_sd(row, problem.sd_floor_pct) > Some(sd)))
        .count();
    if raised > 0 {
        let _ = writeln!(
            s,
            "{raised} measured {} an sd below the floor (sd_floor_pct = {} %, or the row's resolution) and {} raised to it",
            if raised == 1 { "row had" } else { "rows had" },
            problem.sd_floor_pct,
            if raised == 1 { "was" } else { "were" }
        );
    }
    let missing = r.residuals.iter().filter(|x| x.measured_pct.is_none() || x.simulated_pct.is_none()).count();
    if missing > 0 {
        let _ = writeln!(
            s,
            "{missing} {} missing or extra in the fitted model (penalised)",
            if missing == 1 { "boundary" } else { "boundaries" }
        );
    }
    let _ = writeln!(
        s,
        "A good fit is a hypothesis consistent with these data, not proof of the mechanism. The 95 % intervals are \
         profile likelihoods (the others re-fitted at each value); the curvature ones are approximate.\noutputs in {}",
        dir.display()
    );
    s
}

/// What `anlage replicates` prints.
pub fn replicates(model: &anlage::model::Model, report: &anlage::ReplicateReport, dir: &Path) -> String {
    let (r, shares) = (&report.replicates, &report.shares);
    let mut s = String::new();
    let _ = writeln!(s, "{} embryos of {} (model prediction)", r.n, model.title);
    let mut sources: Vec<String> = anlage::replicates::Sources::each(model).into_iter().map(|(name, _)| name).collect();
    if sources.is_empty() {
        sources.push("none: every embryo is the same".into());
    }
    let _ = writeln!(s, "noise sources: {}", sources.join(", "));
    let _ = writeln!(s, "final boundaries (mean ± sd over embryos; decoded: from all genes at the mean position):");
    let um = |v: f64| {
        if v.is_finite() {
            format!("{v:.2}")
        } else if v == f64::INFINITY {
            "∞".into()
        } else {
            "—".into()
        }
    };
    for b in r.final_boundaries() {
        let decoded = if b.mean_um.is_finite() { r.decoded_at(b.mean_um) } else { f64::NAN };
        let _ = writeln!(
            s,
            "  {:<10} {:<8} {:>8} ± {:<6} µm ({} ± {} %)  in {:>5.1} % of embryos  decoded ± {} µm",
            b.gene,
            b.direction,
            um(b.mean_um),
            um(b.sd_um),
            um(b.mean_pct),
            um(b.sd_pct),
            100.0 * b.present_fraction,
            um(decoded)
        );
    }
    for w in &r.widths {
        let _ = writeln!(
            s,
            "  {:<10} domain  width {} ± {} µm (noise-free {:.1} µm)",
            w.gene,
            um(w.mean_width_um),
            um(w.sd_width_um),
            w.reference_width_um
        );
    }
    let flickered: Vec<String> = r
        .final_boundaries()
        .filter(|b| b.ragged_fraction > 0.0)
        .map(|b| format!("{} {} in {:.1} %", b.gene, b.direction, 100.0 * b.ragged_fraction))
        .collect();
    if !flickered.is_empty() {
        let _ = writeln!(
            s,
            "  note: ragged boundaries ({}): these embryos had more crossings than the noise-free one, some closer \
             together than the boundary's ramp (flickers of noise, or a stripe that narrow); each was merged into \
             the nearest boundary, which keeps the expressed length (precision.csv, ragged_fraction)",
            flickered.join(", ")
        );
    }
    let ragged: Vec<String> = r
        .final_boundaries()
        .filter(|b| b.miscounted_fraction > 0.0)
        .map(|b| format!("{} {} in {:.1} %", b.gene, b.direction, 100.0 * b.miscounted_fraction))
        .collect();
    if let Some(&extra) = r.unreferenced.last().filter(|n| **n > 0) {
        let _ = writeln!(
            s,
            "  NOTE: {:.1} % of embryos end with a boundary of a gene and direction the noise-free embryo has none of; \
             it is in embryo_boundaries.csv, not in the lines above",
            100.0 * extra as f64 / r.n as f64
        );
    }
    if !ragged.is_empty() {
        let _ = writeln!(
            s,
            "  NOTE: some embryos have another number of such boundaries than the noise-free embryo ({}): a stripe \
             lost or gained, or a boundary so ragged that its flickers are wider than its ramp; they are left \
             out of the spread above, which then describes only the others",
            ragged.join(", ")
        );
    }
    if !shares.is_empty() {
        let _ = writeln!(s, "variance explained by each source alone:");
        for sh in shares {
            let _ = writeln!(
                s,
                "  {:<24} {} {}: sd {:.2} µm alone, {:.0} % of the variance",
                sh.source,
                sh.gene,
                sh.direction,
                sh.sd_alone_um,
                100.0 * sh.fraction
            );
        }
    }
    if !report.shifts.is_empty() {
        let _ = writeln!(
            s,
            "shift from the wild type over the same embryos (mean, 95 % interval; positional error wild type -> mutant, 95 % interval of the ratio):"
        );
        for c in &report.shifts {
            let _ = writeln!(s, "  {}", paired_shift_line(c));
        }
    }
    if !report.step.is_empty() {
        let _ = writeln!(s, "with half the noise step:");
        for c in &report.step {
            let verdict = if c.unchanged {
                "unchanged within sampling error"
            } else {
                "CHANGED beyond 3 standard errors: make noise.step_min smaller"
            };
            let _ = writeln!(
                s,
                "  {:<10} {:<8} {:.2} ± {:.2} µm -> {:.2} ± {:.2} µm: {verdict}",
                c.gene, c.direction, c.mean_um, c.sd_um, c.mean_half_um, c.sd_half_um
            );
        }
    }
    let _ = writeln!(s, "outputs in {}", dir.display());
    s
}

/// One mutant boundary's shift and change of precision over paired embryos.
pub fn paired_shift_line(c: &anlage::replicates::PairedShift) -> String {
    if c.present_fraction == 0.0 {
        return format!("{:<10} {:<8} in no embryo pair: {}", c.gene, c.direction, c.precision);
    }
    let f = |v: f64, signed: bool| match (v.is_finite(), signed) {
        (false, _) => "—".to_string(),
        (true, true) => format!("{v:+.2}"),
        (true, false) => format!("{v:.2}"),
    };
    let partial = c.present_fraction < 1.0 && !c.precision.starts_with("not compared");
    format!(
        "{:<10} {:<8} {} µm [{}, {}]; {} -> {} µm, ratio {} [{}, {}]: {}{}",
        c.gene,
        c.direction,
        f(c.shift_um, true),
        f(c.shift_low_um, true),
        f(c.shift_high_um, true),
        f(c.wild_type_sd_um, false),
        f(c.mutant_sd_um, false),
        f(c.sd_ratio, false),
        f(c.sd_ratio_low, false),
        f(c.sd_ratio_high, false),
        c.precision,
        if partial { format!(" (in {:.0} % of embryo pairs)", 100.0 * c.present_fraction) } else { String::new() }
    )
}

/// What `anlage sweep` prints: how many points fell in each class, and the
/// parameter ranges where each class was found.
pub fn sweep(s: &anlage::sweep::Sweep, dir: &Path) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "{} points swept (model predictions):", s.points.len());
    for a in &s.axes {
        let _ = writeln!(
            out,
            "  {} from {} to {} ({} points{})",
            a.name,
            a.values[0],
            a.values[a.values.len() - 1],
            a.values.len(),
            if a.log { ", log spacing" } else { "" }
        );
    }
    for class in anlage::sweep::PatternClass::ALL {
        let here: Vec<&anlage::sweep::Point> = s.points.iter().filter(|p| p.class == class).collect();
        if here.is_empty() {
            continue;
        }
        let ranges: Vec<String> = s
            .axes
            .iter()
            .enumerate()
            .map(|(k, a)| {
                let lo = here.iter().map(|p| p.values[k]).fold(f64::INFINITY, f64::min);
                let hi = here.iter().map(|p| p.values[k]).fold(f64::NEG_INFINITY, f64::max);
                format!("{} {lo:.4}..{hi:.4}", a.name)
            })
            .collect();
        let waves: Vec<f64> = here.iter().filter_map(|p| p.wavelength.as_ref().map(|w| w.wavelength_um)).collect();
        let wave = if waves.is_empty() {
            String::new()
        } else {
            let lo = waves.iter().copied().fold(f64::INFINITY, f64::min);
            let hi = waves.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            format!("; wavelength {lo:.1}..{hi:.1} µm")
        };
        let _ = writeln!(out, "  {:<16} {:>6} points  ({}{wave})", class.name(), here.len(), ranges.join(", "));
    }
    if let Some(p) = s.points.iter().find(|p| p.failure.is_some()) {
        let _ = writeln!(out, "  first failure: {}", p.failure.as_deref().unwrap_or(""));
    }
    let _ = writeln!(out, "outputs in {}", dir.display());
    out
}

/// "1 domain", "3 domains".
fn plural(n: usize, word: &str) -> String {
    if n == 1 { format!("1 {word}") } else { format!("{n} {word}s") }
}
