//! Frame pipeline: vertex transform, triangle set-up and binning, line set-up and binning, band
//! rasterization, markers and arrow heads.

use std::sync::Arc;

use nalgebra::{Matrix3, Matrix4, Point3, Vector3, Vector4};
use rayon::prelude::*;

use crate::camera::{Camera, Projection};
use crate::color::Color;
use crate::raster::{
    BAND_H, Band, DepthBias, MAX_COORD_PX, PointRec, SegRec, TriRec, pixel_bbox, plane, setup_edges,
};
use crate::scene::{FaceColors, LineColor, Light, MarkerShape, Occluded, Scene, SceneMesh, Shading};

/// Triangles per set-up job.
const TRI_CHUNK: usize = 8192;

/// Reusable per-frame buffers.
#[derive(Default)]
pub(crate) struct Buffers {
    pub depth: Vec<f32>,
    pub ids: Vec<(u32, u32)>,
    verts: Vec<Vec<[f32; 4]>>,
    tri_jobs: Vec<TriJob>,
    line_jobs: Vec<LineJob>,
    normals: Vec<NormalCache>,
}

#[derive(Default)]
struct TriJob {
    mesh: u32,
    start: usize,
    end: usize,
    smooth: bool,
    wire: Option<Color>,
    recs: Vec<TriRec>,
    /// Per-vertex brightness of `recs` (smooth shading only).
    shades: Vec<[f32; 3]>,
    bins: Vec<Vec<u32>>,
    points: Vec<PointRec>,
    point_bins: Vec<Vec<u32>>,
}

#[derive(Default)]
struct LineJob {
    segs: Vec<SegRec>,
    bins: Vec<Vec<u32>>,
}

/// Vertex normals of a mesh, kept while the same `Arc`s are rendered.
struct NormalCache {
    positions: Arc<Vec<[f32; 3]>>,
    triangles: Arc<Vec<[u32; 3]>>,
    normals: Vec<[f32; 3]>,
}

/// A 3D polyline to draw, borrowed from the scene or made for an arrow shaft.
struct LineSrc<'a> {
    points: &'a [[f64; 3]],
    color: &'a LineColor,
    width_px: f32,
    dash: Option<(f32, f32)>,
    occluded: Occluded,
}

/// Frame geometry shared by the passes.
pub(crate) struct Frame {
    pub width: usize,
    pub height: usize,
    /// Supersampling factor (sizes in output pixels are multiplied by it).
    pub scale: f32,
    pub proj: Projection,
    /// Unit direction towards the light, world frame.
    pub light_dir: Vector3<f64>,
    pub ambient: f32,
    pub bias: DepthBias,
    pub want_ids: bool,
}

impl Frame {
    pub fn new(camera: &Camera, scene: &Scene, scale: u32, want_ids: bool) -> Frame {
        let proj = camera.projection();
        let light_dir = match scene.light {
            Light::Headlight => -camera.view_direction(),
            Light::Sun { direction } => {
                let d = Vector3::from(direction);
                if d.norm() > 0.0 && d.iter().all(|c| c.is_finite()) {
                    d.normalize()
                } else {
                    -camera.view_direction()
                }
            }
        };
        let mpp = camera.metres_per_pixel_at_target() / scale.max(1) as f64;
        // Common practice: treat a line within a few pixel-sizes of the surface as on it.
        let bias = if proj.perspective {
            let rel = 4.0 * scale as f64 * mpp / camera.distance_m() + 1e-4;
            DepthBias {
                perspective: true,
                factor: (1.0 / (1.0 + rel)) as f32,
                rel: rel as f32,
                absolute: 0.0,
            }
        } else {
            DepthBias {
                perspective: false,
                factor: 1.0,
                rel: 1e-5,
                absolute: (4.0 * scale as f64 * mpp) as f32,
            }
        };
        Frame {
            width: camera.width_px() as usize,
            height: camera.height_px() as usize,
            scale: scale as f32,
            proj,
            light_dir,
            ambient: scene.light.ambient(),
            bias,
            want_ids,
        }
    }

