//! PLY (polygon file format) reading: ASCII, binary little-endian and binary big-endian, in f64,
//! with errors that name the line (ASCII and the header) or the byte offset (binary data) and
//! the element.
//!
//! A reader of our own: it is short, keeps `double` coordinates exact and `float` ones as their
//! exact f64 value, and names the element and line of each problem.
//!
//! What is read:
//! - the header: `ply`, one `format` line, `comment` and `obj_info` lines (ignored), `element`
//!   and `property` lines, `end_header`;
//! - the `vertex` element's `x`, `y`, `z` properties (any scalar type; other vertex properties
//!   such as normals or colours are read past and ignored);
//! - the `face` element's `vertex_indices` (or `vertex_index`) list, whose count and items must be
//!   integer types. Indices are 0-based. Faces with more than 3 corners are fan-triangulated from
//!   their first corner (as OBJ polygons are); faces with fewer than 3 are refused;
//! - any other element (edges, materials, ...) is read past and ignored.
//!
//! In ASCII files each element instance is one line. After the last element only whitespace may
//! follow. Declared counts are checked against what the file holds before any memory is set
//! aside for them, so a header that claims 10^12 vertices fails with a message, not an
//! allocation.

use nalgebra::Point3;

use crate::error::{GravityError, Result};
use crate::mesh::{LengthUnit, Mesh};
use crate::text::excerpt;

fn malformed(at: String, message: String) -> GravityError {
    GravityError::Malformed {
        format: "PLY",
        at,
        message,
    }
}

/// Storage of the element data after the header.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Encoding {
    Ascii,
    LittleEndian,
    BigEndian,
}

/// A PLY scalar type.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Scalar {
    I8,
    U8,
    I16,
    U16,
    I32,
    U32,
    F32,
    F64,
}

impl Scalar {
    fn parse(name: &str) -> Option<Scalar> {
        Some(match name {
            "char" | "int8" => Scalar::I8,
            "uchar" | "uint8" => Scalar::U8,
            "short" | "int16" => Scalar::I16,
            "ushort" | "uint16" => Scalar::U16,
            "int" | "int32" => Scalar::I32,
            "uint" | "uint32" => Scalar::U32,
            "float" | "float32" => Scalar::F32,
            "double" | "float64" => Scalar::F64,
            _ => return None,
        })
    }

    fn size(self) -> usize {
        match self {
            Scalar::I8 | Scalar::U8 => 1,
            Scalar::I16 | Scalar::U16 => 2,
            Scalar::I32 | Scalar::U32 | Scalar::F32 => 4,
            Scalar::F64 => 8,
        }
    }

    fn name(self) -> &'static str {
        match self {
            Scalar::I8 => "char",
            Scalar::U8 => "uchar",
            Scalar::I16 => "short",
            Scalar::U16 => "ushort",
            Scalar::I32 => "int",
            Scalar::U32 => "uint",
            Scalar::F32 => "float",
            Scalar::F64 => "double",
        }
    }

    fn is_integer(self) -> bool {
        !matches!(self, Scalar::F32 | Scalar::F64)
    }
}

/// A property of an element: a scalar, or a list with its count and item types.
#[derive(Debug, Clone)]
enum Property {
    Scalar {
        name: String,
        kind: Scalar,
    },
    List {
        name: String,
        count: Scalar,
        item: Scalar,
    },
}

impl Property {
    fn name(&self) -> &str {
        match self {
            Property::Scalar { name, .. } | Property::List { name, .. } => name,
        }
    }
}

#[derive(Debug, Clone)]
struct Element {
    name: String,
    count: u64,
    properties: Vec<Property>,
    /// Header line that declared it.
    line: usize,
    /// Header line of each property.
    property_lines: Vec<usize>,
}

struct Header {
    encoding: Encoding,
    elements: Vec<Element>,
    /// Byte offset of the first data byte.
    data_start: usize,
    /// Lines in the header (the data of an ASCII file starts on the next one).
    lines: usize,
}

/// Whether `bytes` start with the PLY magic line.
pub(crate) fn has_magic(bytes: &[u8]) -> bool {
    bytes.starts_with(b"ply\n") || bytes.starts_with(b"ply\r\n") || bytes == b"ply"
}

