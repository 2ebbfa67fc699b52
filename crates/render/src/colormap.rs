//! Colour maps for scalar fields.

use crate::color::Color;

/// A colour map: perceptually uniform sequential maps, and one diverging map for signed fields.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
pub enum Colormap {
    /// Viridis (sequential, perceptually uniform). The default.
    #[default]
    Viridis,
    /// Cividis (sequential, designed for colour-vision deficiency).
    Cividis,
    /// Magma (sequential).
    Magma,
    /// Inferno (sequential).
    Inferno,
    /// Plasma (sequential).
    Plasma,
    /// Red-blue diverging map for signed fields (red at 0, white at 0.5, blue at 1).
    RedBlue,
}

impl Colormap {
    /// All colour maps, for menus.
    pub const ALL: [Colormap; 6] = [
        Colormap::Viridis,
        Colormap::Cividis,
        Colormap::Magma,
        Colormap::Inferno,
        Colormap::Plasma,
        Colormap::RedBlue,
    ];

    /// A short lower-case name.
    pub fn name(self) -> &'static str {
        match self {
            Colormap::Viridis => "viridis",
            Colormap::Cividis => "cividis",
            Colormap::Magma => "magma",
            Colormap::Inferno => "inferno",
            Colormap::Plasma => "plasma",
            Colormap::RedBlue => "red-blue",
        }
    }

    /// Whether the map is diverging (meant for signed fields centred on zero).
    pub fn is_diverging(self) -> bool {
        matches!(self, Colormap::RedBlue)
    }

    fn gradient(self) -> colorous::Gradient {
        match self {
            Colormap::Viridis => colorous::VIRIDIS,
            Colormap::Cividis => colorous::CIVIDIS,
            Colormap::Magma => colorous::MAGMA,
            Colormap::Inferno => colorous::INFERNO,
            Colormap::Plasma => colorous::PLASMA,
            Colormap::RedBlue => colorous::RED_BLUE,
        }
    }

    /// The colour at `t` in 0..=1 (clamped); NaN gives [`Color::GREY`].
    pub fn map(self, t: f64) -> Color {
        if t.is_nan() {
            return Color::GREY;
        }
        let c = self.gradient().eval_continuous(t.clamp(0.0, 1.0));
        Color::rgb(c.r, c.g, c.b)
    }
}

/// Per-face colours for `values` mapped linearly from `min..max` to the colour map's ends
/// (clamped outside). NaN values and non-finite bounds give [`Color::GREY`]; an empty or reversed
/// range (`max <= min`) maps every value to the middle colour.
pub fn face_colors(values: &[f64], min: f64, max: f64, colormap: Colormap) -> Vec<Color> {
    let span = max - min;
    let ok = min.is_finite() && max.is_finite();
    values
        .iter()
        .map(|&v| {
            if !ok || v.is_nan() {
                Color::GREY
            } else if span > 0.0 {
                colormap.map((v - min) / span)
            } else {
                colormap.map(0.5)
            }
        })
        .collect()
}
