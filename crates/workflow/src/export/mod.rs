//! The exporters: every table and document Spinfall writes, to any `Write`. CSV through the
//! `csv` crate (quoting, one header), JSON through `serde_json`; numbers in the shortest form that
//! reads back exactly. Files are opened by [`crate::output`], never here.

mod equilibria;
mod field;
mod info;
mod results;
mod slice;
mod statistics;
mod surface_map;
mod trajectories;

pub use equilibria::write_equilibria_json;
pub use field::{
    FieldPoints, evaluate_field, evaluate_points, parse_points_csv, read_points_file,
    write_field_samples,
};
pub use info::{ShapeInfo, shape_info, write_shape_info};
pub use results::{
    outcome_text, write_results_csv, write_results_json, write_results_json_embedding,
};
pub use slice::write_slice_csv;
pub use statistics::{write_landing_density_csv, write_statistics_json};
pub use surface_map::write_surface_map_csv;
pub use trajectories::{
    TRAJECTORY_HEADER, TrajectoryBlock, TrajectoryBlocks, TrajectoryCsv, write_trajectories_csv,
};

use crate::error::WorkflowError;

/// The rows of a 3x3 matrix (for JSON).
pub(crate) fn rows(m: &nalgebra::Matrix3<f64>) -> [[f64; 3]; 3] {
    [0, 1, 2].map(|i| [m[(i, 0)], m[(i, 1)], m[(i, 2)]])
}

/// A CSV writer over `w` that writes the header given, not one of its own.
pub(crate) fn csv_writer(w: &mut dyn std::io::Write) -> csv::Writer<&mut dyn std::io::Write> {
    csv::WriterBuilder::new().has_headers(false).from_writer(w)
}

/// A CSV error as an output error (the path is filled in by the output module).
pub(crate) fn csv_error(e: csv::Error) -> WorkflowError {
    match e.into_kind() {
        csv::ErrorKind::Io(e) => crate::output::io_error(e),
        other => WorkflowError::output_msg("", format!("{other:?}")),
    }
}

/// A JSON error while writing as an output error.
pub(crate) fn json_error(e: serde_json::Error) -> WorkflowError {
    match e.io_error_kind() {
        Some(kind) => crate::output::io_error(std::io::Error::new(kind, e)),
        None => WorkflowError::output_msg("", e.to_string()),
    }
}