    fn bands(&self) -> usize {
        self.height.div_ceil(BAND_H)
    }

    /// Screen rows of the transform `clip_from_world * model`, pre-scaled to pixels:
    /// x_px = X.p / W.p, y_px = Y.p / W.p, depth = D.p.
    fn screen_rows(&self, model: &Matrix4<f64>) -> [[f32; 4]; 4] {
        let m = self.proj.clip_from_world * model;
        let v = self.proj.view_from_world * model;
        let (w, h) = (self.width as f64, self.height as f64);
        let mut rows = [[0f32; 4]; 4];
        for c in 0..4 {
            let (cx, cy, cw) = (m[(0, c)], m[(1, c)], m[(3, c)]);
            rows[0][c] = (0.5 * w * (cx + cw)) as f32;
            rows[1][c] = (0.5 * h * (cw - cy)) as f32;
            rows[2][c] = cw as f32;
            rows[3][c] = (-v[(2, c)]) as f32;
        }
        if !self.proj.perspective {
            rows[2] = [0.0, 0.0, 0.0, 1.0];
        }
        rows
    }

    #[inline]
    fn key_of_depth(&self, d: f32) -> f32 {
        if self.proj.perspective { -1.0 / d } else { d }
    }

    fn shade(&self, n: &Vector3<f64>) -> f32 {
        let l = n.dot(&self.light_dir) as f32;
        let b = self.ambient + (1.0 - self.ambient) * l.max(0.0);
        if b.is_finite() { b } else { self.ambient }
    }
}

/// Normal matrix (inverse transpose of the model's 3x3), identity if singular.
fn normal_matrix(model: &Matrix4<f64>) -> Matrix3<f64> {
    let m3: Matrix3<f64> = model.fixed_view::<3, 3>(0, 0).into_owned();
    m3.try_inverse()
        .map(|i| i.transpose())
        .unwrap_or_else(Matrix3::identity)
}

fn vertex_normals(pos: &[[f32; 3]], tris: &[[u32; 3]]) -> Vec<[f32; 3]> {
    let mut acc = vec![[0f64; 3]; pos.len()];
    for t in tris {
        let [a, b, c] = t.map(|i| i as usize);
        if a >= pos.len() || b >= pos.len() || c >= pos.len() {
            continue;
        }
        let p = |i: usize| Vector3::new(pos[i][0] as f64, pos[i][1] as f64, pos[i][2] as f64);
        // Area-weighted face normal.
        let n = (p(b) - p(a)).cross(&(p(c) - p(a)));
        for i in [a, b, c] {
            for k in 0..3 {
                acc[i][k] += n[k];
            }
        }
    }
    acc.iter()
        .map(|n| {
            let v = Vector3::from(*n);
            let l = v.norm();
            if l > 0.0 {
                [(v.x / l) as f32, (v.y / l) as f32, (v.z / l) as f32]
            } else {
                [0.0; 3]
            }
        })
        .collect()
}

impl Buffers {
    fn normals_for(&mut self, mesh: &SceneMesh) -> usize {
        if let Some(i) = self.normals.iter().position(|c| {
            Arc::ptr_eq(&c.positions, &mesh.positions) && Arc::ptr_eq(&c.triangles, &mesh.triangles)
        }) {
            return i;
        }
        // Keep the cache small: it only serves the meshes of recent frames.
        if self.normals.len() >= 8 {
            self.normals.remove(0);
        }
        self.normals.push(NormalCache {
            positions: mesh.positions.clone(),
            triangles: mesh.triangles.clone(),
            normals: vertex_normals(&mesh.positions, &mesh.triangles),
        });
        self.normals.len() - 1
    }

