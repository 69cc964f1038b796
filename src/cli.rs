//! The command line: clap definitions, one place for every flag's documentation.
//!
//! Values are checked and turned into typed settings in [`crate::app`]; nothing here
//! touches files.

use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// The exit statuses of every command that writes a result (a literal, for `concat!`).
macro_rules! exit_status_help {
    () => {
        "Exit status: 0 success; 1 the input or a result was refused (one sentence on stderr says
why, and no output file is left behind); 2 the command line itself is wrong."
    };
}

/// The units every command takes and reports (a literal, for `concat!`).
macro_rules! units_help {
    () => {
        "Units: lengths take m or km (166.7km, 500m; a bare number is metres); density in kg/m3;
corrections in mGal, positive where the terrain correction adds to gravity."
    };
}

pub(crate) use {exit_status_help, units_help};

const AFTER_HELP: &str = concat!(exit_status_help!(), "\n\n", units_help!());

/// Gravity terrain corrections from elevation grids.
#[derive(Debug, Parser)]
#[command(name = "ringsum", version, about, long_about = None, after_help = AFTER_HELP, max_term_width = 100)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Per-station terrain correction from a DEM and a station file, and the Bouguer
    /// anomalies when the file has observed gravity.
    #[command(after_help = AFTER_HELP)]
    Correct(Box<CorrectArgs>),
    /// Print the zone plan for a DEM and outer radius, with the measured cost per station.
    #[command(after_help = AFTER_HELP)]
    Plan(PlanArgs),
    /// Run the bundled invented scenario in demo-dem/ end to end: the standard correction
    /// to 166.7 km from its three DEMs (30 m, 3 arc-second lon/lat, 500 m), written as a table.
    #[command(after_help = AFTER_HELP)]
    Demo(DemoArgs),
    /// TC against outer radius, density and DEM: a table per station and radius, and plots.
    #[command(after_help = crate::sens_cli::SWEEP_AFTER_HELP)]
    Sweep(crate::sens_cli::SweepArgs),
    /// Check the inputs before a long run and compare with a legacy TC: report and plots.
    #[command(after_help = crate::sens_cli::AUDIT_AFTER_HELP)]
    Audit(crate::sens_cli::AuditArgs),
    /// TC on a regular grid at terrain height: a GeoTIFF and a PNG preview.
    #[command(after_help = crate::sens_cli::MAP_AFTER_HELP)]
    Map(crate::sens_cli::MapArgs),
}

/// How the Earth's shape enters (see the README, "Conventions").
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ConventionArg {
    /// Bouguer spherical cap to 166.7 km; terrain lowered by the curvature drop s^2/2R.
    Spherical,
    /// Infinite slab on a flat Earth (classical; for comparison with old surveys).
    Planar,
}

/// How the topography is integrated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum MethodArg {
    /// Inner zone, full-resolution prisms near, pyramid blocks with their height statistics
    /// further out, sectors where the plan has them (see `ringsum plan`); fast, with an
    /// error small against the DEM's own.
    Zoned,
    /// Every DEM cell inside the outer radius is a prism (brute force; the reference for
    /// checking a few stations).
    Exact,
}

/// What the cells right around the station are.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum InnerModelArg {
    /// A continuous surface through the station (the bilinear DEM shifted to the station
    /// height, tapered back to the DEM at the inner zone's edge).
    Surface,
    /// Every cell, the station's own included, is a flat-topped prism (pure brute force,
    /// comparable with any prism code).
    Prisms,
}

/// Where the DEM, the stations and their columns come from.
#[derive(Debug, Clone, Args)]
pub struct InputArgs {
    /// DEM raster (GeoTIFF, ASCII grid or any single-band raster GDAL reads), north-up, in
    /// a projected CRS in metres or a geographic CRS in degrees. Nodata is honoured. Give
    /// several (--dem fine.tif --dem regional.tif ...) to integrate each place from the
    /// finest DEM with data there; only the part the stations need is read.
    #[arg(long, value_name = "PATH", required = true, help_heading = "Input")]
    pub dem: Vec<PathBuf>,

    /// Station file: CSV with a header. Columns are found by common names
    /// (station/id/name, x/east/easting, y/north/northing, elev/elevation/z/h; lon/lat
    /// imply EPSG:4326) or named with the --*-col options.
    #[arg(long, value_name = "PATH", help_heading = "Input")]
    pub stations: PathBuf,

    /// CRS of the station coordinates (EPSG code such as EPSG:4326, or a PROJ string);
    /// default: the DEM's CRS. Heights are used as given.
    #[arg(long, value_name = "CRS", help_heading = "Input")]
    pub stations_crs: Option<String>,

