//! Checks that a mesh is a closed, consistently and outward-oriented 2-manifold, repairing what
//! can be repaired safely (merging duplicate vertices, removing unused ones, dropping zero-area
//! faces, flipping faces that disagree with their neighbours, flipping an inward mesh) and
//! refusing the rest with an error naming the problem and one location.
//!
//! A mesh of several separate closed surfaces (shells: two bodies side by side, or a body with an
//! inner shell) is refused naming a face on each of two shells ([`check_single_shell`]): the
//! constant-density polyhedron of the gravity core is one solid, and a cavity would need its own,
//! inward-facing shell that this validation cannot tell from a second body. Faces that cross
//! each other are found after the BVH is built (see [`crate::ShapeModel::new`]).

use std::collections::HashMap;
use std::fmt;

use nalgebra::Point3;
use serde::Serialize;

use crate::error::{GravityError, Result};
use crate::mesh::Mesh;

/// Something that was repaired or ignored while loading a shape model; work goes on.
///
/// Vertex and face indices are 0-based positions in the mesh as it was given (for OBJ files:
/// the order of the `v` and `f` lines, after fan-triangulation of polygons).
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Warning {
    /// Vertices with exactly equal coordinates were merged into one.
    DuplicateVerticesMerged {
        /// How many vertices were merged away.
        count: usize,
        /// One merged vertex ...
        example_vertex: usize,
        /// ... and the earlier vertex it was merged into.
        merged_into: usize,
    },
    /// Vertices used by no face were removed.
    UnusedVerticesRemoved {
        /// How many.
        count: usize,
        /// One of them.
        example_vertex: usize,
    },
    /// Zero-area faces were dropped; the rest of the mesh stays closed.
    DegenerateFacesDropped {
        /// How many.
        count: usize,
        /// One of them.
        example_face: usize,
    },
    /// Some faces ran against their neighbours; they were flipped to match (each connected
    /// part then turned outward).
    OrientationRepaired {
        /// How many faces were flipped.
        flipped_faces: usize,
        /// One of them.
        example_face: usize,
    },
    /// The faces were oriented inward (negative signed volume); all were flipped.
    OrientationFlipped {
        /// The signed volume before flipping, m^3 (negative).
        signed_volume_m3: f64,
    },
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Warning::DuplicateVerticesMerged {
                count,
                example_vertex,
                merged_into,
            } => write!(
                f,
                "merged {count} duplicate vertices (e.g. vertex {example_vertex} has the same \
                 coordinates as vertex {merged_into}; 0-based)"
            ),
            Warning::UnusedVerticesRemoved {
                count,
                example_vertex,
            } => write!(
                f,
                "removed {count} vertices used by no face (e.g. vertex {example_vertex}; 0-based)"
            ),
            Warning::DegenerateFacesDropped {
                count,
                example_face,
            } => write!(
                f,
                "dropped {count} zero-area faces (e.g. face {example_face}; 0-based); the rest of \
                 the mesh is closed"
            ),
            Warning::OrientationRepaired {
                flipped_faces,
                example_face,
            } => write!(
                f,
                "flipped {flipped_faces} faces whose orientation disagreed with their neighbours \
                 (e.g. face {example_face}; 0-based)"
            ),
            Warning::OrientationFlipped { signed_volume_m3 } => write!(
                f,
                "faces were oriented inward (signed volume {signed_volume_m3:.6e} m^3); flipped \
                 all faces to point outward"
            ),
        }
    }
}

/// Relative size below which a face counts as zero-area: twice its area divided by the square of
/// its longest edge (the ratio of its height to that edge).
const DEGENERATE_RATIO: f64 = 1e-12;

/// A validated mesh together with its edge adjacency.
pub(crate) struct Validated {
    /// The repaired, outward-oriented mesh.
    pub mesh: Mesh,
    /// For each face, the faces across its edges (a-b, b-c, c-a).
    pub neighbours: Vec<[usize; 3]>,
    /// What was repaired.
    pub warnings: Vec<Warning>,
    /// For each face, its index in the mesh as given (for messages).
    pub original_face: Vec<usize>,
}

fn invalid(message: String) -> GravityError {
    GravityError::InvalidMesh(message)
}

/// Validates and repairs `mesh`; see the module documentation.
pub(crate) fn validate(mesh: Mesh) -> Result<Validated> {
    validate_as(mesh, None)
}

