//! Gradients from measurements: a table of position and level (for example
//! the profile table `measure` writes beside its boundaries), averaged where
//! several rows share a position, as the unit shape of a gradient.

use std::path::Path;

/// A table read: one profile, or one per time.
#[derive(Debug, Clone, PartialEq)]
pub enum Profiles {
    /// (distance from the source, µm; mean level), increasing distance.
    Static(Vec<(f64, f64)>),
    /// (time, min; a profile as in `Static`), increasing time, at least two.
    Timed(Vec<(f64, Vec<(f64, f64)>)>),
}

/// The time of a wide table's level column, `level_<T>min` (e.g.
/// `level_30min`), if `header` is one.
fn level_column_time(header: &str) -> Option<f64> {
    header.strip_prefix("level_")?.strip_suffix("min")?.parse::<f64>().ok().filter(|t| t.is_finite())
}

/// Reads `path`: a CSV with a `position_pct` (% of `extent_um`, the length
/// the distance from the source runs along) or `position_um` column and
///
/// - a `level` column: one profile; with a `time_min` column as well, one
///   profile per time (a tidy table);
/// - or one `level_<T>min` column per time T (a wide table).
///
/// With a `gene` column, the rows of `gene` (which must then be named when
/// the table holds more than one). Rows at one position and time are
/// averaged; each profile needs at least two positions.
///
/// # Errors
/// A sentence on what is wrong with the file.
pub fn read(path: &Path, gene: Option<&str>, extent_um: f64) -> Result<Profiles, String> {
    let mut reader = csv::ReaderBuilder::new()
        .flexible(false)
        .from_path(path)
        .map_err(|e| format!("`{}` cannot be read: {e}", path.display()))?;
    let headers: Vec<String> =
        reader.headers().map_err(|e| e.to_string())?.iter().map(|h| h.trim().to_string()).collect();
    let col = |name: &str| headers.iter().position(|h| h == name);
    // Level columns, each with its time (None: the one `level` column, whose
    // time is in `time_min` when there is one).
    let wide: Vec<(usize, f64)> =
        headers.iter().enumerate().filter_map(|(k, h)| level_column_time(h).map(|t| (k, t))).collect();
    let levels: Vec<(usize, Option<f64>)> = match (col("level"), wide.is_empty()) {
        (Some(k), true) => vec![(k, None)],
        (None, false) => wide.iter().map(|&(k, t)| (k, Some(t))).collect(),
        (Some(_), false) => {
            return Err(format!(
                "`{}` has both a `level` column and `level_<T>min` columns; keep one form",
                path.display()
            ));
        }
        (None, true) => {
            return Err(format!(
                "`{}` has no `level` column and no `level_<T>min` columns (it has: {})",
                path.display(),
                headers.join(", ")
            ));
        }
    };
    let time_col = col("time_min");
    if time_col.is_some() && !wide.is_empty() {
        return Err(format!(
            "`{}` has a `time_min` column and `level_<T>min` columns; use one way of giving times",
            path.display()
        ));
    }
    let (position, scale) = match (col("position_pct"), col("position_um")) {
        (Some(_), Some(_)) => {
            return Err(format!("`{}` has both position_pct and position_um; keep one", path.display()));
        }
        (Some(k), None) => (k, extent_um / 100.0),
        (None, Some(k)) => (k, 1.0),
        (None, None) => {
            return Err(format!("`{}` has neither a `position_pct` nor a `position_um` column", path.display()));
        }
    };
    let gene_col = col("gene");
    // (time, position, level, gene); time 0 for a single profile.
    let mut rows: Vec<(f64, f64, f64, String)> = Vec::new();
    for (line, rec) in reader.records().enumerate() {
        let rec = rec.map_err(|e| format!("`{}`: {e}", path.display()))?;
        let number = |k: usize, what: &str| -> Result<f64, String> {
            let text = rec.get(k).unwrap_or("").trim();
            text.parse::<f64>().ok().filter(|v| v.is_finite()).ok_or_else(|| {
                format!("`{}` line {}: {what} `{text}` is not a finite number", path.display(), line + 2)
            })
        };
        let x = number(position, "position")? * scale;
        let g = gene_col.map(|k| rec.get(k).unwrap_or("").trim().to_string()).unwrap_or_default();
        for &(k, t) in &levels {
            let v = number(k, &format!("{}", headers[k]))?;
            if v < 0.0 {
                return Err(format!("`{}` line {}: {} {v} is below 0", path.display(), line + 2, headers[k]));
            }
            let t = match (t, time_col) {
                (Some(t), _) => t,
                (None, Some(tc)) => number(tc, "time_min")?,
                (None, None) => 0.0,
            };
            rows.push((t, x, v, g.clone()));
        }
    }
    if let Some(_k) = gene_col {
        let mut genes: Vec<&str> = rows.iter().map(|r| r.3.as_str()).collect();
        genes.sort_unstable();
        genes.dedup();
        match gene {
            Some(want) => {
                if !genes.contains(&want) {
                    return Err(format!(
                        "`{}` has no rows of gene `{want}` (it has: {})",
                        path.display(),
                        genes.join(", ")
                    ));
                }
                rows.retain(|r| r.3 == want);
            }
            None if genes.len() > 1 => {
                return Err(format!(
                    "`{}` holds the genes {}; name the one to use with table_gene",
                    path.display(),
                    genes.join(", ")
                ));
            }
            None => {}
        }
    } else if let Some(want) = gene {
        return Err(format!("`{}` has no `gene` column, so table_gene = \"{want}\" cannot be used", path.display()));
    }
    rows.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
    // Rows at one time and position (several embryos) are averaged.
    let mut frames: Vec<(f64, Vec<(f64, f64, usize)>)> = Vec::new();
    for (t, x, v, _) in rows {
        if frames.last().is_none_or(|f| f.0 != t) {
            frames.push((t, Vec::new()));
        }
        let points = &mut frames.last_mut().expect("pushed").1;
        match points.last_mut() {
            Some(p) if p.0 == x => {
                p.1 += v;
                p.2 += 1;
            }
            _ => points.push((x, v, 1)),
        }
    }
    let mut out: Vec<(f64, Vec<(f64, f64)>)> = Vec::new();
    for (t, points) in frames {
        if points.len() < 2 {
            let at = if out.is_empty() && time_col.is_none() && wide.is_empty() {
                String::new()
            } else {
                format!(" at t = {t} min")
            };
            return Err(format!(
                "`{}` gives fewer than two positions{at}; a profile needs at least two",
                path.display()
            ));
        }
        out.push((t, points.into_iter().map(|(x, sum, n)| (x, sum / n as f64)).collect()));
    }
    match out.len() {
        0 => Err(format!("`{}` gives fewer than two positions; a profile needs at least two", path.display())),
        1 => Ok(Profiles::Static(out.pop().expect("one profile").1)),
        _ => Ok(Profiles::Timed(out)),
    }
}

