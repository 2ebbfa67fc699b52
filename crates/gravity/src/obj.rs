//! Wavefront OBJ reading: vertices and faces only, in f64, with line-numbered errors.
//!
//! Own line parser rather than `obj-rs`: that crate keeps positions in `f32` (about 0.2 mm of
//! rounding on a 5 km body, and no exact round-trip of written files) and its errors do not always
//! carry a line number. `obj-rs` serves as an independent reference in the tests instead.
//!
//! Read: `v x y z [w]` (w ignored), `f` with 3 or more corners written `i`, `i/t`, `i//n` or
//! `i/t/n` (texture and normal indices ignored), negative (relative) indices, `#` comments,
//! CRLF line endings; bytes that are not UTF-8 are tolerated (replaced) outside numbers.
//! Polygons are fan-triangulated from their first corner. Everything else (`vn`, `vt`, `g`, `o`,
//! `s`, `usemtl`, `mtllib`, `l`, `p`, ...) is ignored.

use std::io::BufRead;

use nalgebra::Point3;

use crate::error::{GravityError, Result};
use crate::mesh::{LengthUnit, Mesh};
use crate::validate::Warning;

fn parse_error(line: usize, message: String) -> GravityError {
    GravityError::Parse { line, message }
}

/// A face corner whose positive index is checked once the vertex count is known.
struct PendingCheck {
    line: usize,
    face_number: usize,
    index: i64,
}

/// Reads OBJ text whose coordinates are in `unit` into a [`Mesh`] in metres.
///
/// The mesh is not validated (closedness, orientation...): [`crate::ShapeModel::new`] does that.
/// The returned warnings are currently always empty (kept for forward compatibility).
///
/// # Errors
/// [`GravityError::Parse`] with the 1-based line for malformed lines, non-finite coordinates,
/// and indices that are zero or out of range (naming the face, the index and the vertex count);
/// [`GravityError::InvalidMesh`] for a file without vertices or faces; [`GravityError::Io`] if
/// the reader fails.
pub fn parse_obj(mut reader: impl BufRead, unit: LengthUnit) -> Result<(Mesh, Vec<Warning>)> {
    let scale = unit.metres_per_unit();
    let mut vertices_m: Vec<Point3<f64>> = Vec::new();
    let mut faces: Vec<[u32; 3]> = Vec::new();
    let mut pending: Vec<PendingCheck> = Vec::new();
    let mut face_number = 0usize;
    let mut bytes = Vec::new();
    let mut line_number = 0usize;
    loop {
        bytes.clear();
        if reader.read_until(b'\n', &mut bytes)? == 0 {
            break;
        }
        line_number += 1;
        // Lenient: bytes that are not UTF-8 (e.g. Latin-1 comments) become U+FFFD; keywords and
        // numbers are ASCII, so a bad byte there still fails with a line-numbered error.
        let text = String::from_utf8_lossy(&bytes);
        let content = text.split('#').next().unwrap_or("");
        let mut tokens = content.split_whitespace();
        let Some(keyword) = tokens.next() else {
            continue;
        };
        match keyword {
            "v" => {
                let args: Vec<&str> = tokens.collect();
                if args.len() != 3 && args.len() != 4 {
                    return Err(parse_error(
                        line_number,
                        format!(
                            "vertex {} needs 3 coordinates (x y z), found {}",
                            vertices_m.len() + 1,
                            args.len()
                        ),
                    ));
                }
                let mut xyz = [0.0; 3];
                for (k, arg) in args.iter().take(3).enumerate() {
                    let value: f64 = arg.parse().map_err(|_| {
                        parse_error(
                            line_number,
                            format!(
                                "vertex {}: coordinate {arg:?} is not a number",
                                vertices_m.len() + 1
                            ),
                        )
                    })?;
                    if !value.is_finite() {
                        return Err(parse_error(
                            line_number,
                            format!(
                                "vertex {} has a non-finite coordinate {arg:?}",
                                vertices_m.len() + 1
                            ),
                        ));
                    }
                    xyz[k] = value * scale;
                }
                if !xyz.iter().all(|x| x.is_finite()) {
                    return Err(parse_error(
                        line_number,
                        format!(
                            "vertex {} overflows when converted to metres",
                            vertices_m.len() + 1
                        ),
                    ));
                }
                vertices_m.push(Point3::new(xyz[0], xyz[1], xyz[2]));
            }
            "f" => {
                face_number += 1;
                let mut corners: Vec<u32> = Vec::with_capacity(4);
                for token in tokens {
                    let first = token.split('/').next().unwrap_or("");
                    let index: i64 = first.parse().map_err(|_| {
                        parse_error(
                            line_number,
                            format!("face {face_number}: vertex index {token:?} is not an integer"),
                        )
                    })?;
                    let resolved = if index > 0 {
                        pending.push(PendingCheck {
                            line: line_number,
                            face_number,
                            index,
                        });
                        index - 1
                    } else if index < 0 {
                        let at = vertices_m.len() as i64 + index;
                        if at < 0 {
                            return Err(parse_error(
                                line_number,
                                format!(
                                    "face {face_number} references relative vertex {index} but \
                                     only {} vertices precede it",
                                    vertices_m.len()
                                ),
                            ));
                        }
                        at
                    } else {
                        return Err(parse_error(
                            line_number,
                            format!(
                                "face {face_number} uses vertex index 0; OBJ indices start at 1"
                            ),
                        ));
                    };
                    let resolved = u32::try_from(resolved).map_err(|_| {
                        parse_error(
                            line_number,
                            format!("face {face_number}: vertex index {index} is too large"),
                        )
                    })?;
                    corners.push(resolved);
                }
                if corners.len() < 3 {
                    return Err(parse_error(
                        line_number,
                        format!(
                            "face {face_number} has {} corners; a face needs at least 3",
                            corners.len()
                        ),
                    ));
                }
                for k in 1..corners.len() - 1 {
                    faces.push([corners[0], corners[k], corners[k + 1]]);
                }
            }
            _ => {}
        }
    }
    let n_vertices = vertices_m.len();
    if let Some(bad) = pending.iter().find(|p| p.index as usize > n_vertices) {
        return Err(parse_error(
            bad.line,
            format!(
                "face {} references vertex {} but the file has {n_vertices} vertices",
                bad.face_number, bad.index
            ),
        ));
    }
    if n_vertices == 0 || faces.is_empty() {
        return Err(GravityError::InvalidMesh(format!(
            "the OBJ text has {n_vertices} vertices and {face_number} faces ({line_number} lines); \
             a shape model needs both"
        )));
    }
    Ok((Mesh { vertices_m, faces }, Vec::new()))
}