/// Validates and repairs an open terrain patch: as [`validate`], except that boundary edges are
/// allowed (and at least one is required), and "outward" means facing away from `centre_m`:
/// each connected part, then the whole, is turned so that the signed volume of the cone from
/// `centre_m` over its faces is positive.
pub(crate) fn validate_patch(mesh: Mesh, centre_m: Point3<f64>) -> Result<Validated> {
    validate_as(mesh, Some(centre_m))
}

fn validate_as(mesh: Mesh, patch_centre: Option<Point3<f64>>) -> Result<Validated> {
    let mut warnings = Vec::new();
    if mesh.vertices_m.is_empty() || mesh.faces.is_empty() {
        return Err(invalid(format!(
            "the mesh is empty ({} vertices, {} faces); a shape model needs a closed surface",
            mesh.vertices_m.len(),
            mesh.faces.len()
        )));
    }
    if let Some((i, p)) = mesh
        .vertices_m
        .iter()
        .enumerate()
        .find(|(_, p)| !(p.x.is_finite() && p.y.is_finite() && p.z.is_finite()))
    {
        let bad = mesh
            .vertices_m
            .iter()
            .filter(|p| !(p.x.is_finite() && p.y.is_finite() && p.z.is_finite()))
            .count();
        return Err(invalid(format!(
            "{bad} vertices have non-finite coordinates, e.g. vertex {i} (0-based) at ({}, {}, {})",
            p.x, p.y, p.z
        )));
    }
    let n_vertices = mesh.vertices_m.len();
    for (f, face) in mesh.faces.iter().enumerate() {
        if let Some(&v) = face.iter().find(|&&v| v as usize >= n_vertices) {
            return Err(invalid(format!(
                "face {f} (0-based) references vertex {v} (0-based) but the mesh has \
                 {n_vertices} vertices"
            )));
        }
    }

    // Merge exactly equal vertices (-0.0 and 0.0 are the same point).
    let key = |p: &Point3<f64>| {
        [
            (p.x + 0.0).to_bits(),
            (p.y + 0.0).to_bits(),
            (p.z + 0.0).to_bits(),
        ]
    };
    let mut first_at: HashMap<[u64; 3], u32> = HashMap::with_capacity(n_vertices);
    let mut remap: Vec<u32> = Vec::with_capacity(n_vertices);
    let mut merged = 0usize;
    let mut merged_example = None;
    for (i, p) in mesh.vertices_m.iter().enumerate() {
        let first = *first_at.entry(key(p)).or_insert(i as u32);
        if first as usize != i {
            merged += 1;
            merged_example.get_or_insert((i, first as usize));
        }
        remap.push(first);
    }
    if let Some((example_vertex, merged_into)) = merged_example {
        warnings.push(Warning::DuplicateVerticesMerged {
            count: merged,
            example_vertex,
            merged_into,
        });
    }
    let faces: Vec<[u32; 3]> = mesh
        .faces
        .iter()
        .map(|f| {
            [
                remap[f[0] as usize],
                remap[f[1] as usize],
                remap[f[2] as usize],
            ]
        })
        .collect();

    // Drop zero-area faces.
    let mut kept = Vec::with_capacity(faces.len());
    let mut kept_original: Vec<usize> = Vec::with_capacity(faces.len());
    let mut degenerate = 0usize;
    let mut degenerate_example = None;
    for (f, face) in faces.iter().enumerate() {
        let [a, b, c] = face.map(|v| mesh.vertices_m[v as usize]);
        let cross = (b - a).cross(&(c - a)).norm();
        let longest = (b - a)
            .norm_squared()
            .max((c - b).norm_squared())
            .max((a - c).norm_squared());
        if cross <= DEGENERATE_RATIO * longest
            || face[0] == face[1]
            || face[1] == face[2]
            || face[2] == face[0]
        {
            degenerate += 1;
            degenerate_example.get_or_insert(f);
        } else {
            kept.push(*face);
            kept_original.push(f);
        }
    }
    if kept.is_empty() {
        return Err(invalid(format!(
            "all {} faces have zero area, e.g. face {} (0-based)",
            faces.len(),
            degenerate_example.unwrap_or(0)
        )));
    }

    // Compact: drop vertices no kept face uses (merged duplicates included).
    let mut new_index = vec![u32::MAX; n_vertices];
    let mut vertices_m = Vec::with_capacity(n_vertices);
    let mut vertex_original: Vec<usize> = Vec::with_capacity(n_vertices);
    for face in &kept {
        for &v in face {
            if new_index[v as usize] == u32::MAX {
                new_index[v as usize] = vertices_m.len() as u32;
                vertices_m.push(mesh.vertices_m[v as usize]);
                vertex_original.push(v as usize);
            }
        }
    }
    // Report unused vertices that were not merged duplicates (those are reported above).
    let unused: Vec<usize> = (0..n_vertices)
        .filter(|&i| remap[i] as usize == i && new_index[i] == u32::MAX)
        .collect();
    let mut faces: Vec<[u32; 3]> = kept
        .iter()
        .map(|f| f.map(|v| new_index[v as usize]))
        .collect();
    let mesh_repaired_note = if degenerate > 0 {
        format!(" (after dropping {degenerate} zero-area faces)")
    } else {
        String::new()
    };

    let labels = Labels {
        note: mesh_repaired_note,
        vertex: vertex_original,
        face: kept_original,
    };
    let open = patch_centre.is_some();
    let mut adjacency = edge_adjacency(&faces, &labels, open)?;
    if open && adjacency.boundary_edges == 0 {
        return Err(invalid(
            "the terrain patch has no boundary edge: it is a closed surface; give it as a \
             global contact shape instead"
                .into(),
        ));
    }
    if let Some(problem) = adjacency.inconsistent.take() {
        let flipped = orient_consistently(
            &mut faces,
            &adjacency.neighbours,
            &vertices_m,
            &labels,
            &problem,
            patch_centre,
        )?;
        adjacency = edge_adjacency(&faces, &labels, open)?;
        if let Some(problem) = adjacency.inconsistent {
            return Err(invalid(problem));
        }
        let count = flipped.iter().filter(|&&x| x).count();
        if let Some(first) = flipped.iter().position(|&x| x) {
            warnings.push(Warning::OrientationRepaired {
                flipped_faces: count,
                example_face: labels.face[first],
            });
        }
    }
    let neighbours = adjacency.neighbours;
    if !unused.is_empty() {
        warnings.push(Warning::UnusedVerticesRemoved {
            count: unused.len(),
            example_vertex: unused[0],
        });
    }
    if let Some(example_face) = degenerate_example {
        warnings.push(Warning::DegenerateFacesDropped {
            count: degenerate,
            example_face,
        });
    }

    let mut repaired = Mesh {
        vertices_m,
        faces: std::mem::take(&mut faces),
    };
    let reference =
        patch_centre.unwrap_or_else(|| crate::mass::reference_point(&repaired.vertices_m));
    let volume_m3 = signed_volume_m3(&repaired, &reference);
    let scale = bounding_box_diagonal_m(&repaired);
    if let Some(centre) = patch_centre {
        let reach = repaired
            .vertices_m
            .iter()
            .map(|p| (p - centre).norm())
            .fold(0.0, f64::max);
        if !volume_m3.is_finite() || volume_m3.abs() <= 1e-12 * scale * scale * reach {
            return Err(invalid(format!(
                "the terrain patch is seen edge-on from the body's centre of mass (cone volume \
                 {volume_m3:e} m^3); it cannot face outward"
            )));
        }
    } else if !volume_m3.is_finite() || volume_m3.abs() <= 1e-12 * scale.powi(3) {
        return Err(invalid(format!(
            "the closed mesh encloses no volume (signed volume {volume_m3:e} m^3)"
        )));
    }
    if volume_m3 < 0.0 {
        for face in &mut repaired.faces {
            face.swap(1, 2);
        }
        warnings.push(Warning::OrientationFlipped {
            signed_volume_m3: volume_m3,
        });
    }
    // Flipping swaps edges b-c and c-a, so the neighbour slots follow the same permutation:
    // new edges are (a,c), (c,b), (b,a) = old slots 2, 1, 0.
    let neighbours = if volume_m3 < 0.0 {
        neighbours.iter().map(|n| [n[2], n[1], n[0]]).collect()
    } else {
        neighbours
    };
    Ok(Validated {
        mesh: repaired,
        neighbours,
        warnings,
        original_face: labels.face,
    })
}

