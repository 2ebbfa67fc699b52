//! Renders a demo scene (the invented body "Quillon" as a bumpy sphere with traces) to a PNG.
//!
//! `cargo run -p spinfall-render --example preview --release -- out.png`

use std::sync::Arc;

use nalgebra::{Point3, Vector3};
use spinfall_render::*;

fn main() -> std::result::Result<(), Box<dyn std::error::Error>> {
    let path = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "preview.png".to_string());
    let (positions, triangles) = testing::icosphere(1000.0, 5, 0.08);
    let values: Vec<f64> = triangles
        .iter()
        .map(|t| positions[t[0] as usize][2] as f64)
        .collect();
    let colors = face_colors(&values, -1000.0, 1000.0, Colormap::Viridis);
    let mut mesh = SceneMesh::new(Arc::new(positions), Arc::new(triangles), Color::GREY);
    mesh.colors = FaceColors::PerFace(Arc::new(colors));
    // SMOOTH=1 and WIRE=1 switch to smooth shading and a wireframe overlay.
    if std::env::var("SMOOTH").is_ok() {
        mesh.shading = Shading::Smooth;
    }
    if std::env::var("WIRE").is_ok() {
        mesh.wireframe = Some(Color::rgba(0, 0, 0, 90));
    }
    let mut scene = Scene {
        meshes: vec![mesh],
        light: Light::Sun {
            direction: [1.0, 0.3, 0.6],
        },
        ..Scene::default()
    };
    for k in 0..8 {
        scene.polylines.push(Polyline {
            points: testing::spiral(400, 1400.0 + 60.0 * k as f64, 1.5, -900.0, 900.0, k as f64),
            color: LineColor::Uniform(Color::ORANGE),
            width_px: 1.5,
            dash: if k % 2 == 0 { None } else { Some((8.0, 5.0)) },
            occluded: Occluded::Faint(0.25),
        });
    }
    scene.markers.push(Marker {
        position: [0.0, 0.0, 1080.0],
        shape: MarkerShape::Ring,
        size_px: 14.0,
        color: Color::RED,
        occluded: Occluded::Hidden,
    });
    scene.arrows.push(Arrow {
        from: [0.0, 0.0, -1600.0],
        to: [0.0, 0.0, 1700.0],
        color: Color::CYAN,
        width_px: 2.0,
    });
    scene.overlays = vec![
        Overlay::Text {
            text: "Quillon — body-fixed frame".into(),
            x_px: 12.0,
            y_px: 10.0,
            size_px: 20.0,
            color: Color::WHITE,
            anchor: Anchor::TopLeft,
        },
        Overlay::ColorBar {
            colormap: Colormap::Viridis,
            min: -1000.0,
            max: 1000.0,
            label: "height (m)".into(),
            rect: Rect::new(1180.0, 120.0, 18.0, 300.0),
        },
        Overlay::ScaleBar {
            unit_label: String::new(),
            corner: Corner::BottomLeft,
        },
        Overlay::AxisTriad {
            corner: Corner::BottomRight,
            size_px: 40.0,
        },
        Overlay::Legend {
            entries: vec![
                LegendEntry::new(Color::ORANGE, "trace", Swatch::Line),
                LegendEntry::new(Color::ORANGE, "other frame", Swatch::Dashed),
            ],
            corner: Corner::TopRight,
        },
    ];
    let camera = Camera::perspective(
        1280,
        720,
        Point3::new(4000.0, 2500.0, 1800.0),
        Point3::origin(),
        Vector3::z(),
        35.0,
    );
    let image = render(
        &scene,
        &camera,
        &RenderOptions::new(1280, 720).with_supersample(2),
    );
    let file = std::io::BufWriter::new(std::fs::File::create(&path)?);
    encode_png(&image, &[("body", "Quillon")], file)?;
    println!("wrote {path}");
    Ok(())
}