    /// Rasterizes meshes and lines into `color` (already cleared to the background) and the
    /// depth buffer, then markers and arrow heads.
    pub fn draw(&mut self, scene: &Scene, frame: &Frame, color: &mut [Color]) {
        let (w, h) = (frame.width, frame.height);
        let n_px = w * h;
        self.depth.clear();
        self.depth.resize(n_px, f32::INFINITY);
        self.ids.clear();
        if frame.want_ids {
            self.ids.resize(n_px, (0, 0));
        }
        let bands = frame.bands();

        let t0 = std::time::Instant::now();
        // 1. Vertices (parallel per mesh).
        self.verts.resize_with(scene.meshes.len(), Vec::new);
        let mut normal_slots = Vec::with_capacity(scene.meshes.len());
        for mesh in &scene.meshes {
            normal_slots.push(match mesh.shading {
                Shading::Smooth => Some(self.normals_for(mesh)),
                Shading::Flat => None,
            });
        }
        for (mi, mesh) in scene.meshes.iter().enumerate() {
            let rows = frame.screen_rows(&mesh.model);
            let nmat = normal_matrix(&mesh.model);
            let normals = normal_slots[mi].map(|s| self.normals[s].normals.as_slice());
            let out = &mut self.verts[mi];
            out.clear();
            out.resize(mesh.positions.len(), [0.0; 4]);
            transform_vertices(frame, &rows, &nmat, &mesh.positions, normals, out);
        }

        let t1 = std::time::Instant::now();
        // 2. Triangle set-up and binning, in fixed chunks (deterministic order).
        let mut jobs = 0;
        for (mi, mesh) in scene.meshes.iter().enumerate() {
            let n = mesh.triangles.len();
            let mut start = 0;
            while start < n {
                let end = (start + TRI_CHUNK).min(n);
                if self.tri_jobs.len() <= jobs {
                    self.tri_jobs.push(TriJob::default());
                }
                let job = &mut self.tri_jobs[jobs];
                job.mesh = mi as u32;
                job.start = start;
                job.end = end;
                jobs += 1;
                start = end;
            }
        }
        let verts = &self.verts;
        self.tri_jobs[..jobs].par_iter_mut().for_each(|job| {
            let mesh = &scene.meshes[job.mesh as usize];
            setup_triangles(frame, mesh, &verts[job.mesh as usize], job, bands);
        });

        let t2 = std::time::Instant::now();
        // 3. Line set-up and binning (polylines, then arrow shafts).
        let arrow_colors: Vec<LineColor> = scene
            .arrows
            .iter()
            .map(|a| LineColor::Uniform(a.color))
            .collect();
        let arrow_points: Vec<[[f64; 3]; 2]> = scene.arrows.iter().map(|a| [a.from, a.to]).collect();
        let mut srcs: Vec<LineSrc> = scene
            .polylines
            .iter()
            .map(|p| LineSrc {
                points: &p.points,
                color: &p.color,
                width_px: p.width_px,
                dash: p.dash,
                occluded: p.occluded,
            })
            .collect();
        for (i, a) in scene.arrows.iter().enumerate() {
            srcs.push(LineSrc {
                points: &arrow_points[i],
                color: &arrow_colors[i],
                width_px: a.width_px,
                dash: None,
                occluded: Occluded::Faint(0.35),
            });
        }
        if self.line_jobs.len() < srcs.len() {
            self.line_jobs.resize_with(srcs.len(), LineJob::default);
        }
        self.line_jobs[..srcs.len()]
            .par_iter_mut()
            .zip(srcs.par_iter())
            .for_each(|(job, src)| setup_lines(frame, src, job, bands));

        let t3 = std::time::Instant::now();
        // 4. Bands: triangles then lines, each band owned by one task.
        let tri_jobs = &self.tri_jobs[..jobs];
        let line_jobs = &self.line_jobs[..srcs.len()];
        let ids_chunk = if frame.want_ids { BAND_H * w } else { 0 };
        let mut id_slices: Vec<&mut [(u32, u32)]> = if frame.want_ids {
            self.ids.chunks_mut(BAND_H * w).collect()
        } else {
            Vec::new()
        };
        let _ = ids_chunk;
        id_slices.resize_with(bands, || &mut []);
        color
            .par_chunks_mut(BAND_H * w)
            .zip(self.depth.par_chunks_mut(BAND_H * w))
            .zip(id_slices.into_par_iter())
            .enumerate()
            .for_each(|(b, ((c, d), ids))| {
                let rows = c.len() / w;
                let mut band = Band {
                    color: c,
                    depth: d,
                    ids,
                    width: w,
                    y0: b * BAND_H,
                    rows,
                };
                for job in tri_jobs {
                    for &i in &job.point_bins[b] {
                        band.point(&job.points[i as usize], job.mesh);
                    }
                    for &i in &job.bins[b] {
                        let i = i as usize;
                        let shade = if job.smooth { Some(job.shades[i]) } else { None };
                        band.triangle(&job.recs[i], shade, job.wire, job.mesh, h);
                    }
                }
                for job in line_jobs {
                    for &i in &job.bins[b] {
                        band.segment(&job.segs[i as usize], &frame.bias);
                    }
                }
            });

        let t4 = std::time::Instant::now();
        if std::env::var("TIMING").is_ok() { eprintln!("clear {:?} vert {:?} tri {:?} line {:?} band {:?}", t0.elapsed()-t1.elapsed(), t1-t0, t2-t1, t3-t2, t4-t3); }
        // 5. Markers and arrow heads (few; serial).
        for m in &scene.markers {
            draw_marker(frame, &self.depth, color, m);
        }
        for a in &scene.arrows {
            draw_arrow_head(frame, &self.depth, color, a);
        }
    }
}

