//! `spinfall info`: mass properties and validation of a shape model, as JSON on stdout.

use std::process::ExitCode;

use spinfall_workflow::export::{shape_info, write_shape_info};
use spinfall_workflow::output::{OutputTarget, write_file};
use spinfall_workflow::shape::open_shape;

use super::shape_request;
use crate::cli::InfoArgs;
use crate::exit::CmdResult;

pub fn run(args: &InfoArgs) -> CmdResult<ExitCode> {
    let opened = open_shape(&shape_request(&args.shape))?;
    let info = shape_info(&opened, args.density)?;
    write_file(&OutputTarget::Stdout, |w| write_shape_info(w, &info))?;
    Ok(ExitCode::SUCCESS)
}
