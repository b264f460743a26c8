//! The spread of the optima of independent starts: which parameters every
//! equally good start puts in the same place (pinned down by the data), and
//! which wander from start to start, alone or together with another (a
//! trade-off). It complements the profile intervals: a profile explores
//! around one optimum, the starts sample the set of optima from afar.

use super::problem::FitProblem;
use super::quality::{STARTS_AGREE, Start};

/// Spread of a parameter across the agreeing starts, as a fraction of its
/// search range (in log units for log parameters), at or below which the
/// starts pin it down (common practice, no source: 1 % of the range is well
/// below what the search bounds resolve and above the polish's stopping
/// tolerance).
pub const PINNED: f64 = 0.01;

/// |Correlation| across the agreeing starts above which two wandering
/// parameters are said to trade off (common practice, no source).
pub const TRADE_OFF: f64 = 0.9;

/// Agreeing starts needed before a correlation is read (three points can
/// show a line; two always do).
pub const MIN_FOR_TRADE_OFF: usize = 3;

/// How the optima of the starts spread.
#[derive(Debug, Clone, PartialEq)]
pub struct OptimaSpread {
    /// Indices of the starts whose polished objective is within
    /// [`STARTS_AGREE`] of the best.
    pub agreeing: Vec<usize>,
    /// Per parameter: (lowest, highest) value among the agreeing starts.
    pub range: Vec<(f64, f64)>,
    /// Per parameter: that range as a fraction of the search range (log
    /// parameters in log units).
    pub fraction: Vec<f64>,
    /// Per parameter: pinned down by the starts (fraction ≤ [`PINNED`]).
    pub pinned: Vec<bool>,
    /// (i, j, r): parameters that are not pinned and whose positions in their
    /// ranges correlate across the agreeing starts with |r| ≥ [`TRADE_OFF`].
    pub trade_offs: Vec<(usize, usize, f64)>,
    /// The story, one line each.
    pub lines: Vec<String>,
}

/// The spread of `starts` of `problem`; None for fewer than two starts.
pub fn optima_spread(problem: &FitProblem, starts: &[Start]) -> Option<OptimaSpread> {
    if starts.len() < 2 {
        return None;
    }
    let best = starts.iter().map(|s| s.value).fold(f64::INFINITY, f64::min);
    if !best.is_finite() {
        return None;
    }
    let agreeing: Vec<usize> = (0..starts.len()).filter(|&k| starts[k].value - best <= STARTS_AGREE).collect();
    let dim = problem.params.len();
    // Positions in the unit cube: log parameters in log units.
    let unit = |k: usize, j: usize| problem.params[j].unit(starts[k].values[j]);
    let mut range = Vec::with_capacity(dim);
    let mut fraction = Vec::with_capacity(dim);
    for j in 0..dim {
        let values = agreeing.iter().map(|&k| starts[k].values[j]);
        let lo = values.clone().fold(f64::INFINITY, f64::min);
        let hi = values.fold(f64::NEG_INFINITY, f64::max);
        range.push((lo, hi));
        fraction.push((problem.params[j].unit(hi) - problem.params[j].unit(lo)).abs());
    }
    let pinned: Vec<bool> = fraction.iter().map(|&f| f <= PINNED).collect();
    let mut trade_offs = Vec::new();
    if agreeing.len() >= MIN_FOR_TRADE_OFF {
        for i in 0..dim {
            for j in i + 1..dim {
                if pinned[i] || pinned[j] {
                    continue;
                }
                let a: Vec<f64> = agreeing.iter().map(|&k| unit(k, i)).collect();
                let b: Vec<f64> = agreeing.iter().map(|&k| unit(k, j)).collect();
                if let Some(r) = correlation(&a, &b)
                    && r.abs() >= TRADE_OFF
                {
                    trade_offs.push((i, j, r));
                }
            }
        }
    }
    let lines = describe(problem, starts.len(), &agreeing, &range, &fraction, &pinned, &trade_offs);
    Some(OptimaSpread { agreeing, range, fraction, pinned, trade_offs, lines })
}

/// Pearson's correlation; None when either side does not vary.
fn correlation(a: &[f64], b: &[f64]) -> Option<f64> {
    let n = a.len() as f64;
    let (ma, mb) = (a.iter().sum::<f64>() / n, b.iter().sum::<f64>() / n);
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    (saa > 0.0 && sbb > 0.0).then(|| sab / (saa * sbb).sqrt())
}

fn describe(
    problem: &FitProblem,
    total: usize,
    agreeing: &[usize],
    range: &[(f64, f64)],
    fraction: &[f64],
    pinned: &[bool],
    trade_offs: &[(usize, usize, f64)],
) -> Vec<String> {
    let name = |j: usize| problem.params[j].name.as_str();
    let mut lines = vec![format!(
        "optima of the starts: {} of {total} reached the best objective (within {STARTS_AGREE}); over those:",
        agreeing.len()
    )];
    if agreeing.len() < 2 {
        lines.push("  only one start reached the best: the spread of the optima is unknown; give more starts".into());
        return lines;
    }
    for j in 0..range.len() {
        let (lo, hi) = range[j];
        let verdict = if pinned[j] {
            "pinned down".to_string()
        } else {
            let partners: Vec<String> = trade_offs
                .iter()
                .filter(|t| t.0 == j || t.1 == j)
                .map(|&(a, b, r)| format!("{} (r = {r:+.2})", name(if a == j { b } else { a })))
                .collect();
            if partners.is_empty() {
                "spread: the starts do not pin it down".to_string()
            } else {
                format!("spread, trading off with {}", partners.join(", "))
            }
        };
        lines.push(format!(
            "  {:<28} {lo:.5} … {hi:.5} ({:.2} % of its range): {verdict}",
            name(j),
            100.0 * fraction[j]
        ));
    }
    if agreeing.len() < MIN_FOR_TRADE_OFF && pinned.iter().any(|p| !p) {
        lines.push(format!(
            "  trade-offs are read from {MIN_FOR_TRADE_OFF} or more agreeing starts; give more starts to see them"
        ));
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::correlation;

    #[test]
    fn correlation_of_lines_and_constants() {
        assert!((correlation(&[1.0, 2.0, 3.0], &[2.0, 4.0, 6.0]).unwrap() - 1.0).abs() < 1e-15);
        assert!((correlation(&[1.0, 2.0, 3.0], &[3.0, 2.0, 1.0]).unwrap() + 1.0).abs() < 1e-15);
        assert_eq!(correlation(&[1.0, 1.0, 1.0], &[1.0, 2.0, 3.0]), None);
    }
}
