//! `spinfall merge`: the shard folders of a run (`fly --shard K/N`) checked and merged into the
//! files one `spinfall fly` would write.

use std::process::ExitCode;

use spinfall_workflow::merge::merge_shards;

use super::failures_exit_code;
use crate::cli::MergeArgs;
use crate::exit::{CmdResult, note};

pub fn run(args: &MergeArgs) -> CmdResult<ExitCode> {
    let done = merge_shards(&args.shards, &args.out, &|w| {
        note(&format!("warning: {w}"));
    })?;
    let names: Vec<String> = done
        .written
        .iter()
        .filter_map(|p| p.file_name().map(|n| n.to_string_lossy().into_owned()))
        .collect();
    note(&format!(
        "merged {} shards ({} launches) into {} ({})",
        done.shards,
        done.launches,
        args.out.display(),
        names.join(", ")
    ));
    Ok(failures_exit_code(
        done.failed
            .iter()
            .map(|(id, why)| (id.as_str(), why.as_str())),
    ))
}