fn read_header(bytes: &[u8]) -> Result<Header> {
    if !has_magic(bytes) {
        return Err(malformed(
            "line 1".into(),
            "the file does not start with the PLY magic line \"ply\"".into(),
        ));
    }
    let mut pos = 0usize;
    let mut line_no = 0usize;
    let mut encoding = None;
    let mut elements: Vec<Element> = Vec::new();
    loop {
        let Some(rel_end) = bytes[pos..].iter().position(|&b| b == b'\n') else {
            return Err(malformed(
                format!("line {}", line_no + 1),
                "the header ends without an \"end_header\" line".into(),
            ));
        };
        let raw = &bytes[pos..pos + rel_end];
        pos += rel_end + 1;
        line_no += 1;
        let text = String::from_utf8_lossy(raw);
        let text = text.trim_end_matches('\r');
        let at = || format!("line {line_no}");
        let mut tokens = text.split_whitespace();
        let keyword = tokens.next().unwrap_or("");
        match keyword {
            "ply" if line_no == 1 => {}
            "" | "comment" | "obj_info" => {}
            "format" => {
                let kind = tokens.next().unwrap_or("");
                let version = tokens.next().unwrap_or("");
                encoding = Some(match kind {
                    "ascii" => Encoding::Ascii,
                    "binary_little_endian" => Encoding::LittleEndian,
                    "binary_big_endian" => Encoding::BigEndian,
                    other => {
                        return Err(malformed(
                            at(),
                            format!(
                                "unknown format {}; expected ascii, binary_little_endian or \
                                 binary_big_endian",
                                excerpt(other)
                            ),
                        ));
                    }
                });
                if version != "1.0" {
                    return Err(malformed(
                        at(),
                        format!("format version {}; only PLY 1.0 is read", excerpt(version)),
                    ));
                }
            }
            "element" => {
                let name = tokens.next().unwrap_or("").to_string();
                let count_text = tokens.next().unwrap_or("");
                let count: u64 = count_text.parse().map_err(|_| {
                    malformed(
                        at(),
                        format!(
                            "element {} has count {}, not a non-negative integer",
                            excerpt(&name),
                            excerpt(count_text)
                        ),
                    )
                })?;
                if name.is_empty() {
                    return Err(malformed(at(), "an element line without a name".into()));
                }
                elements.push(Element {
                    name,
                    count,
                    properties: Vec::new(),
                    line: line_no,
                    property_lines: Vec::new(),
                });
            }
            "property" => {
                let Some(element) = elements.last_mut() else {
                    return Err(malformed(
                        at(),
                        "a property line before any element line".into(),
                    ));
                };
                let first = tokens.next().unwrap_or("");
                let unknown_type = |t: &str| {
                    malformed(
                        at(),
                        format!(
                            "unknown property type {} in element {}; PLY types are char, uchar, \
                             short, ushort, int, uint, float, double (or int8 ... float64)",
                            excerpt(t),
                            excerpt(&element.name)
                        ),
                    )
                };
                let property = if first == "list" {
                    let count_t = tokens.next().unwrap_or("");
                    let item_t = tokens.next().unwrap_or("");
                    let count = Scalar::parse(count_t).ok_or_else(|| unknown_type(count_t))?;
                    let item = Scalar::parse(item_t).ok_or_else(|| unknown_type(item_t))?;
                    let name = tokens.next().unwrap_or("").to_string();
                    if !count.is_integer() {
                        return Err(malformed(
                            at(),
                            format!(
                                "list property {} of element {} has a {count_t} count; a list \
                                 count must be an integer type",
                                excerpt(&name),
                                excerpt(&element.name)
                            ),
                        ));
                    }
                    Property::List { name, count, item }
                } else {
                    let kind = Scalar::parse(first).ok_or_else(|| unknown_type(first))?;
                    Property::Scalar {
                        name: tokens.next().unwrap_or("").to_string(),
                        kind,
                    }
                };
                if property.name().is_empty() {
                    return Err(malformed(at(), "a property line without a name".into()));
                }
                element.properties.push(property);
                element.property_lines.push(line_no);
            }
            "end_header" => break,
            other => {
                return Err(malformed(
                    at(),
                    format!(
                        "unknown header line starting with {}; expected format, element, \
                         property, comment, obj_info or end_header",
                        excerpt(other)
                    ),
                ));
            }
        }
    }
    let Some(encoding) = encoding else {
        return Err(malformed(
            format!("line {line_no}"),
            "the header has no \"format\" line".into(),
        ));
    };
    Ok(Header {
        encoding,
        elements,
        data_start: pos,
        lines: line_no,
    })
}