fn transform_vertices(
    frame: &Frame,
    rows: &[[f32; 4]; 4],
    nmat: &Matrix3<f64>,
    positions: &[[f32; 3]],
    normals: Option<&[[f32; 3]]>,
    out: &mut [[f32; 4]],
) {
    let near = frame.proj.near_m as f32;
    let persp = frame.proj.perspective;
    out.par_chunks_mut(16384)
        .enumerate()
        .for_each(|(ci, chunk)| {
            let base = ci * 16384;
            for (k, o) in chunk.iter_mut().enumerate() {
                let p = positions[base + k];
                let dot = |r: &[f32; 4]| r[0] * p[0] + r[1] * p[1] + r[2] * p[2] + r[3];
                let (x, y, wc, d) = (dot(&rows[0]), dot(&rows[1]), dot(&rows[2]), dot(&rows[3]));
                let valid = !persp || d > near;
                let key = if !valid {
                    f32::NAN
                } else if persp {
                    -1.0 / d
                } else {
                    d
                };
                let shade = match normals {
                    Some(ns) => {
                        let n = ns[base + k];
                        let nw = nmat * Vector3::new(n[0] as f64, n[1] as f64, n[2] as f64);
                        let l = nw.norm();
                        if l > 0.0 {
                            frame.shade(&(nw / l))
                        } else {
                            frame.ambient
                        }
                    }
                    None => 1.0,
                };
                *o = [x / wc, y / wc, key, shade];
            }
        });
}

fn face_color(mesh: &SceneMesh, face: usize) -> Color {
    match &mesh.colors {
        FaceColors::Uniform(c) => *c,
        FaceColors::PerFace(cs) => cs.get(face).copied().unwrap_or(Color::GREY),
    }
}

/// Whether the 3x3 part of `m` is a rotation (orthonormal), so normals need no renormalizing.
fn is_rotation(m: &Matrix3<f64>) -> bool {
    (m.transpose() * m - Matrix3::identity()).abs().max() < 1e-6
}

fn clear_bins(bins: &mut Vec<Vec<u32>>, bands: usize) {
    if bins.len() != bands {
        bins.resize_with(bands, Vec::new);
    }
    for b in bins.iter_mut() {
        b.clear();
    }
}

