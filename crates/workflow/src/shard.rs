//! Sharded runs: one process flies a deterministic share of a scenario's launches
//! (`spinfall fly --shard K/N`), so that a cluster job array can fly a big dispersion study and
//! [`crate::merge`] can put the shares back together.
//!
//! **Which launches.** Launches are numbered in launch order after fans and dispersion sets are
//! expanded (the order of `results.json`); shard `K` of `N` flies the launches `i` with
//! `i mod N = K`. Consecutive launches (the members of one fan or dispersion set) therefore go
//! to different shards, so every shard has about the same mix of short and long flights, and
//! the shards' sizes differ by at most one. A launch's result does not depend on the shard that
//! flies it nor on `N`: flights share only gravity evaluations, which are bit-identical
//! whatever the batch (see DEVELOPERS.md, *Determinism*). Targeted entries are solved only by
//! the shards that fly some of their launches; a solution does not depend on which others are
//! solved.
//!
//! **A shard's folder** is a run folder ([`crate::run_files`]) without the statistics files
//! (those are computed at the merge), whose manifest also says `shard: [K, N]`, the run's
//! `launch_count`, the `field_method` and the shard's `launch_ids`
//! ([`crate::output::ShardRecord`]).
//!
//! **Re-submitted shards** ([`existing_shard`]) may skip their work when the folder already
//! holds a complete shard, every file matching its manifest, of the same scenario, software,
//! shard and gravity method; anything else (no manifest, a killed run, a changed file, another
//! scenario) is flown again, never trusted.

use std::path::Path;

use crate::error::{Result, WorkflowError};
use crate::gravity_method::describe_spec;
use crate::output::{Manifest, RUN_MANIFEST, read_verified};
use crate::prepare::PrepareOptions;
use crate::run_files::{RUN_FILES, scenario_sha256};
use crate::scenario_file::LoadedScenario;

/// The most shards a run may be split into.
pub const MAX_SHARDS: u32 = 1_000_000;

/// Shard `K` of `N` (`0 <= K < N`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Shard {
    index: u32,
    count: u32,
}

impl Shard {
    /// Shard `index` of `count`.
    ///
    /// # Errors
    /// `count` 0 or above [`MAX_SHARDS`], or `index >= count`.
    pub fn new(index: u32, count: u32) -> Result<Shard> {
        if count == 0 {
            return Err(WorkflowError::Invalid(format!(
                "shard {index}/{count}: the number of shards N must be at least 1"
            )));
        }
        if count > MAX_SHARDS {
            return Err(WorkflowError::Invalid(format!(
                "shard {index}/{count}: at most {MAX_SHARDS} shards"
            )));
        }
        if index >= count {
            return Err(WorkflowError::Invalid(format!(
                "shard {index}/{count}: K must be below N (shards are numbered 0 to {})",
                count - 1
            )));
        }
        Ok(Shard { index, count })
    }

    /// Parses `K/N` (decimal, no signs or spaces).
    ///
    /// # Errors
    /// Not of that form, or refused by [`Shard::new`].
    pub fn parse(text: &str) -> Result<Shard> {
        let malformed = || {
            WorkflowError::Invalid(format!(
                "shard {}: expected K/N with whole numbers 0 <= K < N, such as 0/4",
                spinfall_gravity::text::excerpt(text)
            ))
        };
        let (k, n) = text.split_once('/').ok_or_else(malformed)?;
        let number = |s: &str| -> Result<u32> {
            if s.is_empty() || !s.bytes().all(|b| b.is_ascii_digit()) {
                return Err(malformed());
            }
            s.parse::<u32>().map_err(|_| {
                WorkflowError::Invalid(format!(
                    "shard {}: {} is too large (at most {MAX_SHARDS} shards)",
                    spinfall_gravity::text::excerpt(text),
                    spinfall_gravity::text::excerpt(s)
                ))
            })
        };
        Shard::new(number(k)?, number(n)?)
    }

    /// `K`.
    pub fn index(&self) -> u32 {
        self.index
    }

    /// `N`.
    pub fn count(&self) -> u32 {
        self.count
    }

    /// Whether this shard flies launch `launch` (an index in launch order).
    pub fn owns(&self, launch: usize) -> bool {
        launch % self.count as usize == self.index as usize
    }

