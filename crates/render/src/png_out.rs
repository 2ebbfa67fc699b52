//! PNG encoding with text chunks.

use std::io::Write;

use crate::error::{RenderError, Result};
use crate::image::Image;

fn check_keyword(k: &str) -> Result<()> {
    let bad = |reason| {
        Err(RenderError::ChunkKeyword {
            keyword: k.to_string(),
            reason,
        })
    };
    if k.is_empty() || k.chars().count() > 79 {
        return bad("must be 1 to 79 characters long");
    }
    if k.starts_with(' ') || k.ends_with(' ') || k.contains("  ") {
        return bad("no leading, trailing or double spaces allowed");
    }
    if !k
        .chars()
        .all(|c| (' '..='~').contains(&c) || ('\u{a1}'..='\u{ff}').contains(&c))
    {
        return bad("only printable Latin-1 characters are allowed");
    }
    Ok(())
}

/// Encodes `image` as an 8-bit RGBA PNG into `w`, with one text chunk per `(keyword, text)`
/// (tEXt when the text is Latin-1, iTXt otherwise, so any UTF-8 survives).
pub fn encode_png(image: &Image, text_chunks: &[(&str, &str)], w: impl Write) -> Result<()> {
    if image.width == 0 || image.height == 0 {
        return Err(RenderError::ImageSize {
            width: image.width,
            height: image.height,
            reason: "PNG needs at least one pixel",
        });
    }
    if image.pixels.len() != image.width as usize * image.height as usize {
        return Err(RenderError::ImageSize {
            width: image.width,
            height: image.height,
            reason: "pixel buffer length does not match width x height",
        });
    }
    let png_err = |e: png::EncodingError| RenderError::Png(e.to_string());
    let mut enc = png::Encoder::new(w, image.width, image.height);
    enc.set_color(png::ColorType::Rgba);
    enc.set_depth(png::BitDepth::Eight);
    for (k, t) in text_chunks {
        check_keyword(k)?;
        if t.chars().all(|c| (c as u32) < 256 && c != '\0') {
            enc.add_text_chunk(k.to_string(), t.to_string())
                .map_err(png_err)?;
        } else {
            enc.add_itxt_chunk(k.to_string(), t.to_string())
                .map_err(png_err)?;
        }
    }
    let mut writer = enc.write_header().map_err(png_err)?;
    writer
        .write_image_data(&image.as_rgba_bytes())
        .map_err(png_err)?;
    writer.finish().map_err(png_err)
}
