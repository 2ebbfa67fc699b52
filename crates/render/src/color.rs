//! RGBA colours.

/// An 8-bit RGBA colour, not premultiplied, sRGB-encoded.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[repr(C)]
pub struct Color {
    /// Red.
    pub r: u8,
    /// Green.
    pub g: u8,
    /// Blue.
    pub b: u8,
    /// Alpha (255 = opaque).
    pub a: u8,
}

impl Color {
    /// Opaque black.
    pub const BLACK: Color = Color::rgb(0, 0, 0);
    /// Opaque white.
    pub const WHITE: Color = Color::rgb(255, 255, 255);
    /// Fully transparent black.
    pub const TRANSPARENT: Color = Color::rgba(0, 0, 0, 0);
    /// Mid grey, used for missing (NaN) values in colour maps.
    pub const GREY: Color = Color::rgb(128, 128, 128);
    /// Light grey.
    pub const LIGHT_GREY: Color = Color::rgb(200, 200, 200);
    /// Dark grey.
    pub const DARK_GREY: Color = Color::rgb(48, 48, 48);
    /// Red (x axis of the triad).
    pub const RED: Color = Color::rgb(220, 50, 47);
    /// Green (y axis of the triad).
    pub const GREEN: Color = Color::rgb(60, 180, 75);
    /// Blue (z axis of the triad).
    pub const BLUE: Color = Color::rgb(38, 110, 230);
    /// Yellow.
    pub const YELLOW: Color = Color::rgb(240, 200, 40);
    /// Orange.
    pub const ORANGE: Color = Color::rgb(245, 130, 48);
    /// Cyan.
    pub const CYAN: Color = Color::rgb(70, 200, 220);
    /// Magenta.
    pub const MAGENTA: Color = Color::rgb(210, 70, 200);

    /// Opaque colour.
    pub const fn rgb(r: u8, g: u8, b: u8) -> Color {
        Color { r, g, b, a: 255 }
    }

    /// Colour with alpha.
    pub const fn rgba(r: u8, g: u8, b: u8, a: u8) -> Color {
        Color { r, g, b, a }
    }

    /// The same colour with another alpha.
    pub const fn with_alpha(self, a: u8) -> Color {
        Color { a, ..self }
    }

    /// `[r, g, b, a]`.
    pub const fn to_array(self) -> [u8; 4] {
        [self.r, self.g, self.b, self.a]
    }

    /// RGB scaled by `k` (clamped to 0..=1), alpha kept.
    pub fn scaled(self, k: f32) -> Color {
        // NaN maps to 0 through the saturating cast.
        let k = (k.clamp(0.0, 1.0) * 65536.0) as u32;
        let s = |c: u8| ((c as u32 * k + 32768) >> 16) as u8;
        Color::rgba(s(self.r), s(self.g), s(self.b), self.a)
    }

    /// Linear interpolation in 8-bit sRGB space, `t` in 0..=1.
    pub fn lerp(self, other: Color, t: f32) -> Color {
        let t = if t.is_finite() {
            t.clamp(0.0, 1.0)
        } else {
            0.0
        };
        let l = |a: u8, b: u8| (a as f32 + (b as f32 - a as f32) * t + 0.5) as u8;
        Color::rgba(
            l(self.r, other.r),
            l(self.g, other.g),
            l(self.b, other.b),
            l(self.a, other.a),
        )
    }

    /// "Over" compositing of `self` (source, with its alpha times `coverage`) onto opaque `dst`.
    /// The result keeps `dst`'s alpha.
    #[inline]
    pub fn over(self, dst: Color, coverage: f32) -> Color {
        let a = (self.a as f32 / 255.0) * coverage.clamp(0.0, 1.0);
        if a <= 0.0 {
            return dst;
        }
        let m = |s: u8, d: u8| (d as f32 + (s as f32 - d as f32) * a + 0.5) as u8;
        Color::rgba(m(self.r, dst.r), m(self.g, dst.g), m(self.b, dst.b), dst.a)
    }
}

impl From<[u8; 4]> for Color {
    fn from(v: [u8; 4]) -> Color {
        Color::rgba(v[0], v[1], v[2], v[3])
    }
}

impl From<Color> for [u8; 4] {
    fn from(c: Color) -> [u8; 4] {
        c.to_array()
    }
}
