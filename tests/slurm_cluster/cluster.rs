//! A one-node Slurm cluster on localhost for one test: munged, slurmctld and slurmd with their
//! key, configuration, state, spool, logs and pid files all in one private temporary folder, on
//! free ports, so the test touches nothing of the machine's own (no /etc/slurm, no /etc/munge).
//! The daemons run as root (Debian's slurm-wlm and munge packages, as CI installs them) and are
//! stopped when the [`Cluster`] is dropped.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::{Duration, Instant};

/// Programs the cluster needs.
const PROGRAMS: [&str; 8] = [
    "munged",
    "mungekey",
    "slurmctld",
    "slurmd",
    "sbatch",
    "squeue",
    "sinfo",
    "scontrol",
];

/// Why the cluster cannot run here, if it cannot: a missing program or not root.
pub fn unavailable() -> Option<String> {
    let missing: Vec<&str> = PROGRAMS
        .iter()
        .copied()
        .filter(|p| find_program(p).is_none())
        .collect();
    if !missing.is_empty() {
        return Some(format!(
            "Slurm is not installed here (missing {}; Debian: apt-get install slurm-wlm munge)",
            missing.join(", ")
        ));
    }
    let uid = Command::new("id").arg("-u").output().ok()?;
    if String::from_utf8_lossy(&uid.stdout).trim() != "0" {
        return Some("the one-node cluster runs its daemons as root, and this is not root".into());
    }
    None
}

/// The full path of `name` on PATH or in the sbin folders (where Debian puts the daemons).
pub fn find_program(name: &str) -> Option<PathBuf> {
    let path = std::env::var_os("PATH").unwrap_or_default();
    std::env::split_paths(&path)
        .chain(["/usr/sbin", "/sbin", "/usr/bin"].map(PathBuf::from))
        .map(|dir| dir.join(name))
        .find(|p| p.is_file())
}

/// A running one-node cluster.
pub struct Cluster {
    dir: tempfile::TempDir,
    conf: PathBuf,
}

impl Cluster {
    /// Writes the key and the configuration, starts the three daemons and waits until the node
    /// is idle (at most a minute).
    pub fn start() -> Cluster {
        let dir = tempfile::Builder::new()
            .prefix("spinfall-slurm-")
            .tempdir()
            .expect("temporary folder");
        let root = dir.path().to_path_buf();
        for sub in ["munge", "state", "spool", "log"] {
            std::fs::create_dir_all(root.join(sub)).expect("cluster folders");
        }
        let mut cluster = Cluster {
            conf: root.join("slurm.conf"),
            dir,
        };
        let munge = root.join("munge");
        run_ok(Command::new(program("mungekey")).args([
            "--create",
            &format!("--keyfile={}", munge.join("munge.key").display()),
        ]));
        run_ok(Command::new(program("munged")).args([
            "--force".to_string(),
            format!("--socket={}", cluster.munge_socket().display()),
            format!("--key-file={}", munge.join("munge.key").display()),
            format!("--log-file={}", root.join("log/munged.log").display()),
            format!("--pid-file={}", munge.join("munged.pid").display()),
            format!("--seed-file={}", munge.join("munged.seed").display()),
        ]));
        std::fs::write(&cluster.conf, cluster.configuration()).expect("slurm.conf");
        run_ok(
            Command::new(program("slurmctld"))
                .arg("-f")
                .arg(&cluster.conf),
        );
        run_ok(
            Command::new(program("slurmd"))
                .arg("-f")
                .arg(&cluster.conf)
                .arg("-N")
                .arg(cluster.node_name()),
        );
        let deadline = Instant::now() + Duration::from_secs(60);
        loop {
            let state = cluster.command("sinfo").args(["-h", "-o", "%T"]).output();
            let state = state.map(|o| String::from_utf8_lossy(&o.stdout).trim().to_string());
            if matches!(state.as_deref(), Ok("idle")) {
                break;
            }
            if Instant::now() > deadline {
                let logs = cluster.logs();
                cluster.stop();
                panic!("the one-node cluster did not come up within 60 s ({state:?}):\n{logs}");
            }
            std::thread::sleep(Duration::from_millis(250));
        }
        cluster
    }

    /// The cluster's private folder.
    pub fn dir(&self) -> &Path {
        self.dir.path()
    }

    /// A Slurm client command (`sbatch`, `squeue`, ...) or any program that calls them, pointed
    /// at this cluster's configuration.
    pub fn command(&self, name: &str) -> Command {
        let mut c = Command::new(find_program(name).unwrap_or_else(|| PathBuf::from(name)));
        c.env("SLURM_CONF", &self.conf);
        c
    }

    /// Waits until none of `jobs` is pending or running (at most `limit`), then returns the
    /// final state of each (`COMPLETED`, `FAILED`, ...).
    pub fn wait_for(&self, jobs: &[&str], limit: Duration) -> Vec<String> {
        let deadline = Instant::now() + limit;
        loop {
            let states: Vec<String> = jobs.iter().map(|j| self.job_states(j)).collect();
            let busy = states.iter().any(|s| {
                ["PENDING", "RUNNING", "CONFIGURING", "COMPLETING"]
                    .iter()
                    .any(|b| s.contains(b))
            });
            if !busy {
                return states;
            }
            assert!(
                Instant::now() < deadline,
                "jobs {jobs:?} still busy after {limit:?}: {states:?}\n{}",
                self.logs()
            );
            std::thread::sleep(Duration::from_millis(500));
        }
    }