/// What the vertex and face elements hold, located in their property lists.
struct Layout {
    vertex: usize,
    xyz: [usize; 3],
    face: usize,
    indices: usize,
}

fn layout(header: &Header) -> Result<Layout> {
    let find = |name: &str| header.elements.iter().position(|e| e.name == name);
    let Some(vertex) = find("vertex") else {
        return Err(malformed(
            format!("line {}", header.lines),
            "the header declares no \"vertex\" element".into(),
        ));
    };
    let Some(face) = find("face") else {
        return Err(malformed(
            format!("line {}", header.lines),
            "the header declares no \"face\" element".into(),
        ));
    };
    let v = &header.elements[vertex];
    let mut xyz = [0usize; 3];
    for (k, axis) in ["x", "y", "z"].iter().enumerate() {
        match v.properties.iter().position(|p| p.name() == *axis) {
            Some(i) if matches!(v.properties[i], Property::Scalar { .. }) => xyz[k] = i,
            Some(_) => {
                return Err(malformed(
                    format!("line {}", v.line),
                    format!("vertex property {axis} is a list; a coordinate must be a scalar"),
                ));
            }
            None => {
                return Err(malformed(
                    format!("line {}", v.line),
                    format!("the vertex element has no {axis} property"),
                ));
            }
        }
    }
    let f = &header.elements[face];
    let Some(indices) = f
        .properties
        .iter()
        .position(|p| p.name() == "vertex_indices" || p.name() == "vertex_index")
    else {
        return Err(malformed(
            format!("line {}", f.line),
            "the face element has no vertex_indices (or vertex_index) list".into(),
        ));
    };
    let property_line = f.property_lines.get(indices).copied().unwrap_or(f.line);
    match &f.properties[indices] {
        Property::List { item, name, .. } if !item.is_integer() => {
            return Err(malformed(
                format!("line {property_line}"),
                format!(
                    "unsupported property: face list {name} holds non-integer ({}) items; \
                     vertex indices must be an integer type",
                    item.name()
                ),
            ));
        }
        Property::Scalar { name, .. } => {
            return Err(malformed(
                format!("line {property_line}"),
                format!("unsupported property: face property {name} is a scalar, not a list"),
            ));
        }
        _ => {}
    }
    Ok(Layout {
        vertex,
        xyz,
        face,
        indices,
    })
}

/// Reads PLY bytes whose coordinates are in `unit` into a [`Mesh`] in metres (not validated;
/// [`crate::ShapeModel::new`] does that).
pub(crate) fn parse_ply(bytes: &[u8], unit: LengthUnit) -> Result<Mesh> {
    let header = read_header(bytes)?;
    let layout = layout(&header)?;
    let scale = unit.metres_per_unit();
    let mut sink = Sink {
        layout: &layout,
        scale,
        vertices_m: Vec::new(),
        faces: Vec::new(),
        corners: Vec::new(),
    };
    match header.encoding {
        Encoding::Ascii => read_ascii(bytes, &header, &mut sink)?,
        Encoding::LittleEndian | Encoding::BigEndian => read_binary(bytes, &header, &mut sink)?,
    }
    let Sink {
        vertices_m, faces, ..
    } = sink;
    if vertices_m.is_empty() || faces.is_empty() {
        return Err(GravityError::InvalidMesh(format!(
            "the PLY file has {} vertices and {} faces; a shape model needs both",
            vertices_m.len(),
            faces.len()
        )));
    }
    Ok(Mesh { vertices_m, faces })
}

/// Collects vertices and faces as the elements are read.
struct Sink<'a> {
    layout: &'a Layout,
    scale: f64,
    vertices_m: Vec<Point3<f64>>,
    faces: Vec<[u32; 3]>,
    corners: Vec<u32>,
}