    /// How many of `total` launches this shard flies.
    pub fn share(&self, total: u64) -> u64 {
        let (k, n) = (u64::from(self.index), u64::from(self.count));
        if total > k {
            (total - k).div_ceil(n)
        } else {
            0
        }
    }

    /// The launches (indices in launch order) this shard flies, of `total`.
    pub fn launches(&self, total: usize) -> impl Iterator<Item = usize> + use<> {
        (self.index as usize..total).step_by(self.count as usize)
    }

    /// Where launch `launch` is among this shard's launches (`None`: another shard flies it).
    pub fn position_of(&self, launch: usize) -> Option<usize> {
        self.owns(launch)
            .then(|| (launch - self.index as usize) / self.count as usize)
    }

    /// The launch (index in launch order) at `position` among this shard's launches.
    pub fn launch_at(&self, position: usize) -> usize {
        position * self.count as usize + self.index as usize
    }

    /// Whether this shard flies any launch of `range` (the launches of one scenario entry).
    pub fn owns_any(&self, range: std::ops::Range<usize>) -> bool {
        let n = self.count as usize;
        let k = self.index as usize;
        if range.is_empty() {
            return false;
        }
        let first = range.start + (k + n - range.start % n) % n;
        first < range.end
    }
}

impl std::fmt::Display for Shard {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

impl std::str::FromStr for Shard {
    type Err = WorkflowError;
    fn from_str(s: &str) -> Result<Shard> {
        Shard::parse(s)
    }
}

/// What a re-submitted shard must find in its folder to skip its work.
#[derive(Debug, Clone, PartialEq)]
pub struct ShardExpectation {
    /// The shard.
    pub shard: Shard,
    /// SHA-256 of the scenario (see [`crate::run_files::scenario_sha256`]).
    pub scenario_sha256: String,
    /// The gravity method without the machine's kernel (see
    /// [`crate::gravity_method::describe_method`]).
    pub field_method: String,
    /// Launches of the whole run.
    pub launch_count: u64,
    /// The shard's launch ids, in launch order.
    pub launch_ids: Vec<String>,
}

/// What a shard's folder holds.
#[derive(Debug, Clone, PartialEq)]
pub enum ExistingShard {
    /// A complete shard as expected: its manifest.
    Complete(Box<Manifest>),
    /// Nothing usable: why (the shard is flown again).
    Redo(String),
}

/// What shard `shard` of `loaded` prepared with `options` must find to skip its work (no
/// shape is opened, nothing is built).
///
/// # Errors
/// The launch count beyond the limits (counted without building the launches).
pub fn expectation(
    loaded: &LoadedScenario,
    options: &PrepareOptions,
    shard: Shard,
) -> Result<ShardExpectation> {
    crate::prepare::check_launch_limit(loaded, options)?;
    let scenario = &loaded.scenario;
    let ids = scenario.launch_ids();
    let spec = options.gravity.resolve(scenario.field.as_ref());
    Ok(ShardExpectation {
        shard,
        scenario_sha256: scenario_sha256(scenario).unwrap_or_default(),
        field_method: describe_spec(&spec),
        launch_count: ids.len() as u64,
        launch_ids: shard.launches(ids.len()).map(|i| ids[i].clone()).collect(),
    })
}

/// This build's name and version, as manifests write it.
pub fn software() -> String {
    format!("spinfall {}", env!("CARGO_PKG_VERSION"))
}

/// The first file of a run folder ([`RUN_FILES`]) that manifest `m` does not list, if any.
pub(crate) fn unlisted_run_file(m: &Manifest) -> Option<&'static str> {
    RUN_FILES
        .iter()
        .copied()
        .find(|name| !m.files.iter().any(|f| f.name == *name))
}

