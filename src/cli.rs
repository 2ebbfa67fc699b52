//! Command-line definition.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};
use spinfall_gravity::LengthUnit;
use spinfall_workflow::shard::Shard;

/// Where things go on spinning small bodies: polyhedron gravity, surface maps, particle flights.
///
/// Run with no subcommand to open the desktop app on the built-in demo body (or on SHAPE).
/// Exit codes: 0 success, 2 bad input, 3 a launch failed, 4 output could not be written, 5 no
/// display for the app. Research and planning tool: not flight-certified.
#[derive(Debug, Parser)]
#[command(name = "spinfall", version, args_conflicts_with_subcommands = true)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Option<Command>,
    /// Shape model (OBJ, PLY or STL) to open in the app instead of the demo body.
    pub shape: Option<PathBuf>,
    /// Length unit of the shape file's coordinates.
    #[arg(long, value_enum, default_value_t = UnitArg::Km)]
    pub unit: UnitArg,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Mass properties and validation of a shape model, as JSON.
    Info(InfoArgs),
    /// Gravity field (potential, acceleration, gradient, Laplacian) at points, as JSON lines or CSV.
    Gravity(GravityArgs),
    /// Fly every launch of a scenario; write results.json, results.csv, trajectories.csv and a
    /// manifest into a folder.
    Fly(FlyArgs),
    /// Per-face surface map of a scenario's body (slope, geopotential, ...), as CSV.
    Map(MapArgs),
    /// Equilibrium points of a scenario's spinning body (off the surface), with their linear
    /// stability, as JSON.
    Equilibria(EquilibriaArgs),
    /// Fly a scenario and draw the body-fixed and/or inertial view as a figure (PNG or SVG).
    Render(RenderArgs),
    /// Fly a scenario and write the views over time as an animation (GIF, APNG or PNG frames).
    Animate(AnimateArgs),
    /// Fly a scenario and plot altitude, speed or Jacobi drift against time, or the landing
    /// positions on a latitude/longitude map (PNG or SVG).
    Plot(PlotArgs),
    /// Geopotential of a scenario's body on a plane grid, as CSV, for zero-velocity surfaces
    /// (with --launch or --jacobi, also the region that launch can never reach).
    Slice(SliceArgs),
    /// Landing dispersion statistics of a results.json (mean point, covariance, 50/90/99 %
    /// ellipses, fraction within a radius, per-face density), recomputed from the file alone.
    Stats(StatsArgs),
    /// Merge the shard folders of a run (`fly --shard K/N`) into the files one `fly` would
    /// write, after checking that every shard is present once, complete and of one scenario.
    Merge(MergeArgs),
    /// Write a bash driver script that flies a scenario on a Slurm cluster: a job array of
    /// shards, then a merge job.
    Slurm(SlurmArgs),
}

#[derive(Debug, Args)]
pub struct MergeArgs {
    /// The shard folders (written by `spinfall fly --shard K/N`), every K of 0..N once, in any
    /// order.
    #[arg(required = true, value_name = "DIR")]
    pub shards: Vec<PathBuf>,
    /// Output folder for the merged run (created if missing; nothing is written there unless
    /// every shard checks out).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
}

#[derive(Debug, Args)]
pub struct SlurmArgs {
    /// Scenario file (JSON), or `builtin:example` for the demo scenario.
    pub scenario: String,
    /// Number of shards N: tasks of the job array (1 to 10000, at most the launch count).
    #[arg(long, value_name = "N")]
    pub shards: u32,
    /// Slurm partition of every job.
    #[arg(long, value_name = "P")]
    pub partition: Option<String>,
    /// Time limit of every job, HH:MM:SS (or D-HH:MM:SS).
    #[arg(long, value_name = "HH:MM:SS")]
    pub time: Option<String>,
    /// CPUs of every task (the flights run on this many threads).
    #[arg(long, value_name = "C")]
    pub cpus_per_task: Option<u32>,
    /// Work folder on a file system every node sees: shard-K folders, merged/, logs/, jobs/
    /// (default: ./spinfall-work).
    #[arg(long, value_name = "DIR")]
    pub work_dir: Option<PathBuf>,
    /// Write the script to this file instead of standard output (`-`).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    #[command(flatten)]
    pub limits: LimitArgs,
    #[command(flatten)]
    pub field: FieldArgs,
}

