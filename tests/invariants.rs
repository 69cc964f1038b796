//! Invariants that prove the options of the pipeline compose: every command (correct,
//! sweep, audit, map, plan) runs the same pipeline, so the same inputs must give the same
//! terrain correction whatever the DEM set, plan, method, input kind, station order, CRS
//! or thread count around them. Each test proves one invariant on the real DEM fixture
//! (fixtures/jacksboro_utm.tif, 90 m) and on the demo scenario (demo-dem/, synthetic);
//! the last one runs a matrix of option combinations on a tiny synthetic DEM.
//!
//! "The target" below is the engine's accuracy target against a reference value,
//! max(0.01 mGal, 0.5 %) (README, "Accuracy and performance"). Where a test says
//! "identical", the printed values must be the same: the extra input contributes nothing.

#[macro_use]
mod common;

use common::{fixture, ringsum, Csv, TestDir};
use ringsum::dem::read::read_dem;
use ringsum::dem::Dem;
use std::collections::{BTreeMap, HashSet};
use std::path::{Path, PathBuf};
use std::process::Output;
use std::sync::atomic::{AtomicUsize, Ordering};

// ---------------------------------------------------------------------------------------
// Helpers: data, runs, comparisons
// ---------------------------------------------------------------------------------------

/// Path of a file of the demo scenario.
fn demo(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-dem")
        .join(name)
}

/// The engine's target against a reference value: max(0.01 mGal, 0.5 %).
fn target(reference: f64) -> f64 {
    0.01f64.max(0.005 * reference.abs())
}

/// One unit of the last printed decimal of a correction (4 decimals, mGal).
const PRINTED: f64 = 1e-4;

/// A station: id, easting, northing (in the CRS of the DEM it is used with), height.
#[derive(Debug, Clone)]
struct Station {
    id: String,
    x: f64,
    y: f64,
    elev: f64,
}

impl Station {
    fn new(id: &str, x: f64, y: f64, elev: f64) -> Station {
        Station {
            id: id.to_string(),
            x,
            y,
            elev,
        }
    }
}

/// Stations of a station file (columns station, x, y, elev), in file order, or only
/// those named in `ids` (in that order).
fn stations_of(path: &Path, ids: Option<&[&str]>) -> Vec<Station> {
    let t = Csv::read(path);
    let all: Vec<Station> = (0..t.rows.len())
        .map(|i| {
            Station::new(
                t.get(i, "station"),
                t.num(i, "x"),
                t.num(i, "y"),
                t.num(i, "elev"),
            )
        })
        .collect();
    match ids {
        None => all,
        Some(ids) => ids
            .iter()
            .map(|id| {
                all.iter()
                    .find(|s| s.id == *id)
                    .unwrap_or_else(|| panic!("no station {id} in {}", path.display()))
                    .clone()
            })
            .collect(),
    }
}

/// Writes a station file: `station,x,y,elev`, a legacy TC column `legacy_tc` (0 for every
/// station, so that `audit` computes the TC) and a field inner-zone column `field_tc`
/// (a value for every other station, empty for the rest). Coordinates and heights are
/// written with every digit, so a station stands exactly where it was put.
fn write_stations(dir: &TestDir, name: &str, stations: &[Station]) -> PathBuf {
    let mut text = String::from("station,x,y,elev,legacy_tc,field_tc\n");
    for (i, s) in stations.iter().enumerate() {
        let field = if i % 2 == 0 {
            format!("{:.4}", 0.05 + 0.01 * i as f64)
        } else {
            String::new()
        };
        text.push_str(&format!(
            "{},{},{},{},0,{}\n",
            s.id, s.x, s.y, s.elev, field
        ));
    }
    dir.write_text(name, &text)
}

/// A window of a grid, `cols` x `rows` cells from cell (c0, r0).
fn cut(dem: &Dem, c0: usize, r0: usize, cols: usize, rows: usize) -> Dem {
    assert!(
        c0 + cols <= dem.cols && r0 + rows <= dem.rows,
        "the cut lies inside"
    );
    let mut heights = Vec::with_capacity(cols * rows);
    for r in r0..r0 + rows {
        heights.extend_from_slice(&dem.heights[r * dem.cols + c0..r * dem.cols + c0 + cols]);
    }
    Dem {
        cols,
        rows,
        x_left: dem.x_left + c0 as f64 * dem.dx,
        y_top: dem.y_top - r0 as f64 * dem.dy,
        heights,
        weights: None,
        ..dem.clone()
    }
}

/// Block averages of `k` x `k` cells (cells holding nodata are nodata).
fn coarsen(dem: &Dem, k: usize) -> Dem {
    let (cols, rows) = (dem.cols / k, dem.rows / k);
    let mut heights = Vec::with_capacity(cols * rows);
    for r in 0..rows {
        for c in 0..cols {
            let mut s = 0.0;
            for i in 0..k {
                for j in 0..k {
                    s += dem.heights[(r * k + i) * dem.cols + c * k + j] as f64;
                }
            }
            heights.push((s / (k * k) as f64) as f32);
        }
    }
    Dem {
        cols,
        rows,
        dx: dem.dx * k as f64,
        dy: dem.dy * k as f64,
        heights,
        weights: None,
        ..dem.clone()
    }
}

/// A fresh output path in the test's folder.
fn fresh(dir: &TestDir, stem: &str, ext: &str) -> PathBuf {
    static RUN: AtomicUsize = AtomicUsize::new(0);
    let k = RUN.fetch_add(1, Ordering::Relaxed);
    dir.join(&format!("{stem}-{k}.{ext}"))
}

/// `ringsum <cmd> --quiet --dem ... [--stations S] args`.
fn command(
    dir: &TestDir,
    cmd: &str,
    dems: &[&Path],
    stations: Option<&Path>,
    args: &[&str],
) -> assert_cmd::Command {
    let mut c = ringsum(dir);
    c.arg(cmd).arg("--quiet");
    for d in dems {
        c.arg("--dem").arg(d);
    }
    if let Some(s) = stations {
        c.arg("--stations").arg(s);
    }
    c.args(args);
    c
}

/// Runs a command and panics with its stderr unless it succeeds.
fn succeed(mut cmd: assert_cmd::Command, what: &str) -> Output {
    let out = cmd.output().expect("run ringsum");
    if !out.status.success() {
        panic!(
            "{what}: ringsum failed ({}): {}",
            out.status,
            String::from_utf8_lossy(&out.stderr)
        );
    }
    out
}

/// Runs `cmd` (correct, sweep or audit) with its table written to a CSV file, and reads
/// the table.
fn table(dir: &TestDir, cmd: &str, dems: &[&Path], stations: &Path, args: &[&str]) -> Csv {
    let out = fresh(dir, cmd, "csv");
    let mut c = command(dir, cmd, dems, Some(stations), args);
    c.arg("--out").arg(&out);
    succeed(c, &format!("{cmd} {args:?}"));
    Csv::read(&out)
}

