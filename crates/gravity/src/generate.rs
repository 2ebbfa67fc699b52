//! Deterministic shape generators: icosphere, ellipsoid, box and the invented demo body.
//!
//! Every generator returns a closed, outward-oriented [`Mesh`] in metres. The output depends only
//! on the arguments (no randomness), so tests and shipped files can be rebuilt bit for bit on the
//! same platform.

use std::collections::HashMap;
use std::fmt::Write as _;

use nalgebra::{Point3, Vector3};

use crate::mesh::{LengthUnit, Mesh};

/// A unit icosphere: the regular icosahedron subdivided `subdivisions` times, every new vertex
/// pushed onto the unit sphere. Vertices are unit vectors; faces are counter-clockwise seen from
/// outside. `20 * 4^n` faces and `10 * 4^n + 2` vertices.
fn unit_icosphere(subdivisions: u32) -> (Vec<Vector3<f64>>, Vec<[u32; 3]>) {
    let phi = (1.0 + 5.0_f64.sqrt()) / 2.0;
    let raw = [
        [-1.0, phi, 0.0],
        [1.0, phi, 0.0],
        [-1.0, -phi, 0.0],
        [1.0, -phi, 0.0],
        [0.0, -1.0, phi],
        [0.0, 1.0, phi],
        [0.0, -1.0, -phi],
        [0.0, 1.0, -phi],
        [phi, 0.0, -1.0],
        [phi, 0.0, 1.0],
        [-phi, 0.0, -1.0],
        [-phi, 0.0, 1.0],
    ];
    let mut vertices: Vec<Vector3<f64>> = raw
        .iter()
        .map(|v| Vector3::new(v[0], v[1], v[2]).normalize())
        .collect();
    let mut faces: Vec<[u32; 3]> = vec![
        [0, 11, 5],
        [0, 5, 1],
        [0, 1, 7],
        [0, 7, 10],
        [0, 10, 11],
        [1, 5, 9],
        [5, 11, 4],
        [11, 10, 2],
        [10, 7, 6],
        [7, 1, 8],
        [3, 9, 4],
        [3, 4, 2],
        [3, 2, 6],
        [3, 6, 8],
        [3, 8, 9],
        [4, 9, 5],
        [2, 4, 11],
        [6, 2, 10],
        [8, 6, 7],
        [9, 8, 1],
    ];
    for _ in 0..subdivisions {
        let mut midpoints: HashMap<(u32, u32), u32> = HashMap::with_capacity(faces.len() * 3 / 2);
        let mut next = Vec::with_capacity(faces.len() * 4);
        let mut midpoint = |a: u32, b: u32, vertices: &mut Vec<Vector3<f64>>| -> u32 {
            let key = (a.min(b), a.max(b));
            *midpoints.entry(key).or_insert_with(|| {
                let m = (vertices[a as usize] + vertices[b as usize]).normalize();
                vertices.push(m);
                (vertices.len() - 1) as u32
            })
        };
        for &[a, b, c] in &faces {
            let ab = midpoint(a, b, &mut vertices);
            let bc = midpoint(b, c, &mut vertices);
            let ca = midpoint(c, a, &mut vertices);
            next.push([a, ab, ca]);
            next.push([b, bc, ab]);
            next.push([c, ca, bc]);
            next.push([ab, bc, ca]);
        }
        faces = next;
    }
    (vertices, faces)
}

