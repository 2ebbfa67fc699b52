//! [`Palette`]: what each colour of a view means, per theme.
//!
//! Launch colours are the theme's series palette (Okabe & Ito 2008 based, checked under
//! simulated red-green deficiency in the render crate); markers are told apart by shape as
//! well as colour, and the test below checks their colours stay apart too.

use spinfall_render::{Color, Theme, ThemeKind};

/// The colours of a view's elements in one theme.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Palette {
    /// Background, text and series colours.
    pub theme: Theme,
    /// The body when no map is shown.
    pub body: Color,
    /// Triangle edges.
    pub wireframe: Color,
    /// The other frame's trace, transformed (dashed).
    pub overlay_trace: Color,
    /// Contact markers (crosses).
    pub contact: Color,
    /// Launch-site markers (rings).
    pub site: Color,
    /// Rest markers (squares).
    pub rest: Color,
    /// Escape markers (diamonds).
    pub escape: Color,
    /// End markers of other outcomes (squares).
    pub other_outcome: Color,
    /// The spin axis.
    pub spin_axis: Color,
    /// Planned sites and their launch arrows.
    pub planned_site: Color,
    /// Linearly stable equilibrium points.
    pub equilibrium_stable: Color,
    /// Unstable equilibrium points.
    pub equilibrium_unstable: Color,
    /// Zero-velocity curves and the forbidden-region hatch.
    pub zero_velocity: Color,
    /// A terrain patch used for contacts.
    pub patch: Color,
}

impl Palette {
    /// The dark (screen) palette.
    pub const fn dark() -> Palette {
        Palette {
            theme: Theme::dark(),
            body: Color::rgb(176, 170, 160),
            wireframe: Color::rgba(30, 30, 30, 110),
            overlay_trace: Color::rgba(245, 245, 245, 220),
            contact: Color::rgb(240, 228, 66),
            site: Color::rgb(255, 255, 255),
            rest: Color::rgb(0, 158, 115),
            escape: Color::rgb(213, 94, 0),
            other_outcome: Color::LIGHT_GREY,
            spin_axis: Color::rgb(86, 180, 233),
            planned_site: Color::rgb(204, 121, 167),
            equilibrium_stable: Color::rgb(86, 180, 233),
            equilibrium_unstable: Color::rgb(230, 159, 0),
            zero_velocity: Color::rgb(190, 174, 212),
            patch: Color::rgb(150, 138, 120),
        }
    }

    /// The light (print) palette.
    pub const fn light() -> Palette {
        Palette {
            theme: Theme::light(),
            body: Color::rgb(190, 186, 178),
            wireframe: Color::rgba(40, 40, 40, 90),
            overlay_trace: Color::rgba(25, 25, 25, 210),
            contact: Color::rgb(0, 0, 0),
            site: Color::rgb(0, 0, 0),
            rest: Color::rgb(0, 114, 178),
            escape: Color::rgb(213, 94, 0),
            other_outcome: Color::rgb(110, 110, 110),
            spin_axis: Color::rgb(0, 114, 178),
            planned_site: Color::rgb(204, 121, 167),
            equilibrium_stable: Color::rgb(0, 114, 178),
            equilibrium_unstable: Color::rgb(213, 94, 0),
            zero_velocity: Color::rgb(117, 112, 179),
            patch: Color::rgb(160, 150, 132),
        }
    }

    /// The palette of a theme.
    pub const fn of(kind: ThemeKind) -> Palette {
        match kind {
            ThemeKind::Dark => Palette::dark(),
            ThemeKind::Light => Palette::light(),
        }
    }

    /// Colour of launch `index` (cycled through the series palette).
    pub fn launch(&self, index: usize) -> Color {
        self.theme.series_color(index)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use spinfall_render::cvd::closest_pair;

    #[test]
    fn outcome_markers_stay_apart_under_red_green_deficiency() {
        // Contact, rest and escape markers differ by shape; their colours must also differ
        // under simulated protanopia and deuteranopia (Machado, Oliveira & Fernandes 2009):
        // CIE76 ΔE of at least 15.
        for kind in ThemeKind::ALL {
            let p = Palette::of(kind);
            let colors = [p.contact, p.rest, p.escape];
            let (e, i, j, d) = closest_pair(&colors).unwrap_or((0.0, 0, 0, None));
            assert!(e >= 15.0, "{kind:?}: markers {i} and {j} ΔE {e:.1} ({d:?})");
        }
    }
}