/// Refuses a mesh whose faces form more than one connected closed surface, naming a face on the
/// first shell and one on the second (`original_face` maps faces to the mesh as given).
pub(crate) fn check_single_shell(neighbours: &[[usize; 3]], original_face: &[usize]) -> Result<()> {
    let mut shell = vec![usize::MAX; neighbours.len()];
    let mut shells = 0usize;
    let mut second_shell_face = None;
    let mut stack = Vec::new();
    for seed in 0..neighbours.len() {
        if shell[seed] != usize::MAX {
            continue;
        }
        if shells == 1 {
            second_shell_face = Some(seed);
        }
        shell[seed] = shells;
        stack.push(seed);
        while let Some(f) = stack.pop() {
            for &g in &neighbours[f] {
                if g < shell.len() && shell[g] == usize::MAX {
                    shell[g] = shells;
                    stack.push(g);
                }
            }
        }
        shells += 1;
    }
    let name = |f: usize| original_face.get(f).copied().unwrap_or(f);
    match second_shell_face {
        None => Ok(()),
        Some(second) => Err(invalid(format!(
            "the mesh is {shells} separate closed surfaces (shells), e.g. face {} and face {} \
             (0-based) are on different ones; a shape model must be one closed surface (two \
             bodies, or a body with an inner shell or a cavity, are not one constant-density \
             solid here)",
            name(0),
            name(second)
        ))),
    }
}

