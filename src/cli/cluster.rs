//! The command-line side of sharded jobs: which of whole run, one shard,
//! merge or SLURM scripts a command asks for, the signal handler of a shard,
//! and what is printed.

use std::path::Path;
use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use anyhow::Context;

use anlage::shard::{Job, Ran, Shard, shell_quote, slurm};

use super::args::ClusterArgs;

/// What a command with [`ClusterArgs`] is asked to do.
pub enum Mode {
    /// Run everything here.
    Whole,
    /// Run one shard.
    Shard(Shard),
    /// Merge the shards.
    Merge,
    /// Write (and maybe submit) SLURM scripts.
    Slurm,
}

impl ClusterArgs {
    /// The mode asked for, with output folder `out` (`-`: standard output).
    ///
    /// # Errors
    /// A `--shard` or `--slurm` written wrongly, or any of them with `-o -`.
    pub fn mode(&self, out: Option<&Path>) -> anyhow::Result<Mode> {
        if (self.shard.is_some() || self.merge || self.slurm.is_some()) && super::common::table_to_stdout(out) {
            anyhow::bail!(anlage::render::StyleError::OutOfRange {
                option: "-o".into(),
                value: "-".into(),
                fix: "shards, merges and job arrays write into an output folder; give one with -o".into(),
            });
        }
        if let Some(spec) = &self.shard {
            return Ok(Mode::Shard(Shard::parse(spec)?));
        }
        if self.merge {
            return Ok(Mode::Merge);
        }
        if let Some(n) = self.slurm {
            if n == 0 || self.cpus_per_task == 0 {
                anyhow::bail!(anlage::render::StyleError::OutOfRange {
                    option: "--slurm/--cpus-per-task".into(),
                    value: format!("{n}/{}", self.cpus_per_task),
                    fix: "give at least one task and one CPU per task".into(),
                });
            }
            return Ok(Mode::Slurm);
        }
        Ok(Mode::Whole)
    }
}

/// The most array tasks many clusters accept: SLURM's default
/// `MaxArraySize` of 1001 allows task ids 0 to 1000.
pub const COMMON_MAX_ARRAY: usize = 1000;

/// Refuses a cut of `job` into more shards (or array tasks) than it has
/// items: the extra shards would be empty, and an array that large may be
/// refused by the cluster. Warns above [`COMMON_MAX_ARRAY`] tasks.
///
/// # Errors
/// More shards than items.
pub fn check_cut(mode: &Mode, args: &ClusterArgs, job: &Job, json: bool) -> anyhow::Result<()> {
    let (option, n) = match mode {
        Mode::Shard(s) => ("--shard", s.n),
        Mode::Slurm => ("--slurm", args.slurm.unwrap_or(1)),
        Mode::Whole | Mode::Merge => return Ok(()),
    };
    if n > job.total {
        anyhow::bail!(anlage::render::StyleError::OutOfRange {
            option: option.into(),
            value: n.to_string(),
            fix: format!(
                "this {} has {} item{} ({}), so cut it into at most {} shards",
                job.kind,
                job.total,
                if job.total == 1 { "" } else { "s" },
                item_word(job.kind),
                job.total
            ),
        });
    }
    if matches!(mode, Mode::Slurm) && n > COMMON_MAX_ARRAY && !json {
        eprintln!(
            "anlage: note: {n} array tasks; many clusters allow at most {COMMON_MAX_ARRAY} (see MaxArraySize in `scontrol show config`); fewer tasks with more items each cost nothing in speed"
        );
    }
    Ok(())
}

fn item_word(kind: &str) -> &'static str {
    match kind {
        "sweep" => "points",
        "screen" => "mutants",
        "sensitivity" => "parameters",
        "fit" => "starts",
        "replicates" | "screen_embryos" => "embryos",
        _ => "items",
    }
}

/// This command line without the cluster options, as a shell command
/// starting with `anlage` (for messages: how to rerun a shard).
pub fn rerun_command() -> String {
    let argv: Vec<String> = std::env::args().skip(1).collect();
    let words: Vec<String> = slurm::job_arguments(&argv).iter().map(|a| shell_quote(a)).collect();
    format!("anlage {}", words.join(" "))
}

/// A flag set by SIGTERM (a scheduler's time limit or preemption) and
/// SIGINT (Ctrl-C): a shard saves what it finished and stops.
///
/// # Errors
/// If the handler cannot be installed.
pub fn stop_flag() -> anyhow::Result<Arc<AtomicBool>> {
    let stop = Arc::new(AtomicBool::new(false));
    for signal in [signal_hook::consts::SIGTERM, signal_hook::consts::SIGINT] {
        signal_hook::flag::register(signal, stop.clone()).context("installing the signal handler")?;
    }
    Ok(stop)
}

