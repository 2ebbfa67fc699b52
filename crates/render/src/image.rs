//! The RGBA framebuffer and image composition.

use crate::color::Color;

/// An RGBA image, row-major from the top-left pixel.
#[derive(Clone, Debug, PartialEq, Eq, Default)]
pub struct Image {
    /// Width in pixels.
    pub width: u32,
    /// Height in pixels.
    pub height: u32,
    /// `width * height` pixels, row-major, first row at the top.
    pub pixels: Vec<Color>,
}

impl Image {
    /// An image filled with one colour.
    pub fn new(width: u32, height: u32, fill: Color) -> Image {
        Image {
            width,
            height,
            pixels: vec![fill; width as usize * height as usize],
        }
    }

    /// Resizes (keeping the allocation when possible) and fills with `fill`.
    pub fn reset(&mut self, width: u32, height: u32, fill: Color) {
        self.width = width;
        self.height = height;
        self.pixels.clear();
        self.pixels.resize(width as usize * height as usize, fill);
    }

    /// Sets the size, keeping the allocation and leaving the pixel values unspecified.
    pub(crate) fn resize(&mut self, width: u32, height: u32) {
        self.width = width;
        self.height = height;
        self.pixels
            .resize(width as usize * height as usize, Color::TRANSPARENT);
    }

    /// The pixel at `(x, y)` from the top-left, or `None` outside the image.
    pub fn get(&self, x: u32, y: u32) -> Option<Color> {
        if x < self.width && y < self.height {
            self.pixels
                .get(y as usize * self.width as usize + x as usize)
                .copied()
        } else {
            None
        }
    }

    /// Sets the pixel at `(x, y)`; ignored outside the image.
    pub fn set(&mut self, x: u32, y: u32, c: Color) {
        if x < self.width && y < self.height {
            let i = y as usize * self.width as usize + x as usize;
            if let Some(p) = self.pixels.get_mut(i) {
                *p = c;
            }
        }
    }

    /// The pixels as RGBA bytes, row-major from the top-left (4 bytes per pixel).
    pub fn as_rgba_bytes(&self) -> Vec<u8> {
        let mut out = Vec::with_capacity(self.pixels.len() * 4);
        for p in &self.pixels {
            out.extend_from_slice(&p.to_array());
        }
        out
    }

    /// Writes the RGBA bytes into `out` (cleared first), reusing its allocation.
    pub fn rgba_bytes_into(&self, out: &mut Vec<u8>) {
        out.clear();
        out.reserve(self.pixels.len() * 4);
        for p in &self.pixels {
            out.extend_from_slice(&p.to_array());
        }
    }

    /// Blends `c` (with its alpha times `coverage`) onto the pixel at integer `(x, y)`.
    #[inline]
    pub(crate) fn blend(&mut self, x: i64, y: i64, c: Color, coverage: f32) {
        if x < 0 || y < 0 || x >= self.width as i64 || y >= self.height as i64 {
            return;
        }
        let i = y as usize * self.width as usize + x as usize;
        if let Some(p) = self.pixels.get_mut(i) {
            *p = c.over(*p, coverage);
        }
    }

    /// Fills an axis-aligned rectangle (pixel coordinates, clipped) blending `c`.
    pub(crate) fn fill_rect(&mut self, x0: f32, y0: f32, x1: f32, y1: f32, c: Color) {
        let xa = x0.min(x1).round().max(0.0) as i64;
        let xb = (x0.max(x1).round() as i64).min(self.width as i64);
        let ya = y0.min(y1).round().max(0.0) as i64;
        let yb = (y0.max(y1).round() as i64).min(self.height as i64);
        for y in ya..yb {
            for x in xa..xb {
                self.blend(x, y, c, 1.0);
            }
        }
    }
}

/// Two images next to each other with `gap_px` of `background` between them; the shorter one is
/// centred vertically.
pub fn compose_side_by_side(left: &Image, right: &Image, gap_px: u32, background: Color) -> Image {
    let width = left.width + gap_px + right.width;
    let height = left.height.max(right.height);
    let mut out = Image::new(width, height, background);
    let mut paste = |img: &Image, x0: u32| {
        let y0 = (height - img.height) / 2;
        for y in 0..img.height {
            let src = &img.pixels[(y * img.width) as usize..((y + 1) * img.width) as usize];
            let start = ((y0 + y) * width + x0) as usize;
            out.pixels[start..start + img.width as usize].copy_from_slice(src);
        }
    };
    paste(left, 0);
    paste(right, left.width + gap_px);
    out
}

/// Box-filter down-sampling by an integer `factor` (each output pixel is the mean of a
/// `factor x factor` block). `src` must be `factor` times the size of `dst`.
pub(crate) fn downsample_box(src: &Image, factor: u32, dst: &mut Image) {
    use rayon::prelude::*;
    let f = factor.max(1) as usize;
    let dw = (src.width as usize) / f;
    let dh = (src.height as usize) / f;
    dst.reset(dw as u32, dh as u32, Color::BLACK);
    let sw = src.width as usize;
    let n = (f * f) as u32;
    let half = n / 2;
    dst.pixels
        .par_chunks_mut(dw.max(1))
        .enumerate()
        .for_each(|(y, row)| {
            for (x, out) in row.iter_mut().enumerate() {
                let mut acc = [0u32; 4];
                for sy in 0..f {
                    let base = (y * f + sy) * sw + x * f;
                    for p in &src.pixels[base..base + f] {
                        acc[0] += p.r as u32;
                        acc[1] += p.g as u32;
                        acc[2] += p.b as u32;
                        acc[3] += p.a as u32;
                    }
                }
                *out = Color::rgba(
                    ((acc[0] + half) / n) as u8,
                    ((acc[1] + half) / n) as u8,
                    ((acc[2] + half) / n) as u8,
                    ((acc[3] + half) / n) as u8,
                );
            }
        });
}
