//! Command-line definitions of `sweep`, `audit` and `map` (the sensitivity and
//! re-processing commands). They share [`crate::cli`]'s input, physics and run options
//! and live in their own file only so that work on the other commands merges cleanly.

use crate::cli::{InputArgs, PhysicsArgs, RunArgs};
use clap::Args;
use std::path::PathBuf;

/// Help text after `ringsum sweep --help`.
pub const SWEEP_AFTER_HELP: &str = "\
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
the outer radius is the `correct` value. Radii inside a sector ring (the hammer preset, plan
files) move to the ring's nearest edge, since a compartment is integrated whole.

95% and 99%: the first radius from which on the TC stays within 5% (1%) of its final value.

Exit status: 0 success; 1 the input or a result was refused (one sentence on stderr says why,
and no output file is left behind); 2 the command line itself is wrong.";

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
