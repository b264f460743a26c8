//! How far a fit can be trusted: whether the search converged, whether
//! independent starts agree, which parameter combinations the data leave
//! free, and how the objective compares with noise of the stated size.

use super::lsq::{Polish, Weak};
use super::optimise::DeResult;
use super::problem::FitProblem;

/// Improvement of the best objective over the last quarter of a search's
/// budget that counts as "still improving" (χ² units; common practice, no source).
pub const STILL_IMPROVING: f64 = 0.1;
/// Below this χ² probability the fit is called poor (the model misses the
/// data by more than their stated errors; common practice, no source).
pub const POOR_FIT: f64 = 0.01;
/// Starts whose objectives are within this of the best (χ² units) agree.
pub const STARTS_AGREE: f64 = 0.1;

/// One start of the global search, polished.
#[derive(Debug, Clone, PartialEq)]
pub struct Start {
    /// Its seed.
    pub seed: u64,
    /// Best objective of the global search.
    pub search_value: f64,
    /// Objective after the polish.
    pub value: f64,
    /// Parameter values after the polish.
    pub values: Vec<f64>,
    /// Whether the global search's population converged (else its budget ran out).
    pub search_converged: bool,
    /// The polish.
    pub polish: Polish,
}

impl Start {
    /// A start from its search and polish.
    pub fn new(seed: u64, search: &DeResult, polish: Polish, problem: &FitProblem) -> Start {
        Start {
            seed,
            search_value: search.value,
            value: polish.value,
            values: problem.values(&polish.u),
            search_converged: search.converged,
            polish,
        }
    }
}

/// How the search ended.
#[derive(Debug, Clone, PartialEq)]
pub struct Convergence {
    /// The best start's global search ran out of budget while its best
    /// objective still fell by more than [`STILL_IMPROVING`] over the last
    /// quarter: (best at three quarters of the budget, best at the end).
    pub still_improving: Option<(f64, f64)>,
    /// All starts reached the best objective within [`STARTS_AGREE`].
    pub starts_agree: bool,
    /// The polish converged, the starts agree, and no profile found a lower
    /// objective: a minimum, at least locally.
    pub local: bool,
    /// [`Self::local`], and the global search was not still improving when
    /// its budget ran out: the fit has converged.
    pub converged: bool,
    /// The story, one line each.
    pub lines: Vec<String>,
}

impl Convergence {
    /// Judges the search of the best start, its polish and the other starts;
    /// `missed`: a profile still found a lower objective after the last
    /// re-polish; `notes` are added as they are.
    pub fn judge(search: &DeResult, starts: &[Start], best: usize, missed: bool, notes: Vec<String>) -> Convergence {
        let mut lines = Vec::new();
        let total = search.evaluations;
        let still_improving = if search.converged {
            lines.push(format!(
                "global search: its population converged (objectives within {:e} relative) after {total} evaluations",
                super::optimise::SPREAD
            ));
            None
        } else {
            let quarter = search
                .trace
                .iter()
                .rev()
                .find(|(n, _)| *n as f64 <= 0.75 * total as f64)
                .or(search.trace.first())
                .map_or(search.value, |t| t.1);
            let improving = quarter - search.value > STILL_IMPROVING;
            lines.push(format!(
                "global search: its budget of {total} evaluations ran out; over the last quarter the best objective went \
                 {quarter:.4} -> {:.4}{}",
                search.value,
                if improving { ": it was still improving" } else { "" }
            ));
            improving.then_some((quarter, search.value))
        };
        let p = &starts[best].polish;
        lines.push(format!(
            "local polish: {} after {} iterations (objective {:.6} -> {:.6}){}",
            p.reason,
            p.iterations,
            starts[best].search_value,
            p.value,
            if p.converged { "" } else { ": not converged" }
        ));
        let agree = starts.iter().filter(|s| s.value - starts[best].value <= STARTS_AGREE).count();
        let starts_agree = agree == starts.len();
        if starts.len() > 1 {
            lines.push(format!(
                "starts: {agree} of {} reached the best objective (within {STARTS_AGREE}){}",
                starts.len(),
                if starts_agree { "" } else { "; the others stopped in other minima" }
            ));
        }
        lines.extend(notes);
        let local = p.converged && starts_agree && !missed;
        let converged = local && still_improving.is_none();
        Convergence { still_improving, starts_agree, local, converged, lines }
    }
}

