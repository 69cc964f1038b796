//! End-to-end runs of the `ringsum` binary: the output table of a good run, threads and
//! quiet mode, stations in another CRS, every refused input, and the help texts.

#[macro_use]
mod common;

use common::{entries, fixture, ringsum, Csv, TestDir, TEST_CRS};
use ringsum::dem::Dem;
use std::path::{Path, PathBuf};

/// Columns of the `correct` table when the stations are in the DEM's CRS.
const COLUMNS: [&str; 14] = [
    "station",
    "x",
    "y",
    "lon",
    "lat",
    "elev_m",
    "dem_elev_m",
    "elev_minus_dem_m",
    "tc_mgal",
    "tc_inner_mgal",
    "tc_near_mgal",
    "tc_mid_mgal",
    "tc_far_mgal",
    "coverage",
];

/// Western and northern edges of the test DEM (UTM 33N, m).
const X0: f64 = 500_000.0;
const Y0: f64 = 5_002_000.0;

/// A smooth hill on a gentle slope: 80 x 80 cells of 25 m (2 km square), heights 300-430 m.
fn hill_dem() -> Dem {
    Dem::from_fn("hill", 80, 80, X0, Y0, 25.0, |x, y| {
        let (dx, dy) = (x - (X0 + 1100.0), y - (Y0 - 900.0));
        300.0 + 120.0 * (-(dx * dx + dy * dy) / (2.0 * 300.0 * 300.0)).exp() + 0.01 * (x - X0)
    })
}

/// Stations on a 6 x 6 grid in the middle kilometre of the test DEM, off the cell
/// centres, with heights a few metres off the DEM.
fn grid_stations() -> Vec<(String, f64, f64, f64)> {
    let mut out = Vec::new();
    for i in 0..6 {
        for j in 0..6 {
            let x = X0 + 520.0 + 190.0 * i as f64 + 3.3;
            let y = Y0 - 520.0 - 190.0 * j as f64 - 7.1;
            out.push((format!("S{i}{j}"), x, y, 350.0 + 2.5 * (i + j) as f64));
        }
    }
    out
}

fn station_text(stations: &[(String, f64, f64, f64)]) -> String {
    let mut text = String::from("station,x,y,elev\n");
    for (id, x, y, elev) in stations {
        text.push_str(&format!("{id},{x},{y},{elev}\n"));
    }
    text
}

/// A folder with the hill DEM and the grid stations.
struct Setup {
    dir: TestDir,
    dem: PathBuf,
    stations: PathBuf,
}

fn setup() -> Setup {
    let dir = TestDir::new();
    let dem = dir.write_dem("hill.tif", &hill_dem());
    let stations = dir.write_text("stations.csv", &station_text(&grid_stations()));
    Setup { dir, dem, stations }
}

impl Setup {
    /// `ringsum correct` on the setup's DEM and stations with a 400 m outer radius.
    fn correct(&self) -> assert_cmd::Command {
        let mut cmd = ringsum(&self.dir);
        cmd.arg("correct")
            .arg("--dem")
            .arg(&self.dem)
            .arg("--stations")
            .arg(&self.stations)
            .args(["--outer-radius", "400m"]);
        cmd
    }
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8(bytes.to_vec()).expect("UTF-8 output")
}

// ---------------------------------------------------------------------------------------
// Good runs
// ---------------------------------------------------------------------------------------

