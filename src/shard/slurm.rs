//! SLURM job arrays for sharded jobs: one array task per shard, and a merge
//! job that waits for the whole array (`afterok`).
//!
//! Three files are written into `OUT/slurm/`, plain text for the user to read
//! and edit before submitting:
//! - `array.sbatch`: `#SBATCH --array=1-N`; task `k` runs shard `k/N`. It
//!   asks for `--requeue` (a preempted task is queued again and, finding its
//!   saved items, runs only the rest) and `--signal=B:TERM@120` (two minutes
//!   before the time limit the task saves what it finished). The command is
//!   `exec`-ed so the signal reaches anlage itself. Threads follow
//!   `--cpus-per-task` through `RAYON_NUM_THREADS`.
//! - `merge.sbatch`: merges the shards into the outputs of an unsharded run.
//!   It asks for `--kill-on-invalid-dep=yes`: when a task fails or is
//!   cancelled, the merge job is removed from the queue instead of waiting
//!   for ever; `anlage … --merge` then names the missing shards and the
//!   `sbatch --array=K array.sbatch` line that reruns them.
//! - `submit.sh`: submits the array, then the merge with
//!   `--dependency=afterok:<array>`, and prints both job ids.
//!
//! Partition, account, time limit and memory are written only when given;
//! otherwise sbatch takes them from its own environment (`SBATCH_PARTITION`,
//! `SBATCH_ACCOUNT`, `SBATCH_TIMELIMIT`, `SBATCH_MEM_PER_NODE`) or the
//! site's defaults: nothing site-specific is baked in.

use std::path::{Path, PathBuf};

use super::shell_quote;

/// What the array asks of the cluster.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Request {
    /// Array tasks (= shards).
    pub tasks: usize,
    /// CPUs per task (threads of each shard).
    pub cpus_per_task: usize,
    /// `--partition`, when given.
    pub partition: Option<String>,
    /// `--account`, when given.
    pub account: Option<String>,
    /// `--time` per task, when given (SLURM's forms, e.g. `2:00:00`).
    pub time: Option<String>,
    /// `--mem` per task, when given (e.g. `4G`).
    pub mem: Option<String>,
}

/// The scripts written, by path.
#[derive(Debug, Clone, PartialEq)]
pub struct Scripts {
    /// The array job.
    pub array: PathBuf,
    /// The merge job.
    pub merge: PathBuf,
    /// Submits both.
    pub submit: PathBuf,
}

/// The command line without the options that only choose how it is run on
/// a cluster (`--slurm`, `--cpus-per-task`, `--partition`, `--account`,
/// `--time`, `--mem`, `--submit`, `--shard`, `--merge`), in either form
/// (`--opt value` or `--opt=value`).
pub fn job_arguments(argv: &[String]) -> Vec<String> {
    const WITH_VALUE: [&str; 7] =
        ["--slurm", "--cpus-per-task", "--partition", "--account", "--time", "--mem", "--shard"];
    const FLAGS: [&str; 2] = ["--submit", "--merge"];
    let mut out = Vec::new();
    let mut skip = false;
    for a in argv {
        if skip {
            skip = false;
            continue;
        }
        if WITH_VALUE.contains(&a.as_str()) {
            skip = true;
            continue;
        }
        if FLAGS.contains(&a.as_str()) || WITH_VALUE.iter().any(|o| a.starts_with(&format!("{o}="))) {
            continue;
        }
        out.push(a.clone());
    }
    out
}

/// `#SBATCH` lines for a job named `name` logging to `logs/log_name`, where
/// `log_name` may hold SLURM's filename patterns (`%a`: the task) and a `%`
/// in the folder is written `%%` so that SLURM keeps it.
fn header(
    lines: &mut Vec<String>,
    name: &str,
    logs: &Path,
    log_name: &str,
    workdir: &Path,
    req: &Request,
    cpus: usize,
) {
    lines.push("#!/bin/bash".into());
    lines.push(format!("#SBATCH --job-name={name}"));
    lines.push(format!("#SBATCH --chdir={}", shell_quote(&workdir.display().to_string())));
    let log = format!("{}/{log_name}", logs.display().to_string().replace('%', "%%"));
    lines.push(format!("#SBATCH --output={}", shell_quote(&log)));
    lines.push("#SBATCH --open-mode=append".into());
    lines.push(format!("#SBATCH --cpus-per-task={cpus}"));
    for (option, value) in
        [("partition", &req.partition), ("account", &req.account), ("time", &req.time), ("mem", &req.mem)]
    {
        if let Some(v) = value {
            lines.push(format!("#SBATCH --{option}={}", shell_quote(v)));
        }
    }
}

