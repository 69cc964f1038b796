//! The text after each command's `--help`: what the tables hold, exit statuses, units.

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

/// Help text after `ringsum --help` and the commands without a text of their own.
pub const GENERAL: &str = concat!(exit_status_help!(), "\n\n", units_help!());

/// Help text after `ringsum correct --help`.
pub const CORRECT: &str = concat!(
    "\
Table (--out), one row per station, columns in this order (optional groups only when
they apply): station, x, y, elev_m, dem_elev_m, elev_minus_dem_m, tc_mgal, tc_inner_mgal,
tc_near_mgal, tc_mid_mgal, tc_far_mgal, coverage; then x_dem, y_dem (--stations-crs);
tc_water_mgal (--water-density); tc_inner_field_mgal, tc_inner_dem_mgal (--field-inner-col);
tc_zone_<ZONE>_mgal per zone (--zones hammer or a plan file); dems_inner ... dems_far and
coverage_dem1 ... (several DEMs); density_kg_m3 (--density-col, --density-raster);
latitude_deg, ellipsoidal_height_m (--undulation-col), observed_gravity_mgal,
normal_gravity_mgal, free_air_corr_mgal, atmos_corr_mgal, bouguer_corr_mgal,
free_air_anomaly_mgal, simple_bouguer_anomaly_mgal, complete_bouguer_anomaly_mgal (a
gravity column).

",
    exit_status_help!(),
    "\n\n",
    units_help!()
);

/// Help text after `ringsum sweep --help`.
pub const SWEEP: &str = concat!(
    "\
Table (--out): one row per station and radius: station, radius_m, tc_mgal (TC from the inner
zone out to that radius), remaining_mgal (the part beyond it, up to the outer radius),
coverage (fraction of that disc with DEM data), then tc_rho<D>_mgal per --densities value,
then tc_dem_<NAME>_mgal and diff_dem_<NAME>_mgal (that run minus the main one) per
--compare-dem, NAME being the file name without extension (empty at radii inside that DEM's
own inner zone, which it integrates whole: a coarse DEM's inner zone is wider).

Radii: the inner zone's edge, then the E12 series (1, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7,
5.6, 6.8, 8.2 times a power of ten, 12 per decade), then the outer radius, unless --radii is
given; the sweep always ends at --outer-radius. The stations are computed once with the zone
plan cut at these radii: an element (cell, block) counts to the radius its centroid lies
within, so an intermediate value is exact to the size of the blocks there, and the value at
the outer radius is the `correct` value. Radii inside a sector ring of a plan file move to
the ring's nearest edge, since a compartment is integrated whole.

95% and 99%: the first radius from which on the TC stays within 5% (1%) of its final value.

",
    exit_status_help!(),
    "\n\n",
    units_help!()
);

/// Help text after `ringsum audit --help`.
pub const AUDIT: &str = concat!(
    "\
Report (--out), one row per station: station, x, y, elev_m, dem_elev_m, elev_minus_dem_m,
then with a legacy column legacy_tc_mgal, tc_mgal (the `correct` value),
new_minus_legacy_mgal; then dem_slope_deg, shift_for_mismatch_m (how far the station would
have to move on that slope to explain the height difference), distance_to_dem_edge_m
(negative outside every DEM), coverage (of the outer-radius disc), near_stations (other
stations within --duplicate-distance), near_distance_m, problems (codes separated by ';':
outside_dem, on_nodata, partial_coverage, height_mismatch, near_duplicate, bad_legacy);
x_dem, y_dem (--stations-crs). Columns shared with `correct` come in its order. With --zones
hammer and per-zone legacy columns legacy_tc_A (the station zone, 0-2 m) and legacy_tc_B ...
legacy_tc_M (Hammer's zones; names case-insensitive): tc_zone_<Z>_mgal, legacy_tc_<Z>_mgal and
diff_zone_<Z>_mgal per zone found.

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
pub const MAP: &str = concat!(
    "\
Grid: nodes at whole multiples of --spacing inside the extent, each node the centre of its
GeoTIFF cell (so maps of one spacing line up); every node is computed at the height of the
finest DEM with data there, as a station standing on the terrain, with the same DEMs, plan,
density and water as `correct`. Nodes on nodata, nodes on water with the surface inner
model, and nodes whose disc lacks DEM data unless --allow-gaps, are written as nodata
(-9999). The GeoTIFF (float32, mGal) has the finest DEM's CRS (a lon/lat grid for a
geographic finest DEM, its --spacing then an angle). Grids of more than 200
million nodes are refused with a spacing that fits. Per-station inputs (--density-col,
--field-inner-col) have no value at grid nodes and are refused.

Preview (--preview): the TC in ringsum's colour scale (dark blue to light yellow, lightness
rising with the value) over a hillshade of the finest DEM (colour times 0.6 + 0.4 x
hillshade, sun from the north-west), the DEM around the grid in grey, stations as circles,
and a colour bar; the picture is --plot-size pixels.

",
    exit_status_help!(),
    "\n\n",
    units_help!()
);

/// Help text after `ringsum plan --help`.
pub const PLAN: &str = concat!(
    "\
Prints the zone plan (rings, radii, methods), the elements and the time per station
measured on up to 25 stations of --stations (or on points spread over the finest DEM), and
how much of each DEM those stations need read. Sector rings of a plan file are measured
against the same ring integrated with blocks, and a warning names any whose difference
exceeds max(0.01 mGal, 0.5 %).

",
    exit_status_help!(),
    "\n\n",
    units_help!()
);