#[test]
fn good_run_writes_the_documented_table() {
    let s = setup();
    let out_dir = s.dir.make_dir("out");
    let out = out_dir.join("tc.csv");
    let assert = s.correct().arg("--out").arg(&out).assert().success();
    let output = assert.get_output();
    assert!(output.stdout.is_empty(), "stdout: {}", text(&output.stdout));
    // stderr is not a terminal here: no progress bar, only the one-line summary.
    let stderr = text(&output.stderr);
    assert_eq!(stderr.lines().count(), 1, "stderr: {stderr:?}");
    assert!(stderr.starts_with("ringsum: 36 stations in "), "{stderr:?}");
    assert!(
        stderr.contains("written to") && stderr.contains("tc.csv"),
        "{stderr:?}"
    );
    assert!(
        !stderr.contains('\r') && !stderr.contains("ETA"),
        "{stderr:?}"
    );
    // Only the table and its run record in the output folder, no temporary file left.
    assert_eq!(entries(&out_dir), ["tc.csv", "tc.csv.run.json"]);

    let table = Csv::read(&out);
    assert_eq!(table.headers, COLUMNS);
    let stations = grid_stations();
    assert_eq!(table.rows.len(), stations.len());
    for (i, (id, x, y, elev)) in stations.iter().enumerate() {
        assert_eq!(table.get(i, "station"), id, "input order is kept");
        assert_eq!(table.num(i, "x"), *x);
        assert_eq!(table.num(i, "y"), *y);
        assert_eq!(table.get(i, "elev_m"), format!("{elev:.3}"));
        let dem = table.num(i, "dem_elev_m");
        assert_close!(table.num(i, "elev_minus_dem_m"), elev - dem, 1.5e-3, "{id}");
        let tc = table.get(i, "tc_mgal");
        let (whole, decimals) = tc.split_once('.').expect("a decimal point");
        assert!(
            decimals.len() == 4 && decimals.chars().all(|c| c.is_ascii_digit()),
            "{id}: tc_mgal '{tc}' has not 4 decimals"
        );
        assert!(whole.chars().all(|c| c.is_ascii_digit()), "{id}: '{tc}'");
        // Planar or spherical at 400 m, the correction of a hill is positive.
        assert!(table.num(i, "tc_mgal") > 0.0, "{id}: {tc}");
        assert_eq!(table.get(i, "coverage"), "1.0000", "{id}");
    }
}

#[test]
fn demo_runs_its_three_dems_to_the_standard_radius() {
    // `ringsum demo` from a folder without demo-dem/: it takes the source tree's scenario
    // (demo-dem/README.md), the 30 m, 3 arc-second and 500 m DEMs, to 166.7 km.
    let dir = TestDir::new();
    let assert = ringsum(&dir)
        .args(["demo", "--out", "run/tc.csv"])
        .assert()
        .success();
    let stderr = text(&assert.get_output().stderr);
    for words in [
        "quillerun_30m.tif",
        "quillerun_3s_lonlat.tif",
        "quillerun_500m.tif",
        "outer radius 166.7km",
        "zoned engine",
        "ringsum: 40 stations in ",
    ] {
        assert!(stderr.contains(words), "'{words}' not in {stderr:?}");
    }
    let table = Csv::read(&dir.path().join("run/tc.csv"));
    assert_eq!(table.rows.len(), 40);
    for col in [
        "coverage_dem1",
        "coverage_dem2",
        "coverage_dem3",
        "dems_far",
    ] {
        assert!(table.headers.iter().any(|h| h == col), "no {col}");
    }
    for i in 0..table.rows.len() {
        let id = table.get(i, "station").to_string();
        assert_eq!(table.get(i, "coverage"), "1.0000", "{id}");
        // Each DEM serves a part: the 30 m grid the inner zone, the 500 m grid the far zone.
        assert_eq!(table.get(i, "dems_inner"), "1", "{id}");
        assert!(table.get(i, "dems_mid").contains('2'), "{id}");
        assert!(table.get(i, "dems_far").ends_with('3'), "{id}");
        let served: f64 = (1..=3)
            .map(|k| table.num(i, &format!("coverage_dem{k}")))
            .sum();
        assert_close!(
            served,
            1.0,
            2e-4,
            "{id}: the DEMs' shares add up to the disc"
        );
        // The 30 m grid (36 km square) holds 1296 km2 of the 87,300 km2 disc.
        assert_close!(table.num(i, "coverage_dem1"), 0.0148, 1e-4, "{id}");
        // Ridges all round: every station has a positive far zone and a large TC.
        assert!(table.num(i, "tc_far_mgal") > 1.0, "{id}");
        assert!(table.num(i, "tc_mgal") > 15.0, "{id}");
    }
}

