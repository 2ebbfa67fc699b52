//! `spinfall render` (PNG and SVG, themes, sizes), `animate` (GIF, APNG, frame folders) and
//! `plot` end to end, and their refusals of bad input.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use common::{assert_bad_input, ok_stdout, spinfall};

/// Decodes a PNG file's first frame: width, height and RGBA pixels.
fn decode_png(bytes: &[u8]) -> (u32, u32, Vec<u8>) {
    let mut r = png::Decoder::new(std::io::Cursor::new(bytes))
        .read_info()
        .unwrap();
    let mut buf = vec![0; r.output_buffer_size().unwrap()];
    let info = r.next_frame(&mut buf).unwrap();
    buf.truncate(info.buffer_size());
    (info.width, info.height, buf)
}

#[test]
fn render_writes_light_png_and_svg_figures_with_the_colour_range_in_their_metadata() {
    let dir = tempfile::tempdir().unwrap();
    let png_path = dir.path().join("fig.png");
    let svg_path = dir.path().join("fig.svg");
    for path in [&png_path, &svg_path] {
        ok_stdout(&spinfall(&[
            "render",
            "builtin:example",
            "--out",
            path.to_str().unwrap(),
            "--size",
            "800x450",
            "--theme",
            "light",
            "--time",
            "1800",
            "--map",
            "slope",
            "--color-min",
            "0",
            "--color-max",
            "40",
        ]));
    }
    let bytes = std::fs::read(&png_path).unwrap();
    let (w, h, rgba) = decode_png(&bytes);
    assert_eq!((w, h), (800, 450));
    // White background in the corner.
    assert_eq!(&rgba[..4], &[255, 255, 255, 255]);
    let text = String::from_utf8_lossy(&bytes);
    assert!(
        text.contains("Slope (deg): 0 to 40 (fixed by the user"),
        "no colour range chunk"
    );
    let svg = std::fs::read_to_string(&svg_path).unwrap();
    assert!(svg.starts_with("<?xml") && svg.trim_end().ends_with("</svg>"));
    assert!(svg.contains("<polyline") && svg.contains("data:image/png;base64,"));
    assert!(svg.contains("fixed by the user"));
}

#[test]
fn physical_sizes_set_the_pixel_size_from_the_resolution() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("fig.png");
    ok_stdout(&spinfall(&[
        "render",
        "builtin:example",
        "--out",
        path.to_str().unwrap(),
        "--size",
        "180x100mm",
        "--dpi",
        "150",
        "--fit-body",
    ]));
    // 180 mm = 7.087 in at 150 dpi = 1063 px; 100 mm = 591 px.
    let (w, h, _) = decode_png(&std::fs::read(&path).unwrap());
    assert_eq!((w, h), (1063, 591));
}

#[test]
fn bad_figure_options_are_refused_before_any_work() {
    let dir = tempfile::tempdir().unwrap();
    let out = |name: &str| dir.path().join(name).to_str().unwrap().to_string();
    let png = out("x.png");
    for (args, needles) in [
        (
            vec!["render", "builtin:example", "--out", &png, "--size", "0x0"],
            vec!["0x0", "outside"],
        ),
        (
            vec![
                "render",
                "builtin:example",
                "--out",
                &png,
                "--size",
                "1e9x5",
            ],
            vec!["1e9x5"],
        ),
        (
            vec![
                "render",
                "builtin:example",
                "--out",
                &png,
                "--size",
                "1000000000x500",
            ],
            vec!["outside"],
        ),
        (
            vec![
                "render",
                "builtin:example",
                "--out",
                &png,
                "--size",
                "100x50mm",
                "--dpi",
                "1e9",
            ],
            vec!["dpi"],
        ),
        (
            vec!["render", "builtin:example", "--out", &out("x.pdf")],
            vec!["PDF", ".svg"],
        ),
        (
            vec!["render", "builtin:example", "--out", &out("x.jpg")],
            vec![".png or .svg"],
        ),
        (
            vec![
                "render",
                "builtin:example",
                "--out",
                &png,
                "--theme",
                "sepia",
            ],
            vec!["sepia"],
        ),
        (
            vec![
                "render",
                "builtin:example",
                "--out",
                &png,
                "--color-min",
                "0",
                "--color-max",
                "1",
            ],
            vec!["--map"],
        ),
        (
            vec![
                "animate",
                "builtin:example",
                "--out",
                &out("a.gif"),
                "--frames",
                "0",
            ],
            vec!["0 frames"],
        ),
        (
            vec![
                "animate",
                "builtin:example",
                "--out",
                &out("a.gif"),
                "--frames",
                "100000",
            ],
            vec!["3600"],
        ),
        (
            vec![
                "animate",
                "builtin:example",
                "--out",
                &out("a.gif"),
                "--fps",
                "1e9",
            ],
            vec!["frames per second"],
        ),
        (
            vec![
                "animate",
                "builtin:example",
                "--out",
                &out("a.gif"),
                "--size",
                "8000x4000",
            ],
            vec!["3840"],
        ),
        (
            vec!["animate", "builtin:example", "--out", &out("a.mp4")],
            vec![".gif"],
        ),
        (
            vec![
                "animate",
                "builtin:example",
                "--out",
                &out("a.gif"),
                "--from-s",
                "-5",
            ],
            vec!["from"],
        ),
        (
            vec![
                "plot",
                "builtin:example",
                "--kind",
                "speed",
                "--out",
                &png,
                "--launch",
                "nope",
            ],
            vec!["nope"],
        ),
    ] {
        let res = spinfall(&args);
        assert_bad_input(&res, &needles);
    }
    assert_eq!(
        std::fs::read_dir(dir.path()).unwrap().count(),
        0,
        "files were left behind"
    );
}