#[derive(Debug, Args)]
pub struct StatsArgs {
    /// A results.json written by `spinfall fly` (it embeds the scenario it ran).
    pub results: PathBuf,
    /// Only this group: a fan or dispersion entry's id, or `ID/k` for one fan member's
    /// dispersion set.
    #[arg(long, value_name = "ID")]
    pub group: Option<String>,
    /// Target latitude, deg (planetocentric; with --target-lon-deg).
    #[arg(
        long,
        value_name = "DEG",
        allow_hyphen_values = true,
        requires = "target_lon_deg",
        conflicts_with = "target_point_m"
    )]
    pub target_lat_deg: Option<f64>,
    /// Target longitude, deg east (with --target-lat-deg).
    #[arg(
        long,
        value_name = "DEG",
        allow_hyphen_values = true,
        requires = "target_lat_deg"
    )]
    pub target_lon_deg: Option<f64>,
    /// Target as a body-frame point X,Y,Z in m (snapped to the nearest surface point).
    #[arg(long, value_name = "X,Y,Z", allow_hyphen_values = true)]
    pub target_point_m: Option<String>,
    /// Radius around the target (default target: each group's mean rest point), m: the
    /// fraction of landed members within it.
    #[arg(long, value_name = "M", allow_hyphen_values = true)]
    pub radius_m: Option<f64>,
    /// The shape model, when it moved since the run (must be the same model).
    #[arg(long, value_name = "PATH")]
    pub shape: Option<PathBuf>,
    /// Output folder for statistics.json and landing_density.csv (with a manifest).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
}

/// A shape model: a path to an OBJ, PLY or STL file, or `builtin:quillon` for the demo body.
#[derive(Debug, Args)]
pub struct ShapeArgs {
    /// Shape model file (OBJ, PLY or STL: ASCII or binary), or `builtin:quillon` for the demo body.
    pub shape: String,
    /// Length unit of the file's coordinates.
    #[arg(long, value_enum, default_value_t = UnitArg::Km)]
    pub unit: UnitArg,
    /// Translate the model so its centre of mass is at the origin.
    #[arg(long)]
    pub recenter: bool,
}

#[derive(Debug, Args)]
pub struct InfoArgs {
    #[command(flatten)]
    pub shape: ShapeArgs,
    /// Bulk density for the inertia tensor in kg m^2 (also reported per unit density).
    #[arg(long, value_name = "KG_M3")]
    pub density: Option<f64>,
}

#[derive(Debug, Args)]
#[command(group(clap::ArgGroup::new("mass_source").required(true).args(["density", "mass", "gm"])))]
#[command(group(clap::ArgGroup::new("field_points").required(true).args(["at", "points"])))]
pub struct GravityArgs {
    #[command(flatten)]
    pub shape: ShapeArgs,
    /// Bulk density, kg/m^3.
    #[arg(long, value_name = "KG_M3")]
    pub density: Option<f64>,
    /// Total mass, kg.
    #[arg(long, value_name = "KG")]
    pub mass: Option<f64>,
    /// Gravitational parameter GM, m^3/s^2.
    #[arg(long, value_name = "M3_S2")]
    pub gm: Option<f64>,
    /// A field point `X,Y,Z` in metres in the shape's frame (repeatable).
    #[arg(long, value_name = "X,Y,Z", allow_hyphen_values = true)]
    pub at: Vec<String>,
    /// CSV file of field points with the header `x_m,y_m,z_m`.
    #[arg(long, value_name = "FILE.csv")]
    pub points: Option<PathBuf>,
    /// Write CSV instead of one JSON object per line.
    #[arg(long)]
    pub csv: bool,
    #[command(flatten)]
    pub field: FieldArgs,
}