#[test]
fn dash_writes_the_same_table_to_stdout() {
    let s = setup();
    let out_dir = s.dir.make_dir("out");
    let out = out_dir.join("tc.csv");
    s.correct()
        .args(["--quiet", "--out"])
        .arg(&out)
        .assert()
        .success();
    let assert = s
        .correct()
        .args(["--quiet", "--out", "-"])
        .assert()
        .success();
    let stdout = assert.get_output().stdout.clone();
    assert_eq!(text(&stdout), std::fs::read_to_string(&out).unwrap());
    assert!(text(&stdout).starts_with(&(COLUMNS.join(",") + "\n")));
    // Nothing written next to the run either.
    assert_eq!(entries(s.dir.path()), ["hill.tif", "out", "stations.csv"]);
}

#[test]
fn one_and_two_threads_give_identical_bytes() {
    let s = setup();
    let run = |threads: &str| {
        s.correct()
            .args(["--quiet", "--convention", "spherical", "--threads", threads])
            .args(["--out", "-"])
            .assert()
            .success()
            .get_output()
            .stdout
            .clone()
    };
    let one = run("1");
    let two = run("2");
    assert!(!one.is_empty());
    assert!(
        one == two,
        "1 thread:\n{}\n2 threads:\n{}",
        text(&one),
        text(&two)
    );
}

#[test]
fn quiet_prints_nothing_on_stderr() {
    let s = setup();
    let out = s.dir.make_dir("out").join("tc.csv");
    s.correct()
        .arg("--quiet")
        .arg("--out")
        .arg(&out)
        .assert()
        .success()
        .stderr("")
        .stdout("");
    assert!(out.is_file());
    s.correct()
        .args(["-q", "--out", "-"])
        .assert()
        .success()
        .stderr("");
}

#[test]
fn stations_in_lon_lat_give_the_same_correction() {
    // Longitude/latitude of the Jacksboro stations from fixtures/pyproj_transforms.csv
    // (pyproj 3.7.2 / PROJ 9.5.1, EPSG:32616 -> EPSG:4326, always_xy); ringsum converts
    // them back to the DEM's UTM zone 16N with PROJ.
    let transforms = Csv::read(&fixture("pyproj_transforms.csv"));
    let utm = Csv::read(&fixture("jacksboro_stations.csv"));
    let mut lonlat = String::from("station,x,y,elev\n");
    let mut lonlat_named = String::from("station,lon,lat,elev\n");
    for i in 0..utm.rows.len() {
        let (x, y) = (utm.num(i, "x"), utm.num(i, "y"));
        let row = (0..transforms.rows.len())
            .find(|&j| {
                transforms.get(j, "src_crs") == "EPSG:32616"
                    && transforms.get(j, "dst_crs") == "EPSG:4326"
                    && transforms.num(j, "x_in") == x
                    && transforms.num(j, "y_in") == y
            })
            .expect("the station's row in pyproj_transforms.csv");
        let (lon, lat) = (transforms.get(row, "x_out"), transforms.get(row, "y_out"));
        let (id, elev) = (utm.get(i, "station"), utm.get(i, "elev"));
        lonlat.push_str(&format!("{id},{lon},{lat},{elev}\n"));
        lonlat_named.push_str(&format!("{id},{lon},{lat},{elev}\n"));
    }
    let dir = TestDir::new();
    let geo = dir.write_text("lonlat.csv", &lonlat);
    let geo_named = dir.write_text("lonlat_named.csv", &lonlat_named);
    let run = |stations: &Path, crs: Option<&str>| {
        let mut cmd = ringsum(&dir);
        cmd.arg("correct")
            .arg("--dem")
            .arg(fixture("jacksboro_utm.tif"))
            .arg("--stations")
            .arg(stations)
            .args(["--outer-radius", "2km", "--quiet", "--out", "-"]);
        if let Some(crs) = crs {
            cmd.args(["--stations-crs", crs]);
        }
        Csv::parse(&text(&cmd.assert().success().get_output().stdout))
    };
    let reference = run(&fixture("jacksboro_stations.csv"), None);
    assert_eq!(reference.headers, COLUMNS);
    let mut with_xy = COLUMNS.to_vec();
    with_xy.extend(["x_dem", "y_dem"]);
    // --stations-crs EPSG:4326 on x,y columns, and lon,lat columns (which imply it).
    for table in [run(&geo, Some("EPSG:4326")), run(&geo_named, None)] {
        assert_eq!(table.headers, with_xy);
        assert_eq!(table.rows.len(), 8);
        for i in 0..8 {
            let id = reference.get(i, "station");
            assert_eq!(table.get(i, "station"), id);
            // The converted position is the UTM one (PROJ and pyproj agree to well under
            // a millimetre; x_dem, y_dem have 3 decimals).
            assert_close!(table.num(i, "x_dem"), reference.num(i, "x"), 1e-3, "{id} x");
            assert_close!(table.num(i, "y_dem"), reference.num(i, "y"), 1e-3, "{id} y");
            // lon, lat are on the DEM's datum (WGS 84): the file's own degrees back.
            assert_close!(table.num(i, "lon"), table.num(i, "x"), 1e-8, "{id} lon");
            assert_close!(table.num(i, "lat"), table.num(i, "y"), 1e-8, "{id} lat");
            // The UTM run's lon, lat (ringsum through PROJ) are pyproj's.
            assert_close!(reference.num(i, "lon"), table.num(i, "x"), 1e-8, "{id} lon");
            assert_close!(reference.num(i, "lat"), table.num(i, "y"), 1e-8, "{id} lat");
            for col in [
                "elev_m",
                "dem_elev_m",
                "elev_minus_dem_m",
                "tc_mgal",
                "coverage",
            ] {
                assert_eq!(table.get(i, col), reference.get(i, col), "{id} {col}");
            }
        }
    }
}

