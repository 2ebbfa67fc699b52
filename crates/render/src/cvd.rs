//! Colour-vision deficiency simulation and colour differences, for checking palettes.
//!
//! Simulation: Machado, Oliveira & Fernandes (2009), "A Physiologically-based Model for
//! Simulation of Color Vision Deficiency", IEEE TVCG 15(6), the severity-1.0 matrices for
//! protanopia and deuteranopia, applied to linear-light sRGB. Difference: CIE 1976 ΔE*ab in
//! CIELAB (D65 white), from the sRGB (IEC 61966-2-1) primaries.

use crate::color::Color;

/// A red-green colour-vision deficiency (dichromacy, severity 1.0).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Deficiency {
    /// Missing L cones.
    Protanopia,
    /// Missing M cones (the most common form).
    Deuteranopia,
}

impl Deficiency {
    /// Both red-green deficiencies.
    pub const RED_GREEN: [Deficiency; 2] = [Deficiency::Protanopia, Deficiency::Deuteranopia];

    fn matrix(self) -> [[f64; 3]; 3] {
        // Machado, Oliveira & Fernandes (2009), table of matrices, severity 1.0.
        match self {
            Deficiency::Protanopia => [
                [0.152286, 1.052583, -0.204868],
                [0.114503, 0.786281, 0.099216],
                [-0.003882, -0.048116, 1.051998],
            ],
            Deficiency::Deuteranopia => [
                [0.367322, 0.860646, -0.227968],
                [0.280085, 0.672501, 0.047413],
                [-0.011820, 0.042940, 0.968881],
            ],
        }
    }
}

/// sRGB channel (0..=255) to linear light (0..=1).
fn to_linear(c: u8) -> f64 {
    let c = c as f64 / 255.0;
    if c <= 0.04045 {
        c / 12.92
    } else {
        ((c + 0.055) / 1.055).powf(2.4)
    }
}

/// Linear light to an sRGB channel, clamped.
fn from_linear(c: f64) -> u8 {
    let c = c.clamp(0.0, 1.0);
    let s = if c <= 0.003_130_8 {
        12.92 * c
    } else {
        1.055 * c.powf(1.0 / 2.4) - 0.055
    };
    (s * 255.0).round() as u8
}

/// How `c` looks to a viewer with `deficiency` (alpha kept).
pub fn simulate(c: Color, deficiency: Deficiency) -> Color {
    let m = deficiency.matrix();
    let l = [to_linear(c.r), to_linear(c.g), to_linear(c.b)];
    let o = |i: usize| m[i][0] * l[0] + m[i][1] * l[1] + m[i][2] * l[2];
    Color::rgba(from_linear(o(0)), from_linear(o(1)), from_linear(o(2)), c.a)
}

/// CIELAB coordinates (L*, a*, b*) of an opaque sRGB colour, D65 white.
pub fn lab(c: Color) -> [f64; 3] {
    let (r, g, b) = (to_linear(c.r), to_linear(c.g), to_linear(c.b));
    let x = 0.4124 * r + 0.3576 * g + 0.1805 * b;
    let y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
    let z = 0.0193 * r + 0.1192 * g + 0.9505 * b;
    let f = |t: f64| {
        if t > 216.0 / 24389.0 {
            t.cbrt()
        } else {
            (24389.0 / 27.0 * t + 16.0) / 116.0
        }
    };
    let (fx, fy, fz) = (f(x / 0.95047), f(y), f(z / 1.08883));
    [116.0 * fy - 16.0, 500.0 * (fx - fy), 200.0 * (fy - fz)]
}

/// CIE 1976 colour difference ΔE*ab between two opaque colours (about 2.3 is just noticeable).
pub fn delta_e76(a: Color, b: Color) -> f64 {
    let (p, q) = (lab(a), lab(b));
    ((p[0] - q[0]).powi(2) + (p[1] - q[1]).powi(2) + (p[2] - q[2]).powi(2)).sqrt()
}

/// The smallest ΔE*ab between any two of `colors`, for normal vision and for each red-green
/// deficiency, with the pair that reaches it: `(ΔE, i, j, deficiency)`.
pub fn closest_pair(colors: &[Color]) -> Option<(f64, usize, usize, Option<Deficiency>)> {
    let mut worst: Option<(f64, usize, usize, Option<Deficiency>)> = None;
    for d in [
        None,
        Some(Deficiency::Protanopia),
        Some(Deficiency::Deuteranopia),
    ] {
        let seen: Vec<Color> = colors
            .iter()
            .map(|&c| d.map_or(c, |d| simulate(c, d)))
            .collect();
        for i in 0..seen.len() {
            for j in i + 1..seen.len() {
                let e = delta_e76(seen[i], seen[j]);
                if worst.is_none_or(|w| e < w.0) {
                    worst = Some((e, i, j, d));
                }
            }
        }
    }
    worst
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn simulation_matches_the_published_model_on_primaries() {
        // Pure red through the Machado (2009) protanopia matrix: linear (0.152, 0.115, -0.004)
        // -> sRGB (109, 95, 0) after clamping; grey stays grey (rows sum to 1).
        assert_eq!(
            simulate(Color::rgb(255, 0, 0), Deficiency::Protanopia),
            Color::rgb(109, 95, 0)
        );
        for d in Deficiency::RED_GREEN {
            let g = simulate(Color::rgb(128, 128, 128), d);
            assert!(
                delta_e76(g, Color::rgb(128, 128, 128)) < 1.0,
                "{d:?}: {g:?}"
            );
        }
        // Red and green, far apart for normal vision, come close for a deuteranope.
        let (r, g) = (Color::rgb(220, 50, 47), Color::rgb(60, 180, 75));
        assert!(delta_e76(r, g) > 80.0);
        let (rs, gs) = (
            simulate(r, Deficiency::Deuteranopia),
            simulate(g, Deficiency::Deuteranopia),
        );
        assert!(delta_e76(rs, gs) < delta_e76(r, g) / 2.0);
    }

    #[test]
    fn lab_of_white_and_black() {
        let w = lab(Color::WHITE);
        assert!((w[0] - 100.0).abs() < 0.01 && w[1].abs() < 0.05 && w[2].abs() < 0.05);
        assert!(lab(Color::BLACK)[0].abs() < 1e-9);
    }
}
