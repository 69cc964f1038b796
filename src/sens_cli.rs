//! Command-line definitions of `sweep`, `audit` and `map` (the sensitivity and
//! re-processing commands). They share [`crate::cli`]'s input, physics and run options
//! and live in their own file only so that work on the other commands merges cleanly.

use crate::cli::{exit_status_help, units_help, InputArgs, PhysicsArgs, RunArgs};
use clap::{Args, ValueEnum};
use std::path::PathBuf;

/// Help text after `ringsum sweep --help`.
pub const SWEEP_AFTER_HELP: &str = concat!(
    "\
Table (--out): one row per station and radius: station, radius_m, tc_mgal (TC from the inner
zone out to that radius), remaining_mgal (the part beyond it, up to the outer radius),
coverage (fraction of that disc with DEM data), then tc_rho<D>_mgal per --densities value,
then tc_dem_<NAME>_mgal and diff_dem_<NAME>_mgal (that DEM minus the main one) per
--compare-dem, NAME being the file name without extension (empty at radii inside that DEM's
own inner zone, which it integrates whole: a coarse DEM's inner zone is wider).

Radii: the inner zone's edge, then the E12 series (1, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7,
5.6, 6.8, 8.2 times a power of ten, 12 per decade), then the outer radius, unless --radii is
given; the sweep always ends at --outer-radius. The stations are computed once with the zone
plan cut at these radii: an element (cell, block) counts to the radius its centroid lies
within, so an intermediate value is exact to the size of the blocks there, and the value at
the outer radius is the `correct` value. Radii inside a sector ring (plan files with
method = \"sectors\") move to the ring's nearest edge, since a compartment is integrated whole.

95% and 99%: the first radius from which on the TC stays within 5% (1%) of its final value.

",
    exit_status_help!(),
    "\n\n",
    units_help!()
);

/// Help text after `ringsum audit --help`.
pub const AUDIT_AFTER_HELP: &str = concat!(
    "\
Report (--out), one row per station: station, x, y, elev_m, dem_elev_m, elev_minus_dem_m,
dem_slope_deg, shift_for_mismatch_m (how far the station would have to move on that slope to
explain the height difference), distance_to_dem_edge_m (negative outside), coverage (of the
outer-radius disc), near_stations (other stations within --duplicate-distance),
near_distance_m, problems (codes separated by ';': outside_dem, on_nodata, partial_coverage,
height_mismatch, near_duplicate, bad_legacy). With a legacy column: legacy_tc_mgal, tc_mgal,
new_minus_legacy_mgal. With --zones hammer and per-zone legacy columns legacy_tc_A (the
station zone, 0-2 m) and legacy_tc_B ... legacy_tc_M (Hammer's zones; names case-insensitive):
tc_<Z>_mgal, legacy_tc_<Z>_mgal and diff_<Z>_mgal per zone found.

Legacy column: --legacy-col, else the first of legacy_tc, legacy_tc_mgal, old_tc, old_tc_mgal,
tc_old, tc_old_mgal, tc_legacy, tc_legacy_mgal. Compare like with like: give the legacy
survey's density, outer radius and --convention planar for a classical survey.

Plots (--plots DIR): legacy_scatter (new against legacy TC), legacy_histogram (new minus
legacy), legacy_zones (per-zone differences, hammer preset), as .png or .svg.

Exit status: 0 the report was written (whatever it found); 1 the input was refused (one
sentence on stderr says why, and nothing is written); 2 the command line itself is wrong.

",
    units_help!()
);

/// Help text after `ringsum map --help`.
pub const MAP_AFTER_HELP: &str = concat!(
    "\
Grid: nodes at whole multiples of --spacing inside the extent, each node the centre of its
GeoTIFF cell (so maps of one spacing line up); every node is computed at the DEM's height
there, as a station standing on the terrain. Nodes on nodata, and nodes whose disc lacks
DEM data unless --allow-gaps, are written as nodata (-9999). The GeoTIFF (float32, mGal)
has the DEM's CRS. Grids of more than 200 million nodes are refused with a spacing that fits.

Preview (--preview): the TC in ringsum's colour scale (dark blue to light yellow, lightness
rising with the value) over a hillshade of the DEM (colour times 0.6 + 0.4 x hillshade, sun
from the north-west), the DEM around the grid in grey, stations as circles, and a colour
bar; the picture is --plot-size pixels.

",
    exit_status_help!(),
    "\n\n",
    units_help!()
);