#[test]
fn allow_gaps_reports_the_coverage() {
    // The same stations as the refused run in `radius_past_the_dem_is_refused`: with
    // --allow-gaps the run succeeds and says how much of each disc had data.
    let s = setup();
    let out_dir = s.dir.make_dir("out");
    let out = out_dir.join("tc.csv");
    let mut cmd = ringsum(&s.dir);
    cmd.arg("correct")
        .arg("--dem")
        .arg(&s.dem)
        .arg("--stations")
        .arg(&s.stations)
        .args(["--outer-radius", "800m", "--allow-gaps", "--quiet", "--out"])
        .arg(&out)
        .assert()
        .success();
    let table = Csv::read(&out);
    let mut partial = 0;
    for i in 0..table.rows.len() {
        let coverage = table.num(i, "coverage");
        assert!(coverage > 0.5 && coverage <= 1.0, "{coverage}");
        if coverage < 1.0 {
            partial += 1;
        }
        assert!(table.num(i, "tc_mgal").is_finite());
    }
    // The corner stations (520 m from two edges) see about 0.75 of an 800 m disc.
    let corner = table.station_row("S00");
    assert!(
        table.num(corner, "coverage") < 0.8,
        "{}",
        table.get(corner, "coverage")
    );
    assert!(partial > 0);
    assert_eq!(entries(&out_dir), ["tc.csv", "tc.csv.run.json"]);
}

// ---------------------------------------------------------------------------------------
// Refused inputs: exit status 1, one line on stderr, nothing written
// ---------------------------------------------------------------------------------------