/// A unit geodesic sphere of frequency `frequency`: every face of the regular icosahedron cut
/// into `frequency^2` triangles by a triangular grid, every grid point pushed onto the unit
/// sphere. `20 f^2` faces and `10 f^2 + 2` vertices, so face counts between the powers of four
/// of [`unit_icosphere`] are reachable (f = 71: 100 820 faces; f = 224: 1 003 520).
fn unit_geodesic(frequency: u32) -> (Vec<Vector3<f64>>, Vec<[u32; 3]>) {
    let f = frequency.max(1);
    let (corners, ico_faces) = unit_icosphere(0);
    /// Where a grid point lies: an icosahedron corner, a point on an icosahedron edge (the
    /// lower corner index first, steps from it), or inside one icosahedron face.
    #[derive(Hash, PartialEq, Eq)]
    enum Key {
        Corner(u32),
        Edge(u32, u32, u32),
        Inside(usize, u32, u32),
    }
    let mut index: HashMap<Key, u32> = HashMap::new();
    let mut vertices: Vec<Vector3<f64>> = Vec::with_capacity(10 * (f * f) as usize + 2);
    let mut faces = Vec::with_capacity(20 * (f * f) as usize);
    for (fi, &[a, b, c]) in ico_faces.iter().enumerate() {
        let (pa, pb, pc) = (
            corners[a as usize],
            corners[b as usize],
            corners[c as usize],
        );
        // Grid point (i, j): i steps from a towards b, j from a towards c.
        let mut id = |i: u32, j: u32| -> u32 {
            let k = f - i - j;
            let key = if i == f {
                Key::Corner(b)
            } else if j == f {
                Key::Corner(c)
            } else if k == f {
                Key::Corner(a)
            } else if j == 0 {
                if a < b {
                    Key::Edge(a, b, i)
                } else {
                    Key::Edge(b, a, f - i)
                }
            } else if i == 0 {
                if a < c {
                    Key::Edge(a, c, j)
                } else {
                    Key::Edge(c, a, f - j)
                }
            } else if k == 0 {
                if b < c {
                    Key::Edge(b, c, j)
                } else {
                    Key::Edge(c, b, i)
                }
            } else {
                Key::Inside(fi, i, j)
            };
            *index.entry(key).or_insert_with(|| {
                let p = pa * (k as f64 / f as f64)
                    + pb * (i as f64 / f as f64)
                    + pc * (j as f64 / f as f64);
                vertices.push(p.normalize());
                (vertices.len() - 1) as u32
            })
        };
        for i in 0..f {
            for j in 0..f - i {
                faces.push([id(i, j), id(i + 1, j), id(i, j + 1)]);
                if i + j + 1 < f {
                    faces.push([id(i + 1, j), id(i + 1, j + 1), id(i, j + 1)]);
                }
            }
        }
    }
    (vertices, faces)
}

/// Sphere of radius `radius_m` as a geodesic sphere of frequency `frequency`: `20 f^2` faces
/// (f = 71: 100 820 faces). Vertices lie on the sphere.
pub fn geodesic_sphere(radius_m: f64, frequency: u32) -> Mesh {
    let (dirs, faces) = unit_geodesic(frequency);
    let vertices_m = dirs.iter().map(|u| Point3::from(u * radius_m)).collect();
    Mesh { vertices_m, faces }
}

/// Sphere of radius `radius_m` as a subdivided icosahedron: `20 * 4^subdivisions` faces
/// (n = 4 -> 5120, n = 6 -> 81 920, n = 7 -> 327 680). Vertices lie on the sphere.
pub fn icosphere(radius_m: f64, subdivisions: u32) -> Mesh {
    ellipsoid(radius_m, radius_m, radius_m, subdivisions)
}

/// Triaxial ellipsoid with semi-axes `a_m`, `b_m`, `c_m` along x, y, z: a unit icosphere scaled
/// per axis (vertices lie on the ellipsoid; same face count as [`icosphere`]).
pub fn ellipsoid(a_m: f64, b_m: f64, c_m: f64, subdivisions: u32) -> Mesh {
    let (dirs, faces) = unit_icosphere(subdivisions);
    let vertices_m = dirs
        .iter()
        .map(|u| Point3::new(a_m * u.x, b_m * u.y, c_m * u.z))
        .collect();
    Mesh { vertices_m, faces }
}

/// Axis-aligned box `lx_m x ly_m x lz_m` centred at the origin: 8 vertices, 12 triangles.
pub fn box_mesh(lx_m: f64, ly_m: f64, lz_m: f64) -> Mesh {
    box_mesh_subdivided(lx_m, ly_m, lz_m, 1)
}

