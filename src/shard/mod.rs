//! Sharded jobs: any job made of independent items (sweep points, mutants,
//! parameters, fit starts) can be cut into shards that run alone, on any
//! machine, from the same model file, and merged into exactly the result of
//! an unsharded run.
//!
//! Shard k of n runs the items whose index is k − 1 modulo n, so every shard
//! gets items from all over the job, and saves them in
//! `OUT/shards/KIND-k-of-n.json`, always written whole (a temporary file
//! renamed into place). The file is rewritten, marked incomplete, at most
//! every [`SAVE_EVERY`] while the shard runs, so a task killed outright
//! (SIGKILL, out of memory, a lost node) loses only the items of its last
//! seconds. A shard stopped by a signal (a scheduler ending or preempting the
//! task) finishes the items in flight, saves, and stops; started again, a
//! shard runs only the items its file lacks; a complete shard of the same job
//! is not run again. Merging checks that the shards belong to this job (model
//! text, settings, count) and that none is missing or incomplete, and lists
//! those with the command that reruns each.

pub mod slurm;

use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use rayon::prelude::*;
use serde::de::DeserializeOwned;
use serde::{Deserialize, Serialize};

use crate::progress::{Counter, Progress};

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
    /// A shard file that cannot be read, written or does not belong.
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
    #[error("{}: no shard files ({kind}-K-of-N.json); run `{rerun} --shard K/N` first", dir.display())]
    Empty {
        /// The shards folder.
        dir: PathBuf,
        /// The job's kind.
        kind: String,
        /// The command without `--shard`.
        rerun: String,
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

    /// The items it runs, of `total`.
    pub fn items(&self, total: usize) -> impl Iterator<Item = usize> + '_ {
        (self.k - 1..total).step_by(self.n)
    }
}

/// What identifies a sharded job: shards of another job are refused.
#[derive(Debug, Clone, PartialEq)]
pub struct Job {
    /// What the items are, also the shard files' prefix ("sweep", "screen").
    pub kind: &'static str,
    /// SHA-256 of the model text and of what it reads from other files
    /// ([`crate::model::Model::inputs_sha256`]).
    pub model_sha256: String,
    /// The model file, for messages.
    pub model_file: String,
    /// Everything else the items depend on, in words (axes, mutants, step).
    pub settings: Vec<String>,
    /// How many items.
    pub total: usize,
    /// The command that runs the job, without `--shard` (for messages).
    pub rerun: String,
}

impl Job {
    /// A job of `kind` on `model` with `settings`, `total` items, rerun by `rerun`.
    pub fn new(
        kind: &'static str,
        model: &crate::model::Model,
        settings: Vec<String>,
        total: usize,
        rerun: String,
    ) -> Job {
        Job {
            kind,
            model_sha256: model.inputs_sha256(),
            model_file: model.file.display().to_string(),
            settings,
            total,
            rerun,
        }
    }

    /// The file of shard `shard` in output folder `dir`.
    pub fn file(&self, dir: &Path, shard: Shard) -> PathBuf {
        dir.join("shards").join(format!("{}-{}-of-{}.json", self.kind, shard.k, shard.n))
    }
}

/// This build's version, written into every shard file.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");

/// At most this many characters of a setting are quoted in a message.
const QUOTE: usize = 160;

/// `text`, cut to [`QUOTE`] characters with "…" when longer.
fn quoted(text: &str) -> String {
    match text.char_indices().nth(QUOTE) {
        Some((cut, _)) => format!("{}…", &text[..cut]),
        None => text.to_string(),
    }
}

/// How often a running shard saves what it has finished.
pub const SAVE_EVERY: Duration = Duration::from_secs(2);

/// A shard file; `I` is the list of (index, item), owned when read and
/// borrowed when written.
#[derive(Debug, Clone, Serialize, Deserialize)]
struct ShardFile<I> {
    kind: String,
    /// The anlage version that ran it: shards of two versions are not merged.
    anlage: String,
    model_sha256: String,
    model_file: String,
    settings: Vec<String>,
    k: usize,
    n: usize,
    total: usize,
    /// False when the shard was stopped before all its items ran.
    complete: bool,
    /// (index, item), by index.
    items: I,
}

