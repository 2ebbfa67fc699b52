//! The renderer: reusable buffers, options, and the free `render` function.

use crate::camera::Camera;
use crate::color::Color;
use crate::figure::{Item, draw_items};
use crate::image::{Image, downsample_box};
use crate::overlay::overlay_items;
use crate::pipeline::{Buffers, Frame};
use crate::scene::Scene;
use crate::text::GlyphCache;
use crate::vector::vector_items;

/// Largest internal (supersampled) image side, pixels.
pub const MAX_INTERNAL_SIDE_PX: u32 = 16384;

/// Output size and anti-aliasing.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct RenderOptions {
    /// Output width in pixels (0 is treated as 1).
    pub width_px: u32,
    /// Output height in pixels (0 is treated as 1).
    pub height_px: u32,
    /// Supersampling factor per axis: 1 = none, 2 = 2x2 samples per pixel, ... (clamped to 1..=8
    /// and so that the internal image stays within [`MAX_INTERNAL_SIDE_PX`]).
    pub supersample: u32,
}

impl RenderOptions {
    /// Options for a `width_px x height_px` image without supersampling.
    pub const fn new(width_px: u32, height_px: u32) -> RenderOptions {
        RenderOptions {
            width_px,
            height_px,
            supersample: 1,
        }
    }

    /// The same options with another supersampling factor.
    pub const fn with_supersample(self, supersample: u32) -> RenderOptions {
        RenderOptions {
            supersample,
            ..self
        }
    }

    fn sanitized(&self) -> (u32, u32, u32) {
        let w = self.width_px.clamp(1, MAX_INTERNAL_SIDE_PX);
        let h = self.height_px.clamp(1, MAX_INTERNAL_SIDE_PX);
        let max_s = (MAX_INTERNAL_SIDE_PX / w.max(h)).max(1);
        (w, h, self.supersample.clamp(1, 8).min(max_s))
    }
}

impl Default for RenderOptions {
    fn default() -> RenderOptions {
        RenderOptions::new(1280, 720)
    }
}

/// Which face of which mesh covers a pixel.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct FaceHit {
    /// Index into `Scene::meshes`.
    pub mesh: usize,
    /// Index into that mesh's `triangles`.
    pub face: usize,
}

/// Per-pixel face ids of a render (for picking and tests).
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct FaceIdImage {
    /// Width in pixels.
    pub width: u32,
    /// Height in pixels.
    pub height: u32,
    ids: Vec<(u32, u32)>,
}

impl FaceIdImage {
    /// The face drawn at pixel `(x, y)` from the top-left, if any.
    pub fn get(&self, x: u32, y: u32) -> Option<FaceHit> {
        if x >= self.width || y >= self.height {
            return None;
        }
        let (f, m) = *self
            .ids
            .get(y as usize * self.width as usize + x as usize)?;
        (f > 0).then(|| FaceHit {
            mesh: m as usize,
            face: f as usize - 1,
        })
    }
}

/// A renderer that keeps its buffers (depth, set-up triangles, bins, glyphs, vertex normals)
/// between frames, so repeated renders of the same size allocate (almost) nothing.
#[derive(Default)]
pub struct Renderer {
    buffers: Buffers,
    glyphs: GlyphCache,
    big: Image,
    out: Image,
}

impl std::fmt::Debug for Renderer {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Renderer")
            .field("width", &self.out.width)
            .field("height", &self.out.height)
            .finish_non_exhaustive()
    }
}

impl Renderer {
    /// A renderer with empty buffers.
    pub fn new() -> Renderer {
        Renderer::default()
    }

    /// Renders `scene` seen by `camera` (its viewport is adapted to the output size) and returns
    /// the image, valid until the next call.
    pub fn render(&mut self, scene: &Scene, camera: &Camera, options: &RenderOptions) -> &Image {
        let mut out = std::mem::take(&mut self.out);
        self.render_into(scene, camera, options, &mut out);
        self.out = out;
        &self.out
    }