/// Whether `folder` holds a complete shard as `expected`: a complete manifest whose files all
/// match it (sizes and SHA-256), of the same shard, scenario, software, gravity method and
/// launches. Never fails: anything else is [`ExistingShard::Redo`] with the reason.
pub fn existing_shard(folder: &Path, expected: &ShardExpectation) -> ExistingShard {
    if !folder.join(RUN_MANIFEST).exists() {
        return ExistingShard::Redo(format!("{} has no manifest yet", folder.display()));
    }
    let set = match read_verified(folder, RUN_MANIFEST) {
        Ok(set) => set,
        Err(e) => return ExistingShard::Redo(e.to_string()),
    };
    let m = set.manifest;
    let want = [expected.shard.index, expected.shard.count];
    let why = if m.shard != Some(want) {
        Some(match m.shard {
            Some([k, n]) => format!("it holds shard {k}/{n}, not {}", expected.shard),
            None => "it holds a run that is not a shard".to_string(),
        })
    } else if m.scenario_sha256.as_deref() != Some(expected.scenario_sha256.as_str()) {
        Some("it holds a shard of another scenario (the scenario's SHA-256 differs)".into())
    } else if m.software != software() {
        Some(format!(
            "it was written by {}, this is {}",
            spinfall_gravity::text::excerpt(&m.software),
            software()
        ))
    } else if m.field_method.as_deref() != Some(expected.field_method.as_str()) {
        Some(format!(
            "its gravity method differs ({} there, {} now)",
            m.field_method.as_deref().unwrap_or("none"),
            expected.field_method
        ))
    } else if m.launch_count != Some(expected.launch_count)
        || m.launch_ids.as_deref() != Some(expected.launch_ids.as_slice())
    {
        Some("its launches are not this shard's".into())
    } else {
        unlisted_run_file(&m).map(|name| format!("its manifest does not list {name}"))
    };
    match why {
        Some(why) => ExistingShard::Redo(format!("{}: {why}", folder.display())),
        None => ExistingShard::Complete(Box::new(m)),
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn shards_parse_and_refuse_what_is_not_k_of_n() {
        assert_eq!(Shard::parse("0/1").unwrap(), Shard::new(0, 1).unwrap());
        assert_eq!(Shard::parse("3/4").unwrap().to_string(), "3/4");
        for (bad, words) in [
            ("4/4", "K must be below N"),
            ("7/3", "K must be below N"),
            ("0/0", "at least 1"),
            ("1", "expected K/N"),
            ("1/", "expected K/N"),
            ("/4", "expected K/N"),
            ("-1/4", "expected K/N"),
            ("+1/4", "expected K/N"),
            (" 1/4", "expected K/N"),
            ("1/4/5", "expected K/N"),
            ("a/b", "expected K/N"),
            ("0/99999999999", "too large"),
            ("0/2000000", "at most"),
        ] {
            let e = Shard::parse(bad).unwrap_err().to_string();
            assert!(e.contains(words), "{bad}: {e}");
        }
    }

    /// Every launch belongs to exactly one shard, shards differ in size by at most one, and
    /// the members of one group (consecutive launches) spread over the shards.
    #[test]
    fn shards_partition_the_launches_evenly() {
        for total in [0usize, 1, 5, 16, 17, 1000] {
            for n in 1..=7u32 {
                let shards: Vec<Shard> = (0..n).map(|k| Shard::new(k, n).unwrap()).collect();
                let mut seen = vec![0u32; total];
                for s in &shards {
                    let mine: Vec<usize> = s.launches(total).collect();
                    assert_eq!(mine.len() as u64, s.share(total as u64));
                    for (p, &i) in mine.iter().enumerate() {
                        seen[i] += 1;
                        assert!(s.owns(i));
                        assert_eq!(s.position_of(i), Some(p));
                        assert_eq!(s.launch_at(p), i);
                    }
                }
                assert!(seen.iter().all(|&c| c == 1), "{total} launches, {n} shards");
                let sizes: Vec<u64> = shards.iter().map(|s| s.share(total as u64)).collect();
                let (lo, hi) = (sizes.iter().min(), sizes.iter().max());
                assert!(hi.unwrap() - lo.unwrap() <= 1, "{sizes:?}");
                // A group of n consecutive launches has one member in every shard.
                if total >= n as usize {
                    for s in &shards {
                        assert_eq!((3..3 + n as usize).filter(|&i| s.owns(i)).count(), 1);
                    }
                }
                for s in &shards {
                    for start in 0..12 {
                        for len in 0..12 {
                            let r = start..start + len;
                            assert_eq!(
                                s.owns_any(r.clone()),
                                r.clone().any(|i| s.owns(i)),
                                "{s} {r:?}"
                            );
                        }
                    }
                }
            }
        }
    }
}
