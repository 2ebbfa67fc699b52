//! Animated GIF and APNG encoding, streamed: each frame is compressed and written when it is
//! added, so an animation never sits in memory whole.

use std::io::Write;

use crate::error::{RenderError, Result};
use crate::image::Image;

/// Most frames of one animation.
pub const MAX_ANIMATION_FRAMES: u32 = 3600;
/// Largest animation side, pixels (GIF stores sides in 16 bits; beyond 4K files get huge).
pub const MAX_ANIMATION_SIDE_PX: u32 = 3840;
/// Accepted frame rates, frames per second.
pub const FPS_RANGE: std::ops::RangeInclusive<f64> = 0.1..=60.0;

/// Animated image formats.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum AnimationFormat {
    /// Animated GIF (256 colours per frame, NeuQuant quantization; delays in 1/100 s, at
    /// least 2/100 s as browsers play faster frames slower).
    Gif,
    /// Animated PNG (full colour, lossless).
    Apng,
}

impl AnimationFormat {
    /// The format for a file extension (`gif`, `png`/`apng`), case-insensitive.
    pub fn from_extension(ext: &str) -> Option<AnimationFormat> {
        match ext.to_ascii_lowercase().as_str() {
            "gif" => Some(AnimationFormat::Gif),
            "png" | "apng" => Some(AnimationFormat::Apng),
            _ => None,
        }
    }
}

/// Checks animation settings against the crate's limits.
pub fn check_animation(width_px: u32, height_px: u32, frames: u32, fps: f64) -> Result<()> {
    let bad = |m: String| Err(RenderError::Animation(m));
    if !(1..=MAX_ANIMATION_FRAMES).contains(&frames) {
        return bad(format!(
            "{frames} frames is outside 1..={MAX_ANIMATION_FRAMES}"
        ));
    }
    if !(fps.is_finite() && FPS_RANGE.contains(&fps)) {
        return bad(format!(
            "{fps} frames per second is outside {}..={}",
            FPS_RANGE.start(),
            FPS_RANGE.end()
        ));
    }
    for (side, what) in [(width_px, "width"), (height_px, "height")] {
        if !(16..=MAX_ANIMATION_SIDE_PX).contains(&side) {
            return bad(format!(
                "the {what} of {side} px is outside 16..={MAX_ANIMATION_SIDE_PX} px"
            ));
        }
    }
    Ok(())
}

enum Inner<W: Write> {
    Gif(gif::Encoder<W>),
    Apng(png::Writer<W>),
}

/// A streaming animation encoder: declare the frame count, add exactly that many frames of
/// the same size, then [`AnimationEncoder::finish`].
pub struct AnimationEncoder<W: Write> {
    inner: Inner<W>,
    width_px: u32,
    height_px: u32,
    frames: u32,
    written: u32,
    gif_delay_cs: u16,
    rgba: Vec<u8>,
}

impl<W: Write> std::fmt::Debug for AnimationEncoder<W> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("AnimationEncoder")
            .field("width_px", &self.width_px)
            .field("height_px", &self.height_px)
            .field("frames", &self.frames)
            .field("written", &self.written)
            .finish_non_exhaustive()
    }
}

fn gif_err(e: gif::EncodingError) -> RenderError {
    RenderError::Write(format!("GIF: {e}"))
}

fn png_err(e: png::EncodingError) -> RenderError {
    RenderError::Png(e.to_string())
}

/// APNG frame delay as a fraction of a second.
fn apng_delay(fps: f64) -> (u16, u16) {
    if fps.fract() == 0.0 && fps >= 1.0 {
        (1, fps as u16)
    } else {
        ((1000.0 / fps).round().clamp(1.0, 65535.0) as u16, 1000)
    }
}

impl<W: Write> AnimationEncoder<W> {
    /// Starts an animation of `frames` frames of `width_px x height_px` at `fps`, looping
    /// forever, written to `out`.
    pub fn new(
        format: AnimationFormat,
        width_px: u32,
        height_px: u32,
        frames: u32,
        fps: f64,
        out: W,
    ) -> Result<AnimationEncoder<W>> {
        check_animation(width_px, height_px, frames, fps)?;
        let inner = match format {
            AnimationFormat::Gif => {
                let mut e = gif::Encoder::new(out, width_px as u16, height_px as u16, &[])
                    .map_err(gif_err)?;
                e.set_repeat(gif::Repeat::Infinite).map_err(gif_err)?;
                Inner::Gif(e)
            }
            AnimationFormat::Apng => {
                let mut e = png::Encoder::new(out, width_px, height_px);
                e.set_color(png::ColorType::Rgba);
                e.set_depth(png::BitDepth::Eight);
                e.set_animated(frames, 0).map_err(png_err)?;
                let (num, den) = apng_delay(fps);
                e.set_frame_delay(num, den).map_err(png_err)?;
                Inner::Apng(e.write_header().map_err(png_err)?)
            }
        };
        Ok(AnimationEncoder {
            inner,
            width_px,
            height_px,
            frames,
            written: 0,
            gif_delay_cs: (100.0 / fps).round().clamp(2.0, 65535.0) as u16,
            rgba: Vec::new(),
        })
    }