/// How the gravity field is evaluated (overrides the scenario's "field" section).
#[derive(Debug, Args)]
pub struct FieldArgs {
    /// `direct`: the exact face and edge sums (the default); `interpolated`: a field built once
    /// per body to the error bound (--max-rel-error) and stored for later runs, then much faster.
    #[arg(long, value_enum, value_name = "METHOD")]
    pub field: Option<FieldArg>,
    /// Bound of the interpolated field's relative acceleration error (fraction of the local
    /// gravity), in [1e-12, 1e-3]; default 1e-9.
    #[arg(long, value_name = "EPS")]
    pub max_rel_error: Option<f64>,
    /// Most memory the interpolated field and its build may take, MB (default 4096).
    #[arg(long, value_name = "MB")]
    pub field_memory_mb: Option<u64>,
    /// Folder of stored interpolated fields (default: $SPINFALL_CACHE_DIR, else the per-user
    /// cache folder, ~/.cache/spinfall).
    #[arg(long, value_name = "DIR")]
    pub cache_dir: Option<PathBuf>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FieldArg {
    Direct,
    Interpolated,
}

/// Limits of a run.
#[derive(Debug, Args)]
pub struct LimitArgs {
    /// Refuse runs with more launches than this (after fans and dispersion sets are expanded);
    /// overrides the scenario's "limits": {"max_launches": N}; default 100000.
    #[arg(long, value_name = "N")]
    pub max_launches: Option<u64>,
}

#[derive(Debug, Args)]
pub struct FlyArgs {
    /// Scenario file (JSON), or `builtin:example` for the demo scenario.
    pub scenario: String,
    /// Output folder (created with its parents if missing). Its files are replaced together
    /// only when all are complete; spinfall-manifest.json lists them with their SHA-256.
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Fly only shard K of N: the launches i with i mod N = K (launch order after fans and
    /// dispersion sets are expanded); no statistics files (`spinfall merge` writes them).
    #[arg(long, value_name = "K/N", value_parser = parse_shard, allow_hyphen_values = true)]
    pub shard: Option<Shard>,
    /// With --shard: do nothing (exit 0) when --out already holds this shard complete, of the
    /// same scenario, software and gravity method, every file matching its manifest.
    #[arg(long, requires = "shard")]
    pub skip_complete: bool,
    #[command(flatten)]
    pub limits: LimitArgs,
    #[command(flatten)]
    pub field: FieldArgs,
}

/// `K/N` for `--shard`.
fn parse_shard(text: &str) -> Result<Shard, String> {
    Shard::parse(text).map_err(|e| e.to_string())
}

#[derive(Debug, Args)]
pub struct MapArgs {
    /// Scenario file (JSON), or `builtin:example` for the demo scenario (launches not needed).
    pub scenario: String,
    /// Output CSV file, or `-` for standard output.
    #[arg(long, value_name = "FILE.csv")]
    pub out: PathBuf,
    #[command(flatten)]
    pub field: FieldArgs,
}

#[derive(Debug, Args)]
pub struct SliceArgs {
    /// Scenario file (JSON), or `builtin:example` for the demo scenario.
    pub scenario: String,
    /// The plane of the body frame: `x=OFFSET`, `y=OFFSET` or `z=OFFSET`, offset in metres.
    #[arg(long, default_value = "z=0", value_name = "AXIS=OFFSET")]
    pub plane: String,
    /// Full width of the square grid, centred on the body's origin, m (default: four times the
    /// body's Brillouin radius).
    #[arg(long, value_name = "M")]
    pub extent_m: Option<f64>,
    /// Cells per side of the grid (values at the cell centres).
    #[arg(long, default_value_t = 200, value_name = "N")]
    pub cells: usize,
    /// Add a `forbidden` column for the Jacobi constant of this launch (its start state).
    #[arg(long, value_name = "ID", conflicts_with = "jacobi")]
    pub launch: Option<String>,
    /// Add a `forbidden` column for this Jacobi constant, m^2/s^2.
    #[arg(long, value_name = "M2_S2", allow_negative_numbers = true)]
    pub jacobi: Option<f64>,
    /// Output CSV file, or `-` for standard output.
    #[arg(long, value_name = "FILE.csv")]
    pub out: PathBuf,
    #[command(flatten)]
    pub field: FieldArgs,
}

#[derive(Debug, Args)]
pub struct EquilibriaArgs {
    /// Scenario file (JSON), or `builtin:example` for the demo scenario (launches not needed).
    pub scenario: String,
    /// Output JSON file, or `-` for standard output.
    #[arg(long, value_name = "FILE.json")]
    pub out: PathBuf,
    /// Most equilibria listed [default: 64].
    #[arg(long, value_name = "N")]
    pub max_points: Option<usize>,
    #[command(flatten)]
    pub field: FieldArgs,
}

/// Size and look of a figure, shared by `render`, `animate` and `plot`.
#[derive(Debug, Args)]
pub struct FigureArgs {
    /// Figure size: `WxH` in pixels (text and lines scale with the shorter side), or a printed
    /// size such as `180x100mm` or `7x4in` (text in points at --dpi).
    #[arg(long, default_value = "1920x1080", value_name = "SIZE")]
    pub size: String,
    /// Print resolution of a size in mm or in, dots per inch [default: 300].
    #[arg(long, value_name = "DPI")]
    pub dpi: Option<f64>,
    /// Colours: dark for screens, light (white background) for print.
    #[arg(long, value_enum, default_value_t = ThemeArg::Dark)]
    pub theme: ThemeArg,
}

#[derive(Debug, Args)]
pub struct RenderArgs {
    /// Scenario file (JSON), or `builtin:example` for the demo scenario (without launches only
    /// the body is drawn).
    pub scenario: String,
    /// Output file: `.png` (raster) or `.svg` (body as an embedded image, traces, markers and
    /// text as vectors), or `-` for a PNG on standard output.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    #[command(flatten)]
    pub limits: LimitArgs,
    #[command(flatten)]
    pub field: FieldArgs,
    #[command(flatten)]
    pub figure: FigureArgs,
    /// Time after launch to show, seconds (default: the end of the longest flight).
    #[arg(long, value_name = "T_S")]
    pub time: Option<f64>,
    /// Which view to draw.
    #[arg(long, value_enum, default_value_t = ViewArg::Both)]
    pub view: ViewArg,
    /// Colour the surface by a map.
    #[arg(long, value_enum)]
    pub map: Option<MapArg>,
    /// Low end of the map's colour range (field unit; with --color-max).
    #[arg(
        long,
        value_name = "VALUE",
        allow_hyphen_values = true,
        requires = "color_max"
    )]
    pub color_min: Option<f64>,
    /// High end of the map's colour range (field unit; with --color-min).
    #[arg(
        long,
        value_name = "VALUE",
        allow_hyphen_values = true,
        requires = "color_min"
    )]
    pub color_max: Option<f64>,
    /// Aim each view at the body and fit the body to it.
    #[arg(long)]
    pub fit_body: bool,
    /// Mark the equilibrium points in the body-fixed view (stable and unstable).
    #[arg(long)]
    pub equilibria: bool,
    /// Draw the zero-velocity curves of this launch (its Jacobi constant at the start) in the
    /// body-fixed view: on the plane of --zero-velocity-plane, on the surface, and its forbidden
    /// region hatched.
    #[arg(long, value_name = "LAUNCH_ID")]
    pub zero_velocity: Option<String>,
    /// The plane of the zero-velocity curves: `x=OFFSET`, `y=OFFSET` or `z=OFFSET` (metres).
    #[arg(long, default_value = "z=0", value_name = "AXIS=OFFSET")]
    pub zero_velocity_plane: String,
    /// Cells per side of the plane grid the curves are drawn from (four Brillouin radii wide).
    #[arg(long, default_value_t = 200, value_name = "N")]
    pub zero_velocity_cells: usize,
}

