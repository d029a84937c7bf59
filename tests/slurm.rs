//! The screen on a real Slurm cluster, run with the scripts a user gets
//! (`configs/slurm/`): the test starts a single-node cluster of its own
//! (munged, slurmctld and slurmd, as root, with a generated slurm.conf, its
//! own munge key and socket and free ports, in a fixed temp folder), submits
//! the demo screen as a 4-task job array plus the dependent merge, and checks:
//! - a failed array task keeps the merge from running (Slurm cancels it),
//!   and a merge submitted anyway names the missing shard;
//! - rerunning that task alone, then merging, gives the unsplit run's
//!   `shortlist.csv` byte for byte and the same candidates-table rows (`candidates/`);
//! - a merge with a shard missing a chunk fails, naming the shard;
//! - rerunning that task resumes it: the chunks it kept are not computed
//!   again, the missing one is, and the merge again equals the unsplit run.
//!
//! Every daemon it started is stopped (by the pids in their pid files) when
//! the test ends, also when it fails; a munged already running on the machine
//! is left alone (the test's own munged has its own socket and key). The
//! test works in one fixed folder (`$TMPDIR/quenchwise-slurm-test`) under a
//! file lock, so two test runs on one machine (other worktrees) take turns,
//! and the jobs and daemons a killed run left there are stopped. Without
//! root or the Debian packages (`slurm-wlm`, `munge`) it says why (on stderr,
//! past the harness's capture) and skips, unless `QUENCHWISE_REQUIRE_SLURM`
//! is set (`.ci/run` sets it): then it fails.

use crate::util::{root, run_in};
use polars::prelude::{CsvWriter, SerWriter};
use std::io::Write;
use std::os::unix::fs::{MetadataExt, PermissionsExt};
use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::{Duration, Instant};

/// Set by `.ci/run`: there the Slurm test must run, never skip.
const REQUIRE: &str = "QUENCHWISE_REQUIRE_SLURM";

/// The daemons, by where Debian's packages put them.
const MUNGED: &str = "/usr/sbin/munged";
const SLURMCTLD: &str = "/usr/sbin/slurmctld";
const SLURMD: &str = "/usr/sbin/slurmd";

/// How long one job may take before the test gives up (generous: the
/// machine runs the other tests at the same time).
const JOB_TIMEOUT: Duration = Duration::from_secs(600);