impl<I> ShardFile<I> {
    fn belongs_to(&self, job: &Job) -> bool {
        self.differs_from(job).is_none()
    }

    /// How this shard differs from `job`, in words with the fix, if it does.
    fn differs_from(&self, job: &Job) -> Option<String> {
        if self.kind != job.kind {
            return Some(format!("a {} shard, not a {} shard", self.kind, job.kind));
        }
        if self.anlage != VERSION {
            return Some(format!(
                "made by anlage {}, and this is anlage {VERSION}: run every shard with one version \
                 (delete the shards and run them again)",
                self.anlage
            ));
        }
        if self.model_sha256 != job.model_sha256 {
            return Some(format!(
                "made from another model (this shard ran on {} and the files it reads as they were then; \
                 {} or a file it reads, such as an initial_file, has changed since): restore them, \
                 or delete the shards and run them again",
                self.model_file, job.model_file
            ));
        }
        if self.settings != job.settings {
            let fix = "give the options the shards ran with, or delete the shards and run them again";
            let differs = match self.settings.iter().zip(&job.settings).find(|(a, b)| a != b) {
                Some((theirs, ours)) => format!(
                    "made with other settings: `{}` where this {} has `{}`",
                    quoted(theirs),
                    job.kind,
                    quoted(ours)
                ),
                None if self.settings.len() > job.settings.len() => format!(
                    "made with more settings than this {} ({} against {}), the first extra being `{}`",
                    job.kind,
                    self.settings.len(),
                    job.settings.len(),
                    quoted(&self.settings[job.settings.len()])
                ),
                None => format!(
                    "made with fewer settings than this {} ({} against {}): it lacks `{}`",
                    job.kind,
                    self.settings.len(),
                    job.settings.len(),
                    quoted(&job.settings[self.settings.len()])
                ),
            };
            return Some(format!("{differs}; {fix}"));
        }
        if self.total != job.total {
            return Some(format!("a job of {} items where this one has {}", self.total, job.total));
        }
        None
    }
}

/// How a shard run ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Ran {
    /// All its items ran (some may come from an earlier, stopped run).
    Done,
    /// Its file was already complete: nothing ran.
    AlreadyComplete,
    /// Stopped by a signal: `done` of `of` items are saved; run it again to finish.
    Stopped {
        /// Items saved.
        done: usize,
        /// Items of the shard.
        of: usize,
    },
}

type Items<T> = Vec<(usize, T)>;

fn read<T: DeserializeOwned>(path: &Path, kind: &str) -> Result<ShardFile<Items<T>>, ShardError> {
    let bad = |why: String| ShardError::Bad { path: path.to_path_buf(), why };
    let text = std::fs::read_to_string(path).map_err(|e| bad(e.to_string()))?;
    let s: ShardFile<Items<T>> =
        serde_json::from_str(&text).map_err(|e| bad(format!("not a {kind} shard ({e}); run it again")))?;
    if s.kind != kind {
        return Err(bad(format!("not a {kind} shard; run it again")));
    }
    Ok(s)
}

/// Runs shard `shard` of `job` into `dir`: `one(i)` computes item `i`, in
/// parallel over items, telling `progress` (stage `what`). Items saved by an
/// earlier stopped run of the same job are kept; a complete file is left
/// alone. Finished items are saved every [`SAVE_EVERY`] while it runs. When
/// `stop` is set (by a signal handler), items not yet begun are skipped and
/// what finished is saved, marked incomplete.
///
/// # Errors
/// [`ShardError::Bad`] if the file cannot be written.
pub fn run<T, F>(
    job: &Job,
    shard: Shard,
    dir: &Path,
    stop: &AtomicBool,
    what: &str,
    progress: &dyn Progress,
    one: F,
) -> Result<Ran, ShardError>
where
    T: Serialize + DeserializeOwned + Send,
    F: Fn(usize) -> T + Sync,
{
    run_saving_every(job, shard, dir, stop, what, progress, SAVE_EVERY, one)
}

