//! Writes the shipped shape models into `<workspace>/shapes/`.
//!
//! Run with `cargo run -p spinfall-gravity --example make_shapes`.

use std::path::PathBuf;

use spinfall_gravity::{LengthUnit, generate};

fn main() -> std::io::Result<()> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../shapes");
    std::fs::create_dir_all(&dir)?;
    for (name, mesh, header) in spinfall_gravity::generate::shipped_shapes() {
        let text = generate::to_obj(&mesh, LengthUnit::Kilometre, header);
        std::fs::write(dir.join(name), text)?;
        println!("wrote shapes/{name}: {} faces", mesh.faces.len());
    }
    Ok(())
}