    /// Renders into `out` (resized as needed).
    pub fn render_into(
        &mut self,
        scene: &Scene,
        camera: &Camera,
        options: &RenderOptions,
        out: &mut Image,
    ) {
        let (w, h, s) = options.sanitized();
        let mut cam = camera.clone();
        cam.set_viewport(w * s, h * s);
        let frame = Frame::new(&cam, scene, s, false);
        if s == 1 {
            out.resize(w, h);
            self.buffers.draw(scene, &frame, &mut out.pixels);
        } else {
            let mut big = std::mem::take(&mut self.big);
            big.resize(w * s, h * s);
            self.buffers.draw(scene, &frame, &mut big.pixels);
            downsample_box(&big, s, out);
            self.big = big;
        }
        let mut cam_out = camera.clone();
        cam_out.set_viewport(w, h);
        let items = overlay_items(&scene.overlays, &cam_out, w, h, scene.background);
        draw_items(out, &items, &mut self.glyphs);
    }

    /// Renders only the meshes and returns which face covers each pixel (no supersampling).
    pub fn render_face_ids(
        &mut self,
        scene: &Scene,
        camera: &Camera,
        width_px: u32,
        height_px: u32,
    ) -> FaceIdImage {
        let (w, h, _) = RenderOptions::new(width_px, height_px).sanitized();
        let mut cam = camera.clone();
        cam.set_viewport(w, h);
        let meshes_only = Scene {
            meshes: scene.meshes.clone(),
            background: Color::BLACK,
            light: scene.light,
            ..Scene::default()
        };
        let frame = Frame::new(&cam, &meshes_only, 1, true);
        let mut color = vec![Color::BLACK; w as usize * h as usize];
        self.buffers.draw(&meshes_only, &frame, &mut color);
        FaceIdImage {
            width: w,
            height: h,
            ids: std::mem::take(&mut self.buffers.ids),
        }
    }
}

/// A view prepared for vector output: the meshes as a raster, the polylines, arrows, markers
/// and overlays as figure items in output pixels (hidden parts cut away or made faint, as in
/// the raster render).
#[derive(Clone, Debug, Default)]
pub struct VectorView {
    /// The meshes on the background, no lines or markers.
    pub raster: Image,
    /// Everything else, in output pixels.
    pub items: Vec<Item>,
}

impl Renderer {
    /// Renders the meshes of `scene` to a raster and returns everything else as vector items
    /// (for SVG output).
    pub fn render_vector(
        &mut self,
        scene: &Scene,
        camera: &Camera,
        options: &RenderOptions,
    ) -> VectorView {
        let (w, h, s) = options.sanitized();
        let mut cam = camera.clone();
        cam.set_viewport(w * s, h * s);
        let frame = Frame::new(&cam, scene, s, false);
        let meshes_only = Scene {
            meshes: scene.meshes.clone(),
            background: scene.background,
            light: scene.light,
            ..Scene::default()
        };
        let mut raster = Image::default();
        if s == 1 {
            raster.resize(w, h);
            self.buffers.draw(&meshes_only, &frame, &mut raster.pixels);
        } else {
            let mut big = std::mem::take(&mut self.big);
            big.resize(w * s, h * s);
            self.buffers.draw(&meshes_only, &frame, &mut big.pixels);
            downsample_box(&big, s, &mut raster);
            self.big = big;
        }
        let mut items = vector_items(&frame, &self.buffers.depth, scene);
        let mut cam_out = camera.clone();
        cam_out.set_viewport(w, h);
        items.extend(overlay_items(
            &scene.overlays,
            &cam_out,
            w,
            h,
            scene.background,
        ));
        VectorView { raster, items }
    }
}

/// Renders `scene` seen by `camera` into a new image (a one-off [`Renderer`]).
pub fn render(scene: &Scene, camera: &Camera, options: &RenderOptions) -> Image {
    let mut r = Renderer::new();
    let mut out = Image::default();
    r.render_into(scene, camera, options, &mut out);
    out
}
