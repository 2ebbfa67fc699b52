//! Structure-aware inputs built from random bytes with `arbitrary`: OBJ text made of the
//! statements the reader knows (and some it must ignore or refuse), closed meshes that go deep
//! into validation, and scenario documents mutated value by value.

use arbitrary::{Result, Unstructured};
use serde_json::{Value, json};
use spinfall_gravity::{LengthUnit, generate};

/// Numbers that break naive parsers and arithmetic.
const INTERESTING: [&str; 28] = [
    "0",
    "-0",
    "1",
    "-1",
    "0.5",
    "2",
    "1e308",
    "-1e308",
    "1e-308",
    "5e-324",
    "1e999",
    "-1e999",
    "nan",
    "NaN",
    "inf",
    "-inf",
    "infinity",
    "4294967295",
    "4294967296",
    "2147483648",
    "-2147483649",
    "18446744073709551615",
    "18446744073709551616",
    "9007199254740993",
    "1e15",
    "0x10",
    "1_000",
    "+3",
];

fn number(u: &mut Unstructured<'_>) -> Result<String> {
    Ok(match u.int_in_range(0..=9)? {
        0..=2 => u.choose(&INTERESTING)?.to_string(),
        3 => "9".repeat(u.int_in_range(1..=400)?),
        4 => format!(
            "{}e{}",
            u.int_in_range(-9..=9)?,
            u.int_in_range(-400..=400)?
        ),
        _ => format!("{}", f64::from(u.int_in_range(-2000..=2000)?) / 7.0),
    })
}

fn index(u: &mut Unstructured<'_>, n: i64) -> Result<String> {
    let i = match u.int_in_range(0..=9)? {
        0 => *u.choose(&[
            0,
            -1,
            i64::from(i32::MAX),
            i64::from(u32::MAX) + 1,
            -n - 1,
            n + 1,
        ])?,
        1..=2 => -u.int_in_range(1..=n.max(1))?,
        _ => u.int_in_range(1..=n.max(1))?,
    };
    Ok(match u.int_in_range(0..=7)? {
        0 => format!("{i}/{}", u.int_in_range(-3..=5)?),
        1 => format!("{i}//{}", u.int_in_range(-3..=5)?),
        2 => format!(
            "{i}/{}/{}",
            u.int_in_range(-3..=5)?,
            u.int_in_range(-3..=5)?
        ),
        _ => i.to_string(),
    })
}

/// OBJ text statement by statement.
pub fn obj_text(u: &mut Unstructured<'_>) -> Result<Vec<u8>> {
    if u.ratio(1, 4)? {
        return closed_mesh_obj(u);
    }
    let mut out = String::new();
    let mut vertices = 0i64;
    let statements = u.int_in_range(0..=120)?;
    for _ in 0..statements {
        let line = match u.int_in_range(0..=19)? {
            0..=6 => {
                vertices += 1;
                let n = *u.choose(&[3usize, 3, 3, 4, 6, 7, 2, 5, 8])?;
                let mut parts = vec!["v".to_string()];
                for _ in 0..n {
                    parts.push(number(u)?);
                }
                parts.join(" ")
            }
            7..=11 => {
                let corners = *u.choose(&[3usize, 3, 3, 4, 5, 2, 1, 9])?;
                let mut parts = vec![u.choose(&["f", "f", "f", "fo"])?.to_string()];
                for _ in 0..corners {
                    parts.push(index(u, vertices)?);
                }
                parts.join(" ")
            }
            12 => format!("vt {} {}", number(u)?, number(u)?),
            13 => format!("vn {} {} {}", number(u)?, number(u)?, number(u)?),
            14 => u
                .choose(&[
                    "g part",
                    "o thing",
                    "s 1",
                    "usemtl stone",
                    "mtllib a.mtl",
                    "l 1 2",
                    "p 1",
                    "cstype bspline",
                    "curv 0 1 1 2",
                    "surf 0 1 0 1 1 2 3",
                    "vp 0.5",
                    "end",
                ])?
                .to_string(),
            15 => format!("# {}", number(u)?),
            16 => String::new(),
            17 => format!("v {} {} \\", number(u)?, number(u)?),
            18 => {
                let word: String = (0..u.int_in_range(1..=12)?)
                    .map(|_| u.int_in_range(b'a'..=b'z').map(char::from))
                    .collect::<Result<_>>()?;
                format!("{word} {}", number(u)?)
            }
            _ => {
                let n = u.int_in_range(1..=300_000)?;
                format!("v 0 0 {}", "8".repeat(n))
            }
        };
        out.push_str(&line);
        out.push_str(if u.ratio(1, 20)? { "\r\n" } else { "\n" });
    }
    encode_text(u, out)
}

