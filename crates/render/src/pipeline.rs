//! Frame pipeline: vertex transform, triangle set-up and binning, line set-up and binning, band
//! rasterization, markers and arrow heads.

use std::sync::Arc;

use nalgebra::{Matrix3, Matrix4, Point3, Vector3, Vector4};
use rayon::prelude::*;

use crate::camera::{Camera, Projection};
use crate::color::Color;
use crate::figure::marker_coverage;
use crate::raster::{
    BAND_H, Band, DepthBias, INVALID, PointRec, SVert, SegRec, TriRec, edges, pixel_bbox, plane,
};
use crate::scene::{FaceColors, Light, LineColor, Occluded, Scene, SceneMesh, Shading};

/// Triangles per set-up job.
const TRI_CHUNK: usize = 128 * CLUSTER;

/// Reusable per-frame buffers.
#[derive(Default)]
pub(crate) struct Buffers {
    pub depth: Vec<f32>,
    pub ids: Vec<(u32, u32)>,
    verts: Vec<Vec<SVert>>,
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
    /// Pixels of tiny triangles, per band.
    point_bins: Vec<Vec<PointRec>>,
}

#[derive(Default)]
struct LineJob {
    segs: Vec<SegRec>,
    bins: Vec<Vec<u32>>,
}

/// Derived data of a mesh (vertex normals, clusters), kept while the same `Arc`s are rendered.
struct NormalCache {
    positions: Arc<Vec<[f32; 3]>>,
    triangles: Arc<Vec<[u32; 3]>>,
    normals: Option<Vec<[f32; 3]>>,
    /// Unit face normals, mesh frame (zero for degenerate faces).
    face_normals: Option<Arc<Vec<[f32; 3]>>>,
    clusters: Option<Arc<Vec<Cluster>>>,
}

fn face_normals(pos: &[[f32; 3]], tris: &[[u32; 3]]) -> Vec<[f32; 3]> {
    tris.par_iter()
        .map(|t| {
            let [a, b, c] = t.map(|i| i as usize);
            if a >= pos.len() || b >= pos.len() || c >= pos.len() {
                return [0.0; 3];
            }
            let p = |i: usize| Vector3::new(pos[i][0] as f64, pos[i][1] as f64, pos[i][2] as f64);
            let n = (p(b) - p(a)).cross(&(p(c) - p(a)));
            let l = n.norm();
            if l > 0.0 && l.is_finite() {
                [(n.x / l) as f32, (n.y / l) as f32, (n.z / l) as f32]
            } else {
                [0.0; 3]
            }
        })
        .collect()
}

/// Triangles per cluster (consecutive in the triangle list).
const CLUSTER: usize = 64;

/// Bounding sphere and normal cone of `CLUSTER` consecutive triangles, mesh frame, for culling
/// clusters that face away from the camera as a whole.
#[derive(Clone, Copy, Debug)]
struct Cluster {
    center: Vector3<f64>,
    radius: f64,
    axis: Vector3<f64>,
    cos_half: f64,
    sin_half: f64,
    /// False when the cone is too wide (half-angle of 90 degrees or more) to ever cull.
    usable: bool,
}

fn build_clusters(pos: &[[f32; 3]], tris: &[[u32; 3]]) -> Vec<Cluster> {
    let p = |i: u32| {
        let v = pos[i as usize];
        Vector3::new(v[0] as f64, v[1] as f64, v[2] as f64)
    };
    tris.chunks(CLUSTER)
        .map(|chunk| {
            let unusable = Cluster {
                center: Vector3::zeros(),
                radius: 0.0,
                axis: Vector3::z(),
                cos_half: 0.0,
                sin_half: 1.0,
                usable: false,
            };
            if chunk
                .iter()
                .any(|t| t.iter().any(|&i| i as usize >= pos.len()))
            {
                return unusable;
            }
            let mut lo = Vector3::repeat(f64::INFINITY);
            let mut hi = Vector3::repeat(f64::NEG_INFINITY);
            let mut sum = Vector3::zeros();
            let mut normals = Vec::with_capacity(chunk.len());
            for t in chunk {
                let (a, b, c) = (p(t[0]), p(t[1]), p(t[2]));
                for v in [a, b, c] {
                    lo = lo.inf(&v);
                    hi = hi.sup(&v);
                }
                let n = (b - a).cross(&(c - a));
                let l = n.norm();
                if l > 0.0 && l.is_finite() {
                    normals.push(n / l);
                    sum += n / l;
                }
            }
            let center = (lo + hi) * 0.5;
            let radius = chunk
                .iter()
                .flat_map(|t| t.iter())
                .map(|&i| (p(i) - center).norm())
                .fold(0.0, f64::max);
            let sl = sum.norm();
            if !(sl > 0.0 && center.iter().all(|c| c.is_finite()) && radius.is_finite()) {
                return unusable;
            }
            let axis = sum / sl;
            let cos_half = normals.iter().map(|n| n.dot(&axis)).fold(1.0, f64::min);
            // Degenerate faces have no normal but still cannot be seen when the rest is hidden:
            // they are skipped by the per-triangle test anyway.
            Cluster {
                center,
                radius,
                axis,
                cos_half,
                sin_half: (1.0 - cos_half * cos_half).max(0.0).sqrt(),
                usable: cos_half > 0.0,
            }
        })
        .collect()
}