/// A single-node Slurm cluster started by this test. Dropping it cancels its
/// jobs and stops its daemons, newest first.
struct Cluster {
    dir: PathBuf,
    conf: PathBuf,
    /// (name, pid file) of every daemon started, in order.
    daemons: Vec<(&'static str, PathBuf)>,
    /// The machine-wide lock of this test, released (by dropping it) after
    /// the daemons have stopped.
    _lock: std::fs::File,
}

/// The folder of the test's cluster: fixed, so that what a killed run left
/// behind is found by the next one.
fn cluster_dir() -> PathBuf {
    std::env::temp_dir().join("quenchwise-slurm-test")
}

/// The daemons a run keeps in `dir`: (name, pid file), in start order.
fn daemon_files(dir: &Path) -> [(&'static str, PathBuf); 3] {
    [
        ("munged", dir.join("munge/munged.pid")),
        ("slurmctld", dir.join("slurmctld.pid")),
        ("slurmd", dir.join("slurmd.pid")),
    ]
}

/// Wait for (and hold) the machine-wide lock of this test.
fn take_lock() -> Result<std::fs::File, String> {
    let path = std::env::temp_dir().join("quenchwise-slurm-test.lock");
    let file = std::fs::OpenOptions::new()
        .create(true)
        .truncate(false)
        .write(true)
        .open(&path)
        .map_err(|e| format!("{}: {e}", path.display()))?;
    file.lock()
        .map_err(|e| format!("locking {}: {e}", path.display()))?;
    Ok(file)
}

/// Cancel every job of the cluster of `conf` and wait (up to 20 s) until
/// none is left.
fn cancel_jobs(conf: &Path) {
    let client = |program: &str| {
        let mut c = Command::new(program);
        c.env("SLURM_CONF", conf);
        c
    };
    let _ = client("scancel").args(["--user=root"]).output();
    let start = Instant::now();
    while start.elapsed() < Duration::from_secs(20) {
        match client("squeue").args(["-h", "-o", "%i"]).output() {
            Ok(o) if o.status.success() && o.stdout.is_empty() => break,
            Ok(o) if o.status.success() => {}
            _ => break,
        }
        std::thread::sleep(Duration::from_millis(300));
    }
}

/// Stop the jobs and daemons an earlier run of this test left in `dir` (it
/// was killed before it could): only a process of the right name whose
/// command line names `dir`, so nothing else on the machine is touched.
fn stop_leftovers(dir: &Path) {
    let ours = |name: &str, pid: u32| {
        let comm = std::fs::read_to_string(format!("/proc/{pid}/comm")).unwrap_or_default();
        let cmdline = std::fs::read(format!("/proc/{pid}/cmdline")).unwrap_or_default();
        alive(pid)
            && comm.trim() == name
            && String::from_utf8_lossy(&cmdline).contains(&*dir.to_string_lossy())
    };
    if read_pid(&dir.join("slurmctld.pid")).is_some_and(|pid| ours("slurmctld", pid)) {
        cancel_jobs(&dir.join("slurm.conf"));
    }
    for (name, pid_file) in daemon_files(dir).into_iter().rev() {
        let Some(pid) = read_pid(&pid_file) else {
            continue;
        };
        if ours(name, pid) {
            eprintln!("slurm test: stopping {name} (pid {pid}) left by an earlier run");
            stop(name, &pid_file);
        }
    }
}

fn output_text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// The last lines of a log file, for messages.
fn tail(path: &Path) -> String {
    let text = std::fs::read_to_string(path).unwrap_or_default();
    let lines: Vec<&str> = text.lines().collect();
    format!(
        "--- {} (last lines) ---\n{}\n",
        path.display(),
        lines[lines.len().saturating_sub(15)..].join("\n")
    )
}

fn is_root() -> bool {
    Command::new("id")
        .arg("-u")
        .output()
        .is_ok_and(|o| String::from_utf8_lossy(&o.stdout).trim() == "0")
}

/// Whether the process `pid` still runs (a zombie counts as ended).
fn alive(pid: u32) -> bool {
    match std::fs::read_to_string(format!("/proc/{pid}/stat")) {
        // "pid (name) S ...": the state follows the last ')'.
        Ok(stat) => stat
            .rsplit_once(')')
            .is_some_and(|(_, rest)| !rest.trim_start().starts_with('Z')),
        Err(_) => false,
    }
}

fn read_pid(pid_file: &Path) -> Option<u32> {
    std::fs::read_to_string(pid_file).ok()?.trim().parse().ok()
}

/// Stop the daemon whose pid is in `pid_file`: SIGTERM, then SIGKILL if it
/// has not ended after 15 s.
fn stop(name: &str, pid_file: &Path) {
    // A daemon writes its pid file just after it forks; give it a moment.
    let start = Instant::now();
    let pid = loop {
        match read_pid(pid_file) {
            Some(p) => break p,
            None if start.elapsed() < Duration::from_secs(3) => {
                std::thread::sleep(Duration::from_millis(100))
            }
            None => {
                eprintln!(
                    "slurm test: no pid in {}: {name} not stopped",
                    pid_file.display()
                );
                return;
            }
        }
    };
    let _ = Command::new("kill")
        .args(["-TERM", &pid.to_string()])
        .status();
    let start = Instant::now();
    while alive(pid) && start.elapsed() < Duration::from_secs(15) {
        std::thread::sleep(Duration::from_millis(100));
    }
    if alive(pid) {
        eprintln!("slurm test: {name} (pid {pid}) ignored SIGTERM; killing it");
        let _ = Command::new("kill")
            .args(["-KILL", &pid.to_string()])
            .status();
    }
}

/// A TCP port nobody listens on now.
fn free_port() -> Result<u16, String> {
    std::net::TcpListener::bind("127.0.0.1:0")
        .and_then(|l| l.local_addr())
        .map(|a| a.port())
        .map_err(|e| format!("no free TCP port: {e}"))
}

impl Cluster {
    /// Start munged, slurmctld and slurmd, and wait until the node is idle.
    /// `Err` says why Slurm cannot run here.
    fn start() -> Result<Cluster, String> {
        if !is_root() {
            return Err("not root: the test starts munged, slurmctld and slurmd itself".into());
        }
        for program in [MUNGED, SLURMCTLD, SLURMD] {
            if !Path::new(program).exists() {
                return Err(format!(
                    "{program} is not installed (apt-get install slurm-wlm munge)"
                ));
            }
        }
        for client in ["sbatch", "scontrol", "sinfo", "scancel"] {
            if Command::new(client).arg("--version").output().is_err() {
                return Err(format!(
                    "`{client}` is not on the PATH (apt-get install slurm-wlm)"
                ));
            }
        }
        let lock = take_lock()?;
        let dir = cluster_dir();
        stop_leftovers(&dir);
        if dir.exists() {
            std::fs::remove_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
        }
        let [munged_pid, ctld_pid, d_pid] = daemon_files(&dir);
        let mut cluster = Cluster {
            conf: dir.join("slurm.conf"),
            dir: dir.clone(),
            daemons: Vec::new(),
            _lock: lock,
        };
        // munged wants every folder on the way to its socket searchable by
        // all, and its key readable by its own user only.
        let munge = dir.join("munge");
        for d in [&dir, &munge, &dir.join("state"), &dir.join("spool")] {
            std::fs::create_dir_all(d).map_err(|e| format!("{}: {e}", d.display()))?;
            std::fs::set_permissions(d, std::fs::Permissions::from_mode(0o755))
                .map_err(|e| format!("{}: {e}", d.display()))?;
        }
        let key = munge.join("munge.key");
        let mut bytes = vec![0u8; 1024];
        std::io::Read::read_exact(
            &mut std::fs::File::open("/dev/urandom").map_err(|e| e.to_string())?,
            &mut bytes,
        )
        .map_err(|e| e.to_string())?;
        std::fs::write(&key, &bytes).map_err(|e| e.to_string())?;
        std::fs::set_permissions(&key, std::fs::Permissions::from_mode(0o600))
            .map_err(|e| e.to_string())?;
        let socket = munge.join("munge.sock");
        cluster.daemons.push(munged_pid.clone());
        let out = Command::new(MUNGED)
            .arg(format!("--socket={}", socket.display()))
            .arg(format!("--key-file={}", key.display()))
            .arg(format!("--log-file={}", munge.join("munged.log").display()))
            .arg(format!("--pid-file={}", munged_pid.1.display()))
            .arg(format!(
                "--seed-file={}",
                munge.join("munged.seed").display()
            ))
            .output()
            .map_err(|e| format!("{MUNGED}: {e}"))?;
        if !out.status.success() {
            return Err(format!("munged did not start: {}", output_text(&out)));
        }

        let host = std::fs::read_to_string("/proc/sys/kernel/hostname")
            .map_err(|e| format!("hostname: {e}"))?;
        let host = host
            .trim()
            .split('.')
            .next()
            .unwrap_or("localhost")
            .to_string();
        let cpus = std::thread::available_parallelism().map_or(1, |n| n.get());
        let mem_mb = std::fs::read_to_string("/proc/meminfo")
            .ok()
            .and_then(|m| {
                m.lines()
                    .find(|l| l.starts_with("MemTotal:"))
                    .and_then(|l| l.split_whitespace().nth(1))
                    .and_then(|kb| kb.parse::<u64>().ok())
            })
            .map_or(2000, |kb| kb / 1024 * 9 / 10);
        let (ctld_port, d_port) = (free_port()?, free_port()?);
        let d = dir.display();
        // A minimal single-node configuration (Slurm's slurm.conf manual page); own ports, munge socket
        // and files, so nothing else on the machine is touched.
        let conf = format!(
            "ClusterName=quenchwisetest
SlurmctldHost={host}(127.0.0.1)
SlurmctldPort={ctld_port}
SlurmdPort={d_port}
AuthType=auth/munge
AuthInfo=socket={socket}
CredType=cred/munge
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SlurmUser=root
SlurmdUser=root
StateSaveLocation={d}/state
SlurmdSpoolDir={d}/spool
SlurmctldPidFile={d}/slurmctld.pid
SlurmdPidFile={d}/slurmd.pid
SlurmctldLogFile={d}/slurmctld.log
SlurmdLogFile={d}/slurmd.log
ReturnToService=2
MinJobAge=3600
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
NodeName={host} NodeAddr=127.0.0.1 CPUs={cpus} RealMemory={mem_mb} State=UNKNOWN
PartitionName=debug Nodes=ALL Default=YES MaxTime=INFINITE State=UP
",
            socket = socket.display()
        );
        std::fs::write(&cluster.conf, conf).map_err(|e| e.to_string())?;
        for ((name, pid_file), program) in [(ctld_pid, SLURMCTLD), (d_pid, SLURMD)] {
            cluster.daemons.push((name, pid_file));
            let out = Command::new(program)
                .arg("-f")
                .arg(&cluster.conf)
                .env("SLURM_CONF", &cluster.conf)
                .output()
                .map_err(|e| format!("{program}: {e}"))?;
            if !out.status.success() {
                return Err(format!(
                    "{name} did not start: {}\n{}",
                    output_text(&out),
                    tail(&dir.join(format!("{name}.log")))
                ));
            }
        }
        let start = Instant::now();
        loop {
            let out = cluster.client("sinfo").args(["-h", "-o", "%T"]).output();
            let state = out.map(|o| output_text(&o)).unwrap_or_default();
            if state.trim() == "idle" {
                return Ok(cluster);
            }
            if start.elapsed() > Duration::from_secs(60) {
                return Err(format!(
                    "the node did not become idle within 60 s (sinfo: {})\n{}{}",
                    state.trim(),
                    tail(&dir.join("slurmctld.log")),
                    tail(&dir.join("slurmd.log"))
                ));
            }
            std::thread::sleep(Duration::from_millis(300));
        }
    }

    /// A Slurm client command talking to this cluster.
    fn client(&self, program: &str) -> Command {
        let mut c = Command::new(program);
        c.env("SLURM_CONF", &self.conf);
        c
    }

    /// Every task of `job` once all have ended: (task, state, exit code).
    fn wait(&self, job: &str) -> Vec<(String, String, String)> {
        const ENDED: [&str; 9] = [
            "COMPLETED",
            "FAILED",
            "CANCELLED",
            "TIMEOUT",
            "NODE_FAIL",
            "OUT_OF_MEMORY",
            "PREEMPTED",
            "BOOT_FAIL",
            "DEADLINE",
        ];
        let start = Instant::now();
        loop {
            let out = self
                .client("scontrol")
                .args(["show", "job", "-o", job])
                .output()
                .expect("scontrol runs");
            let text = output_text(&out);
            let field = |line: &str, key: &str| {
                line.split_whitespace()
                    .find_map(|w| w.strip_prefix(key))
                    .unwrap_or("")
                    .to_string()
            };
            let tasks: Vec<(String, String, String)> = text
                .lines()
                .filter(|l| l.contains("JobState="))
                .map(|l| {
                    (
                        field(l, "ArrayTaskId="),
                        field(l, "JobState="),
                        field(l, "ExitCode="),
                    )
                })
                .collect();
            if !tasks.is_empty() && tasks.iter().all(|t| ENDED.contains(&t.1.as_str())) {
                return tasks;
            }
            assert!(
                start.elapsed() < JOB_TIMEOUT,
                "job {job} did not end within {JOB_TIMEOUT:?}: {text}\n{}{}",
                tail(&self.dir.join("slurmctld.log")),
                tail(&self.dir.join("slurmd.log"))
            );
            std::thread::sleep(Duration::from_millis(500));
        }
    }

    /// The state and reason of a single job.
    fn state_and_reason(&self, job: &str) -> String {
        let out = self
            .client("scontrol")
            .args(["show", "job", "-o", job])
            .output()
            .expect("scontrol runs");
        output_text(&out)
            .split_whitespace()
            .filter(|w| w.starts_with("JobState=") || w.starts_with("Reason="))
            .collect::<Vec<_>>()
            .join(" ")
    }
}

impl Drop for Cluster {
    fn drop(&mut self) {
        // Jobs first: their processes do not end with slurmd.
        if self.daemons.iter().any(|(n, _)| *n == "slurmctld") {
            cancel_jobs(&self.conf);
        }
        for (name, pid_file) in self.daemons.iter().rev() {
            stop(name, pid_file);
        }
    }
}

/// A screen folder, where the user submits from: the config, a copy of
/// `configs/slurm/` with the two settings edited, and the jobs' outputs.
struct Submit<'a> {
    cluster: &'a Cluster,
    work: PathBuf,
}

impl Submit<'_> {
    /// Run `bash slurm/submit.sh ARGS` as a user would; the array and merge
    /// job ids it reports.
    fn submit(&self, args: &[&str]) -> (String, String) {
        let out = self
            .cluster
            .client("bash")
            .arg("slurm/submit.sh")
            .args(args)
            .current_dir(&self.work)
            .env("QUENCHWISE", env!("CARGO_BIN_EXE_quenchwise"))
            .output()
            .expect("bash runs");
        let text = output_text(&out);
        assert!(out.status.success(), "submit.sh {args:?} failed:\n{text}");
        let id = |what: &str| {
            text.split(what)
                .nth(1)
                .and_then(|r| r.split_whitespace().next())
                .unwrap_or_else(|| panic!("no `{what}` in submit.sh's output:\n{text}"))
                .to_string()
        };
        (id("submitted array job "), id("submitted merge job "))
    }