fn setup_triangles(
    frame: &Frame,
    mesh: &SceneMesh,
    verts: &[[f32; 4]],
    job: &mut TriJob,
    bands: usize,
) {
    job.recs.clear();
    job.shades.clear();
    job.points.clear();
    clear_bins(&mut job.bins, bands);
    clear_bins(&mut job.point_bins, bands);
    let nmat = normal_matrix(&mesh.model);
    let rigid = is_rotation(&nmat);
    // Light direction in the mesh frame (exact for rotations; general path otherwise).
    let l_mesh = nmat.transpose() * frame.light_dir;
    let l_mesh = [l_mesh.x as f32, l_mesh.y as f32, l_mesh.z as f32];
    let nmat32 = nmat.map(|v| v as f32);
    let amb = frame.ambient;
    let (w, h) = (frame.width as f32, frame.height as f32);
    let wi = frame.width as u32;
    let nv = verts.len();
    let pos = &mesh.positions;
    let smooth = mesh.shading == Shading::Smooth;
    job.smooth = smooth;
    job.wire = mesh.wireframe;
    let tiny_ok = mesh.wireframe.is_none();
    for face in job.start..job.end {
        let [a, b, c] = mesh.triangles[face].map(|i| i as usize);
        if a >= nv || b >= nv || c >= nv {
            continue;
        }
        let (va, vb, vc) = (verts[a], verts[b], verts[c]);
        let area = (vb[0] - va[0]) * (vc[1] - va[1]) - (vb[1] - va[1]) * (vc[0] - va[0]);
        // Counter-clockwise in the world appears clockwise with y down: front faces have area < 0.
        // NaN keys mark vertices behind the near plane; NaN area fails the test too.
        if !(area < 0.0 || (!mesh.cull_back_faces && area > 0.0))
            || va[2].is_nan()
            || vb[2].is_nan()
            || vc[2].is_nan()
        {
            continue;
        }
        let rec0 = TriRec {
            x: [va[0], vb[0], vc[0]],
            y: [va[1], vb[1], vc[1]],
            key: [va[2], vb[2], vc[2]],
            color: Color::BLACK,
            face: face as u32,
        };
        let Some(bb) = pixel_bbox(&rec0, w, h) else {
            continue;
        };
        let xmin = va[0].min(vb[0]).min(vc[0]);
        let xmax = va[0].max(vb[0]).max(vc[0]);
        let ymin = va[1].min(vb[1]).min(vc[1]);
        let ymax = va[1].max(vb[1]).max(vc[1]);
        if xmin < -MAX_COORD_PX || ymin < -MAX_COORD_PX || xmax > MAX_COORD_PX || ymax > MAX_COORD_PX
        {
            continue;
        }
        let base = face_color(mesh, face);
        let (color, shade) = if smooth {
            (base, [va[3], vb[3], vc[3]])
        } else {
            let (pa, pb, pc) = (pos[a], pos[b], pos[c]);
            let e1 = [pb[0] - pa[0], pb[1] - pa[1], pb[2] - pa[2]];
            let e2 = [pc[0] - pa[0], pc[1] - pa[1], pc[2] - pa[2]];
            let n = [
                e1[1] * e2[2] - e1[2] * e2[1],
                e1[2] * e2[0] - e1[0] * e2[2],
                e1[0] * e2[1] - e1[1] * e2[0],
            ];
            let s = if rigid {
                let nn = n[0] * n[0] + n[1] * n[1] + n[2] * n[2];
                let nl = n[0] * l_mesh[0] + n[1] * l_mesh[1] + n[2] * l_mesh[2];
                if nn > 0.0 && nl > 0.0 {
                    amb + (1.0 - amb) * nl / nn.sqrt()
                } else {
                    amb
                }
            } else {
                let nw = nmat32 * nalgebra::Vector3::new(n[0], n[1], n[2]);
                let l = nw.norm();
                if l > 0.0 {
                    frame.shade(&(nw / l).map(|v| v as f64))
                } else {
                    amb
                }
            };
            (base.scaled(s), [s; 3])
        };
        let rec = TriRec { color, ..rec0 };
        let n_px = (bb[1] - bb[0] + 1) * (bb[3] - bb[2] + 1);
        if tiny_ok && n_px <= 4 {
            // Resolve coverage now: a few pixel records instead of a triangle to set up per band.
            let Some(st) = setup_edges(&rec, bb[0], bb[2], false) else {
                continue;
            };
            let sp = if smooth { plane(&rec, shade, bb[0], bb[2]) } else { None };
            for (yy, y) in (bb[2]..=bb[3]).enumerate() {
                for (xx, x) in (bb[0]..=bb[1]).enumerate() {
                    let (xx, yy) = (xx as i64, yy as i64);
                    let inside = (0..3).all(|k| st.e[k] + st.ex[k] * xx + st.ey[k] * yy >= 0);
                    if !inside {
                        continue;
                    }
                    let key = st.z + st.zx * xx as f32 + st.zy * yy as f32;
                    let col = match sp {
                        Some((gx, gy, s0)) => color.scaled(s0 + gx * xx as f32 + gy * yy as f32),
                        None => color,
                    };
                    let idx = job.points.len() as u32;
                    job.points.push(PointRec {
                        idx: y * wi + x,
                        key,
                        color: col,
                        face: face as u32,
                    });
                    job.point_bins[y as usize / BAND_H].push(idx);
                }
            }
            continue;
        }
        let idx = job.recs.len() as u32;
        job.recs.push(rec);
        if smooth {
            job.shades.push(shade);
        }
        for band in (bb[2] as usize / BAND_H)..=(bb[3] as usize / BAND_H) {
            job.bins[band].push(idx);
        }
    }
}