/// How to name things in messages: indices of the mesh as given, and a note on repairs.
struct Labels {
    note: String,
    vertex: Vec<usize>,
    face: Vec<usize>,
}

/// Edge adjacency of a triangle list: for each face, the face across edges a-b, b-c, c-a.
/// Errors on boundary edges, edges shared by more than two faces, and edges traversed in the
/// same direction by both of their faces (inconsistent orientation).
fn edge_adjacency(faces: &[[u32; 3]], labels: &Labels, allow_boundary: bool) -> Result<Adjacency> {
    let note = &labels.note;
    let fl = |f: u32| labels.face[f as usize];
    // (undirected key, face, slot, forward?) sorted by key: the two uses of an edge are adjacent.
    let mut half_edges: Vec<(u64, u32, u8, bool)> = Vec::with_capacity(faces.len() * 3);
    for (f, face) in faces.iter().enumerate() {
        for slot in 0..3 {
            let (a, b) = (face[slot], face[(slot + 1) % 3]);
            let key = (u64::from(a.min(b)) << 32) | u64::from(a.max(b));
            half_edges.push((key, f as u32, slot as u8, a < b));
        }
    }
    half_edges.sort_unstable();
    let edge_of = |key: u64| {
        (
            labels.vertex[(key >> 32) as usize],
            labels.vertex[(key & 0xffff_ffff) as usize],
        )
    };
    let mut neighbours = vec![[usize::MAX; 3]; faces.len()];
    let mut boundary = 0usize;
    let mut boundary_example = None;
    let mut inconsistent = None;
    let mut i = 0;
    while i < half_edges.len() {
        let key = half_edges[i].0;
        let mut j = i;
        while j < half_edges.len() && half_edges[j].0 == key {
            j += 1;
        }
        let (a, b) = edge_of(key);
        match j - i {
            1 => {
                boundary += 1;
                boundary_example.get_or_insert((a, b, fl(half_edges[i].1)));
            }
            2 => {
                let (_, f0, s0, d0) = half_edges[i];
                let (_, f1, s1, d1) = half_edges[i + 1];
                if d0 == d1 && inconsistent.is_none() {
                    inconsistent = Some(format!(
                        "inconsistent orientation{note}: faces {} and {} (0-based) both \
                         traverse edge {a}-{b} in the same direction",
                        fl(f0),
                        fl(f1)
                    ));
                }
                neighbours[f0 as usize][s0 as usize] = f1 as usize;
                neighbours[f1 as usize][s1 as usize] = f0 as usize;
            }
            n => {
                return Err(invalid(format!(
                    "non-manifold edge{note}: edge {a}-{b} (vertices, 0-based) is shared by {n} \
                     faces, e.g. faces {} and {}; a solid surface has exactly 2",
                    fl(half_edges[i].1),
                    fl(half_edges[i + 1].1)
                )));
            }
        }
        i = j;
    }
    if let Some((a, b, f)) = boundary_example.filter(|_| !allow_boundary) {
        return Err(invalid(format!(
            "open mesh{note}: {boundary} boundary edges used by only one face, e.g. edge {a}-{b} \
             (vertices, 0-based) of face {f}; a shape model must be closed"
        )));
    }
    Ok(Adjacency {
        neighbours,
        inconsistent,
        boundary_edges: boundary,
    })
}