    /// The states of every task of job `id` (an array job has one per task), joined by spaces.
    pub fn job_states(&self, id: &str) -> String {
        let out = self
            .command("scontrol")
            .args(["show", "job", "--oneliner", id])
            .output()
            .expect("scontrol runs");
        String::from_utf8_lossy(&out.stdout)
            .split_whitespace()
            .filter_map(|w| w.strip_prefix("JobState="))
            .collect::<Vec<_>>()
            .join(" ")
    }

    /// The daemons' logs, for failure messages.
    pub fn logs(&self) -> String {
        ["slurmctld.log", "slurmd.log", "munged.log"]
            .iter()
            .map(|name| {
                let text =
                    std::fs::read_to_string(self.dir().join("log").join(name)).unwrap_or_default();
                let tail: Vec<&str> = text.lines().rev().take(15).collect();
                let tail: Vec<&str> = tail.into_iter().rev().collect();
                format!("--- {name}\n{}", tail.join("\n"))
            })
            .collect::<Vec<_>>()
            .join("\n")
    }

    /// The node's name: the machine's short host name (the daemons reach each other on
    /// 127.0.0.1 whatever it resolves to).
    fn node_name(&self) -> String {
        String::from_utf8_lossy(&run_ok(Command::new("hostname").arg("-s")).stdout)
            .trim()
            .to_string()
    }

    fn munge_socket(&self) -> PathBuf {
        self.dir().join("munge").join("munge.sock")
    }

    fn configuration(&self) -> String {
        let host = self.node_name();
        let cpus = std::thread::available_parallelism().map_or(1, |n| n.get());
        let [ctld_port, d_port] = free_ports();
        let d = self.dir().display();
        format!(
            "ClusterName=spinfalltest\n\
             SlurmctldHost={host}(127.0.0.1)\n\
             SlurmctldPort={ctld_port}\n\
             SlurmdPort={d_port}\n\
             SlurmUser=root\n\
             SlurmdUser=root\n\
             AuthType=auth/munge\n\
             CredType=cred/munge\n\
             AuthInfo=socket={socket}\n\
             ProctrackType=proctrack/linuxproc\n\
             TaskPlugin=task/none\n\
             JobAcctGatherType=jobacct_gather/none\n\
             MpiDefault=none\n\
             SelectType=select/cons_tres\n\
             SelectTypeParameters=CR_Core\n\
             ReturnToService=2\n\
             MinJobAge=3600\n\
             StateSaveLocation={d}/state\n\
             SlurmdSpoolDir={d}/spool\n\
             SlurmctldPidFile={d}/slurmctld.pid\n\
             SlurmdPidFile={d}/slurmd.pid\n\
             SlurmctldLogFile={d}/log/slurmctld.log\n\
             SlurmdLogFile={d}/log/slurmd.log\n\
             NodeName={host} NodeAddr=127.0.0.1 CPUs={cpus} RealMemory=2000 State=UNKNOWN\n\
             PartitionName=main Nodes={host} Default=YES MaxTime=INFINITE State=UP\n",
            socket = self.munge_socket().display(),
        )
    }

    /// Stops the daemons by the PIDs in their pid files (slurmd first, munged last).
    fn stop(&mut self) {
        for pid_file in ["slurmd.pid", "slurmctld.pid", "munge/munged.pid"] {
            let Ok(pid) = std::fs::read_to_string(self.dir().join(pid_file)) else {
                continue;
            };
            let pid = pid.trim();
            let _ = Command::new("kill").arg(pid).output();
            // Give it up to 5 s to go, so the folder can be removed.
            for _ in 0..50 {
                if !Path::new(&format!("/proc/{pid}")).exists() {
                    break;
                }
                std::thread::sleep(Duration::from_millis(100));
            }
        }
    }
}

impl Drop for Cluster {
    fn drop(&mut self) {
        self.stop();
    }
}

fn program(name: &str) -> PathBuf {
    find_program(name).unwrap_or_else(|| panic!("{name} is not installed"))
}

/// Runs `command`; panics with its output if it fails.
pub fn run_ok(command: &mut Command) -> Output {
    let out = command
        .output()
        .unwrap_or_else(|e| panic!("cannot run {command:?}: {e}"));
    assert!(
        out.status.success(),
        "{command:?} failed ({:?}):\n{}\n{}",
        out.status.code(),
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

/// Two TCP ports nobody listens on now.
fn free_ports() -> [u16; 2] {
    let a = std::net::TcpListener::bind("127.0.0.1:0").expect("a free port");
    let b = std::net::TcpListener::bind("127.0.0.1:0").expect("a free port");
    let ports = [
        a.local_addr().expect("port").port(),
        b.local_addr().expect("port").port(),
    ];
    drop((a, b));
    ports
}