impl Sink<'_> {
    /// Adds vertex `coords` (file units); `at` names the place for errors.
    fn vertex(&mut self, coords: [f64; 3], at: impl Fn() -> String) -> Result<()> {
        if !coords.iter().all(|c| c.is_finite()) {
            return Err(malformed(
                at(),
                format!(
                    "vertex {} has a non-finite coordinate ({}, {}, {})",
                    self.vertices_m.len(),
                    coords[0],
                    coords[1],
                    coords[2]
                ),
            ));
        }
        self.vertices_m.push(Point3::new(
            coords[0] * self.scale,
            coords[1] * self.scale,
            coords[2] * self.scale,
        ));
        Ok(())
    }

    /// Adds the face with corners `self.corners` (fan-triangulated).
    fn face(&mut self, face: u64, n_vertices: u64, at: impl Fn() -> String) -> Result<()> {
        let n = self.corners.len();
        if n < 3 {
            return Err(malformed(
                at(),
                format!("face {face} has {n} corners; a face needs at least 3"),
            ));
        }
        if let Some(&bad) = self.corners.iter().find(|&&c| u64::from(c) >= n_vertices) {
            return Err(malformed(
                at(),
                format!(
                    "face {face} references vertex {bad} but the file has {n_vertices} vertices \
                     (PLY indices start at 0)"
                ),
            ));
        }
        for k in 1..n - 1 {
            self.faces
                .push([self.corners[0], self.corners[k], self.corners[k + 1]]);
        }
        Ok(())
    }
}

/// An integer value as a vertex index, or why it is not one.
fn to_index(value: f64) -> Option<u32> {
    (value >= 0.0 && value <= f64::from(u32::MAX) && value.fract() == 0.0).then_some(value as u32)
}

fn read_ascii(bytes: &[u8], header: &Header, sink: &mut Sink<'_>) -> Result<()> {
    let data = &bytes[header.data_start..];
    let text = String::from_utf8_lossy(data);
    let mut lines = text.split('\n').enumerate().map(|(i, l)| {
        (
            header.lines + 1 + i,
            l.split('#').next().unwrap_or("").trim(),
        )
    });
    let n_vertices = header.elements[sink.layout.vertex].count;
    for (e, element) in header.elements.iter().enumerate() {
        let mut instance = 0u64;
        while instance < element.count {
            let Some((line, content)) = lines.next() else {
                return Err(malformed(
                    format!("line {}", header.lines + text.split('\n').count()),
                    format!(
                        "the file ends after {instance} of the {} declared {} elements",
                        element.count,
                        excerpt(&element.name)
                    ),
                ));
            };
            if content.is_empty() {
                continue;
            }
            let at = || format!("line {line} ({} {instance})", element.name);
            let mut tokens = content.split_whitespace();
            let mut next_number = |what: &str| -> Result<f64> {
                let token = tokens.next().ok_or_else(|| {
                    malformed(at(), format!("the line ends before property {what}"))
                })?;
                token.parse::<f64>().map_err(|_| {
                    malformed(
                        at(),
                        format!("property {what} is {}, not a number", excerpt(token)),
                    )
                })
            };
            let mut xyz = [0.0f64; 3];
            sink.corners.clear();
            for (p, property) in element.properties.iter().enumerate() {
                match property {
                    Property::Scalar { name, .. } => {
                        let value = next_number(name)?;
                        if e == sink.layout.vertex
                            && let Some(k) = sink.layout.xyz.iter().position(|&i| i == p)
                        {
                            xyz[k] = value;
                        }
                    }
                    Property::List { name, .. } => {
                        let count = next_number(name)?;
                        let Some(count) = to_index(count) else {
                            return Err(malformed(
                                at(),
                                format!(
                                    "list {name} has count {count}, not a non-negative integer"
                                ),
                            ));
                        };
                        for _ in 0..count {
                            let value = next_number(name)?;
                            if e == sink.layout.face && p == sink.layout.indices {
                                let Some(index) = to_index(value) else {
                                    return Err(malformed(
                                        at(),
                                        format!(
                                            "face {instance}: vertex index {value} is not a \
                                             non-negative integer"
                                        ),
                                    ));
                                };
                                sink.corners.push(index);
                            }
                        }
                    }
                }
            }
            if let Some(extra) = tokens.next() {
                return Err(malformed(
                    at(),
                    format!(
                        "more values than the header declares for {} (first extra: {})",
                        excerpt(&element.name),
                        excerpt(extra)
                    ),
                ));
            }
            if e == sink.layout.vertex {
                sink.vertex(xyz, at)?;
            } else if e == sink.layout.face {
                sink.face(instance, n_vertices, at)?;
            }
            instance += 1;
        }
    }
    for (line, content) in lines {
        if !content.is_empty() {
            return Err(malformed(
                format!("line {line}"),
                format!("data after the last declared element: {}", excerpt(content)),
            ));
        }
    }
    Ok(())
}