/// Runs `cmd` (whose output goes into `dir/out/`), and checks that it is refused the
/// documented way: exit status 1, nothing on stdout, a single line on stderr starting
/// `ringsum: ` and holding every key word, no file in the output folder and nothing new in
/// the test folder. Returns the message.
fn refused(dir: &TestDir, mut cmd: assert_cmd::Command, key_words: &[&str]) -> String {
    let out_dir = dir.join("out");
    let before = entries(dir.path());
    let output = cmd.assert().code(1).get_output().clone();
    assert!(output.stdout.is_empty(), "stdout: {}", text(&output.stdout));
    let stderr = text(&output.stderr);
    assert_eq!(
        stderr.lines().count(),
        1,
        "stderr is not one line: {stderr:?}"
    );
    assert!(stderr.ends_with('\n'));
    assert!(stderr.starts_with("ringsum: "), "{stderr:?}");
    for word in key_words {
        assert!(stderr.contains(word), "'{word}' not in {stderr:?}");
    }
    if out_dir.is_dir() {
        assert!(
            entries(&out_dir).is_empty(),
            "left in out/: {:?}",
            entries(&out_dir)
        );
    }
    assert_eq!(
        entries(dir.path()),
        before,
        "files appeared next to the run"
    );
    stderr.trim_end().to_string()
}

/// `ringsum correct` with the given DEM and stations, output `out/tc.csv` (the folder is
/// created), and no outer radius.
fn correct_into_out_no_radius(dir: &TestDir, dem: &Path, stations: &Path) -> assert_cmd::Command {
    let out = dir.make_dir("out").join("tc.csv");
    let mut cmd = ringsum(dir);
    cmd.arg("correct")
        .arg("--dem")
        .arg(dem)
        .arg("--stations")
        .arg(stations)
        .arg("--out")
        .arg(out);
    cmd
}

/// As [`correct_into_out_no_radius`], with a 400 m outer radius.
fn correct_into_out(dir: &TestDir, dem: &Path, stations: &Path) -> assert_cmd::Command {
    let mut cmd = correct_into_out_no_radius(dir, dem, stations);
    cmd.args(["--outer-radius", "400m"]);
    cmd
}

#[test]
fn missing_dem_file_is_refused() {
    let s = setup();
    let missing = s.dir.join("no_such_dem.tif");
    let cmd = correct_into_out(&s.dir, &missing, &s.stations);
    refused(&s.dir, cmd, &["no_such_dem.tif", "not found", "--dem"]);
}

#[test]
fn missing_station_file_is_refused() {
    let s = setup();
    let missing = s.dir.join("no_such_stations.csv");
    let cmd = correct_into_out(&s.dir, &s.dem, &missing);
    refused(
        &s.dir,
        cmd,
        &["no_such_stations.csv", "not found", "--stations"],
    );
}

#[test]
fn raster_gdal_cannot_open_is_refused() {
    let s = setup();
    let fake = s.dir.write_text("fake.tif", "this is not a raster\n");
    let cmd = correct_into_out(&s.dir, &fake, &s.stations);
    refused(
        &s.dir,
        cmd,
        &["fake.tif", "not a raster GDAL can read", "give a GeoTIFF"],
    );
}

#[test]
fn stations_in_metres_on_a_geographic_dem_are_refused() {
    // A geographic DEM is read as is (tests/geographic.rs); stations whose coordinates are
    // in metres then lie far outside it, and the message says so.
    let s = setup();
    let geo = Dem::from_fn("geo", 40, 40, 14.9, 45.2, 0.001, |_, _| 300.0);
    let path = s.dir.write_dem_crs("geographic.tif", &geo, "EPSG:4326");
    let cmd = correct_into_out(&s.dir, &path, &s.stations);
    refused(
        &s.dir,
        cmd,
        &[
            "stations.csv",
            "none of the DEMs",
            "geographic.tif",
            "--stations-crs",
        ],
    );
}

#[test]
fn rotated_dem_is_refused() {
    use gdal::raster::Buffer;
    use gdal::spatial_ref::SpatialRef;
    use gdal::DriverManager;
    let s = setup();
    let path = s.dir.join("rotated.tif");
    {
        let driver = DriverManager::get_driver_by_name("GTiff").unwrap();
        let mut ds = driver
            .create_with_band_type::<f32, _>(&path, 40, 40, 1)
            .unwrap();
        // 25 m cells turned by about 11 degrees.
        ds.set_geo_transform(&[X0, 24.5, 4.9, Y0, 4.9, -24.5])
            .unwrap();
        ds.set_spatial_ref(&SpatialRef::from_definition(TEST_CRS).unwrap())
            .unwrap();
        let mut band = ds.rasterband(1).unwrap();
        let mut buffer = Buffer::new((40, 40), vec![300.0f32; 1600]);
        band.write((0, 0), (40, 40), &mut buffer).unwrap();
    }
    let cmd = correct_into_out(&s.dir, &path, &s.stations);
    refused(&s.dir, cmd, &["rotated.tif", "rotated", "gdalwarp"]);
}

