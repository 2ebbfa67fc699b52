//! Figures: the same look at every size (edge energy of a 4K export box-filtered to 720p
//! against the 720p export), a layout where nothing overlaps, the light theme's white
//! background, SVG that a real SVG renderer (resvg) parses and draws like the PNG, and
//! deterministic animations.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

#[path = "../../render/tests/support/resvg_render.rs"]
mod resvg_render;

mod common;

use spinfall_render::{Color, Figure, FigureSize, Image, ThemeKind};
use spinfall_scene::{FigureOptions, Output, ViewOptions, Views, build_figure};

use common::{demo_map_view, demo_run};
use resvg_render::render_svg;

fn pixels(w: u32, h: u32) -> FigureSize {
    FigureSize::Pixels {
        width_px: w,
        height_px: h,
    }
}

/// Sum of absolute differences between horizontally and vertically neighbouring pixels over
/// the RGB channels: how much "ink" of edges (text, lines, facets) an image has.
fn edge_energy(img: &Image) -> f64 {
    let mut e = 0u64;
    let px = |x: u32, y: u32| img.get(x, y).unwrap_or_default();
    let d = |a: Color, b: Color| {
        (a.r as i64 - b.r as i64).unsigned_abs()
            + (a.g as i64 - b.g as i64).unsigned_abs()
            + (a.b as i64 - b.b as i64).unsigned_abs()
    };
    for y in 0..img.height {
        for x in 0..img.width {
            if x + 1 < img.width {
                e += d(px(x, y), px(x + 1, y));
            }
            if y + 1 < img.height {
                e += d(px(x, y), px(x, y + 1));
            }
        }
    }
    e as f64
}

/// Mean of `factor x factor` blocks.
fn box_filter(img: &Image, factor: u32) -> Image {
    let (w, h) = (img.width / factor, img.height / factor);
    let mut out = Image::new(w, h, Color::BLACK);
    let n = factor * factor;
    for y in 0..h {
        for x in 0..w {
            let mut acc = [0u32; 3];
            for sy in 0..factor {
                for sx in 0..factor {
                    let c = img
                        .get(x * factor + sx, y * factor + sy)
                        .unwrap_or_default();
                    acc[0] += c.r as u32;
                    acc[1] += c.g as u32;
                    acc[2] += c.b as u32;
                }
            }
            out.set(
                x,
                y,
                Color::rgb(
                    ((acc[0] + n / 2) / n) as u8,
                    ((acc[1] + n / 2) / n) as u8,
                    ((acc[2] + n / 2) / n) as u8,
                ),
            );
        }
    }
    out
}

fn figure(size: FigureSize, theme: ThemeKind, output: Output) -> Figure {
    let (view, reports) = demo_map_view();
    let opts = ViewOptions {
        map: Some(spinfall_dynamics::surface_map::SurfaceField::Slope),
        theme,
        ..ViewOptions::default()
    };
    let fig = FigureOptions {
        size,
        output,
        ..FigureOptions::default()
    };
    build_figure(&view, &reports, 3600.0, &opts, &fig).unwrap()
}

#[test]
fn a_4k_figure_box_filtered_to_720p_has_the_edge_energy_of_the_720p_figure() {
    // The issue's acceptance figure: ratio within 0.75-1.35 (it was 0.43 when text and lines
    // kept their pixel sizes).
    for theme in ThemeKind::ALL {
        let small = figure(pixels(1280, 720), theme, Output::Raster).to_image();
        let big = figure(pixels(3840, 2160), theme, Output::Raster).to_image();
        let ratio = edge_energy(&box_filter(&big, 3)) / edge_energy(&small);
        if std::env::var_os("SPINFALL_SAVE_FIGURES").is_some() {
            let save = |name: &str, img: &Image| {
                let f = std::fs::File::create(format!("/tmp/v/{name}.png")).unwrap();
                spinfall_render::encode_png(img, &[], f).unwrap();
            };
            save(&format!("small_{}", theme.name()), &small);
            save(&format!("big_{}", theme.name()), &big);
        }
        eprintln!("{theme:?}: edge energy ratio {ratio:.3}");
        assert!(
            (0.75..=1.35).contains(&ratio),
            "{theme:?}: edge energy ratio {ratio:.3}"
        );
    }
}