/// Axis-aligned box centred at the origin whose every side is split into an `n x n` grid of
/// squares, two triangles each: `12 * n^2` faces, shared vertices along the box edges (closed).
/// `n = 0` is treated as 1.
pub fn box_mesh_subdivided(lx_m: f64, ly_m: f64, lz_m: f64, n: u32) -> Mesh {
    let n = n.max(1);
    let half = [lx_m / 2.0, ly_m / 2.0, lz_m / 2.0];
    let len = [lx_m, ly_m, lz_m];
    // Lattice coordinate -> metres; the same formula on every side so shared vertices coincide.
    let coord = |axis: usize, i: u32| -> f64 {
        if i == n {
            half[axis]
        } else {
            -half[axis] + len[axis] * f64::from(i) / f64::from(n)
        }
    };
    let mut index: HashMap<[u32; 3], u32> = HashMap::new();
    let mut vertices_m = Vec::new();
    let mut faces = Vec::with_capacity(12 * (n as usize) * (n as usize));
    let mut vertex = |lattice: [u32; 3], vertices_m: &mut Vec<Point3<f64>>| -> u32 {
        *index.entry(lattice).or_insert_with(|| {
            vertices_m.push(Point3::new(
                coord(0, lattice[0]),
                coord(1, lattice[1]),
                coord(2, lattice[2]),
            ));
            (vertices_m.len() - 1) as u32
        })
    };
    // (normal axis, tangent u, tangent v) with u x v = +normal axis.
    let sides = [(0usize, 1usize, 2usize), (1, 2, 0), (2, 0, 1)];
    for &(w, u, v) in &sides {
        for high in [false, true] {
            for i in 0..n {
                for j in 0..n {
                    let at = |du: u32, dv: u32| {
                        let mut l = [0u32; 3];
                        l[w] = if high { n } else { 0 };
                        l[u] = i + du;
                        l[v] = j + dv;
                        l
                    };
                    let p00 = vertex(at(0, 0), &mut vertices_m);
                    let p10 = vertex(at(1, 0), &mut vertices_m);
                    let p11 = vertex(at(1, 1), &mut vertices_m);
                    let p01 = vertex(at(0, 1), &mut vertices_m);
                    if high {
                        faces.push([p00, p10, p11]);
                        faces.push([p00, p11, p01]);
                    } else {
                        faces.push([p00, p11, p10]);
                        faces.push([p00, p01, p11]);
                    }
                }
            }
        }
    }
    Mesh { vertices_m, faces }
}

/// Far intersection, from the origin along unit direction `u`, with the ellipsoid of centre
/// `c` and semi-axes `s` (the origin must be inside it).
fn ellipsoid_exit(u: &Vector3<f64>, c: &Vector3<f64>, s: &Vector3<f64>) -> f64 {
    let du = u.component_div(s);
    let dc = c.component_div(s);
    let a = du.norm_squared();
    let b = du.dot(&dc);
    let k = dc.norm_squared() - 1.0;
    (b + (b * b - a * k).max(0.0).sqrt()) / a
}

/// Smooth bump of angular radius `width_rad` around unit direction `centre`: 1 at the centre,
/// falling to 0 at the rim with zero slope (a raised cosine).
fn cap(u: &Vector3<f64>, centre: &Vector3<f64>, width_rad: f64) -> f64 {
    let angle = u.dot(centre).clamp(-1.0, 1.0).acos();
    if angle >= width_rad {
        0.0
    } else {
        0.5 * (1.0 + (std::f64::consts::PI * angle / width_rad).cos())
    }
}

/// Radius of the demo body in unit direction `u`, metres.
fn quillon_radius_m(u: &Vector3<f64>) -> f64 {
    // Two lobes (ellipsoids that both contain the origin), joined by a smooth maximum so the
    // neck is rounded; the surface stays star-shaped about the origin.
    let lobe_a = ellipsoid_exit(
        u,
        &Vector3::new(1150.0, 40.0, 0.0),
        &Vector3::new(1650.0, 1650.0, 1420.0),
    );
    let lobe_b = ellipsoid_exit(
        u,
        &Vector3::new(-1300.0, -90.0, 60.0),
        &Vector3::new(1500.0, 1250.0, 1100.0),
    );
    let p = 10.0;
    let mut r = (lobe_a.powf(p) + lobe_b.powf(p)).powf(1.0 / p);
    // Smooth low-order bumps (fixed formulas, not symmetric).
    r *= 1.0
        + 0.035 * (2.0 * u.x + 0.7).sin() * (1.5 * u.y - 0.3).cos()
        + 0.025 * (3.0 * u.z + 1.1 * u.x).sin()
        + 0.02 * (2.5 * u.y * u.z + 0.4).cos();
    // Shallow craters: depressions with a slightly raised rim.
    let craters = [
        (Vector3::new(0.55, 0.35, 0.76), 0.42, 0.045),
        (Vector3::new(-0.62, -0.55, 0.56), 0.33, 0.04),
        (Vector3::new(0.25, -0.9, -0.35), 0.28, 0.035),
    ];
    for (centre, width_rad, depth) in craters {
        let centre = centre.normalize();
        let bowl = cap(u, &centre, width_rad);
        let rim = cap(u, &centre, 1.3 * width_rad) - bowl;
        r *= 1.0 - depth * bowl + 0.25 * depth * rim;
    }
    r
}