/// A closed mesh from the generators, jittered, with faces flipped, duplicated or dropped and
/// vertices moved through the body: deep into validation and the crossing test.
fn closed_mesh_obj(u: &mut Unstructured<'_>) -> Result<Vec<u8>> {
    let mesh = edited_closed_mesh(u)?;
    let text = generate::to_obj(&mesh, LengthUnit::Metre, "fuzz");
    encode_text(u, text)
}

/// A closed mesh from the generators with the edits of [`obj_text`]'s closed meshes.
fn edited_closed_mesh(u: &mut Unstructured<'_>) -> Result<spinfall_gravity::Mesh> {
    let mut mesh = match u.int_in_range(0..=3)? {
        0 => generate::box_mesh(2.0, 1.0, 0.5),
        1 => generate::icosphere(1.0, u.int_in_range(0..=1)?),
        2 => generate::ellipsoid(3.0, 2.0, 1.0, 0),
        _ => generate::box_mesh_subdivided(1.0, 1.0, 1.0, u.int_in_range(1..=3)?),
    };
    let edits = u.int_in_range(0..=6)?;
    for _ in 0..edits {
        let nv = mesh.vertices_m.len();
        let nf = mesh.faces.len();
        if nv == 0 || nf == 0 {
            break;
        }
        match u.int_in_range(0..=6)? {
            0 => {
                let v = u.choose_index(nv)?;
                let k = u.choose_index(3)?;
                mesh.vertices_m[v][k] += f64::from(u.int_in_range(-40..=40)?) / 10.0;
            }
            1 => {
                let f = u.choose_index(nf)?;
                mesh.faces[f].swap(1, 2);
            }
            2 => {
                let f = u.choose_index(nf)?;
                mesh.faces.remove(f);
            }
            3 => {
                let f = u.choose_index(nf)?;
                let face = mesh.faces[f];
                mesh.faces.push(face);
            }
            4 => {
                let v = u.choose_index(nv)?;
                let p = mesh.vertices_m[v];
                mesh.vertices_m.push(p);
            }
            5 => {
                // A second, shifted copy: two shells, overlapping or not.
                let shift = f64::from(u.int_in_range(0..=30)?) / 10.0;
                let base = nv as u32;
                let copy: Vec<_> = mesh
                    .vertices_m
                    .iter()
                    .map(|p| p + nalgebra::Vector3::new(shift, 0.1, 0.2))
                    .collect();
                mesh.vertices_m.extend(copy);
                let faces: Vec<_> = mesh.faces.iter().map(|f| f.map(|v| v + base)).collect();
                mesh.faces.extend(faces);
            }
            _ => {
                let v = u.choose_index(nv)?;
                mesh.vertices_m[v] = nalgebra::Point3::from(-mesh.vertices_m[v].coords * 1.5);
            }
        }
    }
    Ok(mesh)
}

/// PLY bytes: an edited closed mesh in one of the three encodings, sometimes with its header
/// rewritten (types, counts, property names, extra elements), or a random header over random
/// data.
pub fn ply_bytes(u: &mut Unstructured<'_>) -> Result<Vec<u8>> {
    if u.ratio(1, 4)? {
        let mut out = String::from("ply\n");
        out.push_str(u.choose(&[
            "format ascii 1.0\n",
            "format binary_little_endian 1.0\n",
            "format binary_big_endian 1.0\n",
            "format ascii 2.0\n",
            "",
        ])?);
        for _ in 0..u.int_in_range(0..=4)? {
            let name = u.choose(&["vertex", "face", "edge", "material", ""])?;
            let count = u.choose(&["0", "1", "3", "8", "4294967296", "-1", "x"])?;
            out.push_str(&format!("element {name} {count}\n"));
            for _ in 0..u.int_in_range(0..=5)? {
                let line = match u.int_in_range(0..=2)? {
                    0 => format!(
                        "property {} {}\n",
                        u.choose(&["float", "double", "uchar", "int", "int8", "quad"])?,
                        u.choose(&["x", "y", "z", "red", ""])?
                    ),
                    1 => format!(
                        "property list {} {} {}\n",
                        u.choose(&["uchar", "int", "float", "ushort"])?,
                        u.choose(&["int", "uint", "float", "double", "char"])?,
                        u.choose(&["vertex_indices", "vertex_index", "other"])?
                    ),
                    _ => "comment note\n".to_string(),
                };
                out.push_str(&line);
            }
        }
        out.push_str("end_header\n");
        let mut bytes = out.into_bytes();
        let n = u.int_in_range(0..=400)?;
        for _ in 0..n {
            bytes.push(*u.choose(b"0123456789 .-\nen\x00\xff\x03")?);
        }
        return Ok(bytes);
    }
    let mesh = edited_closed_mesh(u)?;
    let unit = LengthUnit::Metre;
    let mut bytes = match u.int_in_range(0..=2)? {
        0 => generate::to_ply_ascii(&mesh, unit, "fuzz").into_bytes(),
        1 => generate::to_ply_binary(&mesh, unit, "fuzz", false),
        _ => generate::to_ply_binary(&mesh, unit, "fuzz", true),
    };
    if u.ratio(1, 3)? {
        let (from, to) = *u.choose(&[
            ("property double x", "property float x"),
            ("list uchar int", "list uchar float"),
            ("list uchar int", "list int uchar"),
            ("element face", "element face 1\nelement face"),
            ("element vertex ", "element vertex 1"),
            ("vertex_indices", "indices"),
            ("end_header", "end_header\n"),
            ("property double z\n", ""),
        ])?;
        let header_end = bytes
            .windows(10)
            .position(|w| w == b"end_header")
            .map_or(bytes.len(), |i| i + 10);
        let head = String::from_utf8_lossy(&bytes[..header_end]).replacen(from, to, 1);
        bytes = [head.as_bytes(), &bytes[header_end..]].concat();
    }
    Ok(bytes)
}

