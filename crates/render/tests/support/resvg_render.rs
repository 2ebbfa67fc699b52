//! Draws SVG text with resvg (usvg parses it) into an [`Image`], with the bundled font as the
//! only font. Shared by the render and scene crates' tests (`#[path]` module).

use spinfall_render::{Color, Image};

/// Parses and renders `svg`; panics when it does not parse.
pub fn render_svg(svg: &str) -> Image {
    let mut opt = resvg::usvg::Options::default();
    opt.fontdb_mut()
        .load_font_data(include_bytes!("../../../../assets/fonts/DejaVuSans.ttf").to_vec());
    let tree = resvg::usvg::Tree::from_str(svg, &opt).expect("the SVG parses");
    let size = tree.size().to_int_size();
    let mut pixmap =
        resvg::tiny_skia::Pixmap::new(size.width(), size.height()).expect("a non-empty SVG");
    resvg::render(
        &tree,
        resvg::tiny_skia::Transform::default(),
        &mut pixmap.as_mut(),
    );
    let mut img = Image::new(size.width(), size.height(), Color::BLACK);
    for (i, p) in pixmap.pixels().iter().enumerate() {
        let c = p.demultiply();
        img.pixels[i] = Color::rgba(c.red(), c.green(), c.blue(), c.alpha());
    }
    img
}
