//! Wavefront OBJ reading: vertices and faces only, in f64, with line-numbered errors.
//!
//! Two passes over the text, read once into memory (the reader need not be seekable):
//!
//! - The `obj-rs` crate ([`obj::raw::parse_obj`]) parses the file's structure: statements,
//!   line continuations, faces with their corner forms `i`, `i/t`, `i//n` and `i/t/n` (texture
//!   and normal indices are checked by it, then ignored here), and negative (relative) indices.
//!   Its polygons become our faces, fan-triangulated from their first corner.
//! - A light pass of our own over the same statements, run first, because `obj-rs` keeps
//!   positions in `f32` (about 0.2 mm of rounding on a 5 km body, and no exact round-trip of
//!   written files) and its errors carry no line number. The light pass reads the `v` lines in
//!   `f64`, exactly as written, and checks the vertex indices and corner counts of the faces, so
//!   that each of those problems is reported with its line, face and vertex count. The vertex
//!   count of both passes must agree. Statements other than `v`, `vt`, `vn`, `f` and `fo`
//!   (`g`, `o`, `s`, `usemtl`, `mtllib`, `l`, `p`, free-form geometry, ...) are ignored: they are
//!   blanked before `obj-rs` sees the text, which would otherwise refuse unknown statements and
//!   panic on the free-form ones it does not implement. Any other error `obj-rs` finds (e.g. a
//!   texture index out of range) is located by running it on prefixes of the text (bisection;
//!   only on that error path, about 20 extra runs on a large file).
//!
//! Also read: `v x y z [w]` (w ignored), `v x y z r g b` and `v x y z w r g b` (vertex colours, a
//! common extension; the colours are ignored and obj-rs, which refuses them, is shown the vertex
//! without them), `#` comments, CRLF line endings, a UTF-8 byte-order mark; bytes that are not
//! UTF-8 are tolerated (replaced) outside numbers. UTF-16 and UTF-32 files are refused by name.
//! Error messages quote at most [`crate::text::EXCERPT_CHARS`] characters of a token.

use std::borrow::Cow;
use std::io::BufRead;

use nalgebra::Point3;
use obj::raw::object::Polygon;

use crate::error::{GravityError, Result};
use crate::mesh::{LengthUnit, Mesh};
use crate::text::{InvalidBytes, decode_utf8, excerpt};
use crate::validate::Warning;

fn parse_error(line: usize, message: String) -> GravityError {
    GravityError::Parse { line, message }
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
    let mut bytes = Vec::new();
    reader.read_to_end(&mut bytes)?;
    // Lenient: bytes that are not UTF-8 (e.g. Latin-1 comments) become U+FFFD; keywords and
    // numbers are ASCII, so a bad byte there still fails with a line-numbered error.
    let text = decode_utf8(&bytes, InvalidBytes::Replace)?;

    let light = light_pass(&text, unit)?;
    let obj_text = rewrite_ranges(&text, &light.rewrites);
    let raw = match obj::raw::parse_obj(obj_text.as_bytes()) {
        Ok(raw) => raw,
        Err(e) => {
            let (line, statement) = locate_obj_rs_error(&obj_text);
            return Err(parse_error(
                line,
                format!("{e} in {statement} (found by the obj-rs reader)"),
            ));
        }
    };
    let vertices_m = light.vertices_m;
    if raw.positions.len() != vertices_m.len() {
        return Err(GravityError::InvalidMesh(format!(
            "the obj-rs reader found {} vertices but the coordinate pass read {}",
            raw.positions.len(),
            vertices_m.len()
        )));
    }

    let mut faces: Vec<[u32; 3]> = Vec::with_capacity(raw.polygons.len() * 2);
    let mut corners: Vec<u32> = Vec::with_capacity(8);
    for polygon in &raw.polygons {
        corners.clear();
        let to_u32 = |i: usize| {
            u32::try_from(i).map_err(|_| {
                GravityError::InvalidMesh(format!("vertex index {i} does not fit in 32 bits"))
            })
        };
        match polygon {
            Polygon::P(c) => {
                for &p in c {
                    corners.push(to_u32(p)?);
                }
            }
            Polygon::PT(c) | Polygon::PN(c) => {
                for &(p, _) in c {
                    corners.push(to_u32(p)?);
                }
            }
            Polygon::PTN(c) => {
                for &(p, _, _) in c {
                    corners.push(to_u32(p)?);
                }
            }
        }
        // obj-rs refuses faces with fewer than 3 corners.
        for k in 1..corners.len().saturating_sub(1) {
            faces.push([corners[0], corners[k], corners[k + 1]]);
        }
    }

    if vertices_m.is_empty() || faces.is_empty() {
        return Err(GravityError::InvalidMesh(format!(
            "the OBJ text has {} vertices and {} faces ({} lines); a shape model needs both",
            vertices_m.len(),
            light.face_count,
            light.line_count
        )));
    }
    Ok((Mesh { vertices_m, faces }, Vec::new()))
}

