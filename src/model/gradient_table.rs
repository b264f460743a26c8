//! Gradients from measurements: a table of position and level (for example
//! the profile table `measure` writes beside its boundaries), averaged where
//! several rows share a position, as the unit shape of a gradient.

use std::path::Path;

/// Reads `path`: a CSV with a `level` column and a `position_pct` (% of
/// `extent_um`, the length the distance from the source runs along) or
/// `position_um` column;
/// with a `gene` column, the rows of `gene` (which must then be named when
/// the table holds more than one). Returns (distance from the source, µm;
/// mean level) in increasing distance, at least two points.
///
/// # Errors
/// A sentence on what is wrong with the file.
pub fn read(path: &Path, gene: Option<&str>, extent_um: f64) -> Result<Vec<(f64, f64)>, String> {
    let mut reader = csv::ReaderBuilder::new()
        .flexible(false)
        .from_path(path)
        .map_err(|e| format!("`{}` cannot be read: {e}", path.display()))?;
    let headers: Vec<String> =
        reader.headers().map_err(|e| e.to_string())?.iter().map(|h| h.trim().to_string()).collect();
    let col = |name: &str| headers.iter().position(|h| h == name);
    let level = col("level")
        .ok_or_else(|| format!("`{}` has no `level` column (it has: {})", path.display(), headers.join(", ")))?;
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
    let mut rows: Vec<(f64, f64, String)> = Vec::new();
    for (line, rec) in reader.records().enumerate() {
        let rec = rec.map_err(|e| format!("`{}`: {e}", path.display()))?;
        let number = |k: usize, what: &str| -> Result<f64, String> {
            let text = rec.get(k).unwrap_or("").trim();
            text.parse::<f64>().ok().filter(|v| v.is_finite()).ok_or_else(|| {
                format!("`{}` line {}: {what} `{text}` is not a finite number", path.display(), line + 2)
            })
        };
        let x = number(position, "position")? * scale;
        let v = number(level, "level")?;
        if v < 0.0 {
            return Err(format!("`{}` line {}: level {v} is below 0", path.display(), line + 2));
        }
        let g = gene_col.map(|k| rec.get(k).unwrap_or("").trim().to_string()).unwrap_or_default();
        rows.push((x, v, g));
    }
    if let Some(_k) = gene_col {
        let mut genes: Vec<&str> = rows.iter().map(|r| r.2.as_str()).collect();
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
                rows.retain(|r| r.2 == want);
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
    rows.sort_by(|a, b| a.0.total_cmp(&b.0));
    // Rows at one position (several embryos) are averaged.
    let mut points: Vec<(f64, f64, usize)> = Vec::new();
    for (x, v, _) in rows {
        match points.last_mut() {
            Some(p) if p.0 == x => {
                p.1 += v;
                p.2 += 1;
            }
            _ => points.push((x, v, 1)),
        }
    }
    if points.len() < 2 {
        return Err(format!("`{}` gives fewer than two positions; a profile needs at least two", path.display()));
    }
    Ok(points.into_iter().map(|(x, sum, n)| (x, sum / n as f64)).collect())
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
}
