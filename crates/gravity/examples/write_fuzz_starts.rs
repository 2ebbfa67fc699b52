//! Writes the starting inputs of the PLY and STL fuzz targets into the folder given (default
//! `crates/fuzz/corpus`): a box and a tetrahedron in every encoding, and a few broken files.
#![allow(clippy::unwrap_used, clippy::expect_used, reason = "a developer tool")]
use spinfall_gravity::{LengthUnit, generate};

fn main() {
    let dir = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "crates/fuzz/corpus".into());
    let boxm = generate::box_mesh(2.0, 1.0, 0.5);
    let ico = generate::icosphere(1.0, 1);
    let m = LengthUnit::Metre;
    let write = |name: &str, bytes: &[u8]| std::fs::write(format!("{dir}/{name}"), bytes).unwrap();
    write(
        "ply/start-box-ascii.ply",
        generate::to_ply_ascii(&boxm, m, "box").as_bytes(),
    );
    write(
        "ply/start-box-le.ply",
        &generate::to_ply_binary(&boxm, m, "box", false),
    );
    write(
        "ply/start-ico-be.ply",
        &generate::to_ply_binary(&ico, m, "ico", true),
    );
    write(
        "ply/start-cube-quads-extra.ply",
        b"ply\nformat ascii 1.0\nelement vertex 8\nproperty float x\nproperty float y\n\
property float z\nproperty uchar red\nelement face 6\nproperty list uchar int vertex_indices\n\
element edge 1\nproperty int a\nproperty int b\nend_header\n0 0 0 1\n1 0 0 1\n1 1 0 1\n\
0 1 0 1\n0 0 1 1\n1 0 1 1\n1 1 1 1\n0 1 1 1\n4 0 3 2 1\n4 4 5 6 7\n4 0 1 5 4\n4 1 2 6 5\n\
4 2 3 7 6\n4 3 0 4 7\n0 1\n",
    );
    write(
        "ply/start-float-indices.ply",
        b"ply\nformat ascii 1.0\nelement vertex 3\nproperty float x\nproperty float y\n\
property float z\nelement face 1\nproperty list uchar float vertex_indices\nend_header\n\
0 0 0\n1 0 0\n0 1 0\n3 0 1 2\n",
    );
    write(
        "stl/start-box-ascii.stl",
        generate::to_stl_ascii(&boxm, m, "box").as_bytes(),
    );
    write(
        "stl/start-ico-binary.stl",
        &generate::to_stl_binary(&ico, m, "solid ico"),
    );
    let mut short = generate::to_stl_binary(&boxm, m, "box");
    short.truncate(short.len() - 7);
    write("stl/start-box-count-mismatch.stl", &short);
}
