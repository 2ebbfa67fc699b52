//! The equilibrium points of a body as one JSON document.

use std::io::Write;

use serde::Serialize;
use spinfall_dynamics::equilibria::{
    Equilibrium, EquilibriumSearch, EquilibriumSet, RingReport, SearchCounts, SearchRegion,
};
use spinfall_dynamics::{Body, BodyFigures};

use super::json_error;
use crate::error::Result;
use crate::gravity_method::FieldUsed;

/// The body in an equilibria file.
#[derive(Serialize)]
struct BodyRecord<'a> {
    name: &'a str,
    #[serde(flatten)]
    figures: BodyFigures,
    spin_axis_body: [f64; 3],
    spin_rate_rad_s: f64,
}

#[derive(Serialize)]
struct EquilibriaFile<'a> {
    format: &'static str,
    version: u32,
    note: &'static str,
    frame: &'static str,
    body: BodyRecord<'a>,
    #[serde(skip_serializing_if = "Option::is_none")]
    field: Option<&'a FieldUsed>,
    search: &'a EquilibriumSearch,
    region: &'a SearchRegion,
    counts: &'a SearchCounts,
    truncated: bool,
    ring: &'a Option<RingReport>,
    notes: &'a [String],
    equilibria: &'a [Equilibrium],
}

/// Writes the equilibria of `body` as pretty JSON: format and version, the caution, the body
/// and its spin, how gravity was computed (`field`), the search (settings, region, counts,
/// ring, notes) and the list (`"equilibria"`, empty when none was found). Positions are in the
/// body frame of the prepared body (after any recentring), SI units, keys named with units
/// (`"eigenvalues"` are `[re, im]` pairs in 1/s).
pub fn write_equilibria_json(
    w: &mut dyn Write,
    body: &Body,
    set: &EquilibriumSet,
    field: Option<&FieldUsed>,
) -> Result<()> {
    let axis = body.spin.axis_body;
    let file = EquilibriaFile {
        format: "spinfall-equilibria",
        version: 1,
        note: crate::CAUTION,
        frame: "body-fixed (rotating with the body), origin and axes of the prepared shape",
        body: BodyRecord {
            name: &body.name,
            figures: body.figures(),
            spin_axis_body: [axis.x, axis.y, axis.z],
            spin_rate_rad_s: body.spin.rate_rad_s(),
        },
        field,
        search: &set.search,
        region: &set.region,
        counts: &set.counts,
        truncated: set.truncated,
        ring: &set.ring,
        notes: &set.notes,
        equilibria: &set.equilibria,
    };
    serde_json::to_writer_pretty(&mut *w, &file).map_err(json_error)?;
    w.write_all(b"\n").map_err(crate::output::io_error)?;
    Ok(())
}