#[test]
fn decorations_never_overlap_each_other_or_the_views_and_stay_inside() {
    // Pixel sizes from small to 4K, and printed sizes: a double-column figure (180 mm) with
    // both views, a single-column one (3.5 in) with one view.
    let cases = [
        (pixels(1280, 720), Views::Both),
        (pixels(640, 360), Views::Both),
        (pixels(3840, 2160), Views::Both),
        (pixels(900, 900), Views::Both),
        (pixels(900, 900), Views::BodyFixed),
        (
            FigureSize::parse("180x100mm", Some(300.0)).unwrap(),
            Views::Both,
        ),
        (
            FigureSize::parse("7x3in", Some(150.0)).unwrap(),
            Views::Both,
        ),
        (
            FigureSize::parse("3.5x2.5in", Some(150.0)).unwrap(),
            Views::Inertial,
        ),
    ];
    for (size, views) in cases {
        {
            let (view, reports) = demo_map_view();
            let opts = ViewOptions {
                map: Some(spinfall_dynamics::surface_map::SurfaceField::Geopotential),
                ..ViewOptions::default()
            };
            let fig = FigureOptions {
                size,
                views,
                supersample: 1,
                ..FigureOptions::default()
            };
            let f = build_figure(&view, &reports, 1000.0, &opts, &fig).unwrap();
            let names: Vec<&str> = f.regions.iter().map(|r| r.name.as_str()).collect();
            for must in ["view 1", "title 1", "time stamp", "colour bar", "legend"] {
                assert!(names.contains(&must), "{size}: no {must} in {names:?}");
            }
            for (i, a) in f.regions.iter().enumerate() {
                let r = a.rect;
                assert!(
                    r.x_px >= 0.0
                        && r.y_px >= 0.0
                        && r.x_px + r.width_px <= f.width_px as f32
                        && r.y_px + r.height_px <= f.height_px as f32,
                    "{size}: {} {:?} leaves the figure",
                    a.name,
                    r
                );
                for b in &f.regions[i + 1..] {
                    assert!(
                        !a.rect.overlaps(&b.rect),
                        "{size}: {} {:?} overlaps {} {:?}",
                        a.name,
                        a.rect,
                        b.name,
                        b.rect
                    );
                }
            }
        }
    }
}

#[test]
fn a_figure_too_small_for_its_decorations_is_an_error_not_a_mess() {
    let (view, reports) = demo_map_view();
    let opts = ViewOptions {
        map: Some(spinfall_dynamics::surface_map::SurfaceField::Slope),
        ..ViewOptions::default()
    };
    // A tall, very narrow figure leaves no room beside the colour bar panel.
    let fig = FigureOptions {
        size: pixels(120, 900),
        ..FigureOptions::default()
    };
    match build_figure(&view, &reports, 0.0, &opts, &fig) {
        Ok(f) => panic!("a 120 x 900 figure was laid out: {:?}", f.regions),
        Err(err) => assert!(err.to_string().contains("too small"), "{err}"),
    }
}

#[test]
fn light_theme_has_a_white_background_and_dark_text() {
    let f = figure(pixels(640, 360), ThemeKind::Light, Output::Raster);
    assert_eq!(f.background, Color::WHITE);
    let img = f.to_image();
    // The corners are background; the title row has near-black text pixels.
    for (x, y) in [(0, 0), (639, 0), (0, 359), (639, 359)] {
        assert_eq!(img.get(x, y), Some(Color::WHITE), "corner {x},{y}");
    }
    let title = f.regions.iter().find(|r| r.name == "title 1").unwrap().rect;
    let dark = (title.y_px as u32..(title.y_px + title.height_px) as u32)
        .flat_map(|y| {
            (title.x_px as u32..(title.x_px + title.width_px) as u32).map(move |x| (x, y))
        })
        .filter(|&(x, y)| {
            img.get(x, y)
                .is_some_and(|c| c.r < 80 && c.g < 80 && c.b < 80)
        })
        .count();
    assert!(dark > 20, "only {dark} dark text pixels in the title");
}

/// Mean absolute difference per channel (0-255) between two images of one size.
fn mean_abs_diff(a: &Image, b: &Image) -> f64 {
    assert_eq!((a.width, a.height), (b.width, b.height));
    let s: u64 = a
        .pixels
        .iter()
        .zip(&b.pixels)
        .map(|(p, q)| {
            (p.r as i64 - q.r as i64).unsigned_abs()
                + (p.g as i64 - q.g as i64).unsigned_abs()
                + (p.b as i64 - q.b as i64).unsigned_abs()
        })
        .sum();
    s as f64 / (3.0 * a.pixels.len() as f64)
}

