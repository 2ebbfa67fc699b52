//! Mesh generators for tests, benchmarks and examples (not physics: just shapes to draw).

/// Vertex positions and counter-clockwise (outward) triangles.
pub type MeshData = (Vec<[f32; 3]>, Vec<[u32; 3]>);

/// An axis-aligned cube of edge `edge_m` centred at the origin (12 outward triangles).
pub fn cube(edge_m: f32) -> MeshData {
    let h = 0.5 * edge_m;
    let mut positions = Vec::with_capacity(8);
    for i in 0..8u32 {
        let s = |bit: u32| if i & bit != 0 { h } else { -h };
        positions.push([s(1), s(2), s(4)]);
    }
    // Faces as quads (outward, counter-clockwise), split into two triangles each.
    let quads = [
        [0, 4, 6, 2], // -x
        [1, 3, 7, 5], // +x
        [0, 1, 5, 4], // -y
        [2, 6, 7, 3], // +y
        [0, 2, 3, 1], // -z
        [4, 5, 7, 6], // +z
    ];
    let mut triangles = Vec::with_capacity(12);
    for q in quads {
        triangles.push([q[0], q[1], q[2]]);
        triangles.push([q[0], q[2], q[3]]);
    }
    (positions, triangles)
}

/// A UV-free sphere by recursive subdivision of an icosahedron: `20 * 4^level` triangles.
/// `bump` adds a deterministic smooth radial relief of that relative amplitude (0 = sphere).
pub fn icosphere(radius_m: f32, level: u32, bump: f32) -> MeshData {
    use std::collections::HashMap;
    let t = (1.0 + 5f64.sqrt()) / 2.0;
    let mut pos: Vec<[f64; 3]> = vec![
        [-1.0, t, 0.0],
        [1.0, t, 0.0],
        [-1.0, -t, 0.0],
        [1.0, -t, 0.0],
        [0.0, -1.0, t],
        [0.0, 1.0, t],
        [0.0, -1.0, -t],
        [0.0, 1.0, -t],
        [t, 0.0, -1.0],
        [t, 0.0, 1.0],
        [-t, 0.0, -1.0],
        [-t, 0.0, 1.0],
    ];
    let norm = |p: [f64; 3]| {
        let l = (p[0] * p[0] + p[1] * p[1] + p[2] * p[2]).sqrt();
        [p[0] / l, p[1] / l, p[2] / l]
    };
    for p in pos.iter_mut() {
        *p = norm(*p);
    }
    let mut tris: Vec<[u32; 3]> = vec![
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
    for _ in 0..level.min(8) {
        let mut mid: HashMap<(u32, u32), u32> = HashMap::new();
        let mut next = Vec::with_capacity(tris.len() * 4);
        let mut midpoint = |a: u32, b: u32, pos: &mut Vec<[f64; 3]>| {
            let key = (a.min(b), a.max(b));
            *mid.entry(key).or_insert_with(|| {
                let (pa, pb) = (pos[a as usize], pos[b as usize]);
                pos.push(norm([pa[0] + pb[0], pa[1] + pb[1], pa[2] + pb[2]]));
                (pos.len() - 1) as u32
            })
        };
        for [a, b, c] in tris {
            let ab = midpoint(a, b, &mut pos);
            let bc = midpoint(b, c, &mut pos);
            let ca = midpoint(c, a, &mut pos);
            next.extend_from_slice(&[[a, ab, ca], [b, bc, ab], [c, ca, bc], [ab, bc, ca]]);
        }
        tris = next;
    }
    let positions = pos
        .iter()
        .map(|p| {
            let relief = 1.0
                + bump as f64
                    * ((3.0 * p[0]).sin() * (2.0 * p[1]).cos() + 0.5 * (5.0 * p[2]).sin());
            let r = radius_m as f64 * relief;
            [(p[0] * r) as f32, (p[1] * r) as f32, (p[2] * r) as f32]
        })
        .collect();
    (positions, tris)
}

/// A helix-like trace of `n` points around the z axis, radius `radius_m`, for line tests.
pub fn spiral(
    n: usize,
    radius_m: f64,
    turns: f64,
    z0_m: f64,
    z1_m: f64,
    phase: f64,
) -> Vec<[f64; 3]> {
    (0..n)
        .map(|i| {
            let f = if n > 1 {
                i as f64 / (n - 1) as f64
            } else {
                0.0
            };
            let a = phase + f * turns * std::f64::consts::TAU;
            [
                radius_m * a.cos(),
                radius_m * a.sin(),
                z0_m + (z1_m - z0_m) * f,
            ]
        })
        .collect()
}

/// A hop-like trace of `n` points over a sphere of `radius_m`: it leaves the surface at
/// latitude/longitude `(lat0_rad, lon0_rad)`, follows the great circle with heading
/// `heading_rad` for `range_rad` of arc and rises to `apex_m` above the surface half-way
/// (altitude `apex_m * sin(pi f)`). A drawing fixture, not a trajectory.
pub fn hop_trace(
    n: usize,
    radius_m: f64,
    lat0_rad: f64,
    lon0_rad: f64,
    heading_rad: f64,
    range_rad: f64,
    apex_m: f64,
) -> Vec<[f64; 3]> {
    let (sl, cl) = lat0_rad.sin_cos();
    let (so, co) = lon0_rad.sin_cos();
    let p0 = [cl * co, cl * so, sl];
    let east = [-so, co, 0.0];
    let north = [-sl * co, -sl * so, cl];
    let (sh, ch) = heading_rad.sin_cos();
    let dir = [
        ch * north[0] + sh * east[0],
        ch * north[1] + sh * east[1],
        ch * north[2] + sh * east[2],
    ];
    (0..n)
        .map(|i| {
            let f = if n > 1 {
                i as f64 / (n - 1) as f64
            } else {
                0.0
            };
            let (s, c) = (f * range_rad).sin_cos();
            let r = radius_m + apex_m * (std::f64::consts::PI * f).sin();
            [
                r * (c * p0[0] + s * dir[0]),
                r * (c * p0[1] + s * dir[1]),
                r * (c * p0[2] + s * dir[2]),
            ]
        })
        .collect()
}