fn line_color_at(c: &LineColor, i: usize) -> Color {
    match c {
        LineColor::Uniform(c) => *c,
        LineColor::PerVertex(cs) => cs
            .get(i)
            .or_else(|| cs.last())
            .copied()
            .unwrap_or(Color::WHITE),
    }
}

fn setup_lines(frame: &Frame, src: &LineSrc, job: &mut LineJob, bands: usize) {
    job.segs.clear();
    if job.bins.len() != bands {
        job.bins.resize_with(bands, Vec::new);
    }
    for b in job.bins.iter_mut() {
        b.clear();
    }
    let rows = frame.screen_rows(&Matrix4::identity());
    let rows64 = rows.map(|r| Vector4::new(r[0] as f64, r[1] as f64, r[2] as f64, r[3] as f64));
    let m = frame.proj.clip_from_world;
    let v = frame.proj.view_from_world;
    let (w, h) = (frame.width as f64, frame.height as f64);
    // Full-precision screen rows (the f32 ones above are for meshes).
    let mut r = [Vector4::zeros(); 4];
    for c in 0..4 {
        r[0][c] = 0.5 * w * (m[(0, c)] + m[(3, c)]);
        r[1][c] = 0.5 * h * (m[(3, c)] - m[(1, c)]);
        r[2][c] = if frame.proj.perspective {
            m[(3, c)]
        } else {
            [0.0, 0.0, 0.0, 1.0][c]
        };
        r[3][c] = -v[(2, c)];
    }
    let _ = rows64;
    let near = frame.proj.near_m;
    let hw = (0.5 * src.width_px.max(1.0) * frame.scale).max(0.5);
    let dash = match src.dash {
        Some((on, off)) if on > 0.0 && off > 0.0 && on.is_finite() && off.is_finite() => {
            (on * frame.scale, off * frame.scale)
        }
        _ => (0.0, 0.0),
    };
    let hidden_alpha = match src.occluded {
        Occluded::Hidden => 0.0,
        Occluded::Faint(a) if a.is_finite() => a.clamp(0.0, 1.0),
        Occluded::Faint(_) => 0.0,
    };
    let mut s_acc = 0.0f32;
    let pts = src.points;
    for i in 1..pts.len() {
        let (pa, pb) = (Vector4::new(pts[i - 1][0], pts[i - 1][1], pts[i - 1][2], 1.0),
            Vector4::new(pts[i][0], pts[i][1], pts[i][2], 1.0));
        if !(pa.iter().chain(pb.iter()).all(|c| c.is_finite())) {
            continue;
        }
        let (mut ta, mut tb) = (0.0f64, 1.0f64);
        let (da, db) = (r[3].dot(&pa), r[3].dot(&pb));
        if frame.proj.perspective {
            if da <= near && db <= near {
                continue;
            }
            if da < near {
                ta = (near - da) / (db - da);
            } else if db < near {
                tb = (near - da) / (db - da);
            }
        }
        let qa = pa + (pb - pa) * ta;
        let qb = pa + (pb - pa) * tb;
        let proj = |q: &Vector4<f64>| {
            let wc = r[2].dot(q);
            (r[0].dot(q) / wc, r[1].dot(q) / wc, r[3].dot(q))
        };
        let (xa, ya, za) = proj(&qa);
        let (xb, yb, zb) = proj(&qb);
        if ![xa, ya, xb, yb].iter().all(|c| c.is_finite() && c.abs() < 1e7) {
            continue;
        }
        let seg_len = ((xb - xa).powi(2) + (yb - ya).powi(2)).sqrt() as f32;
        let ca = line_color_at(src.color, i - 1);
        let cb = line_color_at(src.color, i);
        let seg = SegRec {
            x0: xa as f32,
            y0: ya as f32,
            x1: xb as f32,
            y1: yb as f32,
            k0: frame.key_of_depth(za as f32),
            k1: frame.key_of_depth(zb as f32),
            c0: ca.lerp(cb, ta as f32),
            c1: ca.lerp(cb, tb as f32),
            hw,
            s0: s_acc,
            dash,
            hidden_alpha,
        };
        s_acc += seg_len;
        let pad = hw + 2.0;
        let ymin = (ya.min(yb) as f32 - pad).max(0.0);
        let ymax = (ya.max(yb) as f32 + pad).min(h as f32 - 1.0);
        let xmin = xa.min(xb) as f32 - pad;
        let xmax = xa.max(xb) as f32 + pad;
        if ymin > ymax || xmax < 0.0 || xmin > w as f32 {
            continue;
        }
        let idx = job.segs.len() as u32;
        job.segs.push(seg);
        for band in (ymin as usize / BAND_H)..=(ymax as usize / BAND_H).min(bands - 1) {
            job.bins[band].push(idx);
        }
    }
}

