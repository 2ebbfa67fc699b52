//! [`BodyView`]: a body with its render buffers and per-map face colours, built once.

use std::sync::{Arc, Mutex};

use spinfall_dynamics::surface_map::{SurfaceField, SurfaceMap};
use spinfall_dynamics::{Body, BodyFigures};
use spinfall_render::{Color, Colormap, face_colors};

use crate::guides::Guides;

/// Colour of the body when no map is shown (dark theme).
pub const BODY_GREY: Color = crate::palette::Palette::dark().body;

/// Face colours of one map, with the value range they span.
#[derive(Debug, Clone)]
pub struct MapColors {
    /// The field.
    pub field: SurfaceField,
    /// The colour map.
    pub colormap: Colormap,
    /// One colour per face.
    pub colors: Arc<Vec<Color>>,
    /// Value at the low end of the colour map (field unit).
    pub min: f64,
    /// Value at the high end of the colour map (field unit).
    pub max: f64,
    /// Whether the range was fixed by the user (otherwise it is the data's range).
    pub fixed_range: bool,
}

/// A body ready to draw: the `f32` mesh (shared, built once), the body (frames, spin) and the
/// optional surface map, with the per-face colours cached per field and colour map.
#[derive(Debug)]
pub struct BodyView {
    body: Arc<Body>,
    positions: Arc<Vec<[f32; 3]>>,
    triangles: Arc<Vec<[u32; 3]>>,
    map: Option<Arc<SurfaceMap>>,
    colors: Mutex<Vec<MapColors>>,
    figures: BodyFigures,
    guides: Arc<Guides>,
    /// The terrain patch used for contacts, if the body has one: `f32` positions and triangles.
    patch: Option<PatchBuffers>,
}

/// Render buffers of a terrain patch.
pub type PatchBuffers = (Arc<Vec<[f32; 3]>>, Arc<Vec<[u32; 3]>>);

/// The render buffers of `body`'s terrain patch, if any.
fn patch_buffers(body: &Body) -> Option<PatchBuffers> {
    let patch = body.patch.as_ref()?;
    let mesh = patch.mesh();
    let positions = mesh
        .vertices_m
        .iter()
        .map(|p| [p.x as f32, p.y as f32, p.z as f32])
        .collect();
    Some((Arc::new(positions), Arc::new(mesh.faces.clone())))
}

impl BodyView {
    /// Builds the render buffers of `body`'s shape.
    pub fn new(body: Arc<Body>) -> Self {
        let mesh = body.shape.mesh();
        let positions = mesh
            .vertices_m
            .iter()
            .map(|p| [p.x as f32, p.y as f32, p.z as f32])
            .collect();
        let triangles = mesh.faces.clone();
        let figures = body.figures();
        let patch = patch_buffers(&body);
        Self {
            body,
            positions: Arc::new(positions),
            triangles: Arc::new(triangles),
            map: None,
            colors: Mutex::new(Vec::new()),
            figures,
            guides: Arc::default(),
            patch,
        }
    }

    /// The same shape buffers with another body (new mass or spin): no mesh rebuild. The map
    /// and the guides are dropped (they depend on mass and spin).
    pub fn with_body(&self, body: Arc<Body>) -> Self {
        let same_shape = Arc::ptr_eq(&self.body.shape, &body.shape);
        if !same_shape {
            return Self::new(body);
        }
        let figures = body.figures();
        let patch = patch_buffers(&body);
        Self {
            body,
            positions: self.positions.clone(),
            triangles: self.triangles.clone(),
            map: None,
            colors: Mutex::new(Vec::new()),
            figures,
            guides: Arc::default(),
            patch,
        }
    }

    /// The same view (body, map, cached colours) with other guides (equilibrium points,
    /// zero-velocity curves), drawn in the body-fixed view.
    pub fn with_guides(&self, guides: Arc<Guides>) -> Self {
        let colors = self.colors.lock().map(|c| c.clone()).unwrap_or_default();
        Self {
            body: self.body.clone(),
            positions: self.positions.clone(),
            triangles: self.triangles.clone(),
            map: self.map.clone(),
            colors: Mutex::new(colors),
            figures: self.figures,
            guides,
            patch: self.patch.clone(),
        }
    }