/// STL bytes: an edited closed mesh as ASCII or binary STL, sometimes with the binary count,
/// the size or an ASCII keyword changed.
pub fn stl_bytes(u: &mut Unstructured<'_>) -> Result<Vec<u8>> {
    let mesh = edited_closed_mesh(u)?;
    let unit = LengthUnit::Metre;
    if u.ratio(1, 2)? {
        let mut bytes = generate::to_stl_binary(&mesh, unit, "solid fuzz");
        match u.int_in_range(0..=5)? {
            0 => {
                let n: u32 = u.arbitrary()?;
                bytes[80..84].copy_from_slice(&n.to_le_bytes());
            }
            1 => {
                let cut = u.int_in_range(0..=bytes.len())?;
                bytes.truncate(cut);
            }
            2 => {
                let at = u.int_in_range(84..=bytes.len().saturating_sub(4).max(84))?;
                if at + 4 <= bytes.len() {
                    let x = *u.choose(&[f32::NAN, f32::INFINITY, 1e38, -0.0, 1e-30])?;
                    bytes[at..at + 4].copy_from_slice(&x.to_le_bytes());
                }
            }
            _ => {}
        }
        Ok(bytes)
    } else {
        let mut text = generate::to_stl_ascii(&mesh, unit, "fuzz");
        if u.ratio(1, 2)? {
            let (from, to) = *u.choose(&[
                ("endloop", "vertex 1 2 3\nendloop"),
                ("outer loop", "outer"),
                ("endsolid fuzz", ""),
                ("vertex 1", "vertex nan"),
                ("vertex -", "vertex --"),
                ("facet normal", "solid x\nfacet normal"),
                ("endfacet", "endfacet\nendsolid\nsolid again"),
            ])?;
            text = text.replacen(from, to, 1);
        }
        encode_text(u, text)
    }
}

/// The text as bytes, sometimes with a byte-order mark or in UTF-16.
fn encode_text(u: &mut Unstructured<'_>, text: String) -> Result<Vec<u8>> {
    Ok(match u.int_in_range(0..=29)? {
        0 => [b"\xEF\xBB\xBF".as_slice(), text.as_bytes()].concat(),
        1 => {
            let mut out = vec![0xFF, 0xFE];
            out.extend(text.encode_utf16().flat_map(|c| c.to_le_bytes()));
            out
        }
        2 => text.encode_utf16().flat_map(|c| c.to_be_bytes()).collect(),
        _ => text.into_bytes(),
    })
}

fn json_value(u: &mut Unstructured<'_>, depth: u32) -> Result<Value> {
    Ok(match u.int_in_range(0..=11)? {
        0 => Value::Null,
        1 => Value::Bool(u.arbitrary()?),
        2..=4 => {
            let n = number(u)?;
            serde_json::from_str(&n).unwrap_or(Value::String(n))
        }
        5 => json!(u.int_in_range(-3i64..=200_000)?),
        6 => json!(*u.choose(&[0u64, 1, 8, 100_000, 100_001, 1_000_000, 1_000_001, u64::MAX])?),
        7 => Value::String(
            u.choose(&[
                "max-moment",
                "+z",
                "km",
                "m",
                "face",
                "smoothed",
                "azimuth_deg",
                "elevation_deg",
                "speed_m_s",
                "builtin:quillon",
                "builtin:other",
                "",
                "rock.obj",
                "../x.obj",
                "min_speed",
                "low",
                "high",
                "global",
                "patch",
                "rock.ply",
                "rock.stl",
            ])?
            .to_string(),
        ),
        8 => Value::String("z".repeat(u.int_in_range(0..=200_000)?)),
        9 if depth < 4 => Value::Array(
            (0..u.int_in_range(0..=4)?)
                .map(|_| json_value(u, depth + 1))
                .collect::<Result<_>>()?,
        ),
        10 if depth < 4 => {
            let mut m = serde_json::Map::new();
            for _ in 0..u.int_in_range(0..=3)? {
                let key = u.choose(&[
                    "lat_deg",
                    "lon_deg",
                    "face",
                    "point_m",
                    "count",
                    "to",
                    "vary",
                    "x",
                    "fixed_speed_m_s",
                    "fixed_elevation_deg",
                    "arc",
                    "radius_m",
                    "direction_inertial",
                    "distance_au",
                    "path",
                    "kind",
                ])?;
                m.insert(key.to_string(), json_value(u, depth + 1)?);
            }
            Value::Object(m)
        }
        _ => json!(f64::from(u.int_in_range(-1000..=1000)?) / 3.0),
    })
}