/// Runs `map` to a GeoTIFF and reads it back through GDAL (`read_dem`: nodata as NaN).
fn map_grid(dir: &TestDir, dems: &[&Path], stations: Option<&Path>, args: &[&str]) -> Dem {
    let out = fresh(dir, "map", "tif");
    let mut c = command(dir, "map", dems, stations, args);
    c.arg("--out").arg(&out);
    succeed(c, &format!("map {args:?}"));
    read_dem(&out).unwrap_or_else(|e| panic!("{}: {e:?}", out.display()))
}

/// Column `col` of every station as text: the station's last row (a sweep's outer radius).
fn by_station(t: &Csv, col: &str) -> BTreeMap<String, String> {
    let (s, c) = (t.col("station"), t.col(col));
    t.rows
        .iter()
        .map(|r| (r[s].clone(), r[c].clone()))
        .collect()
}

/// Column `col` of every row keyed by station and radius (a sweep table).
fn by_station_and_radius(t: &Csv, col: &str) -> BTreeMap<String, String> {
    let (s, r, c) = (t.col("station"), t.col("radius_m"), t.col(col));
    t.rows
        .iter()
        .map(|row| (format!("{} at {} m", row[s], row[r]), row[c].clone()))
        .collect()
}

/// Failures collected over a test, reported together.
#[derive(Default)]
struct Failures(Vec<String>);

impl Failures {
    fn push(&mut self, s: String) {
        self.0.push(s);
    }

    /// Compares two columns keyed alike: the same keys, and each pair of values within
    /// `tol(reference)`; text (and empty fields) must be the same.
    fn values(
        &mut self,
        what: &str,
        reference: &BTreeMap<String, String>,
        actual: &BTreeMap<String, String>,
        tol: &dyn Fn(f64) -> f64,
    ) {
        if reference.keys().ne(actual.keys()) {
            self.push(format!(
                "{what}: rows {:?} against {:?}",
                reference.keys().collect::<Vec<_>>(),
                actual.keys().collect::<Vec<_>>()
            ));
            return;
        }
        for (k, a) in reference {
            let b = &actual[k];
            // Numbers within the tolerance; anything else (text, empty) the same text.
            let same = match (a.parse::<f64>(), b.parse::<f64>()) {
                (Ok(x), Ok(y)) => (x - y).abs() <= tol(x) + 1e-9,
                _ => a == b,
            };
            if !same {
                self.push(format!("{what}, {k}: {a} against {b}"));
            }
        }
    }

    /// Every column of `columns` that both tables have, station by station.
    fn columns(
        &mut self,
        what: &str,
        reference: &Csv,
        actual: &Csv,
        columns: &[String],
        tol: &dyn Fn(f64) -> f64,
    ) {
        for col in columns {
            if !reference.headers.contains(col) || !actual.headers.contains(col) {
                self.push(format!("{what}: column {col} missing"));
                continue;
            }
            self.values(
                &format!("{what} {col}"),
                &by_station(reference, col),
                &by_station(actual, col),
                tol,
            );
        }
    }

    fn check(self, invariant: &str) {
        if !self.0.is_empty() {
            panic!(
                "{invariant}: {} failure(s):\n  {}",
                self.0.len(),
                self.0.join("\n  ")
            );
        }
    }
}

/// The correction columns of a table: `tc_mgal` and its parts, zones, water and field
/// values.
fn tc_columns(t: &Csv) -> Vec<String> {
    t.headers
        .iter()
        .filter(|h| h.starts_with("tc_"))
        .cloned()
        .collect()
}

fn identical(_: f64) -> f64 {
    0.0
}

/// A plan file with prisms, blocks and a `sectors` ring (README, "A custom plan"),
/// written into the test's folder.
fn sector_plan(dir: &TestDir) -> PathBuf {
    dir.write_text(
        "sectors.toml",
        "inner_cells = 1\n\
         [[ring]]\nname = \"near\"\nouter = \"300m\"\nmethod = \"prisms\"\n\
         [[ring]]\nname = \"mid\"\nouter = \"1500m\"\nmethod = \"blocks\"\nblock_ratio = 0.3\n\
         [[ring]]\nname = \"far\"\nouter = \"166.7km\"\nmethod = \"sectors\"\ncompartments = 16\n",
    )
}

/// The `--zones` value of a plan name (auto, hammer, or the sector plan file).
fn zones_arg(dir: &TestDir, plan: &str) -> String {
    match plan {
        "sectors" => sector_plan(dir).to_string_lossy().into_owned(),
        other => other.to_string(),
    }
}

/// The demo's stations used by most tests: valley floor, lower slope, ridge top, foot of
/// the Brennith Wall, foot of the Tessendrin Horn (demo-dem/README.md).
const DEMO_IDS: [&str; 5] = ["V01", "V13", "V23", "V28", "V34"];

// ---------------------------------------------------------------------------------------
// 1. A coarser DEM outside every disc changes nothing
// ---------------------------------------------------------------------------------------

/// The real DEM fixture cut to the stations' discs of `radius` (with two coarse cells to
/// spare, on the coarse grid's lines), and its 3 x 3 block average over the whole
/// fixture: the coarse DEM reaches further, but inside every disc the fine cut covers
/// each coarse cell whole.
fn jacksboro_nested(dir: &TestDir, radius: f64) -> (PathBuf, PathBuf, Vec<Station>) {
    let whole = read_dem(&fixture("jacksboro_utm.tif")).expect("read the fixture");
    let stations = stations_of(&fixture("jacksboro_stations.csv"), None);
    let k = 3;
    let spare = radius + 2.0 * k as f64 * whole.dx;
    let col = |x: f64| ((x - whole.x_left) / whole.dx) as usize;
    let row = |y: f64| ((whole.y_top - y) / whole.dy) as usize;
    let x_lo = stations.iter().map(|s| s.x).fold(f64::INFINITY, f64::min) - spare;
    let x_hi = stations
        .iter()
        .map(|s| s.x)
        .fold(f64::NEG_INFINITY, f64::max)
        + spare;
    let y_lo = stations.iter().map(|s| s.y).fold(f64::INFINITY, f64::min) - spare;
    let y_hi = stations
        .iter()
        .map(|s| s.y)
        .fold(f64::NEG_INFINITY, f64::max)
        + spare;
    let (c0, r0) = (col(x_lo) / k * k, row(y_hi) / k * k);
    let (c1, r1) = (col(x_hi).div_ceil(k) * k, row(y_lo).div_ceil(k) * k);
    let fine = dir.write_dem_crs(
        "jacksboro_cut.tif",
        &cut(&whole, c0, r0, c1 - c0, r1 - r0),
        &whole.crs_wkt,
    );
    let coarse = dir.write_dem_crs("jacksboro_270m.tif", &coarsen(&whole, k), &whole.crs_wkt);
    (fine, coarse, stations)
}