impl Cluster {
    /// Whether every triangle faces away from an eye at `eye` (perspective, mesh frame) or
    /// looking along `-towards_eye` (orthographic, `eye` = None).
    fn faces_away(&self, eye: Option<&Vector3<f64>>, towards_eye: &Vector3<f64>) -> bool {
        if !self.usable {
            return false;
        }
        // max over normals n in the cone of n.v is |v| cos(max(0, phi - half)), phi = angle(axis, v);
        // a point p in the sphere adds at most `radius` (n.(c - p) <= r).
        let (v, r) = match eye {
            Some(e) => (e - self.center, self.radius),
            None => (*towards_eye, 0.0),
        };
        let av = self.axis.dot(&v);
        let perp = (v.norm_squared() - av * av).max(0.0).sqrt();
        av * self.cos_half + perp * self.sin_half < -r
    }
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
    /// Eye position and unit view direction, world frame.
    pub eye: Point3<f64>,
    pub view_dir: Vector3<f64>,
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
        let mpp = camera.metres_per_pixel_at_target();
        // Common practice: treat a line within a few (4 output) pixel sizes of the surface as on
        // it.
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
            eye: camera.eye(),
            view_dir: camera.view_direction(),
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
    /// The cache slot of `mesh`, with vertex normals (smooth shading) and clusters (culling)
    /// computed when first needed.
    fn cache_for(&mut self, mesh: &SceneMesh, keep: &mut Vec<usize>) -> usize {
        let found = self.normals.iter().position(|c| {
            Arc::ptr_eq(&c.positions, &mesh.positions) && Arc::ptr_eq(&c.triangles, &mesh.triangles)
        });
        let i = match found {
            Some(i) => i,
            None => {
                // Keep the cache small: it only serves the meshes of recent frames. Never evict
                // a slot used by this frame.
                if self.normals.len() >= 8
                    && let Some(old) = (0..self.normals.len()).find(|k| !keep.contains(k))
                {
                    self.normals.remove(old);
                    for k in keep.iter_mut() {
                        if *k > old {
                            *k -= 1;
                        }
                    }
                }
                self.normals.push(NormalCache {
                    positions: mesh.positions.clone(),
                    triangles: mesh.triangles.clone(),
                    normals: None,
                    face_normals: None,
                    clusters: None,
                });
                self.normals.len() - 1
            }
        };
        let c = &mut self.normals[i];
        if mesh.shading == Shading::Smooth && c.normals.is_none() {
            c.normals = Some(vertex_normals(&mesh.positions, &mesh.triangles));
        }
        if mesh.shading == Shading::Flat && c.face_normals.is_none() {
            c.face_normals = Some(Arc::new(face_normals(&mesh.positions, &mesh.triangles)));
        }
        if mesh.cull_back_faces && c.clusters.is_none() {
            c.clusters = Some(Arc::new(build_clusters(&mesh.positions, &mesh.triangles)));
        }
        keep.push(i);
        i
    }