/// The level at distance `d_um` and time `t_min` of profiles given at
/// increasing times: linear in time between the two profiles around `t_min`
/// (each linear in distance, [`level_at`]), held before the first and after
/// the last.
pub fn level_in_time(frames: &[(f64, std::sync::Arc<[(f64, f64)]>)], d_um: f64, t_min: f64) -> f64 {
    let k = frames.partition_point(|f| f.0 <= t_min);
    if k == 0 {
        return level_at(&frames[0].1, d_um);
    }
    if k >= frames.len() {
        return level_at(&frames[frames.len() - 1].1, d_um);
    }
    let ((t0, p0), (t1, p1)) = (&frames[k - 1], &frames[k]);
    let w = (t_min - t0) / (t1 - t0);
    (1.0 - w) * level_at(p0, d_um) + w * level_at(p1, d_um)
}

/// The value at `d_um` of the piecewise-linear function through `points`
/// (increasing first coordinates, at least one point): linear between them,
/// held at the first and last beyond. A table's level at a distance; also a
/// gradient's amplitude time course.
pub fn level_at(points: &[(f64, f64)], d_um: f64) -> f64 {
    let k = points.partition_point(|p| p.0 <= d_um);
    if k == 0 {
        return points[0].1;
    }
    if k >= points.len() {
        return points[points.len() - 1].1;
    }
    let ((x0, v0), (x1, v1)) = (points[k - 1], points[k]);
    v0 + (v1 - v0) * (d_um - x0) / (x1 - x0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn interpolates_and_holds_ends() {
        let p = [(0.0, 4.0), (10.0, 2.0), (30.0, 0.0)];
        assert_eq!(level_at(&p, -5.0), 4.0);
        assert_eq!(level_at(&p, 5.0), 3.0);
        assert_eq!(level_at(&p, 20.0), 1.0);
        assert_eq!(level_at(&p, 99.0), 0.0);
    }

    #[test]
    fn profiles_blend_linearly_in_time() {
        let a: std::sync::Arc<[(f64, f64)]> = vec![(0.0, 4.0), (10.0, 0.0)].into();
        let b: std::sync::Arc<[(f64, f64)]> = vec![(0.0, 8.0), (10.0, 2.0)].into();
        let frames = [(10.0, a), (30.0, b)];
        assert_eq!(level_in_time(&frames, 5.0, 0.0), 2.0);
        assert_eq!(level_in_time(&frames, 5.0, 20.0), 3.5);
        assert_eq!(level_in_time(&frames, 5.0, 99.0), 5.0);
        assert_eq!(level_column_time("level_30min"), Some(30.0));
        assert_eq!(level_column_time("level_2.5min"), Some(2.5));
        assert_eq!(level_column_time("levels"), None);
    }
}