/// Invariant 1 for one plan: on the demo (30 m alone, and with the 500 m grid) at 5 km
/// in correct, sweep (every radius), audit (tc_mgal with a legacy column) and map (node
/// values), and on the real fixture (a cut alone, and inside its 270 m block average) at
/// 2 km in correct, each with both methods: identical corrections and zone columns.
fn a_coarser_dem_changes_nothing(plan: &str) {
    let dir = TestDir::new();
    let zones = zones_arg(&dir, plan);
    let mut fails = Failures::default();
    let (fine, coarse) = (demo("quillerun_30m.tif"), demo("quillerun_500m.tif"));
    let st = write_stations(
        &dir,
        "demo.csv",
        &stations_of(&demo("stations.csv"), Some(&DEMO_IDS)),
    );
    let (j_fine, j_coarse, j_stations) = jacksboro_nested(&dir, 2000.0);
    let j_st = write_stations(&dir, "jacksboro.csv", &j_stations);
    for method in ["zoned", "exact"] {
        let args = [
            "--outer-radius",
            "5km",
            "--method",
            method,
            "--zones",
            zones.as_str(),
        ];
        let what = |cmd: &str| format!("demo {plan} {method} {cmd}");
        // correct
        let alone = table(&dir, "correct", &[&fine], &st, &args);
        let both = table(&dir, "correct", &[&fine, &coarse], &st, &args);
        let mut cols = tc_columns(&alone);
        cols.extend(["dem_elev_m".to_string(), "coverage".to_string()]);
        fails.columns(&what("correct"), &alone, &both, &cols, &identical);
        // sweep: every radius
        let alone = table(&dir, "sweep", &[&fine], &st, &args);
        let both = table(&dir, "sweep", &[&fine, &coarse], &st, &args);
        for col in ["tc_mgal", "remaining_mgal", "coverage"] {
            fails.values(
                &format!("{} {col}", what("sweep")),
                &by_station_and_radius(&alone, col),
                &by_station_and_radius(&both, col),
                &identical,
            );
        }
        // audit with a legacy column
        let alone = table(&dir, "audit", &[&fine], &st, &args);
        let both = table(&dir, "audit", &[&fine, &coarse], &st, &args);
        let mut cols = vec!["new_minus_legacy_mgal".to_string()];
        cols.extend(tc_columns(&alone));
        fails.columns(&what("audit"), &alone, &both, &cols, &identical);
        // map: 3 x 3 nodes 2 km apart around the centre
        let map_args = [
            &args[..],
            &[
                "--spacing",
                "2km",
                "--extent",
                "496000,5198000,500000,5202000",
            ],
        ]
        .concat();
        let alone = map_grid(&dir, &[&fine], None, &map_args);
        let both = map_grid(&dir, &[&fine, &coarse], None, &map_args);
        let (a, b) = (&alone.heights, &both.heights);
        if a.len() != b.len() || a.iter().all(|v| v.is_nan()) {
            fails.push(format!("{}: {a:?} against {b:?}", what("map")));
        } else {
            for (i, (x, y)) in a.iter().zip(b).enumerate() {
                if x.to_bits() != y.to_bits() {
                    fails.push(format!("{} node {i}: {x} against {y}", what("map")));
                }
            }
        }
        // The real DEM fixture, in correct.
        let args = [
            "--outer-radius",
            "2km",
            "--method",
            method,
            "--zones",
            zones.as_str(),
        ];
        let alone = table(&dir, "correct", &[&j_fine], &j_st, &args);
        let both = table(&dir, "correct", &[&j_fine, &j_coarse], &j_st, &args);
        let mut cols = tc_columns(&alone);
        cols.extend(["dem_elev_m".to_string(), "coverage".to_string()]);
        fails.columns(
            &format!("jacksboro {plan} {method} correct"),
            &alone,
            &both,
            &cols,
            &identical,
        );
    }
    fails.check(&format!(
        "a coarser DEM outside every disc must change nothing ({plan} plan)"
    ));
}

#[test]
fn a_coarser_dem_outside_every_disc_changes_nothing_with_the_auto_plan() {
    a_coarser_dem_changes_nothing("auto");
}

#[test]
fn a_coarser_dem_outside_every_disc_changes_nothing_with_hammer_zones() {
    a_coarser_dem_changes_nothing("hammer");
}

#[test]
fn a_coarser_dem_outside_every_disc_changes_nothing_with_a_sector_ring_plan() {
    a_coarser_dem_changes_nothing("sectors");
}

// ---------------------------------------------------------------------------------------
// 2. Tiles of one grid are the whole grid
// ---------------------------------------------------------------------------------------

/// Tiles of `whole`: split at column `c` into 2, at column `c` and row `r` into 4, each
/// tile widened by `overlap` cells on its inner edges.
fn tiles(whole: &Dem, c: usize, r: usize, four: bool, overlap: usize) -> Vec<Dem> {
    let (w, h) = (whole.cols, whole.rows);
    let cols = [(0, c + overlap), (c - overlap, w - c + overlap)];
    if !four {
        return cols
            .iter()
            .map(|&(c0, n)| cut(whole, c0, 0, n, h))
            .collect();
    }
    let rows = [(0, r + overlap), (r - overlap, h - r + overlap)];
    let mut out = Vec::new();
    for &(r0, m) in &rows {
        for &(c0, n) in &cols {
            out.push(cut(whole, c0, r0, n, m));
        }
    }
    out
}

/// Invariant 2 on one grid: the whole file against its tiles (2, 4, 4 in reverse order,
/// 4 overlapping by 3 cells), in correct (every correction column: exact method to
/// 1e-6 relative or the last printed digit, zoned within the target) and, for the exact
/// method, in map (node values to 1e-6 relative).
fn tiles_are_the_whole(
    dir: &TestDir,
    name: &str,
    whole_path: &Path,
    stations: &Path,
    radius: &str,
    extent: &str,
    fails: &mut Failures,
) {
    let whole = read_dem(whole_path).expect("read the DEM");
    let (c, r) = (whole.cols / 2 + 3, whole.rows / 2 - 5);
    let mut sets: Vec<(String, Vec<PathBuf>)> = Vec::new();
    for (label, four, overlap) in [
        ("2 tiles", false, 0),
        ("4 tiles", true, 0),
        ("4 tiles overlapping by 3 cells", true, 3),
    ] {
        let paths: Vec<PathBuf> = tiles(&whole, c, r, four, overlap)
            .iter()
            .enumerate()
            .map(|(k, t)| {
                dir.write_dem_crs(
                    &format!("{name}_{}_{k}.tif", label.replace(' ', "_")),
                    t,
                    &whole.crs_wkt,
                )
            })
            .collect();
        if label == "4 tiles" {
            let mut reversed = paths.clone();
            reversed.reverse();
            sets.push(("4 tiles in reverse order".to_string(), reversed));
        }
        sets.push((label.to_string(), paths));
    }
    for method in ["zoned", "exact"] {
        let args = ["--outer-radius", radius, "--method", method];
        let tol: &dyn Fn(f64) -> f64 = if method == "exact" {
            // 1e-6 relative, or the last printed digit.
            &|v: f64| (1e-6 * v.abs()).max(PRINTED)
        } else {
            &target
        };
        let reference = table(dir, "correct", &[whole_path], stations, &args);
        let cols = tc_columns(&reference);
        let map_args = [&args[..], &["--spacing", "2km", "--extent", extent]].concat();
        // The map's float32 nodes resolve 1e-7 relative: the exact method's check.
        let reference_map =
            (method == "exact").then(|| map_grid(dir, &[whole_path], None, &map_args));
        for (label, paths) in &sets {
            let dems: Vec<&Path> = paths.iter().map(PathBuf::as_path).collect();
            let t = table(dir, "correct", &dems, stations, &args);
            fails.columns(
                &format!("{name} {label} {method} correct"),
                &reference,
                &t,
                &cols,
                tol,
            );
            let Some(reference_map) = &reference_map else {
                continue;
            };
            let m = map_grid(dir, &dems, None, &map_args);
            if m.heights.len() != reference_map.heights.len() {
                fails.push(format!("{name} {label} {method} map: another grid"));
                continue;
            }
            for (i, (&a, &b)) in reference_map.heights.iter().zip(&m.heights).enumerate() {
                let (a, b) = (a as f64, b as f64);
                if !((a - b).abs() <= 1e-6 * a.abs() || a.is_nan() && b.is_nan()) {
                    fails.push(format!(
                        "{name} {label} exact map node {i}: {a} against {b}"
                    ));
                }
            }
            if reference_map.heights.iter().all(|v| v.is_nan()) {
                fails.push(format!("{name} map: no node computed"));
            }
        }
    }
}

