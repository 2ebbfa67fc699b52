//! STL (stereolithography) reading, ASCII and binary, with line-numbered (ASCII) or
//! triangle-numbered (binary) errors, and welding of the unshared corners into vertices.
//!
//! - Which kind: a file whose size is exactly `84 + 50 n`, where `n` is the little-endian
//!   triangle count at byte 80, is binary (binary headers may begin with `solid` too, so the
//!   size decides); otherwise a file that begins with `solid` (after blanks) is ASCII; anything
//!   else is a binary file whose count disagrees with its size, and is refused naming both.
//! - Binary: 80-byte header (ignored), `u32` count, then per triangle a normal and three corners
//!   as little-endian `f32` and a 2-byte attribute (ignored). Corners become their exact `f64`
//!   values.
//! - ASCII: `solid [name]`, then per facet `facet normal nx ny nz`, `outer loop`, three
//!   `vertex x y z` lines, `endloop`, `endfacet`; `endsolid [name]`. Several solids in one file are
//!   read one after another. Coordinates are read in f64 as written.
//! - Normals are ignored: the corner order gives the orientation, and validation turns an
//!   inward-facing mesh outward (with a warning).
//! - Welding: STL stores each triangle's corners separately. Corners with exactly equal
//!   coordinates (bit for bit after reading, with -0 equal to +0) become one vertex; the weld
//!   tolerance is zero. Exporters write a shared corner with the same digits or the same `f32`,
//!   so this joins what was one vertex and never joins distinct vertices; a mesh whose corners
//!   differ in the last digit stays open, and validation then names the open edge.

use std::collections::HashMap;

use nalgebra::Point3;

use crate::error::{GravityError, Result};
use crate::mesh::{LengthUnit, Mesh};
use crate::text::excerpt;

fn malformed(at: String, message: String) -> GravityError {
    GravityError::Malformed {
        format: "STL",
        at,
        message,
    }
}

/// Size of a binary STL with `n` triangles, bytes.
fn binary_size(n: u32) -> u64 {
    84 + 50 * u64::from(n)
}

/// Whether `bytes` look like an STL file: a binary whose size matches its count, or text that
/// begins with `solid` and holds a `facet`.
pub(crate) fn looks_like_stl(bytes: &[u8]) -> bool {
    is_binary(bytes) || (begins_with_solid(bytes) && contains(bytes, b"facet"))
}

fn contains(bytes: &[u8], word: &[u8]) -> bool {
    bytes.windows(word.len()).any(|w| w == word)
}

fn declared_count(bytes: &[u8]) -> Option<u32> {
    let b = bytes.get(80..84)?;
    Some(u32::from_le_bytes([b[0], b[1], b[2], b[3]]))
}

fn is_binary(bytes: &[u8]) -> bool {
    declared_count(bytes).is_some_and(|n| binary_size(n) == bytes.len() as u64)
}

fn begins_with_solid(bytes: &[u8]) -> bool {
    let start = bytes.iter().position(|b| !b.is_ascii_whitespace());
    start.is_some_and(|s| bytes[s..].starts_with(b"solid"))
}

/// Joins corners with exactly equal coordinates into shared vertices.
struct Welder {
    scale: f64,
    index: HashMap<[u64; 3], u32>,
    vertices_m: Vec<Point3<f64>>,
}

impl Welder {
    fn new(scale: f64) -> Welder {
        Welder {
            scale,
            index: HashMap::new(),
            vertices_m: Vec::new(),
        }
    }

    fn corner(&mut self, c: [f64; 3]) -> u32 {
        let key = [
            (c[0] + 0.0).to_bits(),
            (c[1] + 0.0).to_bits(),
            (c[2] + 0.0).to_bits(),
        ];
        let next = self.vertices_m.len() as u32;
        let scale = self.scale;
        let vertices = &mut self.vertices_m;
        *self.index.entry(key).or_insert_with(|| {
            vertices.push(Point3::new(c[0] * scale, c[1] * scale, c[2] * scale));
            next
        })
    }
}

/// Reads STL bytes whose coordinates are in `unit` into a [`Mesh`] in metres (welded, not
/// validated; [`crate::ShapeModel::new`] does that).
pub(crate) fn parse_stl(bytes: &[u8], unit: LengthUnit) -> Result<Mesh> {
    let mut welder = Welder::new(unit.metres_per_unit());
    let faces = if is_binary(bytes) {
        read_binary(bytes, &mut welder)?
    } else if begins_with_solid(bytes) {
        read_ascii(bytes, &mut welder)?
    } else {
        return Err(match declared_count(bytes) {
            None => malformed(
                "byte 0".into(),
                format!(
                    "{} bytes: too short for a binary STL (80-byte header and a 4-byte count) \
                     and not ASCII STL (which begins with \"solid\")",
                    bytes.len()
                ),
            ),
            Some(n) => malformed(
                "byte 80".into(),
                format!(
                    "binary STL declares {n} triangles, which need {} bytes, but the file has {} \
                     bytes; the file is truncated or not STL (an ASCII STL begins with \"solid\")",
                    binary_size(n),
                    bytes.len()
                ),
            ),
        });
    };
    if faces.is_empty() {
        return Err(GravityError::InvalidMesh(
            "the STL file has no triangles; a shape model needs a closed surface".into(),
        ));
    }
    Ok(Mesh {
        vertices_m: welder.vertices_m,
        faces,
    })
}

