//! Writes the shipped shape models into `<workspace>/shapes/` and prints their sizes.
//!
//! Run with `cargo run -p spinfall-gravity --example make_shapes`.

use std::path::PathBuf;

use spinfall_gravity::{LengthUnit, ShapeModel, generate};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../shapes");
    std::fs::create_dir_all(&dir)?;
    for (name, mesh, header) in generate::shipped_shapes() {
        let text = generate::to_obj(&mesh, LengthUnit::Kilometre, header);
        std::fs::write(dir.join(name), text)?;
        let mut lo = [f64::INFINITY; 3];
        let mut hi = [f64::NEG_INFINITY; 3];
        for p in &mesh.vertices_m {
            for k in 0..3 {
                lo[k] = lo[k].min(p[k]);
                hi[k] = hi[k].max(p[k]);
            }
        }
        let faces = mesh.faces.len();
        let (shape, warnings) = ShapeModel::new(mesh)?;
        let mp = shape.mass_properties();
        println!(
            "wrote shapes/{name}: {faces} faces, extent {:.3} x {:.3} x {:.3} km, volume {:.4} km^3, \
             centre of mass ({:.1}, {:.1}, {:.1}) m, warnings {}",
            (hi[0] - lo[0]) / 1e3,
            (hi[1] - lo[1]) / 1e3,
            (hi[2] - lo[2]) / 1e3,
            mp.volume_m3 / 1e9,
            mp.center_of_mass_m.x,
            mp.center_of_mass_m.y,
            mp.center_of_mass_m.z,
            warnings.len()
        );
    }
    Ok(())
}