/// The invented demo body "Quillon": an irregular, bilobed (contact-binary-like) body about
/// 5.6 x 3.4 x 2.9 km, built as a star-shaped radial function over an icosphere with
/// `subdivisions` levels (two lobes, a few smooth low-order bumps, three shallow craters).
/// Deterministic; not symmetric; its centre of mass is near, but not at, the origin.
pub fn demo_body(subdivisions: u32) -> Mesh {
    let (dirs, faces) = unit_icosphere(subdivisions);
    let vertices_m = dirs
        .iter()
        .map(|u| Point3::from(u * quillon_radius_m(u)))
        .collect();
    Mesh { vertices_m, faces }
}

/// The demo body "Quillon" (see [`demo_body`]) over a geodesic sphere of frequency
/// `frequency` instead of an icosphere: `20 f^2` faces (f = 71: 100 820; f = 224: 1 003 520),
/// for tests and benchmarks at the sizes of real shape models.
pub fn demo_body_geodesic(frequency: u32) -> Mesh {
    let (dirs, faces) = unit_geodesic(frequency);
    let vertices_m = dirs
        .iter()
        .map(|u| Point3::from(u * quillon_radius_m(u)))
        .collect();
    Mesh { vertices_m, faces }
}

/// Writes `mesh` as Wavefront OBJ text in `unit`: each line of `header` becomes a `#` comment,
/// then `v x y z` lines and 1-based `f a b c` lines.
///
/// Coordinates are printed with Rust's shortest round-trip formatting, so reading the file back
/// in the same unit gives the same numbers; converting metres to kilometres and back may differ
/// from the original by one rounding (well below a micrometre).
pub fn to_obj(mesh: &Mesh, unit: LengthUnit, header: &str) -> String {
    let scale = unit.metres_per_unit();
    let mut out = String::with_capacity(40 * mesh.vertices_m.len() + 24 * mesh.faces.len());
    for line in header.lines() {
        let _ = writeln!(out, "# {line}");
    }
    let _ = writeln!(
        out,
        "# {} vertices, {} faces, coordinates in {unit}",
        mesh.vertices_m.len(),
        mesh.faces.len()
    );
    for p in &mesh.vertices_m {
        let _ = writeln!(out, "v {} {} {}", p.x / scale, p.y / scale, p.z / scale);
    }
    for [a, b, c] in &mesh.faces {
        let _ = writeln!(out, "f {} {} {}", a + 1, b + 1, c + 1);
    }
    out
}

/// Writes `mesh` as ASCII PLY in `unit` (coordinates as `double`, shortest round-trip decimal,
/// so reading it back gives the same f64 values). `header` lines become `comment` lines.
pub fn to_ply_ascii(mesh: &Mesh, unit: LengthUnit, header: &str) -> String {
    let scale = unit.metres_per_unit();
    let mut out = ply_header(mesh, unit, header, "ascii");
    for p in &mesh.vertices_m {
        let _ = writeln!(out, "{} {} {}", p.x / scale, p.y / scale, p.z / scale);
    }
    for [a, b, c] in &mesh.faces {
        let _ = writeln!(out, "3 {a} {b} {c}");
    }
    out
}

/// Writes `mesh` as binary PLY in `unit`, little- or big-endian: `double` coordinates, `uchar`
/// corner counts and `int` indices.
pub fn to_ply_binary(mesh: &Mesh, unit: LengthUnit, header: &str, big_endian: bool) -> Vec<u8> {
    let scale = unit.metres_per_unit();
    let kind = if big_endian {
        "binary_big_endian"
    } else {
        "binary_little_endian"
    };
    let mut out = ply_header(mesh, unit, header, kind).into_bytes();
    let put = |bytes: &mut Vec<u8>, le: &[u8]| {
        if big_endian {
            bytes.extend(le.iter().rev());
        } else {
            bytes.extend_from_slice(le);
        }
    };
    for p in &mesh.vertices_m {
        for c in [p.x, p.y, p.z] {
            put(&mut out, &(c / scale).to_le_bytes());
        }
    }
    for face in &mesh.faces {
        out.push(3);
        for &v in face {
            put(&mut out, &(v as i32).to_le_bytes());
        }
    }
    out
}