#[derive(Debug, Args)]
pub struct AnimateArgs {
    /// Scenario file (JSON), or `builtin:example` for the demo scenario.
    pub scenario: String,
    /// Output: `.gif`, `.png` (animated PNG), or a folder for `frame_0000.png`, ... (created
    /// if missing; a path ending in `/` or without an extension is a folder).
    #[arg(long, value_name = "FILE|DIR")]
    pub out: PathBuf,
    #[command(flatten)]
    pub limits: LimitArgs,
    #[command(flatten)]
    pub field: FieldArgs,
    #[command(flatten)]
    pub figure: FigureArgs,
    /// Number of frames (1 to 3600).
    #[arg(long, default_value_t = 48)]
    pub frames: u32,
    /// Frames per second when played (0.1 to 60).
    #[arg(long, default_value_t = 12.0)]
    pub fps: f64,
    /// Time of the first frame after launch, seconds.
    #[arg(
        long,
        value_name = "T0_S",
        default_value_t = 0.0,
        allow_hyphen_values = true
    )]
    pub from_s: f64,
    /// Time of the last frame, seconds (default: the end of the longest flight).
    #[arg(long, value_name = "T1_S", allow_hyphen_values = true)]
    pub to_s: Option<f64>,
    /// Which view to draw.
    #[arg(long, value_enum, default_value_t = ViewArg::Both)]
    pub view: ViewArg,
    /// Colour the surface by a map.
    #[arg(long, value_enum)]
    pub map: Option<MapArg>,
}

