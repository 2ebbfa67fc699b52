//! `spinfall gravity`: the polyhedron field at points, one JSON object per line or CSV.

use std::process::ExitCode;

use spinfall_gravity::MassSpec;
use spinfall_workflow::export::{
    FieldPoints, evaluate_field, read_points_file, write_field_samples,
};
use spinfall_workflow::gravity_method::gravity_model;
use spinfall_workflow::output::{OutputTarget, write_file};
use spinfall_workflow::shape::open_shape;

use super::{announce_field, field_hooks, gravity_options, shape_request};
use crate::cli::GravityArgs;
use crate::exit::{CliError, CmdResult, note};

pub fn run(args: &GravityArgs) -> CmdResult<ExitCode> {
    let mass = match (args.density, args.mass, args.gm) {
        (Some(d), None, None) => MassSpec::DensityKgM3(d),
        (None, Some(m), None) => MassSpec::MassKg(m),
        (None, None, Some(gm)) => MassSpec::GmM3S2(gm),
        _ => {
            return Err(CliError::input(
                "give exactly one of --density, --mass, --gm",
            ));
        }
    };
    let points = match &args.points {
        Some(path) => read_points_file(path)?,
        None => FieldPoints::from_args(&args.at)?,
    };
    let opened = open_shape(&shape_request(&args.shape))?;
    for w in &opened.warnings {
        note(&format!("warning: {w}"));
    }
    let options = gravity_options(&args.field);
    let spec = options.resolve(None);
    let (field, used) = gravity_model(&opened.shape, mass, &spec, &options, &field_hooks())?;
    announce_field(&used);
    let samples = evaluate_field(field.as_ref(), &points)?;
    write_file(&OutputTarget::Stdout, |w| {
        write_field_samples(w, &points.points_m, &samples, args.csv)
    })?;
    Ok(ExitCode::SUCCESS)
}
