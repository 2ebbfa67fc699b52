//! Groups of launches: the members expanded from one scenario entry with a fan or a dispersion
//! set, or any explicit list of launch ids.

use serde::{Deserialize, Serialize};

use crate::launch::{dispersion_member_id, fan_member_id};
use crate::scenario::Scenario;

/// What a group is made of.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum GroupKind {
    /// Every member of an entry's fan (ids `E/k`).
    Fan,
    /// Every member of an entry's dispersion set (ids `E#j`).
    Dispersion,
    /// Every member of an entry with both a fan and a dispersion set (ids `E/k#j`).
    FanOfDispersions,
    /// The dispersion set around one fan member (ids `E/k#j` for one `k`; group id `E/k`).
    FanMemberDispersion,
    /// Ids listed by the caller.
    Explicit,
}

/// A named group of launch ids.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LaunchGroup {
    /// Group id: the scenario entry's id (or `E/k` for one fan member's dispersion set), or
    /// the caller's name.
    pub id: String,
    /// What the group is made of.
    pub kind: GroupKind,
    /// The launch ids of its members, in launch order.
    pub member_ids: Vec<String>,
}

impl LaunchGroup {
    /// A group of the launches the caller lists.
    pub fn explicit(id: impl Into<String>, member_ids: Vec<String>) -> LaunchGroup {
        LaunchGroup {
            id: id.into(),
            kind: GroupKind::Explicit,
            member_ids,
        }
    }
}

/// The groups of a scenario, in entry order: one per entry with a fan or a dispersion set
/// (its id is the entry's id) and, for an entry with both, one more per fan member (id `E/k`,
/// its dispersion set). Entries of a single launch or an explicit state form no group.
///
/// Member ids follow the expansion in [`Scenario::build_launches`]: fan members `E/k`,
/// dispersion members `E#j`, both `E/k#j`. Counted from the entry without building launches.
pub fn scenario_groups(scenario: &Scenario) -> Vec<LaunchGroup> {
    let mut groups = Vec::new();
    for entry in &scenario.launches {
        if entry.state.is_some() {
            continue;
        }
        let id = &entry.id;
        match (&entry.fan, &entry.dispersion) {
            (Some(fan), None) => groups.push(LaunchGroup {
                id: id.clone(),
                kind: GroupKind::Fan,
                member_ids: (0..fan.count).map(|k| fan_member_id(id, k)).collect(),
            }),
            (None, Some(d)) => groups.push(LaunchGroup {
                id: id.clone(),
                kind: GroupKind::Dispersion,
                member_ids: (0..d.count).map(|j| dispersion_member_id(id, j)).collect(),
            }),
            (Some(fan), Some(d)) => {
                let member = |k: usize| -> Vec<String> {
                    (0..d.count)
                        .map(|j| dispersion_member_id(&fan_member_id(id, k), j))
                        .collect()
                };
                groups.push(LaunchGroup {
                    id: id.clone(),
                    kind: GroupKind::FanOfDispersions,
                    member_ids: (0..fan.count).flat_map(member).collect(),
                });
                for k in 0..fan.count {
                    groups.push(LaunchGroup {
                        id: format!("{id}/{k}"),
                        kind: GroupKind::FanMemberDispersion,
                        member_ids: member(k),
                    });
                }
            }
            (None, None) => {}
        }
    }
    groups
}
