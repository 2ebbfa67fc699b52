//! What to draw: meshes, polylines, markers, arrows, 2D overlays, background and light.

use std::sync::Arc;

use nalgebra::Matrix4;

use crate::color::Color;
use crate::colormap::Colormap;

/// Everything one view shows.
#[derive(Clone, Debug)]
pub struct Scene {
    /// Triangle meshes (drawn first, with a z-buffer).
    pub meshes: Vec<SceneMesh>,
    /// 3D polylines (e.g. particle traces), depth-tested against the meshes.
    pub polylines: Vec<Polyline>,
    /// 3D point markers (e.g. launch and landing sites).
    pub markers: Vec<Marker>,
    /// 3D arrows (e.g. the spin axis).
    pub arrows: Vec<Arrow>,
    /// 2D overlays in output pixels, drawn last in order.
    pub overlays: Vec<Overlay>,
    /// Background colour.
    pub background: Color,
    /// Lighting of the meshes.
    pub light: Light,
}

impl Default for Scene {
    fn default() -> Scene {
        Scene {
            meshes: Vec::new(),
            polylines: Vec::new(),
            markers: Vec::new(),
            arrows: Vec::new(),
            overlays: Vec::new(),
            background: Color::rgb(16, 18, 24),
            light: Light::Headlight,
        }
    }
}

/// Per-face colours of a mesh.
#[derive(Clone, Debug)]
pub enum FaceColors {
    /// One colour for every face.
    Uniform(Color),
    /// One colour per triangle (same length as `triangles`; missing entries are grey).
    PerFace(Arc<Vec<Color>>),
}

/// Flat (one normal per face) or smooth (vertex normals averaged from faces, Gouraud) shading.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Shading {
    /// One shade per face: facets are visible, as in the shape model.
    #[default]
    Flat,
    /// Shade interpolated from area-weighted vertex normals.
    Smooth,
}

/// A triangle mesh. Positions and triangles are shared (`Arc`) so a large mesh is not copied per
/// frame. Triangles are counter-clockwise seen from outside (front faces).
#[derive(Clone, Debug)]
pub struct SceneMesh {
    /// Vertex positions in the mesh's own frame.
    pub positions: Arc<Vec<[f32; 3]>>,
    /// Vertex indices of each triangle. Triangles with an out-of-range index are skipped.
    pub triangles: Arc<Vec<[u32; 3]>>,
    /// Face colours.
    pub colors: FaceColors,
    /// World-from-mesh transform (e.g. the body rotation in the inertial view).
    pub model: Matrix4<f64>,
    /// Flat or smooth shading.
    pub shading: Shading,
    /// Draws triangle edges in this colour on top of the faces.
    pub wireframe: Option<Color>,
    /// Skips triangles facing away from the camera.
    pub cull_back_faces: bool,
}

impl SceneMesh {
    /// A mesh with identity model transform, flat shading, uniform colour, back faces culled.
    pub fn new(positions: Arc<Vec<[f32; 3]>>, triangles: Arc<Vec<[u32; 3]>>, color: Color) -> Self {
        SceneMesh {
            positions,
            triangles,
            colors: FaceColors::Uniform(color),
            model: Matrix4::identity(),
            shading: Shading::Flat,
            wireframe: None,
            cull_back_faces: true,
        }
    }
}

/// Colour of a polyline.
#[derive(Clone, Debug)]
pub enum LineColor {
    /// One colour.
    Uniform(Color),
    /// One colour per point (interpolated along segments; missing entries use the last one).
    PerVertex(Vec<Color>),
}

/// How parts of a line or marker hidden behind a mesh are drawn.
#[derive(Clone, Copy, Debug, PartialEq, Default)]
pub enum Occluded {
    /// Not drawn.
    #[default]
    Hidden,
    /// Drawn with this opacity (0..=1) times the colour's own alpha.
    Faint(f32),
}

/// A 3D polyline in world coordinates.
#[derive(Clone, Debug)]
pub struct Polyline {
    /// Points, world frame, metres.
    pub points: Vec<[f64; 3]>,
    /// Colour.
    pub color: LineColor,
    /// Width in output pixels (clamped to 1..=64).
    pub width_px: f32,
    /// Dash pattern `(on_px, off_px)` along the screen length, or solid.
    pub dash: Option<(f32, f32)>,
    /// Drawing of segments behind meshes.
    pub occluded: Occluded,
}

/// Marker shapes.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum MarkerShape {
    /// Filled disc.
    #[default]
    Dot,
    /// Circle outline.
    Ring,
    /// Diagonal cross.
    Cross,
    /// Square outline.
    Square,
    /// Filled diamond.
    Diamond,
}

/// A marker at a 3D point, drawn with a fixed size in output pixels.
#[derive(Clone, Debug)]
pub struct Marker {
    /// Position, world frame, metres.
    pub position: [f64; 3],
    /// Shape.
    pub shape: MarkerShape,
    /// Full size (diameter) in output pixels.
    pub size_px: f32,
    /// Colour.
    pub color: Color,
    /// Drawing when the point is behind a mesh.
    pub occluded: Occluded,
}

/// A 3D arrow (e.g. the spin axis); the part behind a mesh is drawn faint.
#[derive(Clone, Debug)]
pub struct Arrow {
    /// Tail, world frame, metres.
    pub from: [f64; 3],
    /// Head, world frame, metres.
    pub to: [f64; 3],
    /// Colour.
    pub color: Color,
    /// Shaft width in output pixels.
    pub width_px: f32,
}