/// Prints how shard `shard` of each job ended (a screen with replicates has
/// two: mutants and embryos); with `json`, one JSON object per job (kind,
/// shard, file, status, items), in an array when there are several. A
/// stopped shard is an error (exit 1) that says how to finish it.
///
/// # Errors
/// When a shard was stopped.
pub fn report_shards(ran: &[(Ran, &Job)], shard: Shard, dir: &Path, json: bool) -> anyhow::Result<()> {
    for &(r, job) in ran {
        if let Ran::Stopped { done, of } = r {
            if json {
                let value = serde_json::json!({
                    "kind": job.kind,
                    "shard": format!("{}/{}", shard.k, shard.n),
                    "file": job.file(dir, shard).display().to_string(),
                    "status": "stopped",
                    "items": of,
                    "saved": done,
                });
                println!("{}", serde_json::to_string_pretty(&value)?);
            }
            anyhow::bail!(
                "shard {}/{} stopped by a signal: {done} of {of} items saved in {}; run the same command again to finish it",
                shard.k,
                shard.n,
                job.file(dir, shard).display()
            );
        }
    }
    if json {
        let values: Vec<serde_json::Value> = ran
            .iter()
            .map(|&(r, job)| {
                serde_json::json!({
                    "kind": job.kind,
                    "shard": format!("{}/{}", shard.k, shard.n),
                    "file": job.file(dir, shard).display().to_string(),
                    "status": if r == Ran::Done { "done" } else { "already complete" },
                    "items": shard.items(job.total).count(),
                })
            })
            .collect();
        let value = if values.len() == 1 { values[0].clone() } else { serde_json::Value::Array(values) };
        println!("{}", serde_json::to_string_pretty(&value)?);
        return Ok(());
    }
    for &(r, job) in ran {
        let file = job.file(dir, shard);
        if r == Ran::Done {
            println!("shard {}/{}: wrote {}", shard.k, shard.n, file.display());
        } else {
            println!("shard {}/{}: already complete, not run again: {}", shard.k, shard.n, file.display());
        }
    }
    Ok(())
}

/// Writes the SLURM scripts of this command (without its cluster options)
/// into `dir/slurm` and, with `--submit`, submits them. With `json`, prints
/// one JSON object: the scripts and, when submitted, the job ids.
///
/// # Errors
/// A script that cannot be written, or sbatch failing.
pub fn write_slurm(args: &ClusterArgs, dir: &Path, json: bool) -> anyhow::Result<()> {
    let argv: Vec<String> = std::env::args().skip(1).collect();
    let job = slurm::job_arguments(&argv);
    let exe = std::env::current_exe().context("finding the anlage executable")?;
    let workdir = std::env::current_dir().context("reading the working folder")?;
    let req = slurm::Request {
        tasks: args.slurm.unwrap_or(1),
        cpus_per_task: args.cpus_per_task,
        partition: args.partition.clone(),
        account: args.account.clone(),
        time: args.time.clone(),
        mem: args.mem.clone(),
    };
    let scripts = slurm::write_scripts(&exe, &job, &workdir, dir, &req)
        .with_context(|| format!("writing SLURM scripts into {}", dir.join("slurm").display()))?;
    let paths = serde_json::json!({
        "array": scripts.array.display().to_string(),
        "merge": scripts.merge.display().to_string(),
        "submit": scripts.submit.display().to_string(),
        "tasks": req.tasks,
    });
    if !json {
        println!("wrote {}", scripts.array.display());
        println!("wrote {}", scripts.merge.display());
        println!("wrote {}", scripts.submit.display());
    }
    if !args.submit {
        if json {
            println!("{}", serde_json::to_string_pretty(&paths)?);
        } else {
            println!("submit with: bash {}", shell_quote(&scripts.submit.display().to_string()));
        }
        return Ok(());
    }
    let out = std::process::Command::new("bash")
        .arg(&scripts.submit)
        .output()
        .context("running bash to submit the SLURM scripts (is bash installed?)")?;
    if !out.status.success() {
        anyhow::bail!(
            "submitting with sbatch failed ({}): {}; the scripts are in {}, fix and run submit.sh",
            out.status,
            String::from_utf8_lossy(&out.stderr).trim(),
            dir.join("slurm").display()
        );
    }
    if json {
        let ids = std::fs::read_to_string(dir.join("slurm").join("jobs.txt")).unwrap_or_default();
        let ids: Vec<&str> = ids.split_whitespace().collect();
        let mut value = paths;
        value["array_job"] = serde_json::json!(ids.first());
        value["merge_job"] = serde_json::json!(ids.get(1));
        println!("{}", serde_json::to_string_pretty(&value)?);
    } else {
        print!("{}", String::from_utf8_lossy(&out.stdout));
    }
    Ok(())
}
