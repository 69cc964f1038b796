//! Argument groups shared by the commands: each flag is defined and documented once,
//! here, and flattened into every command that takes it.

use clap::{Args, ValueEnum};
use std::path::PathBuf;

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
    /// further out, sectors where a plan file has them (see `ringsum plan`); fast, with an
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

/// Picture format of the audit's plots.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum PlotFormatArg {
    Png,
    Svg,
}

/// The DEMs and the stations.
#[derive(Debug, Clone, Default, Args)]
pub struct InputArgs {
    /// DEM raster (GeoTIFF, ASCII grid or any single-band raster GDAL reads), north-up, in
    /// a projected CRS in metres or a geographic CRS in degrees; nodata is honoured. Give
    /// it again for more DEMs, in any CRS and any order (they are put finest first; each
    /// place is integrated from the finest DEM with data there): tiles of one grid side by
    /// side are joined into one DEM, a finer DEM inside a coarser one takes its place
    /// there, and nodata in one is filled from the next. Only the part the stations'
    /// discs need is read.
    #[arg(long, value_name = "PATH", required = true, help_heading = "Input")]
    pub dem: Vec<PathBuf>,

    /// Station file: a text table with a header (CSV; semicolon, tab or space separated;
    /// `#` comment lines), or a point layer GDAL reads (GeoPackage, Shapefile, GeoJSON,
    /// FlatGeobuf: positions and CRS from the layer). Columns are found by common names
    /// (station/id/name, x/east/easting, y/north/northing, elev/elevation/z/h; lon/lat
    /// imply EPSG:4326) or named with the --*-col options. Needed by correct, sweep and
    /// audit; map uses it for --extent stations and to mark the stations, plan to measure
    /// the cost on them and to size the DEM windows.
    #[arg(long, value_name = "PATH", help_heading = "Input")]
    pub stations: Option<PathBuf>,

    /// CRS of the station coordinates (EPSG code such as EPSG:4326, or a PROJ string);
    /// default: the finest DEM's CRS. Heights are used as given.
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
    /// Name of the station-height column (m, same vertical datum as the DEMs).
    #[arg(long, value_name = "NAME", help_heading = "Input")]
    pub elev_col: Option<String>,

    /// Field separator of a text station file: comma, semicolon, tab or space (runs of
    /// spaces). Default: found from the header line.
    #[arg(long, value_name = "SEP", help_heading = "Input")]
    pub delimiter: Option<String>,

    /// Character encoding of a text station file: utf-8 (default) or latin-1.
    #[arg(long, value_name = "NAME", help_heading = "Input")]
    pub encoding: Option<String>,

    /// Leave the station file's own other columns (line, date, operator, ...) out of the
    /// per-station tables; by default they are carried, unchanged, after ringsum's.
    #[arg(long, help_heading = "Output")]
    pub drop_station_columns: bool,

    /// Value that marks missing data in DEMs that declare no nodata value (e.g. -32768):
    /// cells holding it are nodata. A DEM without a declared nodata whose cells hold such
    /// a mark is refused until it is given.
    #[arg(
        long,
        value_name = "VALUE",
        allow_negative_numbers = true,
        help_heading = "Input"
    )]
    pub dem_nodata: Option<f64>,

    /// Accept stations (or map nodes) whose outer radius reaches past the DEMs or into
    /// nodata; their coverage column says how much of the disc had data.
    #[arg(long, help_heading = "Input")]
    pub allow_gaps: bool,
}

/// How a station's surroundings are integrated.
#[derive(Debug, Clone, Args)]
pub struct ZoneArgs {
    /// Outer radius of the correction (m or km; at most 500 km).
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
    /// to the outer radius, integrated as accurately as auto, with a column per zone), or a
    /// FILE.toml plan (see the README).
    #[arg(
        long,
        value_name = "auto|hammer|FILE",
        default_value = "auto",
        help_heading = "Zones"
    )]
    pub zones: String,

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