/// [`run`], saving every `every`.
#[allow(clippy::too_many_arguments)]
fn run_saving_every<T, F>(
    job: &Job,
    shard: Shard,
    dir: &Path,
    stop: &AtomicBool,
    what: &str,
    progress: &dyn Progress,
    every: Duration,
    one: F,
) -> Result<Ran, ShardError>
where
    T: Serialize + DeserializeOwned + Send,
    F: Fn(usize) -> T + Sync,
{
    let path = job.file(dir, shard);
    let mut items: Items<T> = Vec::new();
    if let Ok(old) = read::<T>(&path, job.kind)
        && old.belongs_to(job)
        && old.k == shard.k
        && old.n == shard.n
    {
        if old.complete {
            return Ok(Ran::AlreadyComplete);
        }
        items = old.items;
    }
    let bad = |why: String| ShardError::Bad { path: path.clone(), why };
    std::fs::create_dir_all(dir.join("shards")).map_err(|e| bad(e.to_string()))?;
    let of = shard.items(job.total).count();
    let wanted: Vec<usize> =
        shard.items(job.total).filter(|i| items.binary_search_by_key(i, |(j, _)| *j).is_err()).collect();
    let counter = Counter::begin(progress, what, wanted.len());
    let saved = Mutex::new((items, Instant::now()));
    wanted.par_iter().for_each(|&i| {
        if stop.load(Ordering::Relaxed) {
            return;
        }
        let item = one(i);
        counter.tick();
        let mut guard = saved.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
        let (items, last) = &mut *guard;
        items.push((i, item));
        if last.elapsed() >= every && items.len() < of {
            // A failed save here is not fatal: the final save reports its error.
            let _ = save(job, shard, &path, items);
            *last = Instant::now();
        }
    });
    drop(counter);
    let (mut items, _) = saved.into_inner().unwrap_or_else(std::sync::PoisonError::into_inner);
    let done = items.len();
    let complete = save(job, shard, &path, &mut items).map_err(|e| bad(e.to_string()))?;
    Ok(if complete { Ran::Done } else { Ran::Stopped { done, of } })
}

/// Writes `items` (sorted here) as shard `shard` of `job` into `path`;
/// returns whether the shard is complete.
fn save<T: Serialize>(
    job: &Job,
    shard: Shard,
    path: &Path,
    items: &mut Items<T>,
) -> Result<bool, crate::export::ExportError> {
    items.sort_by_key(|(i, _)| *i);
    let complete = items.len() == shard.items(job.total).count();
    let file = ShardFile {
        kind: job.kind.to_string(),
        anlage: VERSION.to_string(),
        model_sha256: job.model_sha256.clone(),
        model_file: job.model_file.clone(),
        settings: job.settings.clone(),
        k: shard.k,
        n: shard.n,
        total: job.total,
        complete,
        items: &items[..],
    };
    crate::export::write_atomic(path, |w| serde_json::to_writer(w, &file).map_err(std::io::Error::other))?;
    Ok(complete)
}