/// Writes `array.sbatch`, `merge.sbatch` and `submit.sh` into `out/slurm`
/// (and the folder `out/slurm/logs` the tasks write to) for the job whose
/// command line, without cluster options, is `args` (`args[0]` the verb),
/// run by the executable `exe` from `workdir`.
///
/// # Errors
/// The I/O error of a file that cannot be written.
pub fn write_scripts(
    exe: &Path,
    args: &[String],
    workdir: &Path,
    out: &Path,
    req: &Request,
) -> std::io::Result<Scripts> {
    let folder = out.join("slurm");
    let logs = folder.join("logs");
    std::fs::create_dir_all(&logs)?;
    let logs = logs.canonicalize()?;
    let verb = args.first().map(String::as_str).unwrap_or("job");
    let command: Vec<String> = args.iter().map(|a| shell_quote(a)).collect();
    let exe_line = format!("ANLAGE=${{ANLAGE:-{}}}", shell_quote(&exe.display().to_string()));
    let n = req.tasks;

    let mut a = Vec::new();
    header(&mut a, &format!("anlage-{verb}"), &logs, "task-%a.out", workdir, req, req.cpus_per_task);
    a.push(format!("#SBATCH --array=1-{n}"));
    a.push("#SBATCH --requeue".into());
    a.push("#SBATCH --signal=B:TERM@120".into());
    a.push(String::new());
    a.push(format!("# Written by anlage: task k of this array runs shard k/{n} of"));
    a.push(format!("#   anlage {}", command.join(" ")));
    a.push("# into the shards folder of the output folder; merge.sbatch combines them. Edit freely.".into());
    a.push("# A task stopped by SIGTERM (time limit, preemption) saves what it finished;".into());
    a.push("# run again (requeued, or by hand), it runs only the rest.".into());
    a.push("set -euo pipefail".into());
    a.push(exe_line.clone());
    a.push("export RAYON_NUM_THREADS=${SLURM_CPUS_PER_TASK:-1}".into());
    a.push(format!("exec \"$ANLAGE\" {} --shard \"$SLURM_ARRAY_TASK_ID/{n}\"", command.join(" ")));

    let mut m = Vec::new();
    header(&mut m, &format!("anlage-{verb}-merge"), &logs, "merge.out", workdir, req, 1);
    m.push("#SBATCH --kill-on-invalid-dep=yes".into());
    m.push(String::new());
    m.push(format!("# Written by anlage: merges the {n} shards of array.sbatch into the outputs of"));
    m.push(format!("#   anlage {}", command.join(" ")));
    m.push("# byte for byte; lists missing shards with the command that reruns each.".into());
    m.push("set -euo pipefail".into());
    m.push(exe_line);
    m.push(format!("exec \"$ANLAGE\" {} --merge", command.join(" ")));

    let s = [
        "#!/bin/bash",
        "# Written by anlage: submits the array, then the merge once every task has succeeded.",
        "set -euo pipefail",
        "cd \"$(dirname \"$0\")\"",
        "array=$(sbatch --parsable array.sbatch)",
        "array=${array%%;*}",
        "merge=$(sbatch --parsable --dependency=afterok:\"$array\" merge.sbatch)",
        "merge=${merge%%;*}",
        "echo \"array job $array ($0), merge job $merge\"",
        "echo \"$array $merge\" > jobs.txt",
    ];
    let scripts = Scripts {
        array: folder.join("array.sbatch"),
        merge: folder.join("merge.sbatch"),
        submit: folder.join("submit.sh"),
    };
    for (path, lines) in
        [(&scripts.array, a), (&scripts.merge, m), (&scripts.submit, s.iter().map(|l| l.to_string()).collect())]
    {
        crate::export::write_atomic(path, |w| w.write_all((lines.join("\n") + "\n").as_bytes()))
            .map_err(std::io::Error::other)?;
        set_executable(path)?;
    }
    Ok(scripts)
}

#[cfg(unix)]
fn set_executable(path: &Path) -> std::io::Result<()> {
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(path, std::fs::Permissions::from_mode(0o755))
}

#[cfg(not(unix))]
fn set_executable(_: &Path) -> std::io::Result<()> {
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn words(s: &str) -> Vec<String> {
        s.split_whitespace().map(String::from).collect()
    }

    #[test]
    fn cluster_options_are_taken_out_in_both_forms() {
        let argv = words(
            "sweep m.toml --axis a=1:2:3 --slurm 10 --cpus-per-task=2 --partition short --submit -o out --time=1:00:00",
        );
        assert_eq!(job_arguments(&argv), words("sweep m.toml --axis a=1:2:3 -o out"));
    }

    #[test]
    fn the_array_runs_one_shard_per_task_and_the_merge_waits_for_all() {
        let dir = tempfile::tempdir().unwrap();
        let req = Request { tasks: 7, cpus_per_task: 2, partition: Some("short".into()), ..Request::default() };
        let args = words("sweep my model.toml --axis a=1:2:3 -o out");
        let s = write_scripts(Path::new("/opt/anlage"), &args, Path::new("/home/u"), dir.path(), &req).unwrap();
        let array = std::fs::read_to_string(&s.array).unwrap();
        for line in
            ["#SBATCH --array=1-7", "#SBATCH --cpus-per-task=2", "#SBATCH --partition=short", "#SBATCH --requeue"]
        {
            assert!(array.contains(line), "{line}\n{array}");
        }
        assert!(!array.contains("--account") && !array.contains("--mem"), "{array}");
        assert!(array.contains("--shard \"$SLURM_ARRAY_TASK_ID/7\""), "{array}");
        let submit = std::fs::read_to_string(&s.submit).unwrap();
        assert!(submit.contains("--dependency=afterok:"), "{submit}");
        let merge = std::fs::read_to_string(&s.merge).unwrap();
        assert!(merge.trim_end().ends_with("--merge"), "{merge}");
        assert!(merge.contains("#SBATCH --kill-on-invalid-dep=yes"), "{merge}");
    }

    #[test]
    fn a_percent_sign_in_the_output_folder_survives_slurm_filename_patterns() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("run 100%");
        let req = Request { tasks: 2, cpus_per_task: 1, ..Request::default() };
        let s = write_scripts(Path::new("/opt/anlage"), &words("sweep m.toml"), dir.path(), &out, &req).unwrap();
        let array = std::fs::read_to_string(&s.array).unwrap();
        assert!(array.contains("run 100%%/slurm/logs/task-%a.out'"), "{array}");
    }
}