    /// Every log the jobs wrote, for messages.
    fn logs(&self) -> String {
        let mut names: Vec<PathBuf> = std::fs::read_dir(self.work.join("logs"))
            .map(|d| d.flatten().map(|e| e.path()).collect())
            .unwrap_or_default();
        names.sort();
        names
            .iter()
            .map(|p| {
                format!(
                    "--- {} ---\n{}\n",
                    p.display(),
                    std::fs::read_to_string(p).unwrap_or_default()
                )
            })
            .collect()
    }

    fn log(&self, name: &str) -> String {
        std::fs::read_to_string(self.work.join("logs").join(name))
            .unwrap_or_else(|e| panic!("logs/{name}: {e}\n{}", self.logs()))
    }

    /// Assert that every task of `job` ended in `state`.
    fn expect(&self, job: &str, state: &str) {
        let tasks = self.cluster.wait(job);
        assert!(
            tasks.iter().all(|t| t.1 == state),
            "job {job}: expected {state}, got {tasks:?}\n{}",
            self.logs()
        );
    }

    /// `sbatch slurm/merge.sh PROGRAM`, as merge.sh's comments show: the
    /// job id.
    fn merge_by_hand(&self) -> String {
        let out = self
            .cluster
            .client("sbatch")
            .args([
                "--parsable",
                "slurm/merge.sh",
                env!("CARGO_BIN_EXE_quenchwise"),
            ])
            .current_dir(&self.work)
            .output()
            .unwrap();
        assert!(out.status.success(), "{}", output_text(&out));
        String::from_utf8_lossy(&out.stdout).trim().to_string()
    }

