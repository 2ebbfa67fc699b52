//! `spinfall fly`: every launch of a scenario; writes results.json (with the scenario
//! embedded), results.csv, trajectories.csv, and for a scenario with a fan or dispersion group
//! statistics.json and landing_density.csv, with the manifest into a folder, as one set.
//! With `--shard K/N`, only that shard's launches and no statistics files (see
//! `spinfall_workflow::shard`); `--skip-complete` skips a shard already complete.

use std::process::ExitCode;

use spinfall_workflow::output::OutputFolder;
use spinfall_workflow::prepare::{PrepareOptions, Purpose, prepare_with_targeting};
use spinfall_workflow::run_files::{
    StatisticsOutput, run_info_of, write_run_folder_with_statistics,
};
use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};
use spinfall_workflow::shard::{ExistingShard, existing_shard, expectation};
use spinfall_workflow::statistics::{StatisticsRequest, compute_statistics};

use super::{
    announce, announce_field, field_hooks, fly_with_progress, gravity_options, limits,
    run_exit_code, scenario_warnings,
};
use crate::cli::FlyArgs;
use crate::exit::{CmdResult, note};

pub fn run(args: &FlyArgs) -> CmdResult<ExitCode> {
    // The folder first: a bad --out is refused before any work.
    let folder = OutputFolder::prepare(&args.out)?;
    let loaded = read_scenario(&ScenarioSource::from_spec(&args.scenario))?;
    scenario_warnings(&loaded.scenario);
    let options = PrepareOptions {
        limits: limits(&args.limits),
        gravity: gravity_options(&args.field),
        shard: args.shard,
        ..PrepareOptions::new(Purpose::Fly)
    };
    if let (Some(shard), true) = (args.shard, args.skip_complete) {
        let expected = expectation(&loaded, &options, shard)?;
        match existing_shard(&args.out, &expected) {
            ExistingShard::Complete(m) => {
                note(&format!(
                    "skipped: {} already holds shard {shard} complete (run {}, {} launches, \
                     every file matching its manifest; --skip-complete)",
                    args.out.display(),
                    m.run_id,
                    m.launch_ids.as_ref().map_or(0, Vec::len)
                ));
                return Ok(ExitCode::SUCCESS);
            }
            ExistingShard::Redo(why) => {
                note(&format!(
                    "flying shard {shard}: no complete shard to skip ({why})"
                ));
            }
        }
    }
    let targeting = targeting_printer();
    let prepared = prepare_with_targeting(loaded, &options, &field_hooks(), &targeting)?;
    for t in &prepared.targeting {
        note(&targeting_summary(t));
    }
    announce_field(&prepared.field);
    for w in &prepared.shape.warnings {
        note(&format!("warning: shape model: {w}"));
    }
    for w in prepared.contact.iter().flat_map(|c| &c.warnings) {
        note(&format!("warning: contact shape: {w}"));
    }
    announce(&prepared.estimate);
    folder.check_space(prepared.estimate.output_min_bytes)?;
    let done = fly_with_progress(&prepared)?;
    let info = run_info_of(&prepared);
    // A shard's statistics would be of a part of each group: `spinfall merge` writes them.
    let stats = if prepared.shard.is_some() {
        None
    } else {
        compute_statistics(
            &prepared.body,
            prepared.scenario(),
            &done.reports,
            &StatisticsRequest::default(),
        )?
    };
    let out = stats
        .as_ref()
        .map(|(statistics, density)| StatisticsOutput {
            body: &prepared.body,
            statistics,
            density,
        });
    let written = write_run_folder_with_statistics(&folder, &done.reports, &info, out.as_ref())?;
    let names: Vec<String> = written
        .iter()
        .filter_map(|p| p.file_name().map(|n| n.to_string_lossy().into_owned()))
        .collect();
    let of_shard = match args.shard {
        Some(shard) => format!(" of shard {shard}"),
        None => String::new(),
    };
    note(&format!(
        "wrote {} launches{of_shard} to {} ({})",
        done.reports.len(),
        args.out.display(),
        names.join(", ")
    ));
    Ok(run_exit_code(&done.reports))
}

/// Progress of targeted launches on stderr, at most one line a second per entry.
fn targeting_printer() -> impl Fn(&str, usize, usize) + Sync {
    let last = std::sync::Mutex::new(std::time::Instant::now());
    move |id: &str, flights: usize, max: usize| {
        if let Ok(mut last) = last.lock()
            && last.elapsed() >= std::time::Duration::from_secs(1)
        {
            *last = std::time::Instant::now();
            note(&format!(
                "targeting {id}: {flights} trial flights (at most {max})"
            ));
        }
    }
}

/// One line per targeted entry: the solution, or why the target is unreachable.
fn targeting_summary(t: &spinfall_dynamics::scenario::TargetedEntry) -> String {
    let r = &t.report;
    let snapped = match r.target.snap_distance_m {
        Some(d) => format!(" (target point_m snapped {d:.3} m to the nearest surface point)"),
        None => String::new(),
    };
    match (&r.launch, r.solved()) {
        (Some(l), true) => format!(
            "targeting {}: speed {:.4} m/s, azimuth {:.2} deg, elevation {:.2} deg, flight time \
             {:.1} s, miss {:.3} m (straight line), {} flights{snapped}",
            t.id,
            l.speed_m_s,
            l.azimuth_deg,
            l.elevation_deg,
            r.flight_time_s.unwrap_or(f64::NAN),
            r.miss_m.unwrap_or(f64::NAN),
            r.flights
        ),
        _ => format!(
            "targeting {}: unreachable: {} ({} flights){snapped}",
            t.id,
            r.reason.as_deref().unwrap_or("no solution"),
            r.flights
        ),
    }
}