#[test]
fn svg_output_parses_and_renders_like_the_png_in_resvg() {
    for theme in ThemeKind::ALL {
        let f = figure(pixels(960, 540), theme, Output::Vector);
        let svg = spinfall_render::svg_string(&f).unwrap();
        // Vectors, not only an image: traces as polylines, text as text, markers as shapes.
        assert!(svg.matches("<polyline").count() > 20, "few polylines");
        assert!(svg.contains(">Body-fixed frame</text>"));
        assert!(svg.contains("<image "));
        assert!(svg.contains("ColorRange: Slope (deg)"));
        let drawn = render_svg(&svg);
        let raster = figure(pixels(960, 540), theme, Output::Raster).to_image();
        let diff = mean_abs_diff(&drawn, &raster);
        if std::env::var_os("SPINFALL_SAVE_FIGURES").is_some() {
            let f = std::fs::File::create(format!("/tmp/v/svg_{}.png", theme.name())).unwrap();
            spinfall_render::encode_png(&drawn, &[], f).unwrap();
        }
        eprintln!("{theme:?}: SVG (resvg) vs PNG mean difference {diff:.2} / 255");
        assert!(
            diff < 4.0,
            "{theme:?}: SVG and PNG differ by {diff:.2} on average"
        );
        // The title is there in resvg's drawing too (text rendered with the bundled font).
        let title = f.regions.iter().find(|r| r.name == "title 1").unwrap().rect;
        let bg = f.background;
        let ink = (title.y_px as u32..(title.y_px + title.height_px) as u32)
            .flat_map(|y| {
                (title.x_px as u32..(title.x_px + title.width_px) as u32).map(move |x| (x, y))
            })
            .filter(|&(x, y)| drawn.get(x, y).is_some_and(|c| c != bg))
            .count();
        assert!(ink > 50, "{theme:?}: title not drawn by resvg ({ink} px)");
    }
}

#[test]
fn physical_sizes_are_written_into_the_svg_in_millimetres() {
    let size = FigureSize::parse("120x80mm", Some(200.0)).unwrap();
    let f = figure(size, ThemeKind::Light, Output::Vector);
    let svg = spinfall_render::svg_string(&f).unwrap();
    // 120 mm at 200 dpi = 944.9 px, rounded to 945; the SVG keeps the size asked for.
    assert!(
        svg.contains(r#"width="120.00mm" height="80.00mm""#),
        "{}",
        &svg[..300]
    );
    assert_eq!(f.width_px, 945);
}

#[test]
fn animations_of_the_built_in_example_are_deterministic() {
    use spinfall_render::AnimationFormat;
    use spinfall_scene::{AnimationSettings, write_animation};
    use std::sync::atomic::AtomicBool;
    let (view, reports) = demo_run();
    let opts = ViewOptions::default();
    let fig = FigureOptions {
        size: pixels(320, 180),
        supersample: 1,
        ..FigureOptions::default()
    };
    let settings = AnimationSettings {
        frames: 4,
        fps: 8.0,
        from_s: 0.0,
        to_s: 3000.0,
    };
    for format in [AnimationFormat::Gif, AnimationFormat::Apng] {
        let make = || {
            let mut out = Vec::new();
            let calls = std::sync::Mutex::new(Vec::new());
            write_animation(
                &view,
                &reports,
                &opts,
                &fig,
                &settings,
                format,
                &mut out,
                &|d, t| calls.lock().unwrap().push((d, t)),
                &AtomicBool::new(false),
            )
            .unwrap();
            assert_eq!(calls.into_inner().unwrap().last(), Some(&(4, 4)));
            out
        };
        let (a, b) = (make(), make());
        assert!(a.len() > 1000);
        assert_eq!(a, b, "{format:?} bytes differ between two runs");
        // Frames differ from each other (the particles move).
        if format == AnimationFormat::Apng {
            let mut r = png::Decoder::new(std::io::Cursor::new(&a))
                .read_info()
                .unwrap();
            let mut buf = vec![0; r.output_buffer_size().unwrap()];
            r.next_frame(&mut buf).unwrap();
            let first = buf.clone();
            r.next_frame(&mut buf).unwrap();
            assert_ne!(first, buf, "frames 0 and 1 are identical");
        }
    }
    // Cancel stops the job with an error, not a partial success.
    let cancel = AtomicBool::new(true);
    let err = write_animation(
        &view,
        &reports,
        &opts,
        &fig,
        &settings,
        AnimationFormat::Gif,
        Vec::new(),
        &|_, _| {},
        &cancel,
    )
    .unwrap_err();
    assert_eq!(err, spinfall_scene::SceneError::Cancelled);
}
