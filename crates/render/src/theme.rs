//! Themes: the colours of a figure's background, text, rules and data series.
//!
//! Dark is for screens; light is for print (white background, dark text). Both categorical
//! palettes start from Okabe & Ito (2008), "Color Universal Design" (the eight-colour set
//! designed for colour-blind readers); the light one replaces their yellow, unreadable on white,
//! by the wine of Tol (2021), "Colour schemes" (SRON/EPS/TN/09-002). The test below checks that
//! the colours stay apart under simulated protanopia and deuteranopia ([`crate::cvd`]).

use crate::color::Color;

/// Which theme.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
pub enum ThemeKind {
    /// Dark background, for screens.
    #[default]
    Dark,
    /// White background, dark text, for print.
    Light,
}

impl ThemeKind {
    /// Both themes.
    pub const ALL: [ThemeKind; 2] = [ThemeKind::Dark, ThemeKind::Light];

    /// Lower-case name (`dark`, `light`).
    pub fn name(self) -> &'static str {
        match self {
            ThemeKind::Dark => "dark",
            ThemeKind::Light => "light",
        }
    }

    /// The theme's colours.
    pub fn theme(self) -> Theme {
        match self {
            ThemeKind::Dark => Theme::dark(),
            ThemeKind::Light => Theme::light(),
        }
    }
}

impl std::str::FromStr for ThemeKind {
    type Err = String;

    fn from_str(s: &str) -> Result<ThemeKind, String> {
        ThemeKind::ALL
            .into_iter()
            .find(|k| k.name().eq_ignore_ascii_case(s.trim()))
            .ok_or_else(|| format!("unknown theme {s:?}: use dark or light"))
    }
}

/// The colours of one theme.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Theme {
    /// Which theme this is.
    pub kind: ThemeKind,
    /// Figure background.
    pub background: Color,
    /// Titles, labels, tick values.
    pub text: Color,
    /// Secondary text (time stamps, notes).
    pub text_muted: Color,
    /// Frames, ticks and scale bars.
    pub rule: Color,
    /// Grid lines of plots.
    pub grid: Color,
    /// Translucent fill behind a legend drawn over content.
    pub panel: Color,
    /// Colours of the x, y and z axes of an axis triad.
    pub axes: [Color; 3],
    /// Categorical palette for data series (launches), in order of use.
    pub series: [Color; 8],
}

impl Theme {
    /// The dark (screen) theme.
    pub const fn dark() -> Theme {
        Theme {
            kind: ThemeKind::Dark,
            background: Color::rgb(16, 18, 24),
            text: Color::rgb(235, 235, 235),
            text_muted: Color::rgb(190, 192, 198),
            rule: Color::rgb(225, 225, 225),
            grid: Color::rgb(60, 64, 74),
            panel: Color::rgba(0, 0, 0, 110),
            axes: [Color::RED, Color::GREEN, Color::BLUE],
            // Okabe & Ito (2008): orange, sky blue, bluish green, yellow, reddish purple,
            // white (for their black), vermillion, blue.
            series: [
                Color::rgb(230, 159, 0),
                Color::rgb(86, 180, 233),
                Color::rgb(0, 158, 115),
                Color::rgb(240, 228, 66),
                Color::rgb(204, 121, 167),
                Color::rgb(255, 255, 255),
                Color::rgb(213, 94, 0),
                Color::rgb(0, 114, 178),
            ],
        }
    }

    /// The light (print) theme: white background, near-black text.
    pub const fn light() -> Theme {
        Theme {
            kind: ThemeKind::Light,
            background: Color::WHITE,
            text: Color::rgb(20, 20, 20),
            text_muted: Color::rgb(70, 70, 70),
            rule: Color::rgb(30, 30, 30),
            grid: Color::rgb(218, 218, 218),
            panel: Color::rgba(255, 255, 255, 190),
            axes: [
                Color::rgb(190, 30, 30),
                Color::rgb(20, 130, 50),
                Color::rgb(20, 80, 190),
            ],
            // Okabe & Ito (2008): vermillion, blue, bluish green, reddish purple, orange, sky
            // blue, black; Tol (2021) wine.
            series: [
                Color::rgb(213, 94, 0),
                Color::rgb(0, 114, 178),
                Color::rgb(0, 158, 115),
                Color::rgb(204, 121, 167),
                Color::rgb(230, 159, 0),
                Color::rgb(86, 180, 233),
                Color::rgb(0, 0, 0),
                Color::rgb(136, 34, 85),
            ],
        }
    }

    /// Colour of series `index` (cycled).
    pub fn series_color(&self, index: usize) -> Color {
        self.series[index % self.series.len()]
    }
}

impl Default for Theme {
    fn default() -> Theme {
        Theme::dark()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cvd::{closest_pair, delta_e76};

    /// Smallest accepted CIE76 ΔE between two series colours, for normal vision and under
    /// simulated protanopia and deuteranopia (Machado, Oliveira & Fernandes 2009). 15 is far
    /// above the just-noticeable difference of about 2.3 (Sharma 2003, Digital Color Imaging
    /// Handbook), so lines stay distinguishable, not merely different.
    const MIN_SERIES_DELTA_E: f64 = 15.0;

    #[test]
    fn series_colours_stay_apart_under_red_green_deficiency() {
        for kind in ThemeKind::ALL {
            let t = kind.theme();
            let Some((e, i, j, d)) = closest_pair(&t.series) else {
                panic!("empty palette");
            };
            assert!(
                e >= MIN_SERIES_DELTA_E,
                "{kind:?}: series {i} {:?} and {j} {:?} are only ΔE {e:.1} apart ({d:?})",
                t.series[i],
                t.series[j]
            );
            // Every series colour stands out from the background.
            for c in t.series {
                assert!(delta_e76(c, t.background) > 25.0, "{kind:?}: {c:?}");
            }
        }
    }

    #[test]
    fn a_palette_with_red_and_green_fails_the_check() {
        // The check itself can fail: red and green collapse for a deuteranope.
        let bad = [Color::rgb(220, 50, 47), Color::rgb(60, 160, 60)];
        let (e, _, _, d) = closest_pair(&bad).unwrap_or((f64::INFINITY, 0, 0, None));
        assert!(e < MIN_SERIES_DELTA_E && d.is_some(), "{e} {d:?}");
    }

    #[test]
    fn light_theme_is_white_with_dark_text() {
        let t = Theme::light();
        assert_eq!(t.background, Color::WHITE);
        assert!(delta_e76(t.text, t.background) > 90.0);
        assert_eq!("LIGHT".parse::<ThemeKind>(), Ok(ThemeKind::Light));
        assert!("sepia".parse::<ThemeKind>().is_err());
    }
}