    /// The terrain patch used for contacts (drawn over the body, never coloured by the map).
    pub fn patch(&self) -> Option<&PatchBuffers> {
        self.patch.as_ref()
    }

    /// The guides drawn in the body-fixed view.
    pub fn guides(&self) -> &Arc<Guides> {
        &self.guides
    }

    /// Attaches (or removes) the surface map; cached colours are dropped.
    pub fn set_map(&mut self, map: Option<Arc<SurfaceMap>>) {
        self.map = map;
        if let Ok(mut c) = self.colors.lock() {
            c.clear();
        }
    }

    /// The body.
    pub fn body(&self) -> &Arc<Body> {
        &self.body
    }

    /// Derived figures of the body (mass, density, radii, periods), computed once.
    pub fn figures(&self) -> &BodyFigures {
        &self.figures
    }

    /// Radius of the smallest origin-centred sphere enclosing the body, m (computed once).
    pub fn brillouin_radius_m(&self) -> f64 {
        self.figures.brillouin_radius_m
    }

    /// The surface map, when computed.
    pub fn map(&self) -> Option<&Arc<SurfaceMap>> {
        self.map.as_ref()
    }

    /// Vertex positions, body frame, metres (as `f32`).
    pub fn positions(&self) -> &Arc<Vec<[f32; 3]>> {
        &self.positions
    }

    /// Triangles.
    pub fn triangles(&self) -> &Arc<Vec<[u32; 3]>> {
        &self.triangles
    }

    /// Per-face values of `field`, when a map is attached.
    pub fn field_values(&self, field: SurfaceField) -> Option<&[f64]> {
        self.map.as_deref().map(|m| m.values(field))
    }

    /// Face colours for `field` through `colormap` over the data's range (cached), or `None`
    /// without a map.
    pub fn map_colors(&self, field: SurfaceField, colormap: Colormap) -> Option<MapColors> {
        self.map_colors_in(field, colormap, None)
    }

    /// Face colours for `field` through `colormap` over `range` (`[min, max]`, field unit;
    /// `None` or an invalid range: the data's range), cached.
    pub fn map_colors_in(
        &self,
        field: SurfaceField,
        colormap: Colormap,
        range: Option<[f64; 2]>,
    ) -> Option<MapColors> {
        let values = self.field_values(field)?;
        let fixed = range.filter(|[lo, hi]| lo.is_finite() && hi.is_finite() && hi > lo);
        if let Ok(cache) = self.colors.lock()
            && let Some(hit) = cache.iter().find(|c| {
                c.field == field
                    && c.colormap == colormap
                    && c.fixed_range == fixed.is_some()
                    && fixed.is_none_or(|[lo, hi]| c.min == lo && c.max == hi)
            })
        {
            return Some(hit.clone());
        }
        let (min, max) = match fixed {
            Some([lo, hi]) => (lo, hi),
            None => value_range(values, colormap.is_diverging()),
        };
        let colors = MapColors {
            field,
            colormap,
            colors: Arc::new(face_colors(values, min, max, colormap)),
            min,
            max,
            fixed_range: fixed.is_some(),
        };
        if let Ok(mut cache) = self.colors.lock() {
            cache.push(colors.clone());
        }
        Some(colors)
    }
}

/// Range of the finite values (symmetric about zero for a diverging map). A constant field gets
/// a small range around its value so the colour bar stays readable.
pub fn value_range(values: &[f64], symmetric: bool) -> (f64, f64) {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for &v in values.iter().filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() || !hi.is_finite() {
        return (0.0, 1.0);
    }
    if symmetric {
        let m = lo.abs().max(hi.abs());
        (lo, hi) = (-m, m);
    }
    if hi - lo <= f64::EPSILON * hi.abs().max(1.0) {
        let pad = (hi.abs() * 1e-3).max(1e-9);
        (lo, hi) = (lo - pad, hi + pad);
    }
    (lo, hi)
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn value_range_skips_nan_and_pads_constants() {
        assert_eq!(value_range(&[f64::NAN, 2.0, -1.0, 5.0], false), (-1.0, 5.0));
        assert_eq!(value_range(&[-1.0, 3.0], true), (-3.0, 3.0));
        let (lo, hi) = value_range(&[4.0, 4.0], false);
        assert!(lo < 4.0 && hi > 4.0);
        assert_eq!(value_range(&[], false), (0.0, 1.0));
    }
}