#[test]
fn station_file_without_a_height_column_is_refused() {
    let s = setup();
    let stations = s.dir.write_text(
        "no_height.csv",
        "station,x,y,height_above\nA,500900,5001100,350\n",
    );
    let cmd = correct_into_out(&s.dir, &s.dem, &stations);
    refused(
        &s.dir,
        cmd,
        &[
            "no_height.csv",
            "station height",
            "columns found: station, x, y, height_above",
            "--elev-col",
        ],
    );
}

#[test]
fn bad_station_values_are_refused_with_their_line() {
    // Non-numeric, empty and NaN values, each on a given line of the file (line 1 is the
    // header).
    let cases = [
        (
            "station,x,y,elev\nA,500900,5001100,350\nB,500950,5001150,abc\n",
            vec![
                "line 3",
                "station B",
                "'elev'",
                "'abc'",
                "not a number",
                "fix the value",
            ],
        ),
        (
            "station,x,y,elev\nA,500900,5001100,350\nB,500950,5001150,351\nC,,5001200,352\n",
            vec!["line 4", "station C", "'x' is empty", "fix the value"],
        ),
        (
            "station,x,y,elev\nA,500900,NaN,350\n",
            vec![
                "line 2",
                "station A",
                "'y'",
                "not a finite number",
                "fix the value",
            ],
        ),
    ];
    for (content, words) in cases {
        let s = setup();
        let stations = s.dir.write_text("bad_values.csv", content);
        let cmd = correct_into_out(&s.dir, &s.dem, &stations);
        let mut all = words.clone();
        all.push("bad_values.csv");
        refused(&s.dir, cmd, &all);
    }
}

#[test]
fn duplicate_station_id_is_refused() {
    let s = setup();
    let stations = s.dir.write_text(
        "dupes.csv",
        "station,x,y,elev\nA,500900,5001100,350\nB,500950,5001150,351\nA,501000,5001200,352\n",
    );
    let cmd = correct_into_out(&s.dir, &s.dem, &stations);
    refused(
        &s.dir,
        cmd,
        &[
            "dupes.csv",
            "line 4",
            "station A",
            "twice",
            "first on line 2",
            "unique id",
        ],
    );
}

#[test]
fn station_outside_the_dem_is_refused() {
    let s = setup();
    // FAR is 3 km east of the DEM's eastern edge.
    let stations = s.dir.write_text(
        "outside.csv",
        "station,x,y,elev\nA,500900,5001100,350\nFAR,505000,5001100,350\n",
    );
    let cmd = correct_into_out(&s.dir, &s.dem, &stations);
    refused(
        &s.dir,
        cmd,
        &[
            "outside.csv",
            "FAR (line 3)",
            "3km outside",
            "hill.tif",
            "--stations-crs",
        ],
    );
}

#[test]
fn station_on_nodata_is_refused() {
    let s = setup();
    let holed = Dem::from_fn("holed", 80, 80, X0, Y0, 25.0, |x, y| {
        if (x - 500_900.0).abs() < 100.0 && (y - 5_001_100.0).abs() < 100.0 {
            f64::NAN
        } else {
            300.0
        }
    });
    let dem = s.dir.write_dem("holed.tif", &holed);
    let stations = s
        .dir
        .write_text("st.csv", "station,x,y,elev\nA,500900,5001100,350\n");
    let cmd = correct_into_out(&s.dir, &dem, &stations);
    refused(
        &s.dir,
        cmd,
        &["st.csv", "A (line 2) is on nodata", "holed.tif"],
    );
}