#[test]
fn a_dem_cut_into_tiles_gives_the_whole_dems_correction() {
    let dir = TestDir::new();
    let mut fails = Failures::default();
    // The real DEM fixture (324 x 344 cells of 90 m), all 8 stations at 3 km.
    let j_st = write_stations(
        &dir,
        "jacksboro.csv",
        &stations_of(&fixture("jacksboro_stations.csv"), None),
    );
    tiles_are_the_whole(
        &dir,
        "jacksboro",
        &fixture("jacksboro_utm.tif"),
        &j_st,
        "3km",
        "742000,4047000,748000,4053000",
        &mut fails,
    );
    // The demo's 30 m grid, its central 640 x 640 cells (19.2 km) as the whole.
    let full = read_dem(&demo("quillerun_30m.tif")).expect("read the demo DEM");
    let centre = dir.write_dem_crs(
        "demo_centre.tif",
        &cut(&full, 280, 280, 640, 640),
        &full.crs_wkt,
    );
    let d_st = write_stations(
        &dir,
        "demo.csv",
        &stations_of(&demo("stations.csv"), Some(&DEMO_IDS)),
    );
    tiles_are_the_whole(
        &dir,
        "demo",
        &centre,
        &d_st,
        "3km",
        "497000,5197000,503000,5203000",
        &mut fails,
    );
    fails.check("tiles of one grid must give the whole grid's correction");
}

// ---------------------------------------------------------------------------------------
// 3. Station CRS, station order and thread count change nothing
// ---------------------------------------------------------------------------------------

/// Invariant 3 on one DEM set: the stations in lon/lat (--stations-crs EPSG:4326), in
/// reverse order, with 1 and 2 threads, against the stations as given.
#[allow(clippy::too_many_arguments)]
fn rows_do_not_depend_on_crs_order_or_threads(
    dir: &TestDir,
    name: &str,
    dems: &[&Path],
    stations: &[Station],
    epsg: &str,
    radius: &str,
    fails: &mut Failures,
) {
    let given = write_stations(dir, &format!("{name}_given.csv"), stations);
    let mut reversed_list = stations.to_vec();
    reversed_list.reverse();
    let reversed = write_stations(dir, &format!("{name}_reversed.csv"), &reversed_list);
    let to_geo = proj::Proj::new_known_crs(epsg, "EPSG:4326", None).unwrap();
    let mut text = String::from("station,x,y,elev\n");
    for s in stations {
        let (lon, lat): (f64, f64) = to_geo.convert((s.x, s.y)).unwrap();
        text.push_str(&format!("{},{lon:.11},{lat:.11},{}\n", s.id, s.elev));
    }
    let lonlat = dir.write_text(&format!("{name}_lonlat.csv"), &text);
    let args = ["--outer-radius", radius];
    let reference = table(dir, "correct", dems, &given, &args);
    let cols: Vec<String> = reference
        .headers
        .iter()
        // The station file's own columns are carried as they are in each file.
        .filter(|h| !["station", "x", "y", "legacy_tc", "field_tc"].contains(&h.as_str()))
        .cloned()
        .collect();
    for (label, t, tol) in [
        (
            "reverse order",
            table(dir, "correct", dems, &reversed, &args),
            identical as fn(f64) -> f64,
        ),
        (
            "1 thread",
            table(
                dir,
                "correct",
                dems,
                &given,
                &[&args[..], &["--threads", "1"]].concat(),
            ),
            identical,
        ),
        (
            "2 threads",
            table(
                dir,
                "correct",
                dems,
                &given,
                &[&args[..], &["--threads", "2"]].concat(),
            ),
            identical,
        ),
        (
            // The positions come back through PROJ to well under a millimetre: the
            // corrections agree to the last printed digit.
            "lon/lat with --stations-crs EPSG:4326",
            table(
                dir,
                "correct",
                dems,
                &lonlat,
                &[&args[..], &["--stations-crs", "EPSG:4326"]].concat(),
            ),
            |_| PRINTED,
        ),
    ] {
        // Station order of the output follows the file.
        let order: Vec<&str> = t.rows.iter().map(|r| r[0].as_str()).collect();
        let expected: Vec<&str> = if label == "reverse order" {
            reversed_list.iter().map(|s| s.id.as_str()).collect()
        } else {
            stations.iter().map(|s| s.id.as_str()).collect()
        };
        if order != expected {
            fails.push(format!("{name} {label}: rows in order {order:?}"));
        }
        fails.columns(&format!("{name} {label}"), &reference, &t, &cols, &tol);
    }
}

#[test]
fn station_crs_order_and_thread_count_change_no_row() {
    let dir = TestDir::new();
    let mut fails = Failures::default();
    rows_do_not_depend_on_crs_order_or_threads(
        &dir,
        "jacksboro",
        &[&fixture("jacksboro_utm.tif")],
        &stations_of(&fixture("jacksboro_stations.csv"), None),
        "EPSG:32616",
        "3km",
        &mut fails,
    );
    // The demo's 30 m and 500 m grids at 15 km: both serve every disc.
    rows_do_not_depend_on_crs_order_or_threads(
        &dir,
        "demo",
        &[&demo("quillerun_30m.tif"), &demo("quillerun_500m.tif")],
        &stations_of(&demo("stations.csv"), Some(&DEMO_IDS)),
        "EPSG:32633",
        "15km",
        &mut fails,
    );
    fails.check("the station CRS, order and thread count must change no row");
}

// ---------------------------------------------------------------------------------------
// 4. sweep, audit and map give correct's value, with every input kind
// ---------------------------------------------------------------------------------------

/// The water level of the tests on the demo: the valley floor falls from about 1100 m in
/// the west to 900 m in the east, so its eastern part lies under 1000 m of water while
/// the stations of DEMO_IDS stand on land.
const DEMO_WATER: [&str; 4] = ["--water-density", "1000", "--water-surface", "1000"];

/// A density raster over the demo (UTM 33N like its DEMs, but 500 m cells on another
/// grid): 60 km square around the centre, 2400 to 2850 kg/m3 rising to the north-east.
fn demo_density_raster(dir: &TestDir) -> PathBuf {
    let rho = Dem::from_fn("rho", 120, 120, 470_000.0, 5_230_000.0, 500.0, |x, y| {
        2400.0 + 300.0 * (x - 470_000.0) / 60_000.0 + 150.0 * (y - 5_170_000.0) / 60_000.0
    });
    dir.write_dem("rho.tif", &rho)
}