    /// Clears `color` (`frame.width * frame.height` pixels) to the background and rasterizes
    /// meshes and lines into it and the depth buffer, then markers and arrow heads.
    pub fn draw(&mut self, scene: &Scene, frame: &Frame, color: &mut [Color]) {
        let (w, h) = (frame.width, frame.height);
        let n_px = w * h;
        // Sized here, cleared by the band tasks (in parallel, while the band is in cache).
        self.depth.resize(n_px, f32::INFINITY);
        self.ids.clear();
        if frame.want_ids {
            self.ids.resize(n_px, (0, 0));
        }
        let bands = frame.bands();
        // 1. Vertices (parallel per mesh).
        self.verts.resize_with(scene.meshes.len(), Vec::new);
        let mut slots = Vec::with_capacity(scene.meshes.len());
        for mesh in &scene.meshes {
            self.cache_for(mesh, &mut slots);
        }
        let clusters: Vec<Option<Arc<Vec<Cluster>>>> = slots
            .iter()
            .map(|&s| self.normals[s].clusters.clone())
            .collect();
        let fnormals: Vec<Option<Arc<Vec<[f32; 3]>>>> = slots
            .iter()
            .map(|&s| self.normals[s].face_normals.clone())
            .collect();
        for (mi, mesh) in scene.meshes.iter().enumerate() {
            let rows = frame.screen_rows(&mesh.model);
            let nmat = normal_matrix(&mesh.model);
            let normals = match mesh.shading {
                Shading::Smooth => self.normals[slots[mi]].normals.as_deref(),
                Shading::Flat => None,
            };
            let out = &mut self.verts[mi];
            out.clear();
            out.resize(mesh.positions.len(), SVert::default());
            transform_vertices(frame, &rows, &nmat, &mesh.positions, normals, out);
        }
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
            let mi = job.mesh as usize;
            let cl = clusters[mi].as_deref().map(|c| c.as_slice());
            let fnorm = fnormals[mi].as_deref().map(|c| c.as_slice());
            setup_triangles(frame, &scene.meshes[mi], &verts[mi], cl, fnorm, job, bands);
        });
        // 3. Line set-up and binning (polylines, then arrow shafts).
        let arrow_colors: Vec<LineColor> = scene
            .arrows
            .iter()
            .map(|a| LineColor::Uniform(a.color))
            .collect();
        let arrow_points: Vec<[[f64; 3]; 2]> =
            scene.arrows.iter().map(|a| [a.from, a.to]).collect();
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
                c.fill(scene.background);
                d.fill(f32::INFINITY);
                let mut band = Band {
                    color: c,
                    depth: d,
                    ids,
                    width: w,
                    y0: b * BAND_H,
                    rows,
                };
                for job in tri_jobs {
                    for pt in &job.point_bins[b] {
                        band.point(pt, job.mesh);
                    }
                    for &i in &job.bins[b] {
                        let i = i as usize;
                        let shade = if job.smooth {
                            Some(job.shades[i])
                        } else {
                            None
                        };
                        band.triangle(&job.recs[i], shade, job.wire, job.mesh, h);
                    }
                }
                for job in line_jobs {
                    for &i in &job.bins[b] {
                        band.segment(&job.segs[i as usize], &frame.bias);
                    }
                }
            });

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
    out: &mut [SVert],
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
                *o = SVert::new(x / wc, y / wc, key, shade);
            }
        });
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

