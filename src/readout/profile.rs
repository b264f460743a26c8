//! Half-maximum crossings and domains of one profile along the axis.
//!
//! Nucleus i sits at x_i = (i + ½)h. Level θ = ½·max(profile); nucleus i is
//! "high" when p_i ≥ θ. A crossing between i and i+1 lies at
//! `x_i + h·(θ − p_i)/(p_{i+1} − p_i)`.

pub use crate::model::Level;

/// One half-maximum crossing.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    /// Position, µm.
    pub position_um: f64,
    /// True if the level rises going along the axis.
    pub rising: bool,
    /// |slope| / max at the crossing, 1/µm.
    pub steepness_per_um: f64,
    /// Width of a linear ramp from 0 to max with the crossing's slope, max/|slope|, µm.
    pub width_um: f64,
}

/// One run of high nuclei.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Span {
    /// Start, µm.
    pub start_um: f64,
    /// End, µm.
    pub end_um: f64,
    /// Width, µm.
    pub width_um: f64,
}

fn level(profile: &[f64], at: Level) -> Option<(f64, f64)> {
    let max = profile.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    at.threshold(max).map(|theta| (theta, max))
}

/// Position where the segment i → i+1 (indices mod n) crosses `theta`, µm.
fn cross_at(profile: &[f64], i: usize, theta: f64, h: f64) -> f64 {
    let n = profile.len();
    let (a, b) = (profile[i], profile[(i + 1) % n]);
    (i as f64 + 0.5) * h + h * (theta - a) / (b - a)
}

/// Every half-maximum crossing of `profile` (spacing `h` µm).
pub fn profile_boundaries(profile: &[f64], h: f64, periodic: bool) -> Vec<Crossing> {
    boundaries_at_level(profile, Level::HALF_MAX, h, periodic)
}

/// Every crossing of `profile` (spacing `h` µm) through the level `at`.
pub fn boundaries_at_level(profile: &[f64], at: Level, h: f64, periodic: bool) -> Vec<Crossing> {
    let Some((theta, max)) = level(profile, at) else {
        return Vec::new();
    };
    let n = profile.len();
    let segments = if periodic { n } else { n - 1 };
    let mut out = Vec::new();
    for i in 0..segments {
        let (a, b) = (profile[i], profile[(i + 1) % n]);
        if (a >= theta) == (b >= theta) {
            continue;
        }
        let rising = b > a;
        let mut position_um = cross_at(profile, i, theta, h);
        if position_um >= n as f64 * h {
            position_um -= n as f64 * h;
        }
        let steepness_per_um = (b - a).abs() / h / max;
        out.push(Crossing { position_um, rising, steepness_per_um, width_um: 1.0 / steepness_per_um });
    }
    out
}

/// Every run of nuclei at or above half maximum.
pub fn profile_domains(profile: &[f64], h: f64, periodic: bool) -> Vec<Span> {
    domains_at_level(profile, Level::HALF_MAX, h, periodic)
}

/// Every run of nuclei at or above the level `at`.
pub fn domains_at_level(profile: &[f64], at: Level, h: f64, periodic: bool) -> Vec<Span> {
    let Some((theta, _)) = level(profile, at) else {
        return Vec::new();
    };
    let n = profile.len();
    let length = n as f64 * h;
    let high: Vec<bool> = profile.iter().map(|p| *p >= theta).collect();
    if high.iter().all(|x| *x) {
        return vec![Span { start_um: 0.0, end_um: length, width_um: length }];
    }
    let mut spans = Vec::new();
    let mut i = 0;
    while i < n {
        if !high[i] {
            i += 1;
            continue;
        }
        let start = i;
        while i < n && high[i] {
            i += 1;
        }
        let start_um = if start == 0 { 0.0 } else { cross_at(profile, start - 1, theta, h) };
        let end_um = if i == n { length } else { cross_at(profile, i - 1, theta, h) };
        spans.push(Span { start_um, end_um, width_um: end_um - start_um });
    }
    if periodic && spans.len() > 1 && high[0] && high[n - 1] {
        // The first and last runs are one domain that wraps around x = L.
        let first = spans.remove(0);
        let last = spans.last_mut().expect("more than one span");
        *last = Span { start_um: last.start_um, end_um: first.end_um, width_um: length - last.start_um + first.end_um };
    }
    spans
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn linear_ramp_crosses_at_half() {
        // p_i = i on 11 nuclei, max 10: half at p = 5 = nucleus 5, x = 5.5 h.
        let p: Vec<f64> = (0..11).map(|i| i as f64).collect();
        let c = profile_boundaries(&p, 2.0, false);
        assert_eq!(c.len(), 1);
        assert!(c[0].rising);
        assert_relative_eq!(c[0].position_um, 11.0);
        assert_relative_eq!(c[0].steepness_per_um, 0.05);
        // Ramp of slope 1 per nucleus to max 10: 10 nuclei = 20 µm.
        assert_relative_eq!(c[0].width_um, 20.0);
    }

    #[test]
    fn stripe_gives_two_boundaries_and_one_domain() {
        let p = [0.0, 0.0, 1.0, 4.0, 4.0, 1.0, 0.0];
        let c = profile_boundaries(&p, 1.0, false);
        assert_eq!(c.len(), 2);
        assert!(c[0].rising && !c[1].rising);
        assert_relative_eq!(c[0].position_um, 2.5 + 1.0 / 3.0);
        assert_relative_eq!(c[1].position_um, 4.5 + 2.0 / 3.0);
        let d = profile_domains(&p, 1.0, false);
        assert_eq!(d.len(), 1);
        assert_relative_eq!(d[0].width_um, 4.5 + 2.0 / 3.0 - 2.5 - 1.0 / 3.0);
    }

    #[test]
    fn blank_and_flat_profiles_have_no_boundaries() {
        assert!(profile_boundaries(&[0.0; 5], 1.0, false).is_empty());
        assert!(profile_boundaries(&[3.0; 5], 1.0, false).is_empty());
        assert_eq!(profile_domains(&[3.0; 5], 1.0, false).len(), 1);
    }

    #[test]
    fn domain_touching_edge_starts_at_zero() {
        let p = [5.0, 5.0, 4.0, 0.0, 0.0];
        let d = profile_domains(&p, 1.0, false);
        assert_eq!(d.len(), 1);
        assert_eq!(d[0].start_um, 0.0);
        assert_relative_eq!(d[0].end_um, 2.5 + 1.5 / 4.0);
    }
}