/// Density, Earth model and water.
#[derive(Debug, Clone, Args)]
pub struct PhysicsArgs {
    /// Terrain density, kg/m3.
    #[arg(
        long,
        value_name = "KG_M3",
        default_value_t = 2670.0,
        allow_negative_numbers = true,
        help_heading = "Physics"
    )]
    pub density: f64,

    /// Column of per-station density, kg/m3: each station's TC and Bouguer correction use
    /// its own density (an empty field takes --density).
    #[arg(long, value_name = "NAME", help_heading = "Physics")]
    pub density_col: Option<String>,

    /// Raster of terrain density, kg/m3 (any CRS GDAL and PROJ know): every prism, block
    /// and sector of the terrain correction takes its own density, sampled at each DEM
    /// cell's centre; the Bouguer correction takes the density under the station. It must
    /// cover every station's disc (else refused, or --allow-gaps).
    #[arg(
        long,
        value_name = "PATH",
        conflicts_with = "density_col",
        help_heading = "Physics"
    )]
    pub density_raster: Option<PathBuf>,

    /// Earth model of the reduction.
    #[arg(long, value_enum, default_value_t = ConventionArg::Spherical, help_heading = "Physics")]
    pub convention: ConventionArg,

    /// Turns water on: DEM cells below the water surface hold water of this density
    /// (kg/m3; 1027 sea, 1000 fresh; 0 treats them as air) instead of air. The DEMs are
    /// then the bottom (with bathymetry); the water's effect is the column tc_water_mgal,
    /// included in tc_mgal.
    #[arg(
        long,
        value_name = "KG_M3",
        allow_negative_numbers = true,
        help_heading = "Physics"
    )]
    pub water_density: Option<f64>,

    /// Water surface: a constant level (m, on the DEMs' datum; default 0, sea level) or a
    /// raster of the lake or sea surface in any CRS (nodata: no water). Needs
    /// --water-density.
    #[arg(
        long,
        value_name = "LEVEL|RASTER",
        allow_hyphen_values = true,
        requires = "water_density",
        help_heading = "Physics"
    )]
    pub water_surface: Option<String>,
}

/// Everything a terrain correction needs: the inputs, the zones, the physics.
#[derive(Debug, Clone, Args)]
pub struct TcArgs {
    #[command(flatten)]
    pub input: InputArgs,
    #[command(flatten)]
    pub zones: ZoneArgs,
    #[command(flatten)]
    pub physics: PhysicsArgs,
}

/// From observed gravity to the complete Bouguer anomaly.
#[derive(Debug, Clone, Default, Args)]
pub struct ReductionArgs {
    /// Column of observed gravity: absolute, in mGal (about 980000). Default: found by
    /// common names (gravity, g_obs, gobs, g, grav, observed_gravity, obs_gravity,
    /// gravity_mgal, g_mgal). With it, the table gains the latitude, each reduction step and
    /// the anomalies; stations with an empty field keep their TC and corrections and get
    /// empty anomalies. Without such a column the table is the TC table alone.
    #[arg(long, value_name = "NAME", help_heading = "Reduction")]
    pub gravity_col: Option<String>,

    /// Column of the geoid undulation N, m. With it the station heights are orthometric
    /// (on the DEMs' datum, as the TC needs) and h = H + N is used for the free-air,
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
}

/// Parallelism and progress.
#[derive(Debug, Clone, Default, Args)]
pub struct RunArgs {
    /// Worker threads (default: one per core; at most 1024).
    #[arg(long, value_name = "N", help_heading = "Performance")]
    pub threads: Option<usize>,

    /// No progress bar or summary on stderr.
    #[arg(long, short, help_heading = "Output")]
    pub quiet: bool,

    /// Where to write the run record (JSON: version, command line, settings, zone plan,
    /// input files with their SHA-256, times, warnings). Default: beside the output,
    /// OUT.run.json; with --out - only when given.
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub record: Option<std::path::PathBuf>,
}

/// The size of a picture.
#[derive(Debug, Clone, Args)]
pub struct PlotSizeArgs {
    /// Size of the pictures in pixels (each side 200 to 8000).
    #[arg(
        long,
        value_name = "WIDTHxHEIGHT",
        default_value = "1000x700",
        help_heading = "Output"
    )]
    pub plot_size: String,
}

/// `ringsum correct`.
#[derive(Debug, Clone, Args)]
pub struct CorrectArgs {
    #[command(flatten)]
    pub tc: TcArgs,
    #[command(flatten)]
    pub reduction: ReductionArgs,
    #[command(flatten)]
    pub run: RunArgs,

    /// Output table: a .csv path, a .gpkg (GeoPackage point layer in the stations' CRS)
    /// or .geojson (points in longitude and latitude), or - for CSV on standard output.
    /// Written to a temporary file and renamed, so a failed run leaves nothing behind.
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub out: PathBuf,
}

/// `ringsum plan`.
#[derive(Debug, Clone, Args)]
pub struct PlanArgs {
    #[command(flatten)]
    pub tc: TcArgs,
    #[command(flatten)]
    pub run: RunArgs,
}

/// `ringsum demo`.
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

/// `ringsum sweep`.
#[derive(Debug, Clone, Args)]
pub struct SweepArgs {
    #[command(flatten)]
    pub tc: TcArgs,
    #[command(flatten)]
    pub run: RunArgs,