/// Merges the shards of `job` in `dir/shards` into every item, by index.
///
/// # Errors
/// [`ShardError::Missing`] naming the missing, incomplete or unreadable
/// shards and the command that runs each (and the `sbatch` line, when SLURM
/// scripts were written into `dir/slurm`); [`ShardError::Bad`] for a shard of
/// another model, other settings or another count, saying which;
/// [`ShardError::Empty`].
pub fn merge<T: DeserializeOwned>(job: &Job, dir: &Path) -> Result<Vec<T>, ShardError> {
    let folder = dir.join("shards");
    let prefix = format!("{}-", job.kind);
    let mut files: Vec<PathBuf> =
        std::fs::read_dir(&folder).map(|rd| rd.filter_map(Result::ok).map(|e| e.path()).collect()).unwrap_or_default();
    files.retain(|p| {
        p.extension().is_some_and(|e| e == "json")
            && p.file_name().and_then(|n| n.to_str()).is_some_and(|n| n.starts_with(&prefix))
    });
    files.sort();
    // (n, path) of the first shard seen, and what each k holds.
    let mut first: Option<(usize, PathBuf)> = None;
    let mut by_k: Vec<Option<ShardFile<Items<T>>>> = Vec::new();
    let mut why: Vec<(usize, String)> = Vec::new();
    for path in files {
        let bad = |why: String| ShardError::Bad { path: path.clone(), why };
        let (k, n, read) = match read::<T>(&path, job.kind) {
            Ok(s) => (s.k, s.n, Ok(s)),
            Err(e) => match name_k_of_n(&path, job.kind) {
                // Cut short or damaged: its shard counts as missing, and says so.
                Some((k, n)) => (k, n, Err(e)),
                None => continue,
            },
        };
        let (n_first, path_first) = first.get_or_insert_with(|| (n, path.clone())).clone();
        if n != n_first {
            return Err(bad(format!(
                "one of {n} shards, where {} is one of {n_first}: two ways of cutting the job are mixed in {}; \
                 delete the set you do not want (e.g. rm {}/{}-*-of-{n}.json) and merge again",
                path_first.display(),
                folder.display(),
                shell_quote(&folder.display().to_string()),
                job.kind
            )));
        }
        by_k.resize_with(n, || None);
        let s = match read {
            Ok(s) => s,
            Err(ShardError::Bad { why: w, .. }) => {
                why.push((k, format!("unreadable ({w})")));
                continue;
            }
            Err(e) => return Err(e),
        };
        if s.k == 0 || s.k > n || name_k_of_n(&path, job.kind).is_some_and(|named| named != (s.k, s.n)) {
            // Renamed, copied or edited by hand: it cannot stand for the shard its name says.
            let named = name_k_of_n(&path, job.kind).map_or(k, |(named, _)| named);
            by_k.resize_with(n.max(named), || None);
            why.push((named, format!("the file holds shard {}/{}, not the one its name says", s.k, s.n)));
            continue;
        }
        if let Some(differs) = s.differs_from(job) {
            return Err(bad(differs));
        }
        let want = Shard { k, n }.items(job.total).count();
        if s.complete && s.items.len() == want {
            by_k[k - 1] = Some(s);
        } else {
            why.push((k, format!("incomplete, {} of {want} items", s.items.len())));
        }
    }
    let Some((total, _)) = first else {
        return Err(ShardError::Empty { dir: folder, kind: job.kind.into(), rerun: job.rerun.clone() });
    };
    let missing: Vec<usize> = (1..=total).filter(|k| by_k[k - 1].is_none()).collect();
    if !missing.is_empty() {
        let mut commands: Vec<String> = missing
            .iter()
            .map(|k| {
                let note = why.iter().find(|(j, _)| j == k).map_or(String::new(), |(_, w)| format!("   # {w}"));
                format!("  {} --shard {k}/{total}{note}", job.rerun)
            })
            .collect();
        let array = dir.join("slurm").join("array.sbatch");
        if array.exists() {
            let ks: Vec<String> = missing.iter().map(usize::to_string).collect();
            commands.push(format!(
                "or on the cluster: sbatch --array={} {}",
                ks.join(","),
                shell_quote(&array.display().to_string())
            ));
        }
        commands.push("then merge again".into());
        return Err(ShardError::Missing { dir: folder, total, missing, commands });
    }
    let mut items: Vec<(usize, T)> = by_k.into_iter().flatten().flat_map(|s| s.items).collect();
    items.sort_by_key(|(i, _)| *i);
    Ok(items.into_iter().map(|(_, t)| t).collect())
}

/// (k, n) from a shard file's name `KIND-k-of-n.json`.
fn name_k_of_n(path: &Path, kind: &str) -> Option<(usize, usize)> {
    let name = path.file_name()?.to_str()?.strip_prefix(kind)?.strip_prefix('-')?.strip_suffix(".json")?;
    let (k, n) = name.split_once("-of-")?;
    let shard = Shard::parse(&format!("{k}/{n}")).ok()?;
    Some((shard.k, shard.n))
}

/// A float that a shard file keeps exactly: finite values as JSON numbers
/// (exact with serde_json's `float_roundtrip`), the others, which JSON
/// lacks, as the strings "inf", "-inf" and "nan".
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Real(pub f64);

impl Serialize for Real {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        match self.0 {
            v if v.is_finite() => s.serialize_f64(v),
            v if v.is_nan() => s.serialize_str("nan"),
            v if v > 0.0 => s.serialize_str("inf"),
            _ => s.serialize_str("-inf"),
        }
    }
}