#[test]
fn radius_past_the_dem_is_refused() {
    // An 800 m radius from stations 520 m inside the DEM reaches past its edges.
    let s = setup();
    let out = s.dir.make_dir("out").join("tc.csv");
    let mut cmd = ringsum(&s.dir);
    cmd.arg("correct")
        .arg("--dem")
        .arg(&s.dem)
        .arg("--stations")
        .arg(&s.stations)
        .args(["--outer-radius", "800m", "--out"])
        .arg(out);
    let msg = refused(
        &s.dir,
        cmd,
        &[
            "800m outer radius",
            "reaching past",
            "hill.tif",
            "S00 coverage 0.",
            "--allow-gaps",
            "smaller --outer-radius",
        ],
    );
    // Many stations are affected: the list is cut and says how many more there are.
    assert!(msg.contains("more"), "{msg}");
}

#[test]
fn radius_into_nodata_is_refused() {
    let s = setup();
    // A nodata hole 150 m east of the only station, inside its 400 m disc.
    let holed = Dem::from_fn("holed", 80, 80, X0, Y0, 25.0, |x, y| {
        if (x - 501_150.0).abs() < 50.0 && (y - 5_001_100.0).abs() < 50.0 {
            f64::NAN
        } else {
            300.0 + 0.01 * (x - X0)
        }
    });
    let dem = s.dir.write_dem("holed.tif", &holed);
    let stations = s
        .dir
        .write_text("st.csv", "station,x,y,elev\nA,501000,5001100,350\n");
    let cmd = correct_into_out(&s.dir, &dem, &stations);
    let msg = refused(
        &s.dir,
        cmd,
        &[
            "1 station(s)",
            "into nodata",
            "A coverage 0.9",
            "--allow-gaps",
        ],
    );
    // 16 of the about 800 cells of the disc are nodata: coverage 0.9xxx, written with 4
    // decimals.
    assert!(
        msg.contains("A coverage 0.98") || msg.contains("A coverage 0.97"),
        "{msg}"
    );
    // With --allow-gaps the same run succeeds and reports the coverage.
    let out = s.dir.join("out").join("tc.csv");
    ringsum(&s.dir)
        .arg("correct")
        .arg("--dem")
        .arg(&dem)
        .arg("--stations")
        .arg(&stations)
        .args(["--outer-radius", "400m", "--allow-gaps", "--quiet", "--out"])
        .arg(&out)
        .assert()
        .success();
    let table = Csv::read(&out);
    let coverage = table.num(0, "coverage");
    assert!(coverage > 0.95 && coverage < 1.0, "{coverage}");
}

/// `ringsum correct` on the setup with extra arguments, output into `out/tc.csv`.
fn correct_with(s: &Setup, extra: &[&str]) -> assert_cmd::Command {
    let mut cmd = correct_into_out(&s.dir, &s.dem, &s.stations);
    cmd.args(extra);
    cmd
}

#[test]
fn bad_densities_are_refused() {
    // Zero, negative (given as --density=-2670) and a value in g/cm3.
    for value in ["0", "-2670", "2.67"] {
        let s = setup();
        let arg = format!("--density={value}");
        let cmd = correct_with(&s, &[&arg]);
        refused(&s.dir, cmd, &["--density", value, "give kg/m3, e.g. 2670"]);
    }
}

#[test]
fn negative_density_as_separate_word_is_refused_with_the_density_message() {
    let s = setup();
    let cmd = correct_with(&s, &["--density", "-2670"]);
    refused(&s.dir, cmd, &["--density", "give kg/m3, e.g. 2670"]);
}

