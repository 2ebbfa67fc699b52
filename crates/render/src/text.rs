//! Text with the bundled DejaVu Sans font (fontdue), with a glyph cache.

use std::collections::HashMap;
use std::sync::OnceLock;

use crate::color::Color;
use crate::image::Image;
use crate::scene::Anchor;

static FONT_BYTES: &[u8] = include_bytes!("../../../assets/fonts/DejaVuSans.ttf");

fn font() -> Option<&'static fontdue::Font> {
    static FONT: OnceLock<Option<fontdue::Font>> = OnceLock::new();
    FONT.get_or_init(|| {
        fontdue::Font::from_bytes(FONT_BYTES, fontdue::FontSettings::default()).ok()
    })
    .as_ref()
}

/// Rasterized glyphs keyed by character and size (in 1/64 px).
#[derive(Default)]
pub(crate) struct GlyphCache {
    glyphs: HashMap<(char, u32), (fontdue::Metrics, Vec<u8>)>,
}

/// Size of laid-out text.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct TextSize {
    pub width: f32,
    pub height: f32,
    pub ascent: f32,
    pub line_height: f32,
}

fn size_key(size_px: f32) -> u32 {
    (size_px * 64.0).round() as u32
}

pub(crate) fn clamp_size(size_px: f32) -> f32 {
    if size_px.is_finite() {
        size_px.clamp(4.0, 400.0)
    } else {
        14.0
    }
}

impl GlyphCache {
    fn glyph(&mut self, ch: char, size_px: f32) -> Option<&(fontdue::Metrics, Vec<u8>)> {
        let f = font()?;
        let key = (ch, size_key(size_px));
        if !self.glyphs.contains_key(&key) {
            if self.glyphs.len() > 4096 {
                self.glyphs.clear();
            }
            self.glyphs.insert(key, f.rasterize(ch, size_px));
        }
        self.glyphs.get(&key)
    }

    /// Width and height of `text` (lines split on `\n`).
    pub fn measure(&mut self, text: &str, size_px: f32) -> TextSize {
        let size_px = clamp_size(size_px);
        let (ascent, line_height) = line_metrics(size_px);
        let mut width: f32 = 0.0;
        let mut lines = 0;
        for line in text.split('\n') {
            lines += 1;
            let mut x = 0.0;
            for ch in line.chars() {
                if let Some((m, _)) = self.glyph(ch, size_px) {
                    x += m.advance_width;
                }
            }
            width = width.max(x);
        }
        TextSize {
            width,
            height: line_height * lines as f32,
            ascent,
            line_height,
        }
    }

    /// Draws `text` with its bounding box placed by `anchor` at `(x, y)`.
    #[allow(
        clippy::too_many_arguments,
        reason = "mirrors the fields of Overlay::Text"
    )]
    pub fn draw(
        &mut self,
        img: &mut Image,
        text: &str,
        x: f32,
        y: f32,
        size_px: f32,
        color: Color,
        anchor: Anchor,
    ) {
        if !(x.is_finite() && y.is_finite() && x.abs() <= 1.0e6 && y.abs() <= 1.0e6) {
            return;
        }
        let size_px = clamp_size(size_px);
        let sz = self.measure(text, size_px);
        let (fx, fy) = anchor.fractions();
        let top = (y - fy * sz.height).round();
        for (li, line) in text.split('\n').enumerate() {
            let lw = self.measure(line, size_px).width;
            let mut pen_x = (x - fx * lw).round();
            let baseline = top + sz.ascent.round() + li as f32 * sz.line_height.round();
            for ch in line.chars() {
                let Some((m, bitmap)) = self.glyph(ch, size_px) else {
                    continue;
                };
                let gx = pen_x as i64 + m.xmin as i64;
                let gy = baseline as i64 - m.ymin as i64 - m.height as i64;
                for row in 0..m.height {
                    for col in 0..m.width {
                        let cov = bitmap[row * m.width + col];
                        if cov > 0 {
                            img.blend(gx + col as i64, gy + row as i64, color, cov as f32 / 255.0);
                        }
                    }
                }
                pen_x += m.advance_width;
            }
        }
    }
}

pub(crate) fn line_metrics(size_px: f32) -> (f32, f32) {
    match font().and_then(|f| f.horizontal_line_metrics(size_px)) {
        Some(lm) => (lm.ascent, lm.new_line_size),
        None => (size_px * 0.8, size_px * 1.2),
    }
}

/// Width and height in pixels of `text` at `size_px` (lines split on `\n`), as the renderer
/// lays it out (bundled DejaVu Sans).
pub fn measure_text(text: &str, size_px: f32) -> (f32, f32) {
    thread_local! {
        static CACHE: std::cell::RefCell<GlyphCache> = std::cell::RefCell::new(GlyphCache::default());
    }
    CACHE.with(|c| {
        let s = c.borrow_mut().measure(text, size_px);
        (s.width, s.height)
    })
}