fn read_binary(bytes: &[u8], header: &Header, sink: &mut Sink<'_>) -> Result<()> {
    let little = header.encoding == Encoding::LittleEndian;
    let mut pos = header.data_start;
    let n_vertices = header.elements[sink.layout.vertex].count;
    let read = |pos: &mut usize, kind: Scalar| -> Option<f64> {
        let n = kind.size();
        let chunk = bytes.get(*pos..*pos + n)?;
        *pos += n;
        let mut b = [0u8; 8];
        b[..n].copy_from_slice(chunk);
        if !little {
            b[..n].reverse();
        }
        Some(match kind {
            Scalar::I8 => f64::from(b[0] as i8),
            Scalar::U8 => f64::from(b[0]),
            Scalar::I16 => f64::from(i16::from_le_bytes([b[0], b[1]])),
            Scalar::U16 => f64::from(u16::from_le_bytes([b[0], b[1]])),
            Scalar::I32 => f64::from(i32::from_le_bytes([b[0], b[1], b[2], b[3]])),
            Scalar::U32 => f64::from(u32::from_le_bytes([b[0], b[1], b[2], b[3]])),
            Scalar::F32 => f64::from(f32::from_le_bytes([b[0], b[1], b[2], b[3]])),
            Scalar::F64 => f64::from_le_bytes(b),
        })
    };
    for (e, element) in header.elements.iter().enumerate() {
        // Each instance takes at least this many bytes: refuse impossible counts up front.
        let min_size: u64 = element
            .properties
            .iter()
            .map(|p| match p {
                Property::Scalar { kind, .. } => kind.size() as u64,
                Property::List { count, .. } => count.size() as u64,
            })
            .sum();
        let left = (bytes.len() - pos) as u64;
        if element.count.saturating_mul(min_size) > left {
            return Err(malformed(
                format!("byte {pos}"),
                format!(
                    "the header declares {} {} elements (at least {} bytes) but only {left} \
                     bytes follow",
                    element.count,
                    excerpt(&element.name),
                    element.count.saturating_mul(min_size)
                ),
            ));
        }
        for instance in 0..element.count {
            let start = pos;
            let at = || format!("byte {start} ({} {instance})", element.name);
            let truncated = || {
                malformed(
                    at(),
                    format!(
                        "the file ends inside {} {instance} of {}",
                        excerpt(&element.name),
                        element.count
                    ),
                )
            };
            let mut xyz = [0.0f64; 3];
            sink.corners.clear();
            for (p, property) in element.properties.iter().enumerate() {
                match property {
                    Property::Scalar { kind, .. } => {
                        let value = read(&mut pos, *kind).ok_or_else(truncated)?;
                        if e == sink.layout.vertex
                            && let Some(k) = sink.layout.xyz.iter().position(|&i| i == p)
                        {
                            xyz[k] = value;
                        }
                    }
                    Property::List { name, count, item } => {
                        let n = read(&mut pos, *count).ok_or_else(truncated)?;
                        let Some(n) = to_index(n) else {
                            return Err(malformed(
                                at(),
                                format!("list {name} has count {n}, not a non-negative integer"),
                            ));
                        };
                        let wanted = item.size() * n as usize;
                        if bytes.len() - pos < wanted {
                            return Err(truncated());
                        }
                        if e == sink.layout.face && p == sink.layout.indices {
                            for _ in 0..n {
                                let value = read(&mut pos, *item).ok_or_else(truncated)?;
                                let Some(index) = to_index(value) else {
                                    return Err(malformed(
                                        at(),
                                        format!(
                                            "face {instance}: vertex index {value} is negative"
                                        ),
                                    ));
                                };
                                sink.corners.push(index);
                            }
                        } else {
                            pos += wanted;
                        }
                    }
                }
            }
            if e == sink.layout.vertex {
                sink.vertex(xyz, at)?;
            } else if e == sink.layout.face {
                sink.face(instance, n_vertices, at)?;
            }
        }
    }
    if let Some(offset) = bytes[pos..].iter().position(|b| !b.is_ascii_whitespace()) {
        return Err(malformed(
            format!("byte {}", pos + offset),
            format!(
                "{} bytes after the last declared element; the header's counts do not match \
                 the data",
                bytes.len() - pos
            ),
        ));
    }
    Ok(())
}
