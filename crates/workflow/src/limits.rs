//! Limits and estimates: how many launches a run has, how much memory and output it needs at
//! most, checked against a launch limit, the memory available and the free space, before any
//! work starts.

use std::path::Path;

use serde::Serialize;
use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::{Contact, FlightReport, FlightSettings, TrajectorySample};

use crate::error::{Result, WorkflowError};

/// Upper bounds of what a run needs, computed from the scenario alone.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct Estimate {
    /// Launches after fans and dispersion sets are expanded.
    pub launches: u64,
    /// Most memory the run's results take (every trajectory at its sample cap), bytes.
    pub memory_bytes: u64,
    /// Least size of the output files (results and two trajectory rows per launch), bytes.
    pub output_min_bytes: u64,
    /// Most size of the output files (every trajectory at its sample cap), bytes.
    pub output_max_bytes: u64,
}

impl std::fmt::Display for Estimate {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{} launches, up to {} of memory, {} to {} of output files",
            self.launches,
            bytes_text(self.memory_bytes),
            bytes_text(self.output_min_bytes),
            bytes_text(self.output_max_bytes)
        )
    }
}

/// Bytes of memory per face of a prepared body (mesh, BVH, face and edge tables of the
/// gravity field), a generous bound.
const BODY_BYTES_PER_FACE: u64 = 2048;
/// Most bytes of one trajectory row in the CSV (id aside): nine numbers and a frame name.
const TRAJECTORY_ROW_BYTES: u64 = 9 * 25 + 10;
/// Most bytes of one launch in results.json and results.csv without its contacts.
const RESULT_BYTES: u64 = 2500;
/// Most bytes of one contact in results.json.
const CONTACT_BYTES: u64 = 400;

/// The estimate of a run of `scenario` on a body of `face_count` faces with `settings`.
pub fn estimate(scenario: &Scenario, face_count: usize, settings: &FlightSettings) -> Estimate {
    estimate_launches(scenario, scenario.launch_count(), face_count, settings)
}

/// As [`estimate`], for `launches` of the scenario's launches (the share of one shard).
pub fn estimate_launches(
    scenario: &Scenario,
    launches: u64,
    face_count: usize,
    settings: &FlightSettings,
) -> Estimate {
    let samples = 2 * settings.sampling.max_samples_per_frame as u64;
    let contacts = u64::from(settings.bounce.max_bounces) + 2;
    let id_bytes = scenario
        .launches
        .iter()
        .map(|l| l.id.len() as u64 + 16)
        .max()
        .unwrap_or(16);
    let per_launch_memory = samples * size_of::<TrajectorySample>() as u64
        + contacts * size_of::<Contact>() as u64
        + size_of::<FlightReport>() as u64
        + 2 * id_bytes
        + 256;
    let per_launch_min = RESULT_BYTES / 4 + 2 * (TRAJECTORY_ROW_BYTES / 3 + id_bytes);
    let per_launch_max =
        RESULT_BYTES + contacts * CONTACT_BYTES + samples * (TRAJECTORY_ROW_BYTES + id_bytes);
    Estimate {
        launches,
        memory_bytes: (face_count as u64)
            .saturating_mul(BODY_BYTES_PER_FACE)
            .saturating_add(launches.saturating_mul(per_launch_memory)),
        output_min_bytes: launches.saturating_mul(per_launch_min),
        output_max_bytes: launches.saturating_mul(per_launch_max),
    }
}

/// Limits a run is checked against.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Limits {
    /// Most launches; `None` takes the scenario's `limits.max_launches` (or the default).
    pub max_launches: Option<u64>,
    /// Memory the run may use, bytes; `None` measures what the machine has available.
    pub memory_bytes: Option<u64>,
}

impl Limits {
    /// Refuses `estimate` when it has more launches than the limit (the given one, else the
    /// scenario's), or needs more memory than is available.
    pub fn check(&self, scenario: &Scenario, estimate: &Estimate) -> Result<()> {
        let limit = self.max_launches.unwrap_or_else(|| scenario.max_launches());
        if estimate.launches > limit {
            return Err(WorkflowError::TooManyLaunches {
                launches: estimate.launches,
                limit,
                estimate: *estimate,
            });
        }
        if let Some(available) = self.memory_bytes.or_else(available_memory_bytes)
            && estimate.memory_bytes > available
        {
            return Err(WorkflowError::NotEnoughMemory {
                estimate: *estimate,
                available_bytes: available,
            });
        }
        Ok(())
    }
}

/// Memory available to a new process now (Linux: `MemAvailable` of `/proc/meminfo`), bytes;
/// `None` where it cannot be read.
pub fn available_memory_bytes() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let kib: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib.saturating_mul(1024))
}

/// Free space for an unprivileged user on the file system of `dir`, bytes; `None` where it
/// cannot be read.
pub fn free_space_bytes(dir: &Path) -> Option<u64> {
    #[cfg(unix)]
    {
        let st = rustix::fs::statvfs(dir).ok()?;
        Some(st.f_bavail.saturating_mul(st.f_frsize))
    }
    #[cfg(not(unix))]
    {
        let _ = dir;
        None
    }
}

/// A byte count for people: `12.3 MB` (powers of 1000).
pub fn bytes_text(bytes: u64) -> String {
    let b = bytes as f64;
    if b < 1e3 {
        format!("{bytes} B")
    } else if b < 1e6 {
        format!("{:.1} kB", b / 1e3)
    } else if b < 1e9 {
        format!("{:.1} MB", b / 1e6)
    } else if b < 1e12 {
        format!("{:.1} GB", b / 1e9)
    } else {
        format!("{:.1} TB", b / 1e12)
    }
}
