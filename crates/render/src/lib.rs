//! # spinfall-render: the CPU renderer of Spinfall
//!
//! Draws the 3D views and every exported image of Spinfall on the CPU, so the app works without
//! a GPU and the same scene gives the same bytes on every machine and in CI.
//!
//! It knows meshes, polylines, markers, arrows, colours, cameras, text, 2D plots and image
//! formats (PNG, APNG, GIF, SVG). It does **not** know physics (no gravity or dynamics types),
//! egui, or files (encoders write to any `Write`): the scene crate turns results into a
//! [`Scene`], the GUI uploads the [`Image`] as a texture and the CLI writes it with
//! [`encode_png`].
//!
//! Main types:
//! - [`Scene`] with [`SceneMesh`] (shared `Arc` buffers, per-face colours, flat or smooth
//!   shading, wireframe, back-face culling), [`Polyline`] (pixel width, dashes, per-vertex
//!   colour, hidden or faint behind meshes), [`Marker`], [`Arrow`] and 2D [`Overlay`]s (text,
//!   colour bar, scale bar, axis triad, legend, panels);
//! - [`Camera`] (perspective or orthographic, wrapping three-d's CPU-side camera; top-left
//!   pixel coordinates and `f64` world positions at this API) with orbit, pan, zoom, fit and
//!   picking rays;
//! - [`Renderer`] (reusable buffers) and [`render`]; [`RenderOptions`] sets size and
//!   supersampling (box-filtered anti-aliasing for exports); [`Renderer::render_face_ids`]
//!   gives a [`FaceIdImage`] for picking;
//! - [`Colormap`] and [`face_colors`] for scalar fields; [`compose_side_by_side`];
//!   [`encode_png`] with text chunks;
//! - figures for papers: [`Sizing`] (points to pixels: by the figure's shorter side, or by its
//!   print resolution), [`FigureSize`] (`1920x1080`, `180x100mm`, `7x4in`, checked),
//!   [`Theme`] (dark for screens, light for print; colour-blind-safe series palettes checked
//!   with [`cvd`]), [`nice_ticks`]; a [`Figure`] is a 2D display list of [`Item`]s (rasters,
//!   lines, polygons, markers, text, gradients) drawn by [`Figure::to_image`] or written as
//!   SVG by [`write_svg`]; decorations are [`Block`]s measured before they are placed
//!   ([`color_bar_block`], [`legend_block`], [`scale_bar_block`], [`triad_block`]);
//!   [`Renderer::render_vector`] turns a 3D view into a mesh raster plus vector items;
//!   [`plot_figure`] draws 2D plots; [`AnimationEncoder`] streams GIF or APNG.
//!
//! Rasterization runs in parallel over horizontal bands, each owned by one rayon task, and the
//! triangles of each band are drawn in scene order, so output does not depend on the number of
//! threads.
//!
//! Performance figures and the drawing pipeline are described in the crate's `README.md`.
//!
//! Spinfall is a research and planning tool, not flight-certified; images are for inspection.
//!
//! ```
//! use std::sync::Arc;
//! use nalgebra::{Point3, Vector3};
//! use spinfall_render::*;
//!
//! let (positions, triangles) = testing::cube(2.0);
//! let mut scene = Scene::default();
//! scene.meshes.push(SceneMesh::new(Arc::new(positions), Arc::new(triangles), Color::LIGHT_GREY));
//! scene.polylines.push(Polyline {
//!     points: vec![[-2.0, -2.0, 1.5], [2.0, 2.0, 1.5]],
//!     color: LineColor::Uniform(Color::ORANGE),
//!     width_px: 2.0,
//!     dash: None,
//!     occluded: Occluded::Faint(0.3),
//! });
//! let camera = Camera::perspective(
//!     320, 200, Point3::new(4.0, 3.0, 5.0), Point3::origin(), Vector3::z(), 40.0);
//! let image = render(&scene, &camera, &RenderOptions::new(320, 200));
//! assert_eq!((image.width, image.height), (320, 200));
//! let mut png_bytes = Vec::new();
//! encode_png(&image, &[("body", "Quillon")], &mut png_bytes).unwrap();
//! ```

#![warn(missing_docs)]

mod animation;
mod camera;
mod color;
mod colormap;
pub mod cvd;
mod error;
mod figure;
mod image;
mod overlay;
mod pipeline;
mod plot;
mod png_out;
mod raster;
mod renderer;
mod scene;
mod style;
mod svg;
pub mod testing;
mod text;
mod theme;
mod ticks;
mod vector;

pub use animation::{
    AnimationEncoder, AnimationFormat, FPS_RANGE, MAX_ANIMATION_FRAMES, MAX_ANIMATION_SIDE_PX,
    check_animation,
};
pub use camera::Camera;
pub use color::Color;
pub use colormap::{Colormap, face_colors};
pub use error::{RenderError, Result};
pub use figure::{Figure, Item, Region};
pub use image::{Image, compose_side_by_side};
pub use overlay::{
    Block, LegendEntry, Swatch, color_bar_block, format_value, legend_block,
    legend_block_in_columns, round_length_m, scale_bar_block, text_block, triad_block,
};
pub use plot::{PlotAxis, PlotImage, PlotMarker, PlotSpec, Series, plot_figure};
pub use png_out::encode_png;
pub use renderer::{
    FaceHit, FaceIdImage, MAX_INTERNAL_SIDE_PX, RenderOptions, Renderer, VectorView, render,
};
pub use scene::{
    Anchor, Arrow, Corner, FaceColors, Light, LineColor, Marker, MarkerShape, Occluded, Overlay,
    Polyline, Rect, Scene, SceneMesh, Shading,
};
pub use style::{
    DPI_RANGE, FigureSize, MAX_FIGURE_SIDE_PX, MIN_FIGURE_SIDE_PX, PhysicalUnit,
    REFERENCE_PX_PER_PT, REFERENCE_SIDE_PX, Sizing, Style, pt,
};
pub use svg::{svg_string, write_svg};
pub use text::measure_text;
pub use theme::{Theme, ThemeKind};
pub use ticks::{Ticks, format_tick, nice_ticks};