/// Visibility alpha of a point against the depth buffer (1 = visible).
fn point_alpha(frame: &Frame, depth: &[f32], x: f64, y: f64, d: f64, occ: Occluded) -> f32 {
    let (xi, yi) = (x.floor(), y.floor());
    if xi < 0.0 || yi < 0.0 || xi >= frame.width as f64 || yi >= frame.height as f64 {
        return 1.0;
    }
    let stored = depth[yi as usize * frame.width + xi as usize];
    if frame.bias.visible(frame.key_of_depth(d as f32), stored) {
        1.0
    } else {
        match occ {
            Occluded::Hidden => 0.0,
            Occluded::Faint(a) if a.is_finite() => a.clamp(0.0, 1.0),
            Occluded::Faint(_) => 0.0,
        }
    }
}

fn project_point(frame: &Frame, p: &[f64; 3]) -> Option<(f64, f64, f64)> {
    if !p.iter().all(|c| c.is_finite()) {
        return None;
    }
    let q = Point3::from(*p).to_homogeneous();
    let c = frame.proj.clip_from_world * q;
    let d = -(frame.proj.view_from_world * q).z;
    if frame.proj.perspective && d <= frame.proj.near_m {
        return None;
    }
    let wc = if frame.proj.perspective { c.w } else { 1.0 };
    let x = (c.x / wc * 0.5 + 0.5) * frame.width as f64;
    let y = (0.5 - c.y / wc * 0.5) * frame.height as f64;
    (x.is_finite() && y.is_finite()).then_some((x, y, d))
}

fn plot(color: &mut [Color], frame: &Frame, x: i64, y: i64, c: Color, a: f32) {
    if x >= 0 && y >= 0 && (x as usize) < frame.width && (y as usize) < frame.height {
        let i = y as usize * frame.width + x as usize;
        color[i] = c.over(color[i], a);
    }
}

