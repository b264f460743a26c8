//! The SLURM path against a real single-node cluster (Debian's slurm-wlm and
//! munge), started by tests/cluster/start.sh in a temporary folder and
//! stopped by PID at the end: a 2-parameter sweep written as a 7-task job
//! array and submitted merges into the bytes of an unsharded run, and a
//! killed task is found by the merge, rerun, and completes the set.
//!
//! Skipped, loudly, where the packages are not installed; CI installs them
//! and sets ANLAGE_REQUIRE_CLUSTER=1, which turns the skip into a failure.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

use crate::common::{root, temp_dir};

/// A running cluster; stopped by PID when dropped.
struct Cluster {
    dir: PathBuf,
    conf: PathBuf,
}

impl Cluster {
    fn start(dir: &Path) -> Option<Cluster> {
        let have = ["sbatch", "slurmctld", "slurmd", "munged"].iter().all(|exe| {
            Command::new("sh").args(["-c", &format!("command -v {exe}")]).output().is_ok_and(|o| o.status.success())
        });
        if !have {
            let required = std::env::var("ANLAGE_REQUIRE_CLUSTER").is_ok_and(|v| v == "1");
            assert!(!required, "ANLAGE_REQUIRE_CLUSTER=1 but slurm-wlm/munge are not installed");
            eprintln!(
                "\n*** SKIPPED: the SLURM cluster test needs Debian's slurm-wlm and munge (apt-get install slurm-wlm munge) and root; CI installs them ***\n"
            );
            return None;
        }
        let o = Command::new("bash").arg(root().join("tests/cluster/start.sh")).arg(dir).output().unwrap();
        let cluster = Cluster { dir: dir.to_path_buf(), conf: dir.join("slurm.conf") };
        assert!(
            o.status.success(),
            "start.sh failed: {}{}",
            String::from_utf8_lossy(&o.stdout),
            String::from_utf8_lossy(&o.stderr)
        );
        Some(cluster)
    }

    /// A SLURM client command against this cluster.
    fn client(&self, exe: &str, args: &[&str]) -> String {
        let o = Command::new(exe).args(args).env("SLURM_CONF", &self.conf).output().unwrap();
        assert!(o.status.success(), "{exe} {args:?}: {}", String::from_utf8_lossy(&o.stderr));
        String::from_utf8_lossy(&o.stdout).trim().to_string()
    }

    /// Waits until no job of `ids` is pending or running.
    fn wait(&self, ids: &[&str]) {
        let start = Instant::now();
        loop {
            let left = self.client("squeue", &["-h", "-o", "%i %T %r", "-j", &ids.join(",")]);
            if left.is_empty() {
                return;
            }
            if start.elapsed() > Duration::from_secs(180) {
                let logs = std::fs::read_to_string(self.dir.join("log/slurmctld.log")).unwrap_or_default();
                panic!(
                    "jobs still queued after 180 s:\n{left}\n{}",
                    logs.lines().rev().take(30).collect::<Vec<_>>().join("\n")
                );
            }
            std::thread::sleep(Duration::from_millis(200));
        }
    }
}

impl Drop for Cluster {
    fn drop(&mut self) {
        let _ = Command::new("bash").arg(root().join("tests/cluster/stop.sh")).arg(&self.dir).status();
    }
}

fn same_outputs(a: &Path, b: &Path) {
    for name in ["sweep.csv", "sweep_boundaries.csv", "sweep.png"] {
        let (x, y) = (std::fs::read(a.join(name)), std::fs::read(b.join(name)));
        assert!(x.is_ok() && y.is_ok(), "{name} missing in {} or {}", a.display(), b.display());
        assert!(x.unwrap() == y.unwrap(), "{name} differs between {} and {}", a.display(), b.display());
    }
}

#[test]
fn a_sweep_run_as_a_slurm_job_array_merges_into_the_bytes_of_one_run() {
    let dir = temp_dir("slurm");
    let Some(cluster) = Cluster::start(&dir.join("cluster")) else { return };
    let model = dir.join("toggle.toml");
    std::fs::write(&model, crate::sweep::toggle()).unwrap();
    let m = model.to_str().unwrap();
    let sweep = |extra: &[&str], out: &Path| {
        let mut args =
            vec!["sweep", m, "--axis", "a=1.5:2.5:6", "--axis", "k=0.8:1.2:4:log", "-o", out.to_str().unwrap()];
        args.extend_from_slice(extra);
        let o =
            Command::new(env!("CARGO_BIN_EXE_anlage")).args(&args).env("SLURM_CONF", &cluster.conf).output().unwrap();
        assert!(o.status.success() || extra.contains(&"--merge"), "{args:?}: {}", String::from_utf8_lossy(&o.stderr));
        o
    };
    let whole = dir.join("whole");
    sweep(&[], &whole);

    // The array, submitted by anlage: 7 tasks, then the merge after all of them.
    let array = dir.join("array");
    let o = sweep(&["--slurm", "7", "--cpus-per-task", "1", "--submit"], &array);
    let ids = std::fs::read_to_string(array.join("slurm/jobs.txt")).unwrap();
    let ids: Vec<&str> = ids.split_whitespace().collect();
    assert_eq!(ids.len(), 2, "{}", String::from_utf8_lossy(&o.stdout));
    cluster.wait(&ids);
    assert_eq!(std::fs::read_dir(array.join("shards")).unwrap().count(), 7);
    same_outputs(&whole, &array);

    // A killed task: the array held, its merge job queued after it as
    // submit.sh does, task 3 cancelled, the rest released. The merge job can
    // never run, and leaves the queue instead of waiting for ever.
    let killed = dir.join("killed");
    sweep(&["--slurm", "7"], &killed);
    let script = killed.join("slurm/array.sbatch");
    let job = cluster.client("sbatch", &["--parsable", "--hold", script.to_str().unwrap()]);
    let job = job.split(';').next().unwrap().to_string();
    let merge_script = killed.join("slurm/merge.sbatch");
    let merge = cluster
        .client("sbatch", &["--parsable", &format!("--dependency=afterok:{job}"), merge_script.to_str().unwrap()]);
    let merge = merge.split(';').next().unwrap().to_string();
    cluster.client("scancel", &[&format!("{job}_3")]);
    cluster.client("scontrol", &["release", &job]);
    cluster.wait(&[&job, &merge]);
    assert!(!killed.join("sweep.csv").exists(), "the merge job did not run");
    let o = sweep(&["--merge"], &killed);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("1 of 7 shards") && err.contains("--shard 3/7"), "{err}");
    assert!(err.contains("sbatch --array=3 "), "{err}");
    assert!(!killed.join("sweep.csv").exists(), "nothing is written while a shard is missing");
    // Rerun the named shard as a one-task array, then merge.
    let rerun = cluster.client("sbatch", &["--parsable", "--array=3", script.to_str().unwrap()]);
    cluster.wait(&[rerun.split(';').next().unwrap()]);
    let o = sweep(&["--merge"], &killed);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    same_outputs(&whole, &killed);
    drop(cluster);
}