impl<'de> Deserialize<'de> for Real {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Real, D::Error> {
        #[derive(Deserialize)]
        #[serde(untagged)]
        enum Wire {
            Number(f64),
            Text(String),
        }
        match Wire::deserialize(d)? {
            Wire::Number(v) => Ok(Real(v)),
            Wire::Text(t) => match t.as_str() {
                "inf" => Ok(Real(f64::INFINITY)),
                "-inf" => Ok(Real(f64::NEG_INFINITY)),
                "nan" => Ok(Real(f64::NAN)),
                other => Err(serde::de::Error::custom(format!("`{other}` is not a number"))),
            },
        }
    }
}

/// Quotes `text` for a POSIX shell when it needs it.
pub fn shell_quote(text: &str) -> String {
    let plain = !text.is_empty() && text.chars().all(|c| c.is_ascii_alphanumeric() || "-_./=:,+@%".contains(c));
    if plain { text.to_string() } else { format!("'{}'", text.replace('\'', r"'\''")) }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn job(total: usize) -> Job {
        Job {
            kind: "test",
            model_sha256: "abc".into(),
            model_file: "m.toml".into(),
            settings: vec!["x".into()],
            total,
            rerun: "anlage test m.toml -o out".into(),
        }
    }

    #[test]
    fn reals_survive_json_exactly_including_infinities() {
        for v in [0.1 + 0.2, -1e-300, 1.0 / 3.0, f64::INFINITY, f64::NEG_INFINITY, 5e-324] {
            let back: Real = serde_json::from_str(&serde_json::to_string(&Real(v)).unwrap()).unwrap();
            assert_eq!(back.0.to_bits(), v.to_bits(), "{v}");
        }
        let nan: Real = serde_json::from_str(&serde_json::to_string(&Real(f64::NAN)).unwrap()).unwrap();
        assert!(nan.0.is_nan());
        assert!(serde_json::from_str::<Real>("\"lots\"").is_err());
    }

    #[test]
    fn shards_cover_every_item_once_and_merge_in_order() {
        let dir = tempfile::tempdir().unwrap();
        let j = job(23);
        let go = AtomicBool::new(false);
        for k in 1..=5 {
            let ran =
                run(&j, Shard { k, n: 5 }, dir.path(), &go, "items", &crate::progress::Silent, |i| i * i).unwrap();
            assert_eq!(ran, Ran::Done);
        }
        let all: Vec<usize> = merge(&j, dir.path()).unwrap();
        assert_eq!(all, (0..23).map(|i| i * i).collect::<Vec<_>>());
        let again = run(&j, Shard { k: 2, n: 5 }, dir.path(), &go, "items", &crate::progress::Silent, |_| 0).unwrap();
        assert_eq!(again, Ran::AlreadyComplete);
    }

    #[test]
    fn a_stopped_shard_keeps_what_it_did_and_finishes_on_the_next_run() {
        let dir = tempfile::tempdir().unwrap();
        let j = job(40);
        let stop = AtomicBool::new(false);
        // Stop after the first few items (sequential pool so the count is exact).
        let pool = rayon::ThreadPoolBuilder::new().num_threads(1).build().unwrap();
        let ran = pool.install(|| {
            run(&j, Shard { k: 1, n: 2 }, dir.path(), &stop, "items", &crate::progress::Silent, |i| {
                if i >= 6 {
                    stop.store(true, Ordering::Relaxed);
                }
                i + 100
            })
        });
        let Ok(Ran::Stopped { done, of: 20 }) = ran else { panic!("{ran:?}") };
        assert!(done > 0 && done < 20, "{done}");
        // A merge counts the stopped shard as missing.
        run(&j, Shard { k: 2, n: 2 }, dir.path(), &AtomicBool::new(false), "items", &crate::progress::Silent, |i| {
            i + 100
        })
        .unwrap();
        let Err(ShardError::Missing { missing, .. }) = merge::<usize>(&j, dir.path()) else { panic!() };
        assert_eq!(missing, vec![1]);
        // The rerun computes only the rest: saved items are not recomputed.
        let seen = std::sync::Mutex::new(Vec::new());
        let ran = run(
            &j,
            Shard { k: 1, n: 2 },
            dir.path(),
            &AtomicBool::new(false),
            "items",
            &crate::progress::Silent,
            |i| {
                seen.lock().unwrap().push(i);
                i + 100
            },
        )
        .unwrap();
        assert_eq!(ran, Ran::Done);
        assert_eq!(seen.into_inner().unwrap().len(), 20 - done);
        let all: Vec<usize> = merge(&j, dir.path()).unwrap();
        assert_eq!(all, (100..140).collect::<Vec<_>>());
    }

    #[test]
    fn a_running_shard_saves_as_it_goes_so_a_killed_one_loses_little() {
        let dir = tempfile::tempdir().unwrap();
        let j = job(30);
        let shard = Shard { k: 1, n: 1 };
        let path = j.file(dir.path(), shard);
        let pool = rayon::ThreadPoolBuilder::new().num_threads(1).build().unwrap();
        // Die abruptly (a panic, standing for SIGKILL: no final save) at item 20.
        let died = pool.install(|| {
            std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                run_saving_every(
                    &j,
                    shard,
                    dir.path(),
                    &AtomicBool::new(false),
                    "items",
                    &crate::progress::Silent,
                    Duration::ZERO,
                    |i| {
                        assert!(i != 20, "killed");
                        i * 3
                    },
                )
            }))
        });
        assert!(died.is_err());
        let saved = read::<usize>(&path, "test").unwrap();
        assert!(!saved.complete);
        assert_eq!(saved.items, (0..20).map(|i| (i, i * 3)).collect::<Vec<_>>());
        // Run again: only the ten it lacks are computed.
        let seen = Mutex::new(Vec::new());
        let ran = run(&j, shard, dir.path(), &AtomicBool::new(false), "items", &crate::progress::Silent, |i| {
            seen.lock().unwrap().push(i);
            i * 3
        })
        .unwrap();
        assert_eq!(ran, Ran::Done);
        let mut seen = seen.into_inner().unwrap();
        seen.sort_unstable();
        assert_eq!(seen, (20..30).collect::<Vec<_>>());
        assert_eq!(merge::<usize>(&j, dir.path()).unwrap(), (0..30).map(|i| i * 3).collect::<Vec<_>>());
    }

    #[test]
    fn a_merge_names_unreadable_and_incomplete_shards_and_mixed_cuts() {
        let dir = tempfile::tempdir().unwrap();
        let j = job(12);
        let go = AtomicBool::new(false);
        for k in 1..=4 {
            run(&j, Shard { k, n: 4 }, dir.path(), &go, "items", &crate::progress::Silent, |i| i).unwrap();
        }
        std::fs::write(j.file(dir.path(), Shard { k: 2, n: 4 }), "{\"kind\": \"te").unwrap();
        std::fs::create_dir_all(dir.path().join("slurm")).unwrap();
        std::fs::write(dir.path().join("slurm/array.sbatch"), "").unwrap();
        let err = merge::<usize>(&j, dir.path()).unwrap_err().to_string();
        assert!(err.contains("1 of 4 shards") && err.contains("--shard 2/4   # unreadable"), "{err}");
        assert!(err.contains("sbatch --array=2 "), "{err}");
        run(&j, Shard { k: 1, n: 3 }, dir.path(), &go, "items", &crate::progress::Silent, |i| i).unwrap();
        let err = merge::<usize>(&j, dir.path()).unwrap_err().to_string();
        assert!(err.contains("two ways of cutting") && err.contains("-of-4.json"), "{err}");
    }

    #[test]
    fn shards_of_another_job_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let go = AtomicBool::new(false);
        run(&job(5), Shard { k: 1, n: 1 }, dir.path(), &go, "items", &crate::progress::Silent, |i| i).unwrap();
        let mut other = job(5);
        other.settings = vec!["y".into()];
        let err = merge::<usize>(&other, dir.path()).unwrap_err();
        assert!(err.to_string().contains("`x` where this test has `y`"), "{err}");
        let mut other = job(5);
        other.model_sha256 = "def".into();
        let err = merge::<usize>(&other, dir.path()).unwrap_err();
        assert!(err.to_string().contains("made from another model"), "{err}");
    }

    #[test]
    fn quoting_keeps_plain_words_and_wraps_the_rest() {
        assert_eq!(shell_quote("a=1.5:2.5:6"), "a=1.5:2.5:6");
        assert_eq!(shell_quote("it's here"), r"'it'\''s here'");
        assert_eq!(shell_quote(""), "''");
    }
}
