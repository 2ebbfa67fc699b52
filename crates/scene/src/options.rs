//! What the views show: [`ViewOptions`] (shared by both views and by exports).

use serde::{Deserialize, Serialize};
use spinfall_dynamics::surface_map::SurfaceField;
use spinfall_render::{Colormap, Occluded, ThemeKind};

use crate::units::DisplayUnits;

/// How trace segments hidden behind the body are drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum HiddenTraceStyle {
    /// Not drawn.
    Hidden,
    /// Drawn faint (so arcs behind the body stay visible).
    #[default]
    Faint,
}

impl HiddenTraceStyle {
    pub(crate) fn occluded(self) -> Occluded {
        match self {
            HiddenTraceStyle::Hidden => Occluded::Hidden,
            HiddenTraceStyle::Faint => Occluded::Faint(0.3),
        }
    }
}

/// View settings shared by the body-fixed and inertial views and by exported images.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ViewOptions {
    /// Surface map to colour the body by (`None`: plain grey).
    pub map: Option<SurfaceField>,
    /// Colour map of the surface map.
    #[serde(with = "colormap_by_name")]
    pub colormap: Colormap,
    /// Draw the trace integrated in the other frame, transformed into this one, dashed over
    /// this view's own trace (they must coincide).
    pub overlay_other_frame: bool,
    /// Draw traces only up to the current time (otherwise whole traces).
    pub trail_to_time: bool,
    /// Launch to highlight (index into the reports).
    pub selected_launch: Option<usize>,
    /// Draw triangle edges.
    pub show_wireframe: bool,
    /// Draw the spin axis arrow.
    pub show_spin_axis: bool,
    /// Draw the x/y/z axis triad of the view's frame.
    pub show_triad: bool,
    /// Draw the legend of markers and traces.
    pub show_legend: bool,
    /// Draw a scale bar.
    pub show_scale_bar: bool,
    /// Trace segments behind the body.
    pub hidden_trace_style: HiddenTraceStyle,
    /// Smooth (Gouraud) shading instead of flat facets.
    pub smooth_shading: bool,
    /// Colours: dark (screen) or light (print).
    #[serde(with = "theme_by_name")]
    pub theme: ThemeKind,
    /// Colour range `[min, max]` of the surface map fixed by the user (field unit); `None`:
    /// the data's range.
    pub color_range: Option<[f64; 2]>,
    /// Units of the time stamp and the scale bars.
    pub units: DisplayUnits,
}

impl Default for ViewOptions {
    fn default() -> Self {
        Self {
            map: None,
            colormap: Colormap::Viridis,
            overlay_other_frame: true,
            trail_to_time: true,
            selected_launch: None,
            show_wireframe: false,
            show_spin_axis: true,
            show_triad: true,
            show_legend: true,
            show_scale_bar: true,
            hidden_trace_style: HiddenTraceStyle::Faint,
            smooth_shading: false,
            theme: ThemeKind::Dark,
            color_range: None,
            units: DisplayUnits::default(),
        }
    }
}

/// Serialises a [`Colormap`] by its short name (the render crate keeps no serde).
mod colormap_by_name {
    use serde::{Deserialize, Deserializer, Serializer};
    use spinfall_render::Colormap;

    pub fn serialize<S: Serializer>(c: &Colormap, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(c.name())
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Colormap, D::Error> {
        let name = String::deserialize(d)?;
        Ok(Colormap::ALL
            .into_iter()
            .find(|c| c.name() == name)
            .unwrap_or_default())
    }
}

/// Serialises a [`ThemeKind`] by its name.
mod theme_by_name {
    use serde::{Deserialize, Deserializer, Serializer};
    use spinfall_render::ThemeKind;

    pub fn serialize<S: Serializer>(t: &ThemeKind, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(t.name())
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<ThemeKind, D::Error> {
        let name = String::deserialize(d)?;
        Ok(name.parse().unwrap_or_default())
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn options_round_trip_through_json_and_tolerate_missing_fields() {
        let opts = ViewOptions {
            colormap: Colormap::Magma,
            show_wireframe: true,
            selected_launch: Some(3),
            theme: ThemeKind::Light,
            color_range: Some([0.0, 40.0]),
            ..ViewOptions::default()
        };
        let text = serde_json::to_string(&opts).unwrap();
        let back: ViewOptions = serde_json::from_str(&text).unwrap();
        assert_eq!(back, opts);
        let partial: ViewOptions = serde_json::from_str(r#"{"show_triad": false}"#).unwrap();
        assert!(!partial.show_triad);
        assert_eq!(partial.colormap, Colormap::Viridis);
    }
}