/// One set of inputs run through every command.
struct Variant {
    name: &'static str,
    dems: Vec<PathBuf>,
    args: Vec<String>,
    /// Whether the options give inner zones per station (map refuses them).
    per_station: bool,
}

impl Variant {
    fn dems(&self) -> Vec<&Path> {
        self.dems.iter().map(PathBuf::as_path).collect()
    }

    fn args(&self) -> Vec<&str> {
        self.args.iter().map(String::as_str).collect()
    }
}

/// The input kinds of invariant 4 on the demo: one DEM (8 km), two DEMs (15 km: the 500 m
/// grid serves the disc beyond the 30 m one), a density raster, water (stations on land
/// with the surface inner model; a station over water with the prisms one), field
/// inner-zone values, and all of them together.
fn demo_variants(dir: &TestDir) -> Vec<Variant> {
    let (fine, coarse) = (demo("quillerun_30m.tif"), demo("quillerun_500m.tif"));
    let rho = demo_density_raster(dir).to_string_lossy().into_owned();
    let one = || vec![fine.clone()];
    let two = || vec![fine.clone(), coarse.clone()];
    let args = |radius: &str, extra: &[&str]| -> Vec<String> {
        ["--outer-radius", radius]
            .iter()
            .chain(extra)
            .map(|s| s.to_string())
            .collect()
    };
    let density = ["--density-raster", rho.as_str()];
    let field = [
        "--field-inner-col",
        "field_tc",
        "--field-inner-radius",
        "53.3m",
    ];
    let all: Vec<&str> = [&density[..], &DEMO_WATER[..], &field[..]].concat();
    vec![
        Variant {
            name: "one DEM",
            dems: one(),
            args: args("8km", &[]),
            per_station: false,
        },
        Variant {
            name: "two DEMs",
            dems: two(),
            args: args("15km", &[]),
            per_station: false,
        },
        Variant {
            name: "two DEMs, density raster",
            dems: two(),
            args: args("15km", &density),
            per_station: false,
        },
        Variant {
            name: "one DEM, water",
            dems: one(),
            args: args("8km", &DEMO_WATER),
            per_station: false,
        },
        Variant {
            name: "two DEMs, water, prisms inner model",
            dems: two(),
            args: args(
                "15km",
                &[&DEMO_WATER[..], &["--inner-model", "prisms"]].concat(),
            ),
            per_station: false,
        },
        Variant {
            name: "two DEMs, field inner values",
            dems: two(),
            args: args("15km", &field),
            per_station: true,
        },
        Variant {
            name: "two DEMs, density raster, water and field inner values",
            dems: two(),
            args: args("15km", &all),
            per_station: true,
        },
    ]
}

/// The demo stations of the invariant-4 tests; with the prisms inner model and water, a
/// station on the lake's surface as well (over water, allowed with that model).
fn demo_stations_for(v: &Variant) -> Vec<Station> {
    let mut st = stations_of(&demo("stations.csv"), Some(&DEMO_IDS));
    if v.args.iter().any(|a| a == "prisms") {
        // Where V04 stands (993.8 m), the floor is under the 1000 m water level: a
        // station on the water surface there.
        let v04 = &stations_of(&demo("stations.csv"), Some(&["V04"]))[0];
        st.push(Station::new("BOAT", v04.x, v04.y, 1000.3));
    }
    st
}

#[test]
fn sweep_at_its_last_radius_equals_correct_with_every_input_kind() {
    let dir = TestDir::new();
    let mut fails = Failures::default();
    for v in demo_variants(&dir) {
        let st = write_stations(&dir, "s.csv", &demo_stations_for(&v));
        let c = table(&dir, "correct", &v.dems(), &st, &v.args());
        let s = table(&dir, "sweep", &v.dems(), &st, &v.args());
        fails.values(
            &format!("{}: sweep's last radius against correct", v.name),
            &by_station(&c, "tc_mgal"),
            &by_station(&s, "tc_mgal"),
            &identical,
        );
        fails.values(
            &format!("{}: sweep's coverage against correct", v.name),
            &by_station(&c, "coverage"),
            &by_station(&s, "coverage"),
            &identical,
        );
    }
    fails.check("sweep's last radius must equal correct");
}

#[test]
fn audit_tc_equals_correct_with_every_input_kind() {
    let dir = TestDir::new();
    let mut fails = Failures::default();
    for v in demo_variants(&dir) {
        let st = write_stations(&dir, "s.csv", &demo_stations_for(&v));
        let c = table(&dir, "correct", &v.dems(), &st, &v.args());
        let a = table(&dir, "audit", &v.dems(), &st, &v.args());
        fails.values(
            &format!("{}: audit's tc_mgal against correct", v.name),
            &by_station(&c, "tc_mgal"),
            &by_station(&a, "tc_mgal"),
            &identical,
        );
        fails.values(
            &format!("{}: audit's coverage against correct", v.name),
            &by_station(&c, "coverage"),
            &by_station(&a, "coverage"),
            &identical,
        );
    }
    fails.check("audit's tc_mgal must equal correct");
}

#[test]
fn a_map_node_equals_correct_at_that_point_with_every_input_kind() {
    // Nodes 1 km apart around V01 on the valley floor; each node computed is put in a
    // station file at the node's position and the 30 m DEM's bilinear height there (the
    // finest DEM with data there), and correct must give the node's value (the GeoTIFF
    // holds float32: within the last printed digit).
    let dir = TestDir::new();
    let mut fails = Failures::default();
    let fine = read_dem(&demo("quillerun_30m.tif")).expect("read the demo DEM");
    for v in demo_variants(&dir).into_iter().filter(|v| !v.per_station) {
        let args = [
            &v.args()[..],
            &[
                "--spacing",
                "1km",
                "--extent",
                "493000,5199000,496000,5202000",
            ],
        ]
        .concat();
        let grid = map_grid(&dir, &v.dems(), None, &args);
        let mut nodes = Vec::new();
        let mut values = BTreeMap::new();
        for r in 0..grid.rows {
            for c in 0..grid.cols {
                let value = grid.heights[r * grid.cols + c];
                if value.is_nan() {
                    continue;
                }
                let (x, y) = (grid.col_center_x(c), grid.row_center_y(r));
                let id = format!("N{c}_{r}");
                let elev = fine.bilinear(x, y).expect("the node is on the 30 m DEM");
                nodes.push(Station::new(&id, x, y, elev));
                values.insert(id, format!("{value}"));
            }
        }
        if nodes.len() < 4 {
            fails.push(format!("{}: only {} node(s) computed", v.name, nodes.len()));
            continue;
        }
        let st = write_stations(&dir, "nodes.csv", &nodes);
        let c = table(&dir, "correct", &v.dems(), &st, &v.args());
        fails.values(
            &format!("{}: map nodes against correct", v.name),
            &by_station(&c, "tc_mgal"),
            &values,
            &|v| 0.5 * PRINTED + 1.2e-7 * v.abs(),
        );
    }
    fails.check("a map node must equal correct at that point");
}