    /// Compresses and writes the next frame.
    pub fn add_frame(&mut self, image: &Image) -> Result<()> {
        if image.width != self.width_px
            || image.height != self.height_px
            || image.pixels.len() != image.width as usize * image.height as usize
        {
            return Err(RenderError::ImageSize {
                width: image.width,
                height: image.height,
                reason: "every frame must have the animation's size",
            });
        }
        if self.written >= self.frames {
            return Err(RenderError::Animation(format!(
                "more frames than the {} declared",
                self.frames
            )));
        }
        image.rgba_bytes_into(&mut self.rgba);
        match &mut self.inner {
            Inner::Gif(e) => {
                // Opaque frames: the figure has no transparency to keep.
                for px in self.rgba.chunks_exact_mut(4) {
                    px[3] = 255;
                }
                let mut frame = gif::Frame::from_rgba_speed(
                    self.width_px as u16,
                    self.height_px as u16,
                    &mut self.rgba,
                    10,
                );
                frame.delay = self.gif_delay_cs;
                e.write_frame(&frame).map_err(gif_err)?;
            }
            Inner::Apng(w) => w.write_image_data(&self.rgba).map_err(png_err)?,
        }
        self.written += 1;
        Ok(())
    }

    /// Frames added so far.
    pub fn frames_written(&self) -> u32 {
        self.written
    }

    /// Ends the file. Fails when fewer frames than declared were added.
    pub fn finish(self) -> Result<()> {
        if self.written != self.frames {
            return Err(RenderError::Animation(format!(
                "{} of {} frames written",
                self.written, self.frames
            )));
        }
        match self.inner {
            Inner::Gif(e) => {
                let mut w = e.into_inner().map_err(gif_err)?;
                w.flush().map_err(|e| RenderError::Write(e.to_string()))
            }
            Inner::Apng(w) => w.finish().map_err(png_err),
        }
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;
    use crate::color::Color;

    fn frames() -> Vec<Image> {
        (0..3)
            .map(|i| {
                let mut img = Image::new(32, 20, Color::rgb(10, 20, 30));
                for x in 0..32 {
                    img.set(x, 5 + i * 4, Color::rgb(250, 200, 0));
                }
                img
            })
            .collect()
    }

    fn encode(format: AnimationFormat) -> Vec<u8> {
        let mut out = Vec::new();
        let mut e = AnimationEncoder::new(format, 32, 20, 3, 12.0, &mut out).unwrap();
        for f in frames() {
            e.add_frame(&f).unwrap();
        }
        e.finish().unwrap();
        out
    }

    #[test]
    fn apng_decodes_with_every_frame() {
        let bytes = encode(AnimationFormat::Apng);
        let dec = png::Decoder::new(std::io::Cursor::new(&bytes));
        let mut reader = dec.read_info().unwrap();
        let actl = reader.info().animation_control.unwrap();
        assert_eq!((actl.num_frames, actl.num_plays), (3, 0));
        let mut buf = vec![0; reader.output_buffer_size().unwrap()];
        let mut seen = 0;
        while reader.next_frame(&mut buf).is_ok() {
            let row = 5 + seen * 4;
            let i = (row * 32) as usize * 4;
            assert_eq!(&buf[i..i + 3], &[250, 200, 0], "frame {seen}");
            seen += 1;
        }
        assert_eq!(seen, 3);
        assert_eq!(bytes, encode(AnimationFormat::Apng), "not deterministic");
    }

    #[test]
    fn gif_has_three_frames_with_the_delay() {
        let bytes = encode(AnimationFormat::Gif);
        let mut opts = gif::DecodeOptions::new();
        opts.set_color_output(gif::ColorOutput::RGBA);
        let mut d = opts.read_info(std::io::Cursor::new(&bytes)).unwrap();
        let mut n = 0;
        while let Some(f) = d.read_next_frame().unwrap() {
            assert_eq!(f.delay, 8); // 100 / 12 fps, rounded
            n += 1;
        }
        assert_eq!(n, 3);
        assert_eq!(bytes, encode(AnimationFormat::Gif), "not deterministic");
    }

    #[test]
    fn wrong_counts_and_sizes_are_errors() {
        let mut out = Vec::new();
        assert!(AnimationEncoder::new(AnimationFormat::Gif, 32, 20, 0, 12.0, &mut out).is_err());
        assert!(AnimationEncoder::new(AnimationFormat::Gif, 32, 20, 2, 1e9, &mut out).is_err());
        assert!(
            AnimationEncoder::new(AnimationFormat::Apng, 99_999, 20, 2, 10.0, &mut out).is_err()
        );
        let mut e =
            AnimationEncoder::new(AnimationFormat::Apng, 32, 20, 2, 10.0, &mut out).unwrap();
        assert!(e.add_frame(&Image::new(31, 20, Color::BLACK)).is_err());
        e.add_frame(&frames()[0]).unwrap();
        assert!(e.finish().unwrap_err().to_string().contains("1 of 2"));
    }
}