/// A combination of parameters the data do not fix.
#[derive(Debug, Clone, PartialEq)]
pub struct Combination {
    /// Indices of the parameters that take part (|component| ≥ 0.2).
    pub members: Vec<usize>,
    /// The direction, in the scaled parameters.
    pub direction: Vec<f64>,
    /// Linearised 95 % half-width along it, in units of the search range.
    pub half_width: f64,
    /// In words.
    pub text: String,
}

impl Combination {
    /// Names the weak direction `w` at the point `u` of `problem`.
    pub fn new(w: &Weak, problem: &FitProblem, u: &[f64]) -> Combination {
        let members: Vec<usize> = (0..w.direction.len()).filter(|&j| w.direction[j].abs() >= 0.2).collect();
        let text = describe_combination(w, problem, u, &members);
        Combination { members, direction: w.direction.clone(), half_width: w.half_width, text }
    }
}

/// The direction `w` in words: which parameter (or ratio, product or power
/// law of two) the data do fix, or which set of parameters moves together.
pub fn describe_combination(w: &Weak, problem: &FitProblem, u: &[f64], members: &[usize]) -> String {
    let name = |j: usize| problem.params[j].name.as_str();
    // Components in d ln p: moving t along the direction changes ln pⱼ by wⱼ·t.
    let ln_component = |j: usize| {
        let p = &problem.params[j];
        let value = p.value(u[j]);
        if p.log {
            Some(w.direction[j] * (p.max / p.min).ln())
        } else if value > 0.0 {
            Some(w.direction[j] * (p.max - p.min) / value)
        } else {
            None
        }
    };
    let how = if w.half_width.is_finite() { "hardly changes" } else { "does not change" };
    match members {
        [] => "no parameter stands out".into(),
        [a] => format!("{} is not determined: the fit {how} over its range", name(*a)),
        [a, b] => match (ln_component(*a), ln_component(*b)) {
            (Some(wa), Some(wb)) if wa != 0.0 && wb != 0.0 => {
                // Invariant: w_b ln p_a − w_a ln p_b, i.e. p_a / p_b^(w_a/w_b).
                let e = wa / wb;
                let kind = if (e - 1.0).abs() < 0.1 {
                    format!("only the ratio {} / {} is determined", name(*a), name(*b))
                } else if (e + 1.0).abs() < 0.1 {
                    format!("only the product {} · {} is determined", name(*a), name(*b))
                } else if e > 0.0 {
                    format!("only {} / {}^{e:.2} is determined", name(*a), name(*b))
                } else {
                    format!("only {} · {}^{:.2} is determined", name(*a), name(*b), -e)
                };
                format!("{} and {}: {kind} (moving both together, the fit {how})", name(*a), name(*b))
            }
            _ => format!("{} and {} trade off: moving both together, the fit {how}", name(*a), name(*b)),
        },
        many => {
            let parts: Vec<String> = many.iter().map(|&j| format!("{} {:+.2}", name(j), w.direction[j])).collect();
            format!("{} change together (in proportions of their ranges): the fit {how}", parts.join(", "))
        }
    }
}

/// P(χ²_dof ≥ x), None for no degrees of freedom.
pub fn chi2_survival(x: f64, dof: usize) -> Option<f64> {
    use statrs::distribution::{ChiSquared, ContinuousCDF};
    if dof == 0 || !x.is_finite() {
        return None;
    }
    ChiSquared::new(dof as f64).ok().map(|d| d.sf(x.max(0.0)))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Tabulated upper points of χ² (Abramowitz & Stegun 1964, Handbook of
    /// Mathematical Functions, table 26.8): P(χ²₁ ≥ 3.841) = 0.05,
    /// P(χ²₁₀ ≥ 18.307) = 0.05, P(χ²₄ ≥ 13.277) = 0.01.
    #[test]
    fn chi2_tail_matches_the_tables() {
        assert!((chi2_survival(3.841_458_820_694_124, 1).unwrap() - 0.05).abs() < 1e-9);
        assert!((chi2_survival(18.307, 10).unwrap() - 0.05).abs() < 1e-4);
        assert!((chi2_survival(13.277, 4).unwrap() - 0.01).abs() < 1e-4);
        assert_eq!(chi2_survival(2.0, 0), None);
    }
}