#[test]
fn a_map_on_a_lon_lat_dem_equals_correct_at_its_nodes() {
    // The finest DEM on longitude and latitude: the grid is laid out in degrees (a 90
    // arc-second spacing), and each node equals correct at that point, the stations given
    // in the same lon/lat CRS.
    let dir = TestDir::new();
    let lonlat = demo("quillerun_3s_lonlat.tif");
    let coarse = demo("quillerun_500m.tif");
    let fine = read_dem(&lonlat).expect("read the demo's lon/lat DEM");
    let args = [
        "--outer-radius",
        "8km",
        "--spacing",
        "90s",
        "--extent",
        "14.90,46.93,14.96,46.98",
    ];
    let grid = map_grid(&dir, &[&lonlat, &coarse], None, &args);
    assert!(
        (grid.dx - 90.0 / 3600.0).abs() < 1e-12,
        "spacing {}",
        grid.dx
    );
    let mut nodes = Vec::new();
    let mut values = BTreeMap::new();
    for r in 0..grid.rows {
        for c in 0..grid.cols {
            let value = grid.heights[r * grid.cols + c];
            assert!(!value.is_nan(), "node {c}, {r} has no value");
            let (x, y) = (grid.col_center_x(c), grid.row_center_y(r));
            let id = format!("N{c}_{r}");
            let elev = fine.bilinear(x, y).expect("the node is on the lon/lat DEM");
            nodes.push(Station::new(&id, x, y, elev));
            values.insert(id, format!("{value}"));
        }
    }
    assert!(nodes.len() >= 4, "{} nodes", nodes.len());
    let st = write_stations(&dir, "nodes.csv", &nodes);
    let c = table(&dir, "correct", &[&lonlat, &coarse], &st, &args[..2]);
    let mut fails = Failures::default();
    fails.values(
        "map nodes on a lon/lat DEM against correct",
        &by_station(&c, "tc_mgal"),
        &values,
        &|v| 0.5 * PRINTED + 1.2e-7 * v.abs(),
    );
    fails.check("a map node must equal correct at that point");
}

#[test]
fn map_refuses_per_station_inputs_with_status_2() {
    let dir = TestDir::new();
    let fine = demo("quillerun_30m.tif");
    let st = write_stations(
        &dir,
        "s.csv",
        &stations_of(&demo("stations.csv"), Some(&DEMO_IDS)),
    );
    for extra in [
        &[
            "--field-inner-col",
            "field_tc",
            "--field-inner-radius",
            "53.3m",
        ][..],
        &["--density-col", "legacy_tc"][..],
    ] {
        let out = fresh(&dir, "refused", "tif");
        let output = command(
            &dir,
            "map",
            &[&fine],
            Some(&st),
            &[
                &["--outer-radius", "2km", "--spacing", "1km"][..],
                extra,
                &["--out", out.to_str().unwrap()],
            ]
            .concat(),
        )
        .output()
        .unwrap();
        let stderr = String::from_utf8_lossy(&output.stderr);
        assert_eq!(output.status.code(), Some(2), "{extra:?}: {stderr}");
        assert_eq!(stderr.trim_end().lines().count(), 1, "{extra:?}: {stderr}");
        assert!(stderr.contains(extra[0]), "{extra:?}: {stderr}");
        assert!(!out.exists(), "{extra:?}: an output was left");
    }
}

// ---------------------------------------------------------------------------------------
// 5. Water and a density raster with a coarser DEM outside the discs
// ---------------------------------------------------------------------------------------

#[test]
fn water_and_a_density_raster_with_a_coarser_dem_equal_the_fine_dem_alone() {
    // The demo's 30 m grid covers every disc of 8 km; adding the 500 m grid must leave
    // every correction column (water's included) and the station densities as they are,
    // in correct, and with both in sweep (every radius).
    let dir = TestDir::new();
    let mut fails = Failures::default();
    let (fine, coarse) = (demo("quillerun_30m.tif"), demo("quillerun_500m.tif"));
    let rho = demo_density_raster(&dir).to_string_lossy().into_owned();
    let st = write_stations(
        &dir,
        "s.csv",
        &stations_of(&demo("stations.csv"), Some(&DEMO_IDS)),
    );
    let density = ["--density-raster", rho.as_str()];
    for (name, extra) in [
        ("water", DEMO_WATER.to_vec()),
        ("density raster", density.to_vec()),
        (
            "water and density raster",
            [&DEMO_WATER[..], &density[..]].concat(),
        ),
        (
            "water, prisms inner model, exact",
            [
                &DEMO_WATER[..],
                &["--inner-model", "prisms", "--method", "exact"],
            ]
            .concat(),
        ),
    ] {
        let radius = if name.contains("exact") { "3km" } else { "8km" };
        let args = [&["--outer-radius", radius][..], &extra[..]].concat();
        let alone = table(&dir, "correct", &[&fine], &st, &args);
        let both = table(&dir, "correct", &[&fine, &coarse], &st, &args);
        let mut cols = tc_columns(&alone);
        if name.contains("water") && !cols.contains(&"tc_water_mgal".to_string()) {
            fails.push(format!("{name}: no tc_water_mgal column"));
        }
        if name.contains("density") {
            cols.push("density_kg_m3".to_string());
        }
        cols.push("coverage".to_string());
        fails.columns(name, &alone, &both, &cols, &identical);
        if name != "water and density raster" {
            continue;
        }
        let alone = table(&dir, "sweep", &[&fine], &st, &args);
        let both = table(&dir, "sweep", &[&fine, &coarse], &st, &args);
        fails.values(
            &format!("{name} sweep"),
            &by_station_and_radius(&alone, "tc_mgal"),
            &by_station_and_radius(&both, "tc_mgal"),
            &identical,
        );
    }
    fails.check("water and a density raster with a coarser DEM must equal the fine DEM alone");
}

// ---------------------------------------------------------------------------------------
// 6. Table headers: no duplicates, one column order
// ---------------------------------------------------------------------------------------