#[derive(Debug, Clone, Args)]
pub struct SweepArgs {
    #[command(flatten)]
    pub input: InputArgs,
    #[command(flatten)]
    pub physics: PhysicsArgs,
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

    /// Another DEM to run the same sweep on (repeatable); the table gets its TC and its
    /// difference from the main DEM's at every radius. Stations must lie on it too.
    #[arg(long, value_name = "PATH", help_heading = "Sweep")]
    pub compare_dem: Vec<PathBuf>,

    /// Output table: a .csv path, or - for standard output.
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub out: PathBuf,

    /// One row per station as well: final TC, the radii where 95% and 99% of it are
    /// reached, and the TC per density and per DEM at the outer radius (.csv).
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub station_summary: Option<PathBuf>,

    /// Plot of TC against radius, .png or .svg (repeatable, e.g. once of each).
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub plot: Vec<PathBuf>,

    /// Size of the plot in pixels.
    #[arg(
        long,
        value_name = "WIDTHxHEIGHT",
        default_value = "1000x700",
        help_heading = "Output"
    )]
    pub plot_size: String,

    /// Up to this many stations are drawn as one line each; more are drawn as their
    /// median and spread.
    #[arg(long, value_name = "N", default_value_t = 12, help_heading = "Output")]
    pub max_lines: usize,
}

/// Picture format of the audit's plots.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum PlotFormatArg {
    Png,
    Svg,
}

#[derive(Debug, Clone, Args)]
pub struct AuditArgs {
    #[command(flatten)]
    pub input: InputArgs,
    #[command(flatten)]
    pub physics: PhysicsArgs,
    #[command(flatten)]
    pub run: RunArgs,

    /// Per-station report: a .csv path, or - for standard output (the summary then goes
    /// to standard error).
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

    /// Size of the plots in pixels.
    #[arg(
        long,
        value_name = "WIDTHxHEIGHT",
        default_value = "900x700",
        help_heading = "Output"
    )]
    pub plot_size: String,

    /// How many of the largest new-minus-legacy differences the summary lists.
    #[arg(long, value_name = "N", default_value_t = 10, help_heading = "Output")]
    pub worst: usize,
}

#[derive(Debug, Clone, Args)]
pub struct MapArgs {
    /// DEM raster (as for `correct`).
    #[arg(long, value_name = "PATH", required = true, help_heading = "Input")]
    pub dem: Vec<PathBuf>,

    /// Station file, for --extent stations and to mark the stations on the preview.
    #[arg(long, value_name = "PATH", help_heading = "Input")]
    pub stations: Option<PathBuf>,

    /// CRS of the station coordinates (as for `correct`).
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
    /// Name of the station-height column.
    #[arg(long, value_name = "NAME", help_heading = "Input")]
    pub elev_col: Option<String>,

    #[command(flatten)]
    pub physics: PhysicsArgs,
    #[command(flatten)]
    pub run: RunArgs,

    /// Distance between grid nodes (m or km).
    #[arg(
        long,
        value_name = "LENGTH",
        allow_hyphen_values = true,
        help_heading = "Grid"
    )]
    pub spacing: String,

    /// Area of the grid: dem (the DEM inset by the outer radius, so that every node has
    /// the whole disc; the whole DEM with --allow-gaps), stations (the stations' bounding
    /// box widened by one spacing), or XMIN,YMIN,XMAX,YMAX in the DEM's CRS (m).
    #[arg(
        long,
        value_name = "AREA",
        default_value = "dem",
        allow_hyphen_values = true,
        help_heading = "Grid"
    )]
    pub extent: String,

    /// Output grid: a .tif path (GeoTIFF, float32 mGal, the DEM's CRS).
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub out: PathBuf,

    /// Preview picture of the grid over a hillshade, with a colour bar (.png).
    #[arg(long, value_name = "PATH", help_heading = "Output")]
    pub preview: Option<PathBuf>,

    /// Size of the preview in pixels.
    #[arg(
        long,
        value_name = "WIDTHxHEIGHT",
        default_value = "1000x800",
        help_heading = "Output"
    )]
    pub plot_size: String,
}