fn ply_header(mesh: &Mesh, unit: LengthUnit, header: &str, kind: &str) -> String {
    let mut out = format!("ply\nformat {kind} 1.0\n");
    for line in header.lines() {
        let _ = writeln!(out, "comment {line}");
    }
    let _ = writeln!(out, "comment coordinates in {unit}");
    let _ = writeln!(
        out,
        "element vertex {}\nproperty double x\nproperty double y\nproperty double z",
        mesh.vertices_m.len()
    );
    let _ = writeln!(
        out,
        "element face {}\nproperty list uchar int vertex_indices\nend_header",
        mesh.faces.len()
    );
    out
}

/// Writes `mesh` as ASCII STL in `unit`; each corner is written as the shortest decimal of its
/// `f32` value, as binary STL would store it, and each facet's normal is its unit normal.
pub fn to_stl_ascii(mesh: &Mesh, unit: LengthUnit, name: &str) -> String {
    let scale = unit.metres_per_unit();
    let mut out = format!("solid {name}\n");
    for f in 0..mesh.faces.len() {
        let n = mesh.face_cross(f).normalize();
        let _ = writeln!(
            out,
            "  facet normal {} {} {}",
            n.x as f32, n.y as f32, n.z as f32
        );
        let _ = writeln!(out, "    outer loop");
        for p in mesh.triangle(f) {
            let _ = writeln!(
                out,
                "      vertex {} {} {}",
                (p.x / scale) as f32,
                (p.y / scale) as f32,
                (p.z / scale) as f32
            );
        }
        let _ = writeln!(out, "    endloop\n  endfacet");
    }
    let _ = writeln!(out, "endsolid {name}");
    out
}

/// Writes `mesh` as binary STL in `unit` (`f32` corners; the 80-byte header holds `name`,
/// cut to fit).
pub fn to_stl_binary(mesh: &Mesh, unit: LengthUnit, name: &str) -> Vec<u8> {
    let scale = unit.metres_per_unit();
    let mut out = Vec::with_capacity(84 + 50 * mesh.faces.len());
    let mut head = [b' '; 80];
    for (slot, b) in head.iter_mut().zip(name.bytes()) {
        *slot = b;
    }
    out.extend_from_slice(&head);
    out.extend_from_slice(&(mesh.faces.len() as u32).to_le_bytes());
    for f in 0..mesh.faces.len() {
        let n = mesh.face_cross(f).normalize();
        for c in [n.x, n.y, n.z] {
            out.extend_from_slice(&(c as f32).to_le_bytes());
        }
        for p in mesh.triangle(f) {
            for c in [p.x, p.y, p.z] {
                out.extend_from_slice(&((c / scale) as f32).to_le_bytes());
            }
        }
        out.extend_from_slice(&[0, 0]);
    }
    out
}

/// The shape models shipped in the workspace `shapes/` folder, as `(file name, mesh, header)`:
/// written in kilometres by the `make_shapes` example and checked against the files by a test.
pub fn shipped_shapes() -> Vec<(&'static str, Mesh, &'static str)> {
    vec![
        (
            "quillon.obj",
            demo_body(4),
            "Quillon, the invented demo body of Spinfall (not a real object).\n\
             Made by spinfall_gravity::generate::demo_body(4): bilobed star-shaped radial\n\
             function over an icosphere with 4 subdivisions. Units: km.\n\
             Rebuild: cargo run -p spinfall-gravity --example make_shapes",
        ),
        (
            "box.obj",
            box_mesh(2000.0, 1200.0, 800.0),
            "Box 2 x 1.2 x 0.8 km centred at the origin, 12 triangles.\n\
             Made by spinfall_gravity::generate::box_mesh(2000.0, 1200.0, 800.0). Units: km.\n\
             Rebuild: cargo run -p spinfall-gravity --example make_shapes",
        ),
        (
            "ellipsoid.obj",
            ellipsoid(3000.0, 2000.0, 1500.0, 4),
            "Triaxial ellipsoid, semi-axes 3 x 2 x 1.5 km, an invented test body.\n\
             Made by spinfall_gravity::generate::ellipsoid(3000.0, 2000.0, 1500.0, 4). Units: km.\n\
             Rebuild: cargo run -p spinfall-gravity --example make_shapes",
        ),
    ]
}