/// Lighting of meshes: Lambert diffuse plus an ambient term ([`Light::ambient`]).
#[derive(Clone, Copy, Debug, PartialEq, Default)]
pub enum Light {
    /// A directional light from the camera (faces looking at the viewer are brightest).
    #[default]
    Headlight,
    /// A directional light; `direction` points from the scene towards the light, world frame.
    Sun {
        /// Direction towards the light (need not be unit length).
        direction: [f64; 3],
    },
}

impl Light {
    /// The ambient fraction of the brightness (faces facing away from the light get this much).
    pub fn ambient(&self) -> f32 {
        match self {
            Light::Headlight => 0.25,
            Light::Sun { .. } => 0.12,
        }
    }
}

/// Where a piece of text sits relative to its anchor point.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Anchor {
    /// Anchor point at the text's top-left corner.
    #[default]
    TopLeft,
    /// Anchor point at the middle of the top edge.
    TopCenter,
    /// Anchor point at the top-right corner.
    TopRight,
    /// Anchor point at the middle of the left edge.
    CenterLeft,
    /// Anchor point at the centre.
    Center,
    /// Anchor point at the middle of the right edge.
    CenterRight,
    /// Anchor point at the bottom-left corner.
    BottomLeft,
    /// Anchor point at the middle of the bottom edge.
    BottomCenter,
    /// Anchor point at the bottom-right corner.
    BottomRight,
}

impl Anchor {
    /// Where the anchor point sits in the text box, as fractions of its width and height from
    /// the top-left.
    pub fn fractions(self) -> (f32, f32) {
        match self {
            Anchor::TopLeft => (0.0, 0.0),
            Anchor::TopCenter => (0.5, 0.0),
            Anchor::TopRight => (1.0, 0.0),
            Anchor::CenterLeft => (0.0, 0.5),
            Anchor::Center => (0.5, 0.5),
            Anchor::CenterRight => (1.0, 0.5),
            Anchor::BottomLeft => (0.0, 1.0),
            Anchor::BottomCenter => (0.5, 1.0),
            Anchor::BottomRight => (1.0, 1.0),
        }
    }
}

/// A corner of the image.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Corner {
    /// Top-left.
    TopLeft,
    /// Top-right.
    TopRight,
    /// Bottom-left.
    #[default]
    BottomLeft,
    /// Bottom-right.
    BottomRight,
}

/// An axis-aligned rectangle in output pixels from the top-left.
#[derive(Clone, Copy, Debug, PartialEq, Default)]
pub struct Rect {
    /// Left edge.
    pub x_px: f32,
    /// Top edge.
    pub y_px: f32,
    /// Width.
    pub width_px: f32,
    /// Height.
    pub height_px: f32,
}

impl Rect {
    /// A rectangle from its top-left corner and size.
    pub const fn new(x_px: f32, y_px: f32, width_px: f32, height_px: f32) -> Rect {
        Rect {
            x_px,
            y_px,
            width_px,
            height_px,
        }
    }

    /// Whether the two rectangles share any area (touching edges do not count).
    pub fn overlaps(&self, other: &Rect) -> bool {
        self.x_px < other.x_px + other.width_px
            && other.x_px < self.x_px + self.width_px
            && self.y_px < other.y_px + other.height_px
            && other.y_px < self.y_px + self.height_px
    }
}

/// 2D decorations drawn over the 3D view, in output pixels.
#[derive(Clone, Debug)]
pub enum Overlay {
    /// A line of text (bundled DejaVu Sans).
    Text {
        /// The text (one line; `\n` starts a new line).
        text: String,
        /// Anchor point x.
        x_px: f32,
        /// Anchor point y.
        y_px: f32,
        /// Font size (em height) in pixels.
        size_px: f32,
        /// Colour.
        color: Color,
        /// Placement relative to the anchor point.
        anchor: Anchor,
    },
    /// A vertical colour bar with ticks and a label (with unit) above it; `min` at the bottom.
    ColorBar {
        /// The colour map.
        colormap: Colormap,
        /// Value at the bottom end.
        min: f64,
        /// Value at the top end.
        max: f64,
        /// Label with unit, e.g. "slope (deg)".
        label: String,
        /// Where the bar itself goes (round tick values are drawn to its right, as many as fit,
        /// and the title above).
        rect: Rect,
    },
    /// A scale bar of a round length (1, 2 or 5 times a power of ten metres) about 120 px long,
    /// valid at the camera target's depth.
    ScaleBar {
        /// Text after the number; empty for automatic "m"/"km".
        unit_label: String,
        /// Corner of the image.
        corner: Corner,
    },
    /// Axis triad showing the world x (red), y (green), z (blue) axes as the camera sees them.
    AxisTriad {
        /// Corner of the image.
        corner: Corner,
        /// Length of an axis seen side-on, pixels.
        size_px: f32,
    },
    /// A legend box: a swatch (line, dashed line or marker) and text per entry.
    Legend {
        /// The entries.
        entries: Vec<crate::overlay::LegendEntry>,
        /// Corner of the image.
        corner: Corner,
    },
    /// A filled rectangle (e.g. a translucent panel behind text).
    Panel {
        /// The rectangle.
        rect: Rect,
        /// Fill colour (alpha blended).
        fill: Color,
    },
}
