//! Sharded sweeps: shard k of n runs the points whose index is k − 1 modulo
//! n (so every shard gets points from all over the grid) and saves them in
//! `shards/sweep-k-of-n.json`, written whole or not at all; a shard whose
//! file is there and matches the model and axes is not run again. Merging
//! reads every shard, checks that they belong together and that none is
//! missing, and gives back the whole sweep, from which the tables and the
//! picture come out exactly as from an unsharded run.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::{Axis, PatternClass, Point, Sweep, run_sweep_points};
use crate::model::Model;
use crate::progress::Progress;
use crate::readout::{Boundary, Domain};

/// Which shard: k of n, 1 ≤ k ≤ n.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    /// This shard, from 1.
    pub k: usize,
    /// How many.
    pub n: usize,
}

/// A shard that cannot be run or merged.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ShardError {
    /// `--shard` written wrongly.
    #[error("--shard `{0}`: write K/N with 1 <= K <= N, e.g. 3/7")]
    Spec(String),
    /// A shard file that cannot be read or does not belong.
    #[error("{}: {why}", path.display())]
    Bad {
        /// The shard file.
        path: PathBuf,
        /// What is wrong and how to fix it.
        why: String,
    },
    /// Shards missing from a merge.
    #[error("{} of {total} shards are missing or incomplete in {}: {}; run them with:\n{}", missing.len(), dir.display(), missing.iter().map(usize::to_string).collect::<Vec<_>>().join(", "), commands.join("\n"))]
    Missing {
        /// The shards folder.
        dir: PathBuf,
        /// How many shards there are.
        total: usize,
        /// Which are missing (k).
        missing: Vec<usize>,
        /// The command that runs each.
        commands: Vec<String>,
    },
    /// No shard at all.
    #[error("{}: no shard files (shards/sweep-K-of-N.json); run `anlage sweep … --shard K/N -o {}` first", dir.display(), dir.display())]
    Empty {
        /// The output folder.
        dir: PathBuf,
    },
}

impl Shard {
    /// Reads `K/N`.
    ///
    /// # Errors
    /// [`ShardError::Spec`].
    pub fn parse(text: &str) -> Result<Shard, ShardError> {
        let bad = || ShardError::Spec(text.into());
        let (k, n) = text.split_once('/').ok_or_else(bad)?;
        let (k, n): (usize, usize) = (k.trim().parse().map_err(|_| bad())?, n.trim().parse().map_err(|_| bad())?);
        if k == 0 || k > n {
            return Err(bad());
        }
        Ok(Shard { k, n })
    }

    /// Its file in output folder `dir`.
    pub fn file(&self, dir: &Path) -> PathBuf {
        dir.join("shards").join(format!("sweep-{}-of-{}.json", self.k, self.n))
    }

    /// The grid points it runs, of `total`.
    pub fn points(&self, total: usize) -> impl Iterator<Item = usize> + '_ {
        (self.k - 1..total).step_by(self.n)
    }
}

/// One point as a shard file keeps it: what the tables and the picture need.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
struct SavedPoint {
    index: usize,
    values: Vec<f64>,
    class: String,
    failure: Option<String>,
    /// (time, gene, direction, µm, %).
    boundaries: Vec<(f64, String, String, f64, f64)>,
    domains: Vec<Domain>,
}

/// A shard file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
struct SavedShard {
    kind: String,
    model_text_sha256: String,
    model_file: String,
    axes: Vec<String>,
    k: usize,
    n: usize,
    total_points: usize,
    points: Vec<SavedPoint>,
}

fn class_named(name: &str) -> Option<PatternClass> {
    PatternClass::ALL.into_iter().find(|c| c.name() == name)
}

/// The saved form of a point.
fn save(index: usize, p: &Point) -> SavedPoint {
    SavedPoint {
        index,
        values: p.values.clone(),
        class: p.class.name().into(),
        failure: p.failure.clone(),
        boundaries: p
            .boundaries
            .iter()
            .map(|b| (b.time_min, b.gene.clone(), b.direction.to_string(), b.position_um, b.position_pct))
            .collect(),
        domains: p.domains.clone(),
    }
}