/// How obj-rs is shown a statement it must not see as written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Rewrite {
    /// An ignored statement: only its line breaks are kept.
    Blank,
    /// A vertex with colours: shown as `v 0 0 0` (the light pass has its coordinates).
    BareVertex,
}

/// What the light pass keeps: the coordinates, and where the statements that obj-rs must not see
/// as written are.
struct LightPass {
    vertices_m: Vec<Point3<f64>>,
    /// Byte ranges (whole physical lines) of the statements to rewrite, in order.
    rewrites: Vec<(usize, usize, Rewrite)>,
    face_count: usize,
    line_count: usize,
}

/// Reads the `v` lines in f64 and checks the faces' vertex indices, with line-numbered errors.
fn light_pass(text: &str, unit: LengthUnit) -> Result<LightPass> {
    let scale = unit.metres_per_unit();
    let mut vertices_m: Vec<Point3<f64>> = Vec::new();
    let mut rewrites = Vec::new();
    let mut face_count = 0usize;
    let mut statements = Statements::new(text);
    while let Some(statement) = statements.next() {
        let statement = statement?;
        let line = statement.line;
        let mut tokens = statement.content.split_whitespace();
        let Some(keyword) = tokens.next() else {
            continue;
        };
        match keyword {
            "v" => {
                let (vertex, coloured) = read_vertex(tokens, line, vertices_m.len() + 1, scale)?;
                vertices_m.push(vertex);
                if coloured {
                    rewrites.push((statement.start, statement.end, Rewrite::BareVertex));
                }
            }
            "vt" | "vn" => {}
            "f" | "fo" => {
                face_count += 1;
                // Corner count first, as obj-rs checks it.
                let n_corners = tokens.clone().count();
                if n_corners < 3 {
                    return Err(parse_error(
                        line,
                        format!(
                            "face {face_count} has {n_corners} corners; a face needs at least 3"
                        ),
                    ));
                }
                for token in tokens {
                    let first = token.split('/').next().unwrap_or("");
                    let index: i64 = first.parse().map_err(|_| {
                        parse_error(
                            line,
                            format!(
                                "face {face_count}: vertex index {} is not an integer",
                                excerpt(token)
                            ),
                        )
                    })?;
                    let preceding = vertices_m.len();
                    if index == 0 {
                        return Err(parse_error(
                            line,
                            format!(
                                "face {face_count} uses vertex index 0; OBJ indices start at 1"
                            ),
                        ));
                    } else if index < 0 && index.unsigned_abs() > preceding as u64 {
                        return Err(parse_error(
                            line,
                            format!(
                                "face {face_count} references relative vertex {index} but only \
                                 {preceding} vertices precede it"
                            ),
                        ));
                    } else if index > 0 && index.unsigned_abs() > preceding as u64 {
                        let total = preceding + count_vertex_statements(&mut statements);
                        let message = if index.unsigned_abs() > total as u64 {
                            format!(
                                "face {face_count} references vertex {index} but the file has \
                                 {total} vertices"
                            )
                        } else {
                            format!(
                                "face {face_count} references vertex {index}, which is defined \
                                 only further down; OBJ vertices must precede the faces that use \
                                 them (only {preceding} do)"
                            )
                        };
                        return Err(parse_error(line, message));
                    }
                }
            }
            _ => rewrites.push((statement.start, statement.end, Rewrite::Blank)),
        }
    }
    Ok(LightPass {
        vertices_m,
        rewrites,
        face_count,
        line_count: statements.line,
    })
}

/// Parses the arguments of a `v` statement: x y z in f64; then an optional w, or colours
/// (`x y z r g b` or `x y z w r g b`), all ignored. Returns the vertex and whether it carries
/// colours (obj-rs refuses those).
fn read_vertex<'a>(
    tokens: impl Iterator<Item = &'a str>,
    line: usize,
    vertex_number: usize,
    scale: f64,
) -> Result<(Point3<f64>, bool)> {
    let mut xyz = [0.0; 3];
    let mut n_args = 0usize;
    for arg in tokens {
        n_args += 1;
        if n_args > 7 {
            continue;
        }
        let value: f64 = arg.parse().map_err(|_| {
            parse_error(
                line,
                format!(
                    "vertex {vertex_number}: coordinate {} is not a number",
                    excerpt(arg)
                ),
            )
        })?;
        if !value.is_finite() {
            return Err(parse_error(
                line,
                format!(
                    "vertex {vertex_number} has a non-finite value {}",
                    excerpt(arg)
                ),
            ));
        }
        if n_args <= 3 {
            xyz[n_args - 1] = value * scale;
        }
    }
    if !matches!(n_args, 3 | 4 | 6 | 7) {
        return Err(parse_error(
            line,
            format!(
                "vertex {vertex_number} needs 3 coordinates (x y z), optionally with w and/or \
                 r g b colours; found {n_args} values"
            ),
        ));
    }
    if !xyz.iter().all(|x| x.is_finite()) {
        return Err(parse_error(
            line,
            format!("vertex {vertex_number} overflows when converted to metres"),
        ));
    }
    Ok((Point3::new(xyz[0], xyz[1], xyz[2]), n_args >= 6))
}