    /// Name of the station-id column.
    #[arg(long, value_name = "NAME", help_heading = "Input")]
    pub station_col: Option<String>,
    /// Name of the easting (or longitude) column.
    #[arg(long, value_name = "NAME", help_heading = "Input")]
    pub x_col: Option<String>,
    /// Name of the northing (or latitude) column.
    #[arg(long, value_name = "NAME", help_heading = "Input")]
    pub y_col: Option<String>,
    /// Name of the station-height column (m, same vertical datum as the DEM).
    #[arg(long, value_name = "NAME", help_heading = "Input")]
    pub elev_col: Option<String>,
}

/// The physics and numerics of the correction.
#[derive(Debug, Clone, Args)]
pub struct PhysicsArgs {
    /// Outer radius of the correction (m or km).
    #[arg(
        long,
        value_name = "LENGTH",
        default_value = "166.7km",
        allow_hyphen_values = true,
        help_heading = "Zones"
    )]
    pub outer_radius: String,

    /// Integration method.
    #[arg(long, value_enum, default_value_t = MethodArg::Zoned, help_heading = "Zones")]
    pub method: MethodArg,

    /// Model of the cells around the station (both methods).
    #[arg(long, value_enum, default_value_t = InnerModelArg::Surface, help_heading = "Zones")]
    pub inner_model: InnerModelArg,

    /// Zone plan: auto (measured default), hammer (Hammer's 1939 zones B-M, then continued
    /// to the outer radius, with a column per zone), or a FILE.toml plan (see the README).
    #[arg(
        long,
        value_name = "auto|hammer|FILE",
        default_value = "auto",
        help_heading = "Zones"
    )]
    pub zones: String,

    /// Terrain density, kg/m3.
    #[arg(
        long,
        value_name = "KG_M3",
        default_value_t = 2670.0,
        allow_negative_numbers = true,
        help_heading = "Physics"
    )]
    pub density: f64,

    /// Earth model of the reduction.
    #[arg(long, value_enum, default_value_t = ConventionArg::Spherical, help_heading = "Physics")]
    pub convention: ConventionArg,

    /// Accept stations whose outer radius reaches past the DEM or into nodata; their
    /// coverage column says how much of the disc had data.
    #[arg(long, help_heading = "Input")]
    pub allow_gaps: bool,

    /// Column of field-estimated inner-zone corrections (mGal, at the run's density): for
    /// the stations that have a value, it replaces the DEM's part within
    /// --field-inner-radius; both values are written (tc_inner_field_mgal,
    /// tc_inner_dem_mgal).
    #[arg(
        long,
        value_name = "NAME",
        requires = "field_inner_radius",
        help_heading = "Zones"
    )]
    pub field_inner_col: Option<String>,

    /// Radius the field inner-zone values cover, e.g. 53.3m (the outer edge of Hammer's
    /// zone C).
    #[arg(
        long,
        value_name = "LENGTH",
        requires = "field_inner_col",
        help_heading = "Zones"
    )]
    pub field_inner_radius: Option<String>,
}

/// Reference ellipsoid of normal gravity.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, ValueEnum)]
pub enum EllipsoidArg {
    #[default]
    /// Geodetic Reference System 1980 (the standard of the North American gravity database).
    Grs80,
    /// World Geodetic System 1984 (about 0.14 mGal below GRS80).
    Wgs84,
}

/// Free-air correction formula.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, ValueEnum)]
pub enum FreeAirArg {
    #[default]
    /// (0.3087691 - 0.0004398 sin^2 lat) h - 7.2125e-8 h^2 mGal (Hinze et al. 2005).
    SecondOrder,
    /// 0.3086 h mGal, latitude ignored (classical).
    FirstOrder,
}

/// From observed gravity to the complete Bouguer anomaly, and water bodies.
#[derive(Debug, Clone, Default, Args)]
pub struct ReductionArgs {
    /// Column of observed gravity: absolute, in mGal (about 980000). Default: found by
    /// common names (gravity, g_obs, gobs, g, grav, observed_gravity, obs_gravity,
    /// gravity_mgal, g_mgal). With it, the table gains the latitude, each reduction step and
    /// the anomalies; stations with an empty field keep their TC and corrections and get
    /// empty anomalies. Without such a column the table is the TC table alone.
    #[arg(long, value_name = "NAME", help_heading = "Reduction")]
    pub gravity_col: Option<String>,