/// Edge adjacency of a closed 2-manifold triangle list.
struct Adjacency {
    /// For each face, the faces across edges a-b, b-c, c-a.
    neighbours: Vec<[usize; 3]>,
    /// The first edge both of whose faces run the same way, as an error message.
    inconsistent: Option<String>,
    /// Edges used by one face only (their neighbour slot holds `usize::MAX`).
    boundary_edges: usize,
}

/// Makes the orientation consistent by a breadth-first walk over each connected component
/// (a neighbour that runs a shared edge the same way as its visited face is flipped), then
/// turns each component outward by the sign of its volume. Returns, per face, whether it was
/// flipped; errors if a component cannot be oriented (a one-sided surface).
fn orient_consistently(
    faces: &mut [[u32; 3]],
    neighbours: &[[usize; 3]],
    vertices_m: &[Point3<f64>],
    labels: &Labels,
    first_problem: &str,
    patch_centre: Option<Point3<f64>>,
) -> Result<Vec<bool>> {
    let runs =
        |face: &[u32; 3], a: u32, b: u32| (0..3).any(|k| face[k] == a && face[(k + 1) % 3] == b);
    let reference = patch_centre.unwrap_or_else(|| crate::mass::reference_point(vertices_m));
    let mut flip: Vec<Option<bool>> = vec![None; faces.len()];
    let mut queue = std::collections::VecDeque::new();
    for seed in 0..faces.len() {
        if flip[seed].is_some() {
            continue;
        }
        flip[seed] = Some(false);
        queue.push_back(seed);
        let mut component = vec![seed];
        while let Some(f) = queue.pop_front() {
            let mut face = faces[f];
            if flip[f] == Some(true) {
                face.swap(1, 2);
            }
            for k in 0..3 {
                let (a, b) = (face[k], face[(k + 1) % 3]);
                let g = neighbours_across(neighbours, faces, f, a, b);
                if g >= faces.len() {
                    // A boundary edge of an open patch: nothing across it.
                    continue;
                }
                // g must run the shared edge b -> a once oriented.
                let need = runs(&faces[g], a, b);
                match flip[g] {
                    None => {
                        flip[g] = Some(need);
                        queue.push_back(g);
                        component.push(g);
                    }
                    Some(current) if current != need => {
                        return Err(invalid(format!(
                            "{first_problem}, and the surface cannot be oriented consistently \
                             (one-sided around face {}, 0-based)",
                            labels.face[g]
                        )));
                    }
                    Some(_) => {}
                }
            }
        }
        let volume: f64 = component
            .iter()
            .map(|&f| {
                let mut face = faces[f];
                if flip[f] == Some(true) {
                    face.swap(1, 2);
                }
                let [a, b, c] = face.map(|v| vertices_m[v as usize] - reference);
                a.dot(&b.cross(&c))
            })
            .sum();
        if volume < 0.0 {
            for &f in &component {
                flip[f] = flip[f].map(|x| !x);
            }
        }
    }
    let flipped: Vec<bool> = flip.iter().map(|x| *x == Some(true)).collect();
    for (face, &flipped) in faces.iter_mut().zip(&flipped) {
        if flipped {
            face.swap(1, 2);
        }
    }
    Ok(flipped)
}

/// The face across the edge {a, b} from face `f` (orientation-independent).
fn neighbours_across(
    neighbours: &[[usize; 3]],
    faces: &[[u32; 3]],
    f: usize,
    a: u32,
    b: u32,
) -> usize {
    let face = faces[f];
    (0..3)
        .find(|&k| {
            let (x, y) = (face[k], face[(k + 1) % 3]);
            (x == a && y == b) || (x == b && y == a)
        })
        .map_or(f, |k| neighbours[f][k])
}

/// Signed volume of the cones from `reference` over the faces (for a closed mesh: the volume it
/// encloses, positive when the faces face outward), m^3.
fn signed_volume_m3(mesh: &Mesh, reference: &Point3<f64>) -> f64 {
    mesh.faces
        .iter()
        .map(|f| {
            let [a, b, c] = f.map(|v| mesh.vertices_m[v as usize] - *reference);
            a.dot(&b.cross(&c))
        })
        .sum::<f64>()
        / 6.0
}

fn bounding_box_diagonal_m(mesh: &Mesh) -> f64 {
    let mut lo = mesh.vertices_m[0];
    let mut hi = lo;
    for p in &mesh.vertices_m {
        lo = lo.inf(p);
        hi = hi.sup(p);
    }
    (hi - lo).norm()
}