#[test]
fn every_table_header_is_unique_and_shared_columns_keep_one_order() {
    // The demo's stations in lon/lat with every optional column: observed gravity, geoid
    // undulation, field inner values, densities, a legacy TC and legacy Hammer zones.
    let dir = TestDir::new();
    let (fine, coarse) = (demo("quillerun_30m.tif"), demo("quillerun_500m.tif"));
    let other = dir.write_dem_crs(
        "coarse_90m.tif",
        &coarsen(
            &cut(
                &read_dem(&fine).expect("read the demo DEM"),
                200,
                200,
                800,
                800,
            ),
            3,
        ),
        "EPSG:32633",
    );
    let to_geo = proj::Proj::new_known_crs("EPSG:32633", "EPSG:4326", None).unwrap();
    let mut text = String::from(
        "station,x,y,elev,gravity,N,field_tc,rho,legacy_tc,legacy_tc_A,legacy_tc_B,legacy_tc_C\n",
    );
    for (i, s) in stations_of(&demo("stations.csv"), Some(&DEMO_IDS))
        .iter()
        .enumerate()
    {
        let (lon, lat): (f64, f64) = to_geo.convert((s.x, s.y)).unwrap();
        text.push_str(&format!(
            "{},{lon:.11},{lat:.11},{},{:.3},47.3,0.0{i},{},1.0,0.0,0.0,0.0\n",
            s.id,
            s.elev,
            980_400.0 + 10.0 * i as f64,
            2600 + 20 * i
        ));
    }
    let st = dir.write_text("everything.csv", &text);
    let rho = demo_density_raster(&dir).to_string_lossy().into_owned();
    let common: Vec<&str> = vec![
        "--outer-radius",
        "15km",
        "--stations-crs",
        "EPSG:4326",
        "--zones",
        "hammer",
        "--water-density",
        "1000",
        "--water-surface",
        "1000",
        "--field-inner-col",
        "field_tc",
        "--field-inner-radius",
        "53.3m",
    ];
    let two: [&Path; 2] = [&fine, &coarse];
    let reduction = ["--gravity-col", "gravity", "--undulation-col", "N"];
    let mut tables: Vec<(String, Vec<String>)> = Vec::new();
    let mut add = |name: &str, t: Csv| tables.push((name.to_string(), t.headers));
    add(
        "correct with every group and a density column",
        table(
            &dir,
            "correct",
            &two,
            &st,
            &[&common[..], &reduction[..], &["--density-col", "rho"]].concat(),
        ),
    );
    add(
        "correct with every group and a density raster",
        table(
            &dir,
            "correct",
            &two,
            &st,
            &[&common[..], &reduction[..], &["--density-raster", &rho]].concat(),
        ),
    );
    add(
        "sweep with a density raster",
        table(
            &dir,
            "sweep",
            &two,
            &st,
            &[&common[..], &["--density-raster", &rho]].concat(),
        ),
    );
    let summary = dir.join("summary.csv");
    add(
        "sweep with densities and a compared DEM",
        table(
            &dir,
            "sweep",
            &two,
            &st,
            &[
                &common[..],
                &[
                    "--densities",
                    "2000,2670",
                    "--compare-dem",
                    other.to_str().unwrap(),
                    "--station-summary",
                    summary.to_str().unwrap(),
                ],
            ]
            .concat(),
        ),
    );
    add("sweep --station-summary", Csv::read(&summary));
    add(
        "audit with legacy TC and zones",
        table(
            &dir,
            "audit",
            &two,
            &st,
            &[&common[..], &["--density-raster", &rho]].concat(),
        ),
    );
    let mut fails = Failures::default();
    for (name, headers) in &tables {
        let mut seen = HashSet::new();
        for h in headers {
            if !seen.insert(h) {
                fails.push(format!("{name}: column {h} twice in {headers:?}"));
            }
        }
    }
    for (i, (a_name, a)) in tables.iter().enumerate() {
        for (b_name, b) in &tables[i + 1..] {
            let in_a: Vec<&String> = a.iter().filter(|h| b.contains(h)).collect();
            let in_b: Vec<&String> = b.iter().filter(|h| a.contains(h)).collect();
            if in_a != in_b {
                fails.push(format!(
                    "{a_name} has the shared columns in the order {in_a:?}, {b_name} in {in_b:?}"
                ));
            }
        }
    }
    for (name, headers) in &tables {
        eprintln!("{name}: {}", headers.join(","));
    }
    fails.check("table headers");
}

// ---------------------------------------------------------------------------------------
// 7. The combination matrix
// ---------------------------------------------------------------------------------------

/// North-west corner of the matrix's tiny DEM (UTM 33N, m).
const MX: f64 = 500_000.0;
const MY: f64 = 5_001_800.0;

/// Terrain rising eastward from 470 m with a ripple and some roughness: below the water
/// level of 500 m in a strip along the western edge.
fn tiny_height(x: f64, y: f64) -> f64 {
    let rough = ringsum::synthetic::Fractal {
        seed: 7,
        amplitude: 6.0,
        longest: 600.0,
        shortest: 60.0,
        hurst: 0.8,
    };
    470.0 + 0.08 * (x - MX) + 15.0 * ((y - MY) / 200.0).sin() + rough.height(x - MX, y - MY)
}

const COMMANDS: [&str; 5] = ["correct", "sweep", "audit", "map", "plan"];
const DEM_SETS: [&str; 3] = ["one DEM", "fine + coarse", "two tiles"];
const PLANS: [&str; 3] = ["auto", "hammer", "sectors"];
const METHODS: [&str; 2] = ["zoned", "exact"];
const INNER: [&str; 2] = ["surface", "prisms"];
const EXTRAS: [&str; 4] = ["none", "water", "density raster", "field inner values"];

/// Rows (value indices per factor) of a covering array of strength 3: every combination
/// of values of any three factors is in some row. Built greedily from the full product
/// (each step takes the first row covering the most combinations not yet covered), so it
/// is the same on every run.
fn covering_rows(levels: &[usize]) -> Vec<Vec<usize>> {
    let mut all: Vec<Vec<usize>> = vec![Vec::new()];
    for &n in levels {
        all = all
            .into_iter()
            .flat_map(|row| {
                (0..n).map(move |v| {
                    let mut r = row.clone();
                    r.push(v);
                    r
                })
            })
            .collect();
    }
    let f = levels.len();
    let mut triples = Vec::new();
    for a in 0..f {
        for b in a + 1..f {
            for c in b + 1..f {
                triples.push([a, b, c]);
            }
        }
    }
    let covers = |row: &[usize]| -> Vec<(usize, [usize; 3])> {
        triples
            .iter()
            .enumerate()
            .map(|(t, &[a, b, c])| (t, [row[a], row[b], row[c]]))
            .collect()
    };
    let mut uncovered: HashSet<(usize, [usize; 3])> = all.iter().flat_map(|r| covers(r)).collect();
    let mut rows = Vec::new();
    while !uncovered.is_empty() {
        let gain = |r: &[usize]| covers(r).iter().filter(|k| uncovered.contains(k)).count();
        let most = all.iter().map(|r| gain(r)).max().expect("rows");
        let best = all
            .iter()
            .find(|r| gain(r) == most)
            .expect("a best row")
            .clone();
        for k in covers(&best) {
            uncovered.remove(&k);
        }
        rows.push(best);
    }
    rows
}