#[inline(never)]
fn setup_triangles(
    frame: &Frame,
    mesh: &SceneMesh,
    verts: &[SVert],
    clusters: Option<&[Cluster]>,
    face_normals: Option<&[[f32; 3]]>,
    job: &mut TriJob,
    bands: usize,
) {
    job.recs.clear();
    job.shades.clear();
    clear_bins(&mut job.bins, bands);
    if job.point_bins.len() != bands {
        job.point_bins.resize_with(bands, Vec::new);
    }
    for b in job.point_bins.iter_mut() {
        b.clear();
    }
    let nmat = normal_matrix(&mesh.model);
    let rigid = is_rotation(&nmat);
    // Light direction in the mesh frame (exact for rotations; general path otherwise).
    let l_mesh = nmat.transpose() * frame.light_dir;
    let l_mesh = [l_mesh.x as f32, l_mesh.y as f32, l_mesh.z as f32];
    let nmat32 = nmat.map(|v| v as f32);
    let amb = frame.ambient;
    let hi = frame.height as i32;
    let wi = frame.width as u32;
    let nv = verts.len();
    let smooth = mesh.shading == Shading::Smooth;
    job.smooth = smooth;
    job.wire = mesh.wireframe;
    let tiny_ok = mesh.wireframe.is_none();
    let (per_face, uniform) = match &mesh.colors {
        FaceColors::Uniform(c) => (None, *c),
        FaceColors::PerFace(cs) => (Some(cs.as_slice()), Color::GREY),
    };
    // Eye (perspective) and direction towards the eye in the mesh frame, for cluster culling.
    let model_inv = mesh.model.try_inverse();
    let eye_mesh = match (frame.proj.perspective, model_inv) {
        (true, Some(mi)) => Some((mi * frame.eye.to_homogeneous()).xyz()),
        _ => None,
    };
    let towards_eye = nmat.transpose() * -frame.view_dir;
    let clusters = clusters.filter(|_| {
        mesh.cull_back_faces && rigid && (eye_mesh.is_some() || !frame.proj.perspective)
    });
    // Jobs start at multiples of CLUSTER, so clusters never straddle jobs.
    for c_start in (job.start..job.end).step_by(CLUSTER) {
        if let Some(c) = clusters.and_then(|c| c.get(c_start / CLUSTER))
            && c.faces_away(eye_mesh.as_ref(), &towards_eye)
        {
            continue;
        }
        for face in c_start..(c_start + CLUSTER).min(job.end) {
            let [a, b, c] = mesh.triangles[face].map(|i| i as usize);
            if a >= nv || b >= nv || c >= nv {
                continue;
            }
            let (va, vb, vc) = (verts[a], verts[b], verts[c]);
            if va.ix == INVALID || vb.ix == INVALID || vc.ix == INVALID {
                continue;
            }
            let ix = [va.ix, vb.ix, vc.ix];
            let iy = [va.iy, vb.iy, vc.iy];
            let area = (ix[1] - ix[0]) as i64 * (iy[2] - iy[0]) as i64
                - (iy[1] - iy[0]) as i64 * (ix[2] - ix[0]) as i64;
            // Counter-clockwise in the world appears clockwise with y down: front faces have
            // area < 0.
            if !(area < 0 || (!mesh.cull_back_faces && area > 0)) {
                continue;
            }
            let Some(bb) = pixel_bbox(ix, iy, wi as i32, hi) else {
                continue;
            };
            let rec0 = TriRec {
                ix,
                iy,
                key: [va.key, vb.key, vc.key],
                color: Color::BLACK,
                face: face as u32,
            };
            // Tiny triangles: resolve coverage now, before shading (many cover no pixel centre).
            let n_px = (bb[1] - bb[0] + 1) * (bb[3] - bb[2] + 1);
            let mut hits = [(0u32, 0u32); 4];
            let mut n_hits = 0;
            let tiny = tiny_ok && n_px <= 4;
            let mut st_tiny = None;
            if tiny {
                let Some((e, ex, ey)) = edges(ix, iy, bb[0], bb[2]) else {
                    continue;
                };
                let (nx, ny) = (bb[1] - bb[0] + 1, bb[3] - bb[2] + 1);
                for yy in 0..ny {
                    let e_row = [
                        e[0] + ey[0] * yy as i64,
                        e[1] + ey[1] * yy as i64,
                        e[2] + ey[2] * yy as i64,
                    ];
                    for xx in 0..nx {
                        let x = xx as i64;
                        let e0 = e_row[0] + ex[0] * x;
                        let e1 = e_row[1] + ex[1] * x;
                        let e2 = e_row[2] + ex[2] * x;
                        if (e0 | e1 | e2) >= 0 {
                            hits[n_hits] = (xx, yy);
                            n_hits += 1;
                        }
                    }
                }
                if n_hits == 0 {
                    continue;
                }
                let Some(z_plane) = plane(&rec0, rec0.key, bb[0], bb[2]) else {
                    continue;
                };
                st_tiny = Some(z_plane);
            }
            let base = match per_face {
                Some(cs) => cs.get(face).copied().unwrap_or(Color::GREY),
                None => uniform,
            };
            let (color, shade) = if smooth {
                (base, [va.shade, vb.shade, vc.shade])
            } else {
                let n = face_normals
                    .and_then(|f| f.get(face))
                    .copied()
                    .unwrap_or([0.0; 3]);
                let s = if rigid {
                    let nl = n[0] * l_mesh[0] + n[1] * l_mesh[1] + n[2] * l_mesh[2];
                    amb + (1.0 - amb) * nl.max(0.0)
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
            if let Some((zx, zy, z0)) = st_tiny {
                let sp = if smooth {
                    plane(&rec, shade, bb[0], bb[2])
                } else {
                    None
                };
                for &(xx, yy) in &hits[..n_hits] {
                    let (fx, fy) = (xx as f32, yy as f32);
                    let key = z0 + zx * fx + zy * fy;
                    let col = match sp {
                        Some((gx, gy, s0)) => color.scaled(s0 + gx * fx + gy * fy),
                        None => color,
                    };
                    let (x, y) = (bb[0] + xx, bb[2] + yy);
                    job.point_bins[y as usize / BAND_H].push(PointRec {
                        idx: y * wi + x,
                        key,
                        color: col,
                        face: face as u32,
                    });
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
}

/// Colour of point `i` of a line.
pub(crate) fn line_color_at(c: &LineColor, i: usize) -> Color {
    match c {
        LineColor::Uniform(c) => *c,
        LineColor::PerVertex(cs) => cs
            .get(i)
            .or_else(|| cs.last())
            .copied()
            .unwrap_or(Color::WHITE),
    }
}

/// Screen x, y (pixels) and view depth (metres) of a point.
type Projected = (f64, f64, f64);

#[inline(never)]
fn setup_lines(frame: &Frame, src: &LineSrc, job: &mut LineJob, bands: usize) {
    job.segs.clear();
    clear_bins(&mut job.bins, bands);
    let m = frame.proj.clip_from_world;
    let v = frame.proj.view_from_world;
    let (w, h) = (frame.width as f64, frame.height as f64);
    // Screen rows in f64: x_px = R0.p / R2.p, y_px = R1.p / R2.p, depth = R3.p.
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
    let near = frame.proj.near_m;
    let persp = frame.proj.perspective;
    // Widths are clamped to 1..=64 output pixels (NaN gives 1).
    let width = if src.width_px.is_finite() {
        src.width_px.clamp(1.0, 64.0)
    } else {
        1.0
    };
    let hw = 0.5 * width * frame.scale;
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
    let proj = |q: &Vector4<f64>| {
        let wc = r[2].dot(q);
        (r[0].dot(q) / wc, r[1].dot(q) / wc, r[3].dot(q))
    };
    let pts = src.points;
    let hom = |p: &[f64; 3]| Vector4::new(p[0], p[1], p[2], 1.0);
    let finite = |p: &[f64; 3]| p.iter().all(|c| c.is_finite());
    let mut s_acc = 0.0f32;
    // Consecutive points closer than this on screen (2 output pixels) are merged into one
    // segment: the skipped points lie within this distance of the drawn chord.
    let merge_px = 2.0 * frame.scale as f64;
    // The start of the next segment: point index, homogeneous point, projection.
    let mut anchor: Option<(usize, Vector4<f64>, Projected)> = None;
    let last = pts.len().saturating_sub(1);
    for (i, b) in pts.iter().enumerate() {
        if !finite(b) {
            anchor = None;
            continue;
        }
        let pb = hom(b);
        let jb = proj(&pb);
        let Some((ia, pa, ja)) = anchor else {
            anchor = Some((i, pb, jb));
            continue;
        };
        let clipped = persp && (ja.2 < near || jb.2 < near);
        if !clipped
            && i != last
            && (jb.0 - ja.0).powi(2) + (jb.1 - ja.1).powi(2) < merge_px * merge_px
        {
            continue;
        }
        anchor = Some((i, pb, jb));
        let (mut ta, mut tb) = (0.0f64, 1.0f64);
        let (mut sa, mut sb) = (ja, jb);
        if clipped {
            let (da, db) = (ja.2, jb.2);
            if da < near && db < near {
                continue;
            }
            if da < near {
                ta = (near - da) / (db - da);
                sa = proj(&(pa + (pb - pa) * ta));
            } else {
                tb = (near - da) / (db - da);
                sb = proj(&(pa + (pb - pa) * tb));
            }
        }
        let (xa, ya, za) = sa;
        let (xb, yb, zb) = sb;
        if ![xa, ya, xb, yb]
            .iter()
            .all(|c| c.is_finite() && c.abs() < 1e7)
        {
            continue;
        }
        let seg_len = ((xb - xa).powi(2) + (yb - ya).powi(2)).sqrt() as f32;
        let s0 = s_acc;
        s_acc += seg_len;
        let pad = hw + 2.0;
        let ymin = (ya.min(yb) as f32 - pad).max(0.0);
        let ymax = (ya.max(yb) as f32 + pad).min(h as f32 - 1.0);
        let xmin = xa.min(xb) as f32 - pad;
        let xmax = xa.max(xb) as f32 + pad;
        if ymin > ymax || xmax < 0.0 || xmin > w as f32 {
            continue;
        }
        let ca = line_color_at(src.color, ia);
        let cb = line_color_at(src.color, i);
        let (c0, c1) = if ca == cb {
            (ca, ca)
        } else {
            (ca.lerp(cb, ta as f32), ca.lerp(cb, tb as f32))
        };
        let idx = job.segs.len() as u32;
        job.segs.push(SegRec {
            x0: xa as f32,
            y0: ya as f32,
            x1: xb as f32,
            y1: yb as f32,
            k0: frame.key_of_depth(za as f32),
            k1: frame.key_of_depth(zb as f32),
            c0,
            c1,
            hw,
            s0,
            dash,
            hidden_alpha,
        });
        for band in (ymin as usize / BAND_H)..=(ymax as usize / BAND_H).min(bands - 1) {
            job.bins[band].push(idx);
        }
    }
}

/// Visibility alpha of a point against the depth buffer (1 = visible).
pub(crate) fn point_alpha(
    frame: &Frame,
    depth: &[f32],
    x: f64,
    y: f64,
    d: f64,
    occ: Occluded,
) -> f32 {
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

pub(crate) fn project_point(frame: &Frame, p: &[f64; 3]) -> Option<(f64, f64, f64)> {
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
#[allow(
    clippy::too_many_arguments,
    reason = "private helper; a struct would only rename the arguments"
)]
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
    let r = 0.5 * (marker_size_px(m.size_px) * frame.scale) as f64;
    let t = (marker_stroke_px(m.size_px) * frame.scale) as f64;
    let (x0, x1) = ((x - r - 1.0).floor() as i64, (x + r + 1.0).ceil() as i64);
    let (y0, y1) = ((y - r - 1.0).floor() as i64, (y + r + 1.0).ceil() as i64);
    for py in y0..=y1 {
        for px in x0..=x1 {
            let cov = marker_coverage(m.shape, r, t, px as f64 + 0.5 - x, py as f64 + 0.5 - y);
            if cov > 0.0 {
                plot(color, frame, px, py, m.color, a * cov);
            }
        }
    }
}

/// A marker's size in output pixels, sanitized.
pub(crate) fn marker_size_px(size_px: f32) -> f32 {
    if size_px.is_finite() {
        size_px.clamp(1.0, 512.0)
    } else {
        6.0
    }
}

/// Stroke width of outlined markers, output pixels: proportional to the size, so markers keep
/// their look when a figure is exported larger.
pub(crate) fn marker_stroke_px(size_px: f32) -> f32 {
    (0.12 * marker_size_px(size_px)).max(0.9)
}

/// Length of an arrow head for a shaft `width_px` wide (output pixels) drawn at `scale`
/// internal pixels per output pixel on a shaft `len` internal pixels long.
pub(crate) fn arrow_head_len(width_px: f32, scale: f32, len: f64) -> f64 {
    let wpx = if width_px.is_finite() {
        width_px.clamp(1.0, 64.0)
    } else {
        2.0
    };
    let head = ((4.0 * wpx + 6.0) * scale) as f64;
    head.min(0.5 * len.max(2.0 * scale as f64))
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
    let head = arrow_head_len(a.width_px, frame.scale, len);
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clusters_facing_away_are_culled_and_visible_ones_kept() {
        // A sphere seen from outside: the far hemisphere faces away. Clusters of 64 consecutive
        // icosphere faces are compact patches, so a good share must be culled; none of the
        // clusters holding a face that points at the eye may be.
        let (pos, tris) = crate::testing::icosphere(1.0, 4, 0.0);
        let clusters = build_clusters(&pos, &tris);
        let eye = Vector3::new(0.0, 0.0, 5.0);
        let mut culled = 0;
        for (ci, c) in clusters.iter().enumerate() {
            let away = c.faces_away(Some(&eye), &Vector3::z());
            culled += away as usize;
            if away {
                for t in &tris[ci * CLUSTER..((ci + 1) * CLUSTER).min(tris.len())] {
                    let p = |i: u32| {
                        let v = pos[i as usize];
                        Vector3::new(v[0] as f64, v[1] as f64, v[2] as f64)
                    };
                    let n = (p(t[1]) - p(t[0])).cross(&(p(t[2]) - p(t[0])));
                    assert!(n.dot(&(eye - p(t[0]))) < 0.0, "culled a front face");
                }
            }
        }
        let frac = culled as f64 / clusters.len() as f64;
        assert!(frac > 0.3, "culled fraction {frac}");
    }
}