    /// Column of per-station density, kg/m3: each station's TC and Bouguer correction use
    /// its own density (an empty field takes --density).
    #[arg(long, value_name = "NAME", help_heading = "Reduction")]
    pub density_col: Option<String>,

    /// Raster of terrain density, kg/m3 (any CRS GDAL and PROJ know): every prism, block
    /// and sector of the terrain correction takes its own density, sampled at each DEM
    /// cell's centre; the Bouguer correction takes the density under the station. It must
    /// cover every station's disc (else refused, or --allow-gaps).
    #[arg(
        long,
        value_name = "PATH",
        conflicts_with = "density_col",
        help_heading = "Reduction"
    )]
    pub density_raster: Option<PathBuf>,

    /// Column of the geoid undulation N, m. With it the station heights are orthometric
    /// (on the DEM's datum, as the TC needs) and h = H + N is used for the free-air,
    /// atmospheric and Bouguer corrections; without it the heights are used as given for
    /// both (taken as ellipsoidal by the reduction).
    #[arg(long, value_name = "NAME", help_heading = "Reduction")]
    pub undulation_col: Option<String>,

    /// Ellipsoid of normal gravity (Somigliana closed form).
    #[arg(long, value_enum, default_value_t = EllipsoidArg::Grs80, help_heading = "Reduction")]
    pub ellipsoid: EllipsoidArg,

    /// Free-air correction.
    #[arg(long, value_enum, default_value_t = FreeAirArg::SecondOrder, help_heading = "Reduction")]
    pub free_air: FreeAirArg,

    /// Turns water on: DEM cells below the water surface hold water of this density
    /// (kg/m3; 1027 sea, 1000 fresh; 0 treats them as air) instead of air. The DEM is then
    /// the bottom (with bathymetry); the water's effect is the column tc_water_mgal,
    /// included in tc_mgal.
    #[arg(
        long,
        value_name = "KG_M3",
        allow_negative_numbers = true,
        help_heading = "Reduction"
    )]
    pub water_density: Option<f64>,

    /// Water surface: a constant level (m, on the DEM's datum; default 0, sea level) or a
    /// raster of the lake or sea surface in the DEM's CRS (nodata: no water). Needs
    /// --water-density.
    #[arg(
        long,
        value_name = "LEVEL|RASTER",
        allow_hyphen_values = true,
        requires = "water_density",
        help_heading = "Reduction"
    )]
    pub water_surface: Option<String>,
}

/// Parallelism and progress.
#[derive(Debug, Clone, Args)]
pub struct RunArgs {
    /// Worker threads (default: one per core).
    #[arg(long, value_name = "N", help_heading = "Performance")]
    pub threads: Option<usize>,

    /// No progress bar or summary on stderr.
    #[arg(long, short, help_heading = "Output")]
    pub quiet: bool,
}

#[derive(Debug, Clone, Args)]
pub struct CorrectArgs {
    #[command(flatten)]
    pub input: InputArgs,
    #[command(flatten)]
    pub physics: PhysicsArgs,
    #[command(flatten)]
    pub reduction: ReductionArgs,
    #[command(flatten)]
    pub run: RunArgs,

    /// Output table: a .csv path, or - for standard output. Written to a temporary file
    /// and renamed, so a failed run leaves nothing behind.
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub out: PathBuf,
}

#[derive(Debug, Clone, Args)]
pub struct PlanArgs {
    /// DEM raster (as for `correct`; several, finest first, with --stations).
    #[arg(long, value_name = "PATH", required = true, help_heading = "Input")]
    pub dem: Vec<PathBuf>,

    /// Station file: the cost is measured on its first 25 stations, and the plan says how
    /// much of each DEM they need read. Needed with several DEMs.
    #[arg(long, value_name = "PATH", help_heading = "Input")]
    pub stations: Option<PathBuf>,

    /// CRS of the station coordinates (as for `correct`).
    #[arg(long, value_name = "CRS", help_heading = "Input")]
    pub stations_crs: Option<String>,

    #[command(flatten)]
    pub physics: PhysicsArgs,

    #[command(flatten)]
    pub run: RunArgs,
}

#[derive(Debug, Clone, Args)]
pub struct DemoArgs {
    /// Folder holding the scenario (default: ./demo-dem, else the one shipped in the source tree).
    #[arg(long, value_name = "DIR")]
    pub data: Option<PathBuf>,

    /// Where the demo writes its table.
    #[arg(long, value_name = "PATH", default_value = "demo-out/tc.csv")]
    pub out: PathBuf,

    #[command(flatten)]
    pub run: RunArgs,
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn clap_definition_is_consistent() {
        Cli::command().debug_assert();
    }
}