#[test]
fn every_combination_of_options_succeeds_or_is_refused_cleanly() {
    // Commands x DEM sets x plans x methods x inner models x extras on a tiny DEM (60 x 60
    // cells of 30 m), three stations on land, outer radius 600 m. Each combination either
    // succeeds (exit 0, a well-formed output without NaN or empty corrections) or is
    // refused (exit 1 or 2, one line on stderr, no output file). The full product is 720
    // runs, about 0.1 s of process start each; CI runs the rows of a strength-3 covering
    // array (every combination of any three options' values), and RINGSUM_FULL_MATRIX=1
    // runs the full product.
    let dir = TestDir::new();
    let tiny = Dem::from_fn("tiny", 60, 60, MX, MY, 30.0, tiny_height);
    let one = dir.write_dem("tiny.tif", &tiny);
    // The coarse DEM: 120 m block averages of the same terrain over 5.4 km, the tiny DEM
    // on its cell lines in the middle.
    let big = Dem::from_fn("big", 180, 180, MX - 1800.0, MY + 1800.0, 30.0, tiny_height);
    let coarse = dir.write_dem("coarse.tif", &coarsen(&big, 4));
    let west = dir.write_dem("tile_w.tif", &cut(&tiny, 0, 0, 30, 60));
    let east = dir.write_dem("tile_e.tif", &cut(&tiny, 30, 0, 30, 60));
    let rho = Dem::from_fn("rho", 30, 30, MX - 2000.0, MY + 2000.0, 200.0, |x, y| {
        2500.0 + 0.05 * (x - MX) - 0.03 * (y - MY)
    });
    let rho = dir.write_dem("rho.tif", &rho);
    let on = |id: &str, dx: f64, dy: f64| {
        let (x, y) = (MX + dx, MY - dy);
        Station::new(id, x, y, tiny.bilinear(x, y).unwrap() + 0.3)
    };
    let st = write_stations(
        &dir,
        "s.csv",
        &[
            on("S1", 1000.0, 900.0),
            on("S2", 1150.0, 700.0),
            on("S3", 1050.5, 1100.2),
        ],
    );
    let plan = sector_plan(&dir);
    let full = std::env::var_os("RINGSUM_FULL_MATRIX").is_some();
    let levels = [
        COMMANDS.len(),
        DEM_SETS.len(),
        PLANS.len(),
        METHODS.len(),
        INNER.len(),
        EXTRAS.len(),
    ];
    let rows = if full {
        let mut all = vec![Vec::new()];
        for &n in &levels {
            all = all
                .into_iter()
                .flat_map(|r: Vec<usize>| (0..n).map(move |v| [r.clone(), vec![v]].concat()))
                .collect();
        }
        all
    } else {
        covering_rows(&levels)
    };
    let mut failures = Vec::new();
    let mut refused = Vec::new();
    let mut succeeded = 0;
    for (k, row) in rows.iter().enumerate() {
        let (cmd, set, plan_name, method, inner, extra) = (
            COMMANDS[row[0]],
            DEM_SETS[row[1]],
            PLANS[row[2]],
            METHODS[row[3]],
            INNER[row[4]],
            EXTRAS[row[5]],
        );
        let combo = format!("{cmd}, {set}, {plan_name}, {method}, {inner}, {extra}");
        let dems: Vec<&Path> = match set {
            "one DEM" => vec![&one],
            "fine + coarse" => vec![&one, &coarse],
            _ => vec![&west, &east],
        };
        let zones = match plan_name {
            "sectors" => plan.to_str().unwrap(),
            p => p,
        };
        let mut args: Vec<String> = [
            "--outer-radius",
            "600m",
            "--zones",
            zones,
            "--method",
            method,
            "--inner-model",
            inner,
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        let rho_text = rho.to_string_lossy().into_owned();
        let extra_args: Vec<&str> = match extra {
            "water" => vec!["--water-density", "1000", "--water-surface", "500"],
            "density raster" => vec!["--density-raster", &rho_text],
            "field inner values" => vec![
                "--field-inner-col",
                "field_tc",
                "--field-inner-radius",
                "20m",
            ],
            _ => Vec::new(),
        };
        args.extend(extra_args.iter().map(|s| s.to_string()));
        let out_dir = dir.make_dir(&format!("out{k}"));
        let out = match cmd {
            "map" => {
                args.extend(["--spacing".to_string(), "300m".to_string()]);
                Some(out_dir.join("t.tif"))
            }
            "plan" => None,
            _ => Some(out_dir.join("t.csv")),
        };
        if let Some(o) = &out {
            args.extend(["--out".to_string(), o.to_string_lossy().into_owned()]);
        }
        let argv: Vec<&str> = args.iter().map(String::as_str).collect();
        let output = command(&dir, cmd, &dems, Some(&st), &argv)
            .output()
            .expect("run ringsum");
        let stderr = String::from_utf8_lossy(&output.stderr)
            .trim_end()
            .to_string();
        let stdout = String::from_utf8_lossy(&output.stdout).to_string();
        let written = common::entries(&out_dir);
        match output.status.code() {
            Some(0) => {
                succeeded += 1;
                if let Err(e) = well_formed(cmd, out.as_deref(), &stdout, &written) {
                    failures.push(format!("{combo}: succeeded but {e}"));
                }
            }
            Some(code @ (1 | 2)) => {
                if stderr.lines().count() != 1 {
                    failures.push(format!(
                        "{combo}: refused with status {code} but {} lines on stderr: {stderr}",
                        stderr.lines().count()
                    ));
                }
                if !written.is_empty() {
                    failures.push(format!(
                        "{combo}: refused with status {code} but left {written:?}"
                    ));
                }
                refused.push(format!("{combo} -> status {code}: {stderr}"));
            }
            other => failures.push(format!("{combo}: exit status {other:?}: {stderr}")),
        }
    }
    eprintln!(
        "{} combination(s) run ({}), {succeeded} succeeded, {} refused:",
        rows.len(),
        if full {
            "the full product"
        } else {
            "a strength-3 covering array"
        },
        refused.len()
    );
    for r in &refused {
        eprintln!("  refused: {r}");
    }
    if !failures.is_empty() {
        panic!(
            "{} combination(s) neither succeeded cleanly nor were refused cleanly:\n  {}",
            failures.len(),
            failures.join("\n  ")
        );
    }
}

/// Whether a successful run's output is well formed: the table with a finite `tc_mgal`
/// on every row and no NaN anywhere, the map with computed nodes, the plan's text
/// without NaN; and no other file in the output folder but the output's run record.
fn well_formed(
    cmd: &str,
    out: Option<&Path>,
    stdout: &str,
    written: &[String],
) -> Result<(), String> {
    let expected: Vec<String> = out
        .map(|o| {
            let name = o.file_name().unwrap().to_string_lossy().into_owned();
            vec![name.clone(), format!("{name}.run.json")]
        })
        .unwrap_or_default();
    if written != expected {
        return Err(format!("the output folder holds {written:?}"));
    }
    let bad = |s: &str| {
        let l = s.to_ascii_lowercase();
        l.contains("nan") || l.contains("inf")
    };
    match cmd {
        "plan" => {
            if stdout.trim().is_empty() || stdout.contains("NaN") || stdout.contains(" inf") {
                return Err(format!("the plan reads: {stdout}"));
            }
        }
        "map" => {
            let grid = read_dem(out.unwrap()).map_err(|e| format!("the map: {e:?}"))?;
            if grid.heights.iter().all(|v| v.is_nan()) {
                return Err("the map has no computed node".into());
            }
            if grid.heights.iter().any(|v| v.is_infinite()) {
                return Err("the map has an infinite node".into());
            }
        }
        _ => {
            let t = Csv::read(out.unwrap());
            if t.rows.is_empty() {
                return Err("the table is empty".into());
            }
            let c = t.col("tc_mgal");
            for r in &t.rows {
                match r[c].parse::<f64>() {
                    Ok(v) if v.is_finite() => {}
                    _ => return Err(format!("a row has tc_mgal '{}': {r:?}", r[c])),
                }
                if r.iter().any(|cell| bad(cell)) {
                    return Err(format!("a row holds NaN or inf: {r:?}"));
                }
            }
        }
    }
    Ok(())
}