/// Runs shard `shard` of the sweep of `model` over `axes` (written on the
/// command line as `axes_text`) into `dir`, unless its file is already there
/// and made from the same model text and axes. Returns whether it ran.
///
/// # Errors
/// [`ShardError::Bad`] if the file cannot be written.
pub fn run_shard(
    model: &Model,
    axes: &[Axis],
    axes_text: &[String],
    shard: Shard,
    dir: &Path,
    progress: &dyn Progress,
) -> Result<bool, ShardError> {
    let path = shard.file(dir);
    let sha = crate::replicates::text_sha256(&model.text);
    if let Ok(old) = read_shard(&path)
        && old.model_text_sha256 == sha
        && old.axes == axes_text
    {
        return Ok(false);
    }
    let total: usize = axes.iter().map(|a| a.values.len()).product();
    let indices: Vec<usize> = shard.points(total).collect();
    let points = run_sweep_points(model, axes, &indices, true, progress);
    let saved = SavedShard {
        kind: "sweep shard".into(),
        model_text_sha256: sha,
        model_file: model.file.display().to_string(),
        axes: axes_text.to_vec(),
        k: shard.k,
        n: shard.n,
        total_points: total,
        points: indices.iter().zip(&points).map(|(&i, p)| save(i, p)).collect(),
    };
    let bad = |why: String| ShardError::Bad { path: path.clone(), why };
    std::fs::create_dir_all(dir.join("shards")).map_err(|e| bad(e.to_string()))?;
    crate::export::write_atomic(&path, |w| serde_json::to_writer(w, &saved).map_err(std::io::Error::other))
        .map_err(|e| bad(e.to_string()))?;
    Ok(true)
}

fn read_shard(path: &Path) -> Result<SavedShard, ShardError> {
    let bad = |why: String| ShardError::Bad { path: path.to_path_buf(), why };
    let text = std::fs::read_to_string(path).map_err(|e| bad(e.to_string()))?;
    let s: SavedShard =
        serde_json::from_str(&text).map_err(|e| bad(format!("not a sweep shard ({e}); run it again")))?;
    if s.kind != "sweep shard" {
        return Err(bad("not a sweep shard; run it again".into()));
    }
    Ok(s)
}

/// Merges the shards in `dir/shards` of the sweep of `model` over `axes`
/// (written on the command line as `axes_text`) into the whole sweep.
///
/// # Errors
/// [`ShardError::Missing`] naming the missing shards and the command that
/// runs each; [`ShardError::Bad`] for a shard of another model, other axes
/// or another count, or one that lacks points; [`ShardError::Empty`].
pub fn merge(model: &Model, axes: &[Axis], axes_text: &[String], dir: &Path) -> Result<Sweep, ShardError> {
    let folder = dir.join("shards");
    let mut files: Vec<PathBuf> =
        std::fs::read_dir(&folder).map(|rd| rd.filter_map(Result::ok).map(|e| e.path()).collect()).unwrap_or_default();
    files.retain(|p| p.extension().is_some_and(|e| e == "json"));
    files.sort();
    let sha = crate::replicates::text_sha256(&model.text);
    let mut n = None;
    let mut by_k: Vec<Option<SavedShard>> = Vec::new();
    for path in files {
        // A shard that cannot be read (cut short) counts as missing.
        let Ok(s) = read_shard(&path) else { continue };
        let bad = |why: String| ShardError::Bad { path: path.clone(), why };
        if s.model_text_sha256 != sha || s.axes != axes_text {
            return Err(bad(
                "made from another model or other axes than this command (delete the shards folder and rerun)".into(),
            ));
        }
        let total = *n.get_or_insert(s.n);
        if s.n != total {
            return Err(bad(format!(
                "one of {} shards, where others are of {total} (delete the shards folder and rerun)",
                s.n
            )));
        }
        let want = Shard { k: s.k, n: total }.points(s.total_points).count();
        if s.points.len() != want {
            return Err(bad("incomplete; run it again".into()));
        }
        by_k.resize(total, None);
        let k = s.k;
        by_k[k - 1] = Some(s);
    }
    let Some(total) = n else { return Err(ShardError::Empty { dir: dir.to_path_buf() }) };
    let missing: Vec<usize> = (1..=total).filter(|k| by_k[k - 1].is_none()).collect();
    if !missing.is_empty() {
        let axes_args: Vec<String> = axes_text.iter().map(|a| format!("--axis '{a}'")).collect();
        let commands = missing
            .iter()
            .map(|k| {
                format!(
                    "  anlage sweep '{}' {} --shard {k}/{total} -o '{}'",
                    model.file.display(),
                    axes_args.join(" "),
                    dir.display()
                )
            })
            .collect();
        return Err(ShardError::Missing { dir: folder, total, missing, commands });
    }
    let mut points: Vec<SavedPoint> = by_k.into_iter().flatten().flat_map(|s| s.points).collect();
    points.sort_by_key(|p| p.index);
    let points = points
        .into_iter()
        .map(|p| Point {
            class: class_named(&p.class).unwrap_or(PatternClass::Failed),
            values: p.values,
            failure: p.failure,
            boundaries: p
                .boundaries
                .into_iter()
                .map(|(time_min, gene, direction, position_um, position_pct)| Boundary {
                    time_min,
                    gene,
                    direction: if direction == "rising" { "rising" } else { "falling" },
                    position_um,
                    position_pct,
                    steepness_per_um: f64::NAN,
                    width_um: f64::NAN,
                })
                .collect(),
            domains: p.domains,
        })
        .collect();
    Ok(Sweep { points, ..super::empty_sweep(model, axes) })
}