fn read_binary(bytes: &[u8], welder: &mut Welder) -> Result<Vec<[u32; 3]>> {
    let n = declared_count(bytes).unwrap_or(0) as usize;
    let mut faces = Vec::with_capacity(n);
    for (t, record) in bytes[84..].chunks_exact(50).enumerate() {
        let f = |k: usize| {
            let b = &record[4 * k..4 * k + 4];
            f64::from(f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
        };
        let mut face = [0u32; 3];
        for (corner, slot) in face.iter_mut().enumerate() {
            let c = [f(3 + 3 * corner), f(4 + 3 * corner), f(5 + 3 * corner)];
            if !c.iter().all(|x| x.is_finite()) {
                return Err(malformed(
                    format!("byte {} (triangle {t})", 84 + 50 * t),
                    format!(
                        "corner {corner} has a non-finite coordinate ({}, {}, {})",
                        c[0], c[1], c[2]
                    ),
                ));
            }
            *slot = welder.corner(c);
        }
        faces.push(face);
    }
    Ok(faces)
}

fn read_ascii(bytes: &[u8], welder: &mut Welder) -> Result<Vec<[u32; 3]>> {
    let text = String::from_utf8_lossy(bytes);
    /// Where the reader is in the facet grammar.
    #[derive(PartialEq, Eq, Clone, Copy)]
    enum State {
        OutsideSolid,
        InSolid,
        InFacet,
        InLoop(usize),
        LoopDone,
        FacetDone,
    }
    let mut state = State::OutsideSolid;
    let mut faces = Vec::new();
    let mut corners = [0u32; 3];
    let mut last_line = 0;
    for (i, line) in text.split('\n').enumerate() {
        let line_no = i + 1;
        last_line = line_no;
        let mut tokens = line.split_whitespace();
        let Some(keyword) = tokens.next() else {
            continue;
        };
        let facet = faces.len();
        let at = || format!("line {line_no}");
        let unexpected = |expected: &str| {
            malformed(
                at(),
                format!(
                    "found {} where {expected} was expected (facet {facet})",
                    excerpt(keyword)
                ),
            )
        };
        state = match (state, keyword) {
            (State::OutsideSolid, "solid") => State::InSolid,
            (State::OutsideSolid, _) => return Err(unexpected("\"solid\"")),
            (State::InSolid, "facet") => State::InFacet,
            (State::InSolid, "endsolid") => State::OutsideSolid,
            (State::InSolid, _) => return Err(unexpected("\"facet\" or \"endsolid\"")),
            (State::InFacet, "outer") => State::InLoop(0),
            (State::InFacet, _) => return Err(unexpected("\"outer loop\"")),
            (State::InLoop(n), "vertex") => {
                if n == 3 {
                    return Err(malformed(
                        at(),
                        format!("facet {facet} has more than 3 vertices; STL facets are triangles"),
                    ));
                }
                let mut c = [0.0f64; 3];
                for (k, axis) in ["x", "y", "z"].iter().enumerate() {
                    let token = tokens.next().ok_or_else(|| {
                        malformed(
                            at(),
                            format!("facet {facet}: vertex without a {axis} value"),
                        )
                    })?;
                    c[k] = token.parse::<f64>().map_err(|_| {
                        malformed(
                            at(),
                            format!(
                                "facet {facet}: vertex {axis} is {}, not a number",
                                excerpt(token)
                            ),
                        )
                    })?;
                    if !c[k].is_finite() {
                        return Err(malformed(
                            at(),
                            format!("facet {facet}: vertex {axis} is {token}, not finite"),
                        ));
                    }
                }
                corners[n] = welder.corner(c);
                State::InLoop(n + 1)
            }
            (State::InLoop(n), "endloop") => {
                if n != 3 {
                    return Err(malformed(
                        at(),
                        format!("facet {facet} has {n} vertices; STL facets are triangles"),
                    ));
                }
                State::LoopDone
            }
            (State::InLoop(_), _) => return Err(unexpected("\"vertex\" or \"endloop\"")),
            (State::LoopDone, "endfacet") => {
                faces.push(corners);
                State::FacetDone
            }
            (State::LoopDone, _) => return Err(unexpected("\"endfacet\"")),
            (State::FacetDone, "facet") => State::InFacet,
            (State::FacetDone, "endsolid") => State::OutsideSolid,
            (State::FacetDone, _) => return Err(unexpected("\"facet\" or \"endsolid\"")),
        };
    }
    if state != State::OutsideSolid {
        return Err(malformed(
            format!("line {last_line}"),
            format!(
                "the file ends inside a solid (after {} facets) without \"endsolid\"",
                faces.len()
            ),
        ));
    }
    Ok(faces)
}