/// Fills pixels whose centres satisfy `inside(dx, dy)` (offsets from the centre, pixels) within
/// a square of half-size `r`.
fn fill_shape(
    color: &mut [Color],
    frame: &Frame,
    cx: f64,
    cy: f64,
    r: f64,
    c: Color,
    a: f32,
    inside: impl Fn(f64, f64) -> bool,
) {
    let (x0, x1) = ((cx - r - 1.0).floor() as i64, (cx + r + 1.0).ceil() as i64);
    let (y0, y1) = ((cy - r - 1.0).floor() as i64, (cy + r + 1.0).ceil() as i64);
    for y in y0..=y1 {
        for x in x0..=x1 {
            if inside(x as f64 + 0.5 - cx, y as f64 + 0.5 - cy) {
                plot(color, frame, x, y, c, a);
            }
        }
    }
}

fn draw_marker(frame: &Frame, depth: &[f32], color: &mut [Color], m: &crate::scene::Marker) {
    let Some((x, y, d)) = project_point(frame, &m.position) else {
        return;
    };
    let a = point_alpha(frame, depth, x, y, d, m.occluded);
    if a <= 0.0 {
        return;
    }
    let size = if m.size_px.is_finite() { m.size_px.clamp(1.0, 512.0) } else { 6.0 };
    let r = 0.5 * (size * frame.scale) as f64;
    let t = (0.9 * frame.scale as f64).max(1.0); // stroke width, pixels
    match m.shape {
        MarkerShape::Dot => fill_shape(color, frame, x, y, r, m.color, a, |dx, dy| {
            dx * dx + dy * dy <= r * r
        }),
        MarkerShape::Ring => fill_shape(color, frame, x, y, r, m.color, a, |dx, dy| {
            let q = (dx * dx + dy * dy).sqrt();
            q <= r && q >= r - t
        }),
        MarkerShape::Cross => fill_shape(color, frame, x, y, r, m.color, a, |dx, dy| {
            (dx.abs() <= r && dy.abs() <= r)
                && ((dx - dy).abs() <= t * std::f64::consts::SQRT_2 / 2.0 * 1.5
                    || (dx + dy).abs() <= t * std::f64::consts::SQRT_2 / 2.0 * 1.5)
        }),
        MarkerShape::Square => fill_shape(color, frame, x, y, r, m.color, a, |dx, dy| {
            let q = dx.abs().max(dy.abs());
            q <= r && q >= r - t
        }),
        MarkerShape::Diamond => fill_shape(color, frame, x, y, r, m.color, a, |dx, dy| {
            dx.abs() + dy.abs() <= r
        }),
    }
}

fn draw_arrow_head(frame: &Frame, depth: &[f32], color: &mut [Color], a: &crate::scene::Arrow) {
    let (Some((x0, y0, _)), Some((x1, y1, d1))) =
        (project_point(frame, &a.from), project_point(frame, &a.to))
    else {
        return;
    };
    let (dx, dy) = (x1 - x0, y1 - y0);
    let len = (dx * dx + dy * dy).sqrt();
    if len < 1e-6 {
        return;
    }
    let alpha = point_alpha(frame, depth, x1, y1, d1, Occluded::Faint(0.35));
    let (ux, uy) = (dx / len, dy / len);
    let wpx = if a.width_px.is_finite() { a.width_px.clamp(1.0, 64.0) } else { 2.0 };
    let head = ((4.0 * wpx + 6.0) * frame.scale) as f64;
    let head = head.min(0.5 * len.max(2.0 * frame.scale as f64));
    let half = 0.5 * head;
    // Triangle: tip at (x1, y1), base centre `head` behind it.
    let (bx, by) = (x1 - ux * head, y1 - uy * head);
    let r = head;
    fill_shape(color, frame, x1, y1, r, a.color, alpha, |px, py| {
        // Coordinates relative to the tip.
        let (qx, qy) = (px + x1 - bx, py + y1 - by); // relative to base centre
        let along = qx * ux + qy * uy; // 0 at base, head at tip
        let across = (-qx * uy + qy * ux).abs();
        along >= 0.0 && along <= head && across <= half * (1.0 - along / head)
    });
}