/// Counts the `v` statements left in `statements` (only for an error message).
fn count_vertex_statements(statements: &mut Statements<'_>) -> usize {
    statements
        .map_while(|s| s.ok())
        .filter(|s| s.content.split_whitespace().next() == Some("v"))
        .count()
}

/// `text` with the given byte ranges (in order, not overlapping) rewritten: blanked to their
/// line breaks, or a coloured vertex shown bare; line numbers stay the same.
fn rewrite_ranges<'a>(text: &'a str, ranges: &[(usize, usize, Rewrite)]) -> Cow<'a, str> {
    if ranges.is_empty() {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len());
    let mut done = 0;
    for &(start, end, rewrite) in ranges {
        out.push_str(&text[done..start]);
        if rewrite == Rewrite::BareVertex {
            out.push_str("v 0 0 0");
        }
        for _ in text[start..end].bytes().filter(|&b| b == b'\n') {
            out.push('\n');
        }
        done = end;
    }
    out.push_str(&text[done..]);
    Cow::Owned(out)
}

/// The line of the first statement that obj-rs refuses, and that statement (shortened): the
/// shortest failing prefix, by bisection over statement ends (obj-rs reads statements in order
/// and stops at the first bad one, so failing is monotone in the prefix length).
fn locate_obj_rs_error(text: &str) -> (usize, String) {
    let statements: Vec<Statement<'_>> = Statements::new(text).map_while(|s| s.ok()).collect();
    let fails = |end: usize| obj::raw::parse_obj(&text.as_bytes()[..end]).is_err();
    // Smallest k whose prefix up to the end of statement k fails.
    let (mut lo, mut hi) = (0usize, statements.len());
    while lo < hi {
        let mid = lo + (hi - lo) / 2;
        if fails(statements[mid].end) {
            hi = mid;
        } else {
            lo = mid + 1;
        }
    }
    statements
        .get(lo)
        .or(statements.last())
        .map_or((1, String::new()), |s| {
            let words: Vec<&str> = s.content.split_whitespace().take(16).collect();
            (s.line, excerpt(&words.join(" ")))
        })
}

/// One statement: a physical line without its comment, or several joined by trailing
/// backslashes, the way obj-rs reads them.
struct Statement<'a> {
    /// 1-based line of its first physical line.
    line: usize,
    /// Byte offset of its first physical line.
    start: usize,
    /// Byte offset just past its last physical line (and that line's `\n`).
    end: usize,
    content: Cow<'a, str>,
}

/// The statements of an OBJ text, in order.
struct Statements<'a> {
    text: &'a str,
    pos: usize,
    /// Physical lines consumed so far.
    line: usize,
}

impl<'a> Statements<'a> {
    fn new(text: &'a str) -> Self {
        Self {
            text,
            pos: 0,
            line: 0,
        }
    }
}

impl<'a> Iterator for Statements<'a> {
    type Item = Result<Statement<'a>>;

    fn next(&mut self) -> Option<Self::Item> {
        if self.pos >= self.text.len() {
            return None;
        }
        let start = self.pos;
        let line = self.line + 1;
        let mut joined: Option<String> = None;
        loop {
            let rest = &self.text[self.pos..];
            // As `BufRead::lines`: `\n` ends a line, and a `\r` before it is dropped too.
            let physical = match rest.find('\n') {
                Some(i) => {
                    self.pos += i + 1;
                    let l = &rest[..i];
                    l.strip_suffix('\r').unwrap_or(l)
                }
                None => {
                    self.pos = self.text.len();
                    rest
                }
            };
            self.line += 1;
            let code = physical.split('#').next().unwrap_or("");
            match code.strip_suffix('\\') {
                None => {
                    let content = match joined {
                        Some(mut s) => {
                            s.push_str(code);
                            Cow::Owned(s)
                        }
                        None => Cow::Borrowed(code),
                    };
                    return Some(Ok(Statement {
                        line,
                        start,
                        end: self.pos,
                        content,
                    }));
                }
                Some(head) => {
                    let s = joined.get_or_insert_with(String::new);
                    s.push_str(head);
                    s.push(' ');
                    if self.pos >= self.text.len() {
                        return Some(Err(parse_error(
                            self.line,
                            "the line ends with a backslash (continuation) but no line follows"
                                .to_string(),
                        )));
                    }
                }
            }
        }
    }
}