#[derive(Debug, Args)]
pub struct PlotArgs {
    /// Scenario file (JSON), or `builtin:example` for the demo scenario.
    pub scenario: String,
    /// What to plot.
    #[arg(long, value_enum)]
    pub kind: PlotKindArg,
    /// Output file: `.png` or `.svg`.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    #[command(flatten)]
    pub limits: LimitArgs,
    #[command(flatten)]
    pub field: FieldArgs,
    #[command(flatten)]
    pub figure: FigureArgs,
    /// Plot only this launch (its id as in the results).
    #[arg(long, value_name = "ID")]
    pub launch: Option<String>,
    /// Surface map behind the landing map.
    #[arg(long, value_enum, default_value_t = MapArg::Slope)]
    pub map: MapArg,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum PlotKindArg {
    /// Altitude above the surface against time.
    Altitude,
    /// Speed against time.
    Speed,
    /// Relative drift of the Jacobi constant against time.
    Jacobi,
    /// Landing positions on a latitude/longitude map of the surface.
    Landing,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ThemeArg {
    Dark,
    Light,
}

impl From<ThemeArg> for spinfall_render::ThemeKind {
    fn from(t: ThemeArg) -> Self {
        match t {
            ThemeArg::Dark => spinfall_render::ThemeKind::Dark,
            ThemeArg::Light => spinfall_render::ThemeKind::Light,
        }
    }
}

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum UnitArg {
    Km,
    M,
}

impl From<UnitArg> for LengthUnit {
    fn from(u: UnitArg) -> Self {
        match u {
            UnitArg::Km => LengthUnit::Kilometre,
            UnitArg::M => LengthUnit::Metre,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ViewArg {
    Body,
    Inertial,
    Both,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum MapArg {
    Slope,
    Geopotential,
    EffectiveG,
    EscapeSpeed,
    /// Landings per m² of each face over the run's landed launches.
    LandingDensity,
}

#[cfg(test)]
mod tests {
    use clap::CommandFactory;

    #[test]
    fn the_command_line_definition_is_consistent() {
        super::Cli::command().debug_assert();
    }
}