#[test]
fn bad_radii_are_refused() {
    for (value, words) in [
        (
            "0",
            vec!["--outer-radius", "must be positive", "e.g. 166.7km"],
        ),
        (
            "0km",
            vec!["--outer-radius", "must be positive", "e.g. 166.7km"],
        ),
        (
            "-5km",
            vec!["--outer-radius", "must be positive", "e.g. 166.7km"],
        ),
        (
            "ten km",
            vec!["--outer-radius", "'ten km' is not a length", "m or km"],
        ),
        (
            "5 miles",
            vec!["--outer-radius", "is not a length", "e.g. 166.7km"],
        ),
    ] {
        let s = setup();
        let mut cmd = correct_into_out_no_radius(&s.dir, &s.dem, &s.stations);
        cmd.arg(format!("--outer-radius={value}"));
        refused(&s.dir, cmd, &words);
    }
}

#[test]
fn negative_radius_as_separate_word_is_refused_with_the_radius_message() {
    let s = setup();
    let mut cmd = correct_into_out_no_radius(&s.dir, &s.dem, &s.stations);
    cmd.args(["--outer-radius", "-5km"]);
    refused(&s.dir, cmd, &["--outer-radius", "must be positive"]);
}

#[test]
fn output_in_a_missing_folder_is_refused() {
    let s = setup();
    let target = s.dir.join("no_such_folder").join("tc.csv");
    let mut cmd = ringsum(&s.dir);
    cmd.arg("correct")
        .arg("--dem")
        .arg(&s.dem)
        .arg("--stations")
        .arg(&s.stations)
        .args(["--outer-radius", "400m", "--out"])
        .arg(&target);
    refused(
        &s.dir,
        cmd,
        &["no_such_folder", "does not exist", "create it first"],
    );
    assert!(!s.dir.join("no_such_folder").exists());
}

#[test]
fn output_that_is_not_csv_is_refused() {
    for name in ["tc.txt", "tc", "tc.csv.gz"] {
        let s = setup();
        let out_dir = s.dir.make_dir("out");
        let mut cmd = ringsum(&s.dir);
        cmd.arg("correct")
            .arg("--dem")
            .arg(&s.dem)
            .arg("--stations")
            .arg(&s.stations)
            .args(["--outer-radius", "400m", "--out"])
            .arg(out_dir.join(name));
        refused(
            &s.dir,
            cmd,
            &[
                name,
                "give a path with one of these endings",
                "- for CSV on standard output",
            ],
        );
    }
}

#[test]
fn zero_threads_are_refused() {
    let s = setup();
    let cmd = correct_with(&s, &["--threads", "0"]);
    refused(&s.dir, cmd, &["--threads 0", "at least one thread"]);
}

// ---------------------------------------------------------------------------------------
// Help texts
// ---------------------------------------------------------------------------------------

fn help(args: &[&str]) -> String {
    let dir = TestDir::new();
    text(
        &ringsum(&dir)
            .args(args)
            .assert()
            .success()
            .get_output()
            .stdout,
    )
}

/// The exit statuses as the help gives them (src/cli.rs).
fn assert_exit_statuses(help: &str) {
    for words in [
        "Exit status: 0 success",
        "1 the input or a result was refused",
        "2 the command line itself is wrong",
    ] {
        assert!(help.contains(words), "'{words}' not in:\n{help}");
    }
}

/// That the help names both methods and both inner models.
fn assert_methods_listed(help: &str) {
    for words in ["zoned", "exact", "surface", "prisms", "--zones"] {
        assert!(help.contains(words), "no '{words}' in:\n{help}");
    }
}

#[test]
fn top_level_help_gives_the_exit_statuses() {
    assert_exit_statuses(&help(&["--help"]));
}

#[test]
fn correct_help_lists_the_methods_and_inner_models() {
    assert_methods_listed(&help(&["correct", "--help"]));
}

#[test]
fn correct_help_gives_the_exit_statuses() {
    assert_exit_statuses(&help(&["correct", "--help"]));
}

#[test]
fn a_wrong_command_line_exits_with_status_2() {
    // As the help says: 2 when the command line itself is wrong (clap's own message).
    let dir = TestDir::new();
    ringsum(&dir)
        .args(["correct", "--no-such-option"])
        .assert()
        .code(2);
    ringsum(&dir)
        .args(["correct", "--method", "zoned", "--dem", "a.tif"])
        .assert()
        .code(2);
}