/// Every (path, value) slot of a JSON document, for picking one to change.
fn slots(v: &Value, path: &mut Vec<Value>, out: &mut Vec<Vec<Value>>) {
    out.push(path.clone());
    match v {
        Value::Object(m) => {
            for (k, c) in m {
                path.push(Value::String(k.clone()));
                slots(c, path, out);
                path.pop();
            }
        }
        Value::Array(a) => {
            for (i, c) in a.iter().enumerate() {
                path.push(json!(i));
                slots(c, path, out);
                path.pop();
            }
        }
        _ => {}
    }
}

fn at<'a>(v: &'a mut Value, path: &[Value]) -> Option<&'a mut Value> {
    let mut cur = v;
    for p in path {
        cur = match (cur, p) {
            (Value::Object(m), Value::String(k)) => m.get_mut(k)?,
            (Value::Array(a), Value::Number(i)) => a.get_mut(usize::try_from(i.as_u64()?).ok()?)?,
            _ => return None,
        };
    }
    Some(cur)
}

/// A scenario document: a valid one (the example, or a small one), with a few values replaced,
/// keys removed or added, then written as JSON (sometimes reformatted or re-encoded).
pub fn scenario_text(u: &mut Unstructured<'_>) -> Result<Vec<u8>> {
    let base = if u.arbitrary()? {
        serde_json::to_value(spinfall_dynamics::scenario::Scenario::builtin_example())
            .unwrap_or(Value::Null)
    } else {
        json!({"format": "spinfall-scenario", "version": 1,
               "body": {"shape": "builtin:quillon", "gm_m3_s2": 5.0,
                        "spin": {"period_h": 4.0}},
               "launches": [{"id": "a", "site": {"face": 3}, "speed_m_s": 0.3,
                             "fan": {"vary": "speed_m_s", "to": 0.6, "count": 3}},
                            {"id": "b", "state": {"position_m": [3000, 0, 0], "velocity_m_s": [0, 0.5, 0]}},
                            {"id": "t", "site": {"face": 5}, "target": {"lat_deg": 10, "lon_deg": 20},
                             "mode": {"fixed_speed_m_s": 0.4, "arc": "high"}, "miss_tolerance_m": 0.5,
                             "particle": {"radius_m": 1e-4, "density_kg_m3": 2500}}],
               "environment": {"sun": {"direction_inertial": [1, 0, 0], "distance_au": 1.5},
                               "particle": {"radius_m": 5e-5, "density_kg_m3": 2000}}})
    };
    let mut doc = base;
    let edits = u.int_in_range(0..=5)?;
    for _ in 0..edits {
        let mut all = Vec::new();
        slots(&doc, &mut Vec::new(), &mut all);
        let path = u.choose(&all)?.clone();
        let new = json_value(u, 0)?;
        let kind = u.int_in_range(0..=5)?;
        if kind == 0 && path.len() > 1 {
            let (last, parent) = path.split_last().unwrap_or((&Value::Null, &[]));
            if let (Some(Value::Object(m)), Value::String(k)) = (at(&mut doc, parent), last) {
                m.remove(k);
            }
        } else if kind == 1 {
            if let Some(Value::Object(m)) = at(&mut doc, &path) {
                let key = u.choose(&[
                    "extra",
                    "limits",
                    "seed",
                    "name",
                    "launches",
                    "fan",
                    "dispersion",
                    "recenter",
                    "target",
                    "mode",
                    "miss_tolerance_m",
                    "environment",
                    "particle",
                    "contact_shape",
                ])?;
                m.insert(key.to_string(), new);
            }
        } else if let Some(slot) = at(&mut doc, &path) {
            *slot = new;
        }
    }
    let text = if u.ratio(1, 3)? {
        serde_json::to_string(&doc).unwrap_or_default()
    } else {
        serde_json::to_string_pretty(&doc).unwrap_or_default()
    };
    encode_text(u, text)
}