    fn chunk(&self, shard: usize, k: usize) -> PathBuf {
        self.work
            .join(format!("shards/shard-{shard}/.work/chunk-{k:06}.parquet"))
    }

    /// The merged outputs equal the unsplit run's: `shortlist.csv` byte for
    /// byte, the candidates table (`candidates/`) row for row (compared as
    /// CSV text, which also compares the columns and NaNs).
    fn assert_results_equal_unsplit(&self) {
        let results = self.work.join("results");
        let unsplit = self.work.join("unsplit");
        let shortlist = std::fs::read(results.join("shortlist.csv"))
            .unwrap_or_else(|e| panic!("results/shortlist.csv: {e}\n{}", self.logs()));
        assert!(
            shortlist == std::fs::read(unsplit.join("shortlist.csv")).unwrap(),
            "the merged shortlist differs from the unsplit run's:\n{}\n--- unsplit ---\n{}",
            String::from_utf8_lossy(&shortlist),
            std::fs::read_to_string(unsplit.join("shortlist.csv")).unwrap()
        );
        let rows = |dir: &Path| {
            let mut df = quenchwise::files::results::read_candidates(dir).unwrap();
            let mut csv = Vec::new();
            CsvWriter::new(&mut csv).finish(&mut df).unwrap();
            (df.height(), csv)
        };
        let (n_merged, merged) = rows(&results);
        let (n_unsplit, whole) = rows(&unsplit);
        assert_eq!(n_merged, n_unsplit, "candidates table row counts");
        assert!(
            n_unsplit > 8192,
            "the first pass and the refinement are there"
        );
        if merged != whole {
            let (a, b) = (
                String::from_utf8_lossy(&merged),
                String::from_utf8_lossy(&whole),
            );
            let line = a.lines().zip(b.lines()).position(|(x, y)| x != y);
            panic!("candidates table rows differ (first at CSV line {line:?})");
        }
    }
}

