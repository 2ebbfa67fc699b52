//! Opens the Spinfall window (for trying the GUI crate on its own; the `spinfall` binary does
//! the same with no subcommand). Optional arguments: a shape model path and `km` or `m`.
fn main() -> anyhow::Result<()> {
    let mut args = std::env::args().skip(1);
    let shape_path = args.next().map(std::path::PathBuf::from);
    let unit = match args.next().as_deref() {
        Some("m") => spinfall_gravity::LengthUnit::Metre,
        _ => spinfall_gravity::LengthUnit::Kilometre,
    };
    spinfall_gui::run(spinfall_gui::GuiOptions { shape_path, unit })
}