    /// Radii of the sweep, increasing, separated by commas (m or km), e.g.
    /// 1km,2km,5km,10km; each at most --outer-radius, which is added at the end. Default:
    /// the E12 series from the inner zone to the outer radius (see below).
    #[arg(
        long,
        value_name = "LIST",
        allow_hyphen_values = true,
        help_heading = "Sweep"
    )]
    pub radii: Option<String>,

    /// Densities to report the TC for as well, kg/m3, separated by commas, e.g.
    /// 2000,2300,2670 (the TC is exactly proportional to a constant density).
    #[arg(
        long,
        value_name = "LIST",
        allow_hyphen_values = true,
        help_heading = "Sweep"
    )]
    pub densities: Option<String>,

    /// Another DEM to run the same sweep with, in place of the finest DEM given with
    /// --dem (the coarser ones stay, but for this file itself if it is one of them);
    /// repeatable. The table gets its TC and its difference from the main run's at every
    /// radius.
    #[arg(long, value_name = "PATH", help_heading = "Sweep")]
    pub compare_dem: Vec<PathBuf>,

    /// Output table: a .csv, .gpkg or .geojson path, or - for CSV on standard output.
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub out: PathBuf,

    /// One row per station as well: final TC, the radii where 95% and 99% of it are
    /// reached, and the TC per density and per DEM at the outer radius (.csv, .gpkg or
    /// .geojson).
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub station_summary: Option<PathBuf>,

    /// Plot of TC against radius, .png or .svg (repeatable, e.g. once of each).
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub plot: Vec<PathBuf>,

    #[command(flatten)]
    pub plot_size: PlotSizeArgs,

    /// Up to this many stations are drawn as one line each; more are drawn as their
    /// median and spread.
    #[arg(long, value_name = "N", default_value_t = 12, help_heading = "Output")]
    pub max_lines: usize,
}

/// `ringsum audit`.
#[derive(Debug, Clone, Args)]
pub struct AuditArgs {
    #[command(flatten)]
    pub tc: TcArgs,
    #[command(flatten)]
    pub run: RunArgs,

    /// Per-station report: a .csv, .gpkg or .geojson path, or - for CSV on standard
    /// output (the summary then goes to standard error).
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub out: PathBuf,

    /// Column of the station file holding an earlier (legacy) TC in mGal; default: the
    /// first common name found (see below). The new TC is then computed and compared.
    #[arg(long, value_name = "NAME", help_heading = "Legacy")]
    pub legacy_col: Option<String>,

    /// Leave stations whose legacy value is empty or not a number out of the comparison
    /// (they are listed, and flagged bad_legacy); without it such lines stop the audit.
    #[arg(long, help_heading = "Legacy")]
    pub skip_bad_legacy: bool,

    /// Flag stations whose height differs from the DEM's by more than this (m or km).
    #[arg(
        long,
        value_name = "LENGTH",
        default_value = "5m",
        allow_hyphen_values = true,
        help_heading = "Checks"
    )]
    pub mismatch_threshold: String,

    /// Flag pairs of stations closer than this horizontally (m or km; 0 flags only
    /// stations at the same position) as near-duplicates.
    #[arg(
        long,
        value_name = "LENGTH",
        default_value = "1m",
        allow_hyphen_values = true,
        help_heading = "Checks"
    )]
    pub duplicate_distance: String,

    /// Folder for the legacy comparison plots (created if missing).
    #[arg(long, value_name = "DIR", help_heading = "Output")]
    pub plots: Option<PathBuf>,

    /// Picture format of the plots.
    #[arg(long, value_enum, default_value_t = PlotFormatArg::Png, help_heading = "Output")]
    pub plot_format: PlotFormatArg,

    #[command(flatten)]
    pub plot_size: PlotSizeArgs,

    /// How many of the largest new-minus-legacy differences the summary lists.
    #[arg(long, value_name = "N", default_value_t = 10, help_heading = "Output")]
    pub worst: usize,
}

/// `ringsum map`.
#[derive(Debug, Clone, Args)]
pub struct MapArgs {
    #[command(flatten)]
    pub tc: TcArgs,
    #[command(flatten)]
    pub run: RunArgs,

    /// Distance between grid nodes: a length (m or km) when the finest DEM is projected, an
    /// angle (arc-seconds, 3s, or degrees, 0.001deg) when it is on longitude and latitude.
    #[arg(
        long,
        value_name = "LENGTH",
        allow_hyphen_values = true,
        help_heading = "Grid"
    )]
    pub spacing: String,

    /// Area of the grid: dem (the finest DEM; with one DEM inset by the outer radius, so
    /// that every node has the whole disc, or whole with --allow-gaps), stations (the
    /// stations' bounding box widened by one spacing), or XMIN,YMIN,XMAX,YMAX in the finest
    /// DEM's CRS.
    #[arg(
        long,
        value_name = "AREA",
        default_value = "dem",
        allow_hyphen_values = true,
        help_heading = "Grid"
    )]
    pub extent: String,

    /// Output grid: a .tif path (GeoTIFF, float32 mGal, the finest DEM's CRS).
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub out: PathBuf,

    /// Preview picture of the grid over a hillshade, with a colour bar (.png).
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub preview: Option<PathBuf>,

    #[command(flatten)]
    pub plot_size: PlotSizeArgs,
}