/// The two settings of submit.sh, edited as a user would.
fn edit_settings(script: &Path, config: &str, shards: usize) {
    let text = std::fs::read_to_string(script).unwrap();
    let mut edited = 0;
    let lines: Vec<String> = text
        .lines()
        .map(|l| {
            if let Some(rest) = l.strip_prefix("CONFIG=") {
                edited += 1;
                let comment = rest.find('#').map(|i| &rest[i..]).unwrap_or("");
                format!("CONFIG={config}   {comment}")
            } else if let Some(rest) = l.strip_prefix("SHARDS=") {
                edited += 1;
                let comment = rest.find('#').map(|i| &rest[i..]).unwrap_or("");
                format!("SHARDS={shards}   {comment}")
            } else {
                l.to_string()
            }
        })
        .collect();
    assert_eq!(
        edited, 2,
        "submit.sh should set CONFIG= and SHARDS= once each"
    );
    std::fs::write(script, lines.join("\n") + "\n").unwrap();
}

#[test]
fn slurm_array_and_merge_reproduce_the_unsplit_screen() {
    let started = Instant::now();
    let cluster = match Cluster::start() {
        Ok(c) => c,
        Err(why) => {
            assert!(
                std::env::var(REQUIRE).is_err(),
                "{REQUIRE} is set but Slurm cannot start here: {why}"
            );
            // Straight to stderr, past the test harness's capture: the
            // skip shows in a plain `cargo test`.
            let _ = writeln!(
                std::io::stderr(),
                "SKIPPED slurm_array_and_merge_reproduce_the_unsplit_screen: {why}"
            );
            return;
        }
    };
    let work = cluster.dir.join("screen");
    std::fs::create_dir_all(work.join("slurm")).unwrap();
    for script in ["submit.sh", "shard.sh", "merge.sh"] {
        std::fs::copy(
            root().join("configs/slurm").join(script),
            work.join("slurm").join(script),
        )
        .unwrap();
    }
    // The demo: 8192 first-pass points in 16 chunks, 4 per shard.
    std::fs::copy(
        root().join("configs/demo-screen.toml"),
        work.join("screen.toml"),
    )
    .unwrap();
    edit_settings(&work.join("slurm/submit.sh"), "screen.toml", 4);
    let s = Submit {
        cluster: &cluster,
        work: work.clone(),
    };

    // The reference: one unsplit run, as in the README.
    run_in(&work, &["screen", "screen.toml", "--out", "unsplit"]).code(0);

    // 1. A task that fails keeps the merge from running: shard 3's folder
    //    holds a file quenchwise did not write, so task 3 refuses it.
    std::fs::create_dir_all(work.join("shards/shard-3")).unwrap();
    std::fs::write(work.join("shards/shard-3/notes.txt"), "mine").unwrap();
    let (array, merge) = s.submit(&[]);
    let tasks = cluster.wait(&array);
    for (task, state, exit) in &tasks {
        let want = if task == "3" { "FAILED" } else { "COMPLETED" };
        assert_eq!(
            state,
            want,
            "task {task} (exit {exit}): {tasks:?}\n{}",
            s.logs()
        );
    }
    assert_eq!(tasks.len(), 4, "{tasks:?}");
    let log3 = s.log(&format!("shard-{array}_3.log"));
    assert!(log3.contains("exists and is not empty"), "{log3}");
    let log0 = s.log(&format!("shard-{array}_0.log"));
    assert!(
        log0.contains("shard 0/4: chunks 0..4 of the first pass kept in shards/shard-0"),
        "{log0}"
    );
    cluster.wait(&merge);
    let m = cluster.state_and_reason(&merge);
    assert!(
        m.contains("JobState=CANCELLED") && m.contains("DependencyNeverSatisfied"),
        "the merge should be cancelled when a task fails: {m}\n{}",
        s.logs()
    );
    assert!(!work.join("results").exists());
    //    A merge submitted by hand now (no dependency) names the missing
    //    shard: task 3 kept nothing.
    let lone = s.merge_by_hand();
    s.expect(&lone, "FAILED");
    let log = s.log(&format!("merge-{lone}.log"));
    assert!(
        log.contains("shards/shard-3 holds no shard yet")
            && log.contains("shard 3/4 missing: 3 of 4 given"),
        "{log}"
    );
    assert!(!work.join("results").exists());

    // 2. The user clears the folder and reruns task 3 alone; the new merge
    //    combines shards from two array jobs into the unsplit result.
    std::fs::remove_file(work.join("shards/shard-3/notes.txt")).unwrap();
    let (array, merge) = s.submit(&["rerun", "3"]);
    s.expect(&array, "COMPLETED");
    s.expect(&merge, "COMPLETED");
    let log = s.log(&format!("merge-{merge}.log"));
    assert!(log.contains("shortlist: results/shortlist.csv"), "{log}");
    s.assert_results_equal_unsplit();

    // 3. A shard that lost a chunk: the merge fails and names it (submitted
    //    by hand, as merge.sh's comments show).
    std::fs::rename(work.join("results"), work.join("results-first")).unwrap();
    std::fs::remove_file(s.chunk(2, 9)).unwrap();
    let lone = s.merge_by_hand();
    s.expect(&lone, "FAILED");
    let log = s.log(&format!("merge-{lone}.log"));
    assert!(
        log.contains("unfinished shards: shard 2/4 (shards/shard-2) kept 3 of its 4 chunks"),
        "{log}"
    );
    assert!(!work.join("results").exists());

    // 4. Rerunning task 2 resumes it: the three chunks it kept stay as they
    //    are (same files), the lost one is computed again.
    let inode = |k: usize| std::fs::metadata(s.chunk(2, k)).unwrap().ino();
    let kept: Vec<u64> = [8, 10, 11].into_iter().map(inode).collect();
    let (array, merge) = s.submit(&["rerun", "2"]);
    s.expect(&array, "COMPLETED");
    let log2 = s.log(&format!("shard-{array}_2.log"));
    assert!(
        log2.contains("shard 2/4 of screen.toml") && log2.contains("--resume"),
        "{log2}"
    );
    assert_eq!(
        [8, 10, 11].into_iter().map(inode).collect::<Vec<_>>(),
        kept,
        "a resumed task must not compute its kept chunks again"
    );
    assert!(s.chunk(2, 9).exists());
    s.expect(&merge, "COMPLETED");
    s.assert_results_equal_unsplit();

    drop(s);
    drop(cluster);
    println!(
        "slurm test: {:.0} s (cluster start, unsplit run, 4 submissions)",
        started.elapsed().as_secs_f64()
    );
    let _ = std::fs::remove_dir_all(work.parent().unwrap());
}