#[test]
fn animations_are_written_deterministically_as_gif_apng_and_frames() {
    let dir = tempfile::tempdir().unwrap();
    let run = |out: &std::path::Path| {
        ok_stdout(&spinfall(&[
            "animate",
            "builtin:example",
            "--out",
            out.to_str().unwrap(),
            "--frames",
            "3",
            "--fps",
            "6",
            "--to-s",
            "3000",
            "--size",
            "320x180",
        ]))
    };
    for ext in ["gif", "png"] {
        let (a, b) = (
            dir.path().join(format!("a.{ext}")),
            dir.path().join(format!("b.{ext}")),
        );
        run(&a);
        run(&b);
        let (x, y) = (std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap());
        assert!(x.len() > 1000);
        assert_eq!(x, y, "{ext}: two runs differ");
    }
    // The animated PNG declares its three frames (acTL chunk: frames, plays).
    let apng = std::fs::read(dir.path().join("a.png")).unwrap();
    let at = apng.windows(4).position(|w| w == b"acTL").unwrap();
    assert_eq!(&apng[at + 4..at + 8], &3u32.to_be_bytes());
    // A GIF starts with its signature.
    assert!(
        std::fs::read(dir.path().join("a.gif"))
            .unwrap()
            .starts_with(b"GIF89a")
    );
    // A folder gets numbered frames, the same pixels as the animated PNG's first frame.
    let frames = dir.path().join("frames");
    run(&frames);
    let names: Vec<String> = std::fs::read_dir(&frames)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    for n in ["frame_0000.png", "frame_0001.png", "frame_0002.png"] {
        assert!(names.iter().any(|x| x == n), "{names:?}");
    }
    let first = decode_png(&std::fs::read(frames.join("frame_0000.png")).unwrap());
    assert_eq!(first, decode_png(&apng));
}

#[test]
fn plots_are_written_as_png_and_svg() {
    let dir = tempfile::tempdir().unwrap();
    for (kind, ext) in [
        ("altitude", "png"),
        ("speed", "svg"),
        ("jacobi", "png"),
        ("landing", "svg"),
    ] {
        let path = dir.path().join(format!("{kind}.{ext}"));
        ok_stdout(&spinfall(&[
            "plot",
            "builtin:example",
            "--kind",
            kind,
            "--out",
            path.to_str().unwrap(),
            "--size",
            "640x400",
            "--theme",
            "light",
        ]));
        let bytes = std::fs::read(&path).unwrap();
        if ext == "png" {
            assert_eq!(decode_png(&bytes).0, 640);
        } else {
            let svg = String::from_utf8(bytes).unwrap();
            assert!(svg.contains("<polyline") || svg.contains("<rect"), "{kind}");
            assert!(
                svg.contains("(deg)") || svg.contains("(m/s)"),
                "{kind}: axis titles"
            );
        }
    }
}
