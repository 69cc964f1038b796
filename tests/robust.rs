//! Nothing lost, everything recorded: outputs never replace inputs, sizes no run can take
//! are refused before any work, an interrupted run leaves no file, every kind of station
//! file and DEM is read or refused by name, the GIS outputs read back through GDAL, and
//! the run record holds what the run read and how.
//!
//! The refusals are the cases of tests/common/bad_input.rs (one test each here; the
//! README's "Bad input" table is made from the same cases by tests/docs.rs).

#[macro_use]
mod common;

use common::bad_input::{self, case, refuse, sha256, void_dem, void_station, CASES};
use common::{entries, fixture, ringsum, Csv, TestDir};
use gdal::vector::{LayerAccess, OGRFieldType, OGRwkbGeometryType};
use std::path::{Path, PathBuf};
use std::process::Stdio;
use std::time::{Duration, Instant};

// ---------------------------------------------------------------------------------------
// Refusals: one test per case
// ---------------------------------------------------------------------------------------

/// One test per bad-input case, and the list of the cases they cover.
macro_rules! refusals {
    ($($test:ident => $name:literal),* $(,)?) => {
        $(
            #[test]
            fn $test() {
                refuse(case($name));
            }
        )*
        const TESTED: &[&str] = &[$($name),*];
    };
}

refusals! {
    out_is_the_station_file => "out-is-stations",
    out_is_a_symlink_to_the_station_file => "out-is-stations-by-symlink",
    out_is_the_station_file_spelled_through_a_folder => "out-is-stations-spelled-otherwise",
    out_is_the_station_file_spelled_with_dot => "out-is-stations-dot",
    out_is_a_hard_link_to_the_station_file => "out-is-stations-by-hard-link",
    sweep_summary_is_the_out_table => "summary-is-out",
    map_out_is_the_dem => "map-out-is-dem",
    record_is_an_input => "record-is-input",
    the_default_record_is_an_input => "default-record-is-input",
    out_is_a_folder => "out-is-a-folder",
    out_folder_does_not_exist => "out-folder-missing",
    out_folder_takes_no_new_files => "out-folder-takes-no-files",
    outer_radius_of_1e30_km => "outer-radius-1e30km",
    outer_radius_inside_the_inner_zone => "outer-radius-inside-inner-zone",
    a_hundred_thousand_threads => "threads-100000",
    a_ring_of_a_hundred_million_compartments => "plan-ring-of-1e8-compartments",
    plots_of_100000_pixels_a_side => "plot-size-100000x100000",
    a_map_grid_over_the_node_limit => "map-grid-over-the-node-limit",
    an_empty_station_file => "empty-station-file",
    a_header_without_stations => "header-only",
    a_utf16_station_file => "utf-16",
    a_utf16_station_file_without_bom => "utf-16-without-bom",
    a_latin1_station_file_without_the_option => "latin-1",
    a_header_naming_a_column_twice => "duplicate-header",
    an_unnamed_column_holding_values => "unnamed-column-with-values",
    a_height_of_1e308_names_its_line => "height-1e308",
    a_bad_value_after_comments_names_its_own_line => "bad-value-after-comments",
    a_raster_given_as_stations => "raster-as-stations",
    a_crs_proj_does_not_know => "bad-stations-crs",
    a_csv_given_as_dem => "csv-as-dem",
    an_int16_dem_with_undeclared_voids => "int16-dem-with-undeclared-voids",
    a_dem_cell_of_3_4e38 => "dem-cell-of-3.4e38",
}

/// Cases with a test of their own below.
const TESTED_BELOW: &[&str] = &["megabyte-header"];

#[test]
fn every_bad_input_case_is_a_test() {
    let mut listed: Vec<&str> = CASES.iter().map(|c| c.name).collect();
    let mut tested = [TESTED, TESTED_BELOW].concat();
    listed.sort_unstable();
    tested.sort_unstable();
    assert_eq!(listed, tested);
}

#[test]
fn a_megabyte_header_gives_a_short_sentence() {
    let message = refuse(case("megabyte-header"));
    // The column list is cut: the sentence stays readable.
    assert!(message.len() < 400, "{} characters", message.len());
    assert!(message.contains("..."), "{message}");
}

// ---------------------------------------------------------------------------------------
// Interrupted runs leave nothing
// ---------------------------------------------------------------------------------------

/// Starts ringsum with `args` in `dir`, waits until `ready(dir/out)` (bounded, and
/// failing if the run ends first), sends `signal` with the `kill` command, and checks
/// that the run stopped the documented way (status 130, one line) leaving `out/` empty.
fn interrupt(dir: &TestDir, args: &[String], signal: &str, ready: impl Fn(&Path) -> bool) {
    let out = dir.join("out");
    let mut child = std::process::Command::new(assert_cmd::cargo::cargo_bin("ringsum"))
        .current_dir(dir.path())
        .args(args)
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start ringsum");
    let started = Instant::now();
    while !ready(&out) {
        if let Some(status) = child.try_wait().unwrap() {
            panic!(
                "the run ended ({status}) before it was interrupted; left in out/: {:?}",
                entries(&out)
            );
        }
        assert!(
            started.elapsed() < Duration::from_secs(120),
            "the run never got there"
        );
        std::thread::sleep(Duration::from_millis(2));
    }
    let kill = std::process::Command::new("kill")
        .arg(format!("-{signal}"))
        .arg(child.id().to_string())
        .status()
        .expect("run kill");
    assert!(kill.success());
    let output = child.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(130), "{stderr}");
    assert_eq!(
        stderr.trim_end(),
        "ringsum: interrupted; nothing was written"
    );
    assert!(
        entries(&out).is_empty(),
        "left in out/: {:?}",
        entries(&out)
    );
}

/// The demo's three DEMs, exact method, three stations, one thread: seconds of work.
fn long_correct(dir: &TestDir) -> Vec<String> {
    let demo = |name: &str| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR"))
            .join("demo-dem")
            .join(name)
            .display()
            .to_string()
    };
    let stations: String = std::fs::read_to_string(demo("stations.csv"))
        .unwrap()
        .lines()
        .take(4)
        .map(|l| format!("{l}\n"))
        .collect();
    dir.write_text("stations.csv", &stations);
    dir.make_dir("out");
    let mut args: Vec<String> = vec!["correct".into()];
    for d in [
        "quillerun_30m.tif",
        "quillerun_3s_lonlat.tif",
        "quillerun_500m.tif",
    ] {
        args.extend(["--dem".into(), demo(d)]);
    }
    args.extend(
        [
            "--stations",
            "stations.csv",
            "--method",
            "exact",
            "--threads",
            "1",
            "--out",
            "out/tc.csv",
        ]
        .map(String::from),
    );
    args
}

/// `sweep` with its table and eight large plots: the table and each plot are finished
/// one after the other, each through a temporary file.
fn sweep_with_plots(dir: &TestDir) -> Vec<String> {
    std::fs::copy(fixture("jacksboro_utm.tif"), dir.join("dem.tif")).unwrap();
    std::fs::copy(fixture("jacksboro_stations.csv"), dir.join("stations.csv")).unwrap();
    dir.make_dir("out");
    let mut args: Vec<String> = [
        "sweep",
        "--dem",
        "dem.tif",
        "--stations",
        "stations.csv",
        "--outer-radius",
        "2km",
        "--out",
        "out/sweep.csv",
        "--plot-size",
        "8000x8000",
    ]
    .map(String::from)
    .to_vec();
    for k in 1..=8 {
        args.extend(["--plot".into(), format!("out/sweep{k}.png")]);
    }
    args
}

/// Whether a temporary file of a plot is in `out`.
fn drawing_a_plot(out: &Path) -> bool {
    entries(out)
        .iter()
        .any(|e| e.contains(".ringsum-partial.png"))
}

/// After a short while: the run is reading DEMs or computing, and has written nothing.
fn after_a_moment() -> impl Fn(&Path) -> bool {
    let started = Instant::now();
    move |_| started.elapsed() > Duration::from_millis(300)
}

#[test]
fn sigterm_while_computing_leaves_nothing() {
    let dir = TestDir::new();
    let args = long_correct(&dir);
    interrupt(&dir, &args, "TERM", after_a_moment());
}

#[test]
fn sigint_while_computing_leaves_nothing() {
    let dir = TestDir::new();
    let args = long_correct(&dir);
    interrupt(&dir, &args, "INT", after_a_moment());
}

#[test]
fn sigterm_while_a_plot_is_drawn_leaves_neither_it_nor_the_finished_table() {
    let dir = TestDir::new();
    let args = sweep_with_plots(&dir);
    interrupt(&dir, &args, "TERM", drawing_a_plot);
}

#[test]
fn sigint_while_a_plot_is_drawn_leaves_neither_it_nor_the_finished_table() {
    let dir = TestDir::new();
    let args = sweep_with_plots(&dir);
    interrupt(&dir, &args, "INT", drawing_a_plot);
}

#[test]
fn a_station_summary_on_standard_output_is_the_table_alone() {
    let dir = TestDir::new();
    std::fs::copy(fixture("jacksboro_stations.csv"), dir.join("stations.csv")).unwrap();
    dir.make_dir("out");
    let output = ringsum(&dir)
        .arg("sweep")
        .arg("--dem")
        .arg(fixture("jacksboro_utm.tif"))
        .args(["--stations", "stations.csv", "--outer-radius", "2km"])
        .args(["--out", "out/sweep.csv", "--station-summary", "-"])
        .assert()
        .success()
        .get_output()
        .clone();
    // Every line of standard output is a row of the summary (the parser is strict).
    let summary = Csv::parse(&String::from_utf8(output.stdout).unwrap());
    assert_eq!(summary.headers[..2], ["station", "tc_mgal"]);
    assert_eq!(summary.rows.len(), 8);
    // The words about the run go to standard error.
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(
        stderr.starts_with("ringsum sweep: 8 station(s)"),
        "{stderr}"
    );
}

// ---------------------------------------------------------------------------------------
// Station files and DEMs that are read
// ---------------------------------------------------------------------------------------

/// `correct --quiet --out -` on the Jacksboro DEM to 2 km with `stations` (in `dir`) and
/// `extra`; the table's bytes.
fn jacksboro_table(dir: &TestDir, stations: &str, extra: &[&str]) -> String {
    let output = ringsum(dir)
        .arg("correct")
        .arg("--dem")
        .arg(fixture("jacksboro_utm.tif"))
        .args(["--stations", stations, "--outer-radius", "2km"])
        .args(["--quiet", "--out", "-"])
        .args(extra)
        .assert()
        .success()
        .get_output()
        .clone();
    assert!(output.stderr.is_empty());
    String::from_utf8(output.stdout).unwrap()
}

/// The Jacksboro stations with their fields joined by `separator` (and an extra text
/// column `line`, carried to the table).
fn stations_joined(separator: &str) -> String {
    let csv = std::fs::read_to_string(fixture("jacksboro_stations.csv")).unwrap();
    csv.lines()
        .enumerate()
        .map(|(i, l)| {
            let line = if i == 0 {
                "line".to_string()
            } else {
                format!("L{}", i % 3)
            };
            let mut fields: Vec<&str> = l.split(',').collect();
            fields.push(&line);
            fields.join(separator) + "\n"
        })
        .collect()
}

/// Checks that the file written with `separator` gives the CSV's table, to the byte.
fn same_table_as_csv(separator: &str, extra: &[&str]) {
    let dir = TestDir::new();
    dir.write_text("comma.csv", &stations_joined(","));
    dir.write_text("other.txt", &stations_joined(separator));
    let csv = jacksboro_table(&dir, "comma.csv", &[]);
    assert!(
        csv.lines().next().unwrap().ends_with(",coverage,line"),
        "{csv}"
    );
    assert_eq!(csv.lines().count(), 9);
    assert_eq!(jacksboro_table(&dir, "other.txt", extra), csv);
}

#[test]
fn a_semicolon_separated_file_gives_the_csv_table() {
    same_table_as_csv(";", &[]);
}

#[test]
fn a_tab_separated_file_gives_the_csv_table() {
    same_table_as_csv("\t", &[]);
}

#[test]
fn a_space_separated_file_gives_the_csv_table() {
    same_table_as_csv("   ", &[]);
    // And when the separator is given rather than found.
    same_table_as_csv(" ", &["--delimiter", "space"]);
}

#[test]
fn a_spreadsheets_separators_at_line_ends_are_left_out() {
    let dir = TestDir::new();
    let plain = stations_joined(",");
    let padded: String = plain.lines().map(|l| format!("{l},,\n")).collect();
    dir.write_text("plain.csv", &plain);
    dir.write_text("padded.csv", &padded);
    assert_eq!(
        jacksboro_table(&dir, "padded.csv", &[]),
        jacksboro_table(&dir, "plain.csv", &[])
    );
}

#[test]
fn comment_and_empty_lines_are_skipped() {
    let dir = TestDir::new();
    let plain = stations_joined(",");
    let mut commented = String::from("# Jacksboro, 8 stations\n\n");
    for (i, line) in plain.lines().enumerate() {
        commented.push_str(line);
        commented.push('\n');
        if i % 3 == 1 {
            commented.push_str("  # checked twice\n\n");
        }
    }
    dir.write_text("plain.csv", &plain);
    dir.write_text("commented.csv", &commented);
    assert_eq!(
        jacksboro_table(&dir, "commented.csv", &[]),
        jacksboro_table(&dir, "plain.csv", &[])
    );
}

#[test]
fn latin1_is_read_with_the_option() {
    let dir = TestDir::new();
    bad_input::write_latin1(&dir);
    let text = "station,x,y,elev\nJ01,743097.34,4049213.83,573.90\nM\u{fc}ller,746293.50,4047803.25,515.24\n";
    dir.write_text("utf8.csv", text);
    let table = jacksboro_table(&dir, "latin1.csv", &["--encoding", "latin-1"]);
    assert_eq!(table, jacksboro_table(&dir, "utf8.csv", &[]));
    assert!(table.contains("\nM\u{fc}ller,746293.5,"), "{table}");
}

#[test]
fn a_declared_void_value_gives_the_tc_of_the_dem_with_nodata() {
    let dir = TestDir::new();
    void_dem::<i16>(&dir, "voids.tif", |h| h as i16, -32768, None);
    void_dem::<i16>(&dir, "nodata.tif", |h| h as i16, -32768, Some(-32768.0));
    void_station(&dir);
    let run = |dem: &str, extra: &[&str]| {
        let output = ringsum(&dir)
            .args(["correct", "--dem", dem, "--stations", "void.csv"])
            .args(["--outer-radius", "400m", "--quiet", "--out", "-"])
            .args(extra)
            .assert()
            .success()
            .get_output()
            .clone();
        String::from_utf8(output.stdout).unwrap()
    };
    let declared = run("nodata.tif", &[]);
    let given = run("voids.tif", &["--dem-nodata", "-32768"]);
    assert_eq!(given, declared);
    let table = Csv::parse(&given);
    assert!(table.num(0, "tc_mgal") > 0.0);
    assert_eq!(table.get(0, "coverage"), "1.0000");
    // The value as the refusal spells it is read back to the same cells.
    void_dem::<f32>(&dir, "huge.tif", |h| h as f32, 3.4e38, None);
    void_dem::<f32>(&dir, "huge_nodata.tif", |h| h as f32, 3.4e38, Some(3.4e38));
    assert_eq!(
        run("huge.tif", &["--dem-nodata", "3.4e38"]),
        run("huge_nodata.tif", &[])
    );
}

// ---------------------------------------------------------------------------------------
// GeoPackage and GeoJSON
// ---------------------------------------------------------------------------------------

/// A correct run on the Jacksboro stations (with a carried text column) into
/// `out/NAME`; the CSV of the same run.
fn gis_run(dir: &TestDir, name: &str) -> Csv {
    dir.write_text("stations.csv", &stations_joined(","));
    let out = dir.make_dir("out");
    for target in [name, "tc.csv"] {
        ringsum(dir)
            .arg("correct")
            .arg("--dem")
            .arg(fixture("jacksboro_utm.tif"))
            .args(["--stations", "stations.csv", "--outer-radius", "2km"])
            .args(["--quiet", "--out"])
            .arg(out.join(target))
            .assert()
            .success();
    }
    Csv::read(&out.join("tc.csv"))
}

/// Checks a layer against the CSV: one point per row, fields named and typed as the
/// columns (Real for numbers, String for the ids and text), values equal; returns each
/// point.
fn check_layer(path: &Path, csv: &Csv, epsg: i32) -> Vec<(f64, f64)> {
    let ds = gdal::Dataset::open(path).expect("GDAL opens the layer");
    assert_eq!(ds.layer_count(), 1);
    let mut layer = ds.layer(0).unwrap();
    assert_eq!(layer.feature_count(), csv.rows.len() as u64);
    let srs = layer.spatial_ref().expect("a CRS");
    assert_eq!(srs.auth_code().ok(), Some(epsg), "{}", path.display());
    let fields: Vec<(String, u32)> = layer
        .defn()
        .fields()
        .map(|f| (f.name(), f.field_type()))
        .collect();
    let names: Vec<&str> = fields.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(names, csv.headers);
    for (name, ty) in &fields {
        let expected = if name == "station" || name == "line" {
            OGRFieldType::OFTString
        } else {
            OGRFieldType::OFTReal
        };
        assert_eq!(*ty, expected, "{name}");
    }
    let mut points = Vec::new();
    for (i, feature) in layer.features().enumerate() {
        let g = feature.geometry().expect("a geometry");
        assert_eq!(g.geometry_type(), OGRwkbGeometryType::wkbPoint);
        let (x, y, _) = g.get_point(0);
        points.push((x, y));
        for (c, (name, ty)) in fields.iter().enumerate() {
            if *ty == OGRFieldType::OFTReal {
                let v = feature.field_as_double(c).unwrap().expect("a value");
                assert_eq!(v, csv.num(i, name), "row {i} {name}");
            } else {
                let v = feature.field_as_string(c).unwrap().unwrap_or_default();
                assert_eq!(v, csv.get(i, name), "row {i} {name}");
            }
        }
    }
    points
}

#[test]
fn a_geopackage_reads_back_as_the_csv_in_the_stations_crs() {
    let dir = TestDir::new();
    let csv = gis_run(&dir, "tc.gpkg");
    // The stations are in the DEM's CRS, UTM zone 16N.
    let points = check_layer(&dir.join("out/tc.gpkg"), &csv, 32616);
    for (i, (x, y)) in points.into_iter().enumerate() {
        assert_eq!((x, y), (csv.num(i, "x"), csv.num(i, "y")), "row {i}");
    }
    assert_eq!(
        entries(&dir.join("out")),
        ["tc.csv", "tc.csv.run.json", "tc.gpkg", "tc.gpkg.run.json"]
    );
}

#[test]
fn a_geopackage_of_stations_given_in_lon_lat_is_in_lon_lat() {
    let dir = TestDir::new();
    let utm = Csv::read(&fixture("jacksboro_stations.csv"));
    // The stations' lon, lat (from a first run), as the station file.
    let first = Csv::parse(&jacksboro_table(
        &dir,
        fixture("jacksboro_stations.csv").to_str().unwrap(),
        &[],
    ));
    let mut text = String::from("station,lon,lat,elev\n");
    for i in 0..first.rows.len() {
        text.push_str(&format!(
            "{},{},{},{}\n",
            first.get(i, "station"),
            first.get(i, "lon"),
            first.get(i, "lat"),
            utm.get(i, "elev")
        ));
    }
    dir.write_text("lonlat.csv", &text);
    let out = dir.make_dir("out");
    for target in ["tc.gpkg", "tc.csv"] {
        ringsum(&dir)
            .arg("correct")
            .arg("--dem")
            .arg(fixture("jacksboro_utm.tif"))
            .args(["--stations", "lonlat.csv", "--outer-radius", "2km"])
            .args(["--quiet", "--out"])
            .arg(out.join(target))
            .assert()
            .success();
    }
    let csv = Csv::read(&out.join("tc.csv"));
    assert!(csv.headers.iter().any(|h| h == "x_dem"));
    // The layer is in the stations' CRS (EPSG:4326), not the DEM's.
    let points = check_layer(&out.join("tc.gpkg"), &csv, 4326);
    for (i, (x, y)) in points.into_iter().enumerate() {
        assert_eq!((x, y), (csv.num(i, "x"), csv.num(i, "y")), "row {i}");
        assert_close!(csv.num(i, "x_dem"), utm.num(i, "x"), 2e-3, "row {i}");
    }
}

#[test]
fn a_geojson_reads_back_as_the_csv_in_lon_lat() {
    let dir = TestDir::new();
    let csv = gis_run(&dir, "tc.geojson");
    let points = check_layer(&dir.join("out/tc.geojson"), &csv, 4326);
    for (i, (lon, lat)) in points.into_iter().enumerate() {
        // Longitude first (RFC 7946); the columns have 8 decimals, the points 9.
        assert_close!(lon, csv.num(i, "lon"), 6e-9, "row {i}");
        assert_close!(lat, csv.num(i, "lat"), 6e-9, "row {i}");
        assert!((-85.0..-84.0).contains(&lon) && (36.0..37.0).contains(&lat));
    }
    let text = std::fs::read_to_string(dir.join("out/tc.geojson")).unwrap();
    assert!(text.contains("\"type\": \"FeatureCollection\""));
}

#[test]
fn stations_as_a_geopackage_give_the_csv_table() {
    use gdal::spatial_ref::SpatialRef;
    use gdal::vector::{Feature, FieldDefn, Geometry, LayerOptions};
    let dir = TestDir::new();
    let text = stations_joined(",");
    dir.write_text("stations.csv", &text);
    let csv = Csv::parse(&text);
    {
        let driver = gdal::DriverManager::get_driver_by_name("GPKG").unwrap();
        let mut ds = driver
            .create_vector_only(dir.join("stations.gpkg"))
            .unwrap();
        let srs = SpatialRef::from_epsg(32616).unwrap();
        let layer = ds
            .create_layer(LayerOptions {
                name: "stations",
                srs: Some(&srs),
                ty: OGRwkbGeometryType::wkbPoint,
                options: None,
            })
            .unwrap();
        FieldDefn::new("station", OGRFieldType::OFTString)
            .unwrap()
            .add_to_layer(&layer)
            .unwrap();
        FieldDefn::new("elev", OGRFieldType::OFTReal)
            .unwrap()
            .add_to_layer(&layer)
            .unwrap();
        FieldDefn::new("line", OGRFieldType::OFTString)
            .unwrap()
            .add_to_layer(&layer)
            .unwrap();
        for i in 0..csv.rows.len() {
            let mut point = Geometry::empty(OGRwkbGeometryType::wkbPoint).unwrap();
            point.set_point_2d(0, (csv.num(i, "x"), csv.num(i, "y")));
            let mut feature = Feature::new(layer.defn()).unwrap();
            feature.set_geometry(point).unwrap();
            feature.set_field_string(0, csv.get(i, "station")).unwrap();
            feature.set_field_double(1, csv.num(i, "elev")).unwrap();
            feature.set_field_string(2, csv.get(i, "line")).unwrap();
            feature.create(&layer).unwrap();
        }
    }
    assert_eq!(
        jacksboro_table(&dir, "stations.gpkg", &[]),
        jacksboro_table(&dir, "stations.csv", &[])
    );
}

// ---------------------------------------------------------------------------------------
// The run record
// ---------------------------------------------------------------------------------------

fn read_json(path: &Path) -> serde_json::Value {
    let text = std::fs::read_to_string(path)
        .unwrap_or_else(|e| panic!("{}: cannot read it ({e})", path.display()));
    serde_json::from_str(&text).expect("the record is JSON")
}

#[test]
fn the_record_holds_the_files_and_settings_of_the_run() {
    let dir = TestDir::new();
    std::fs::copy(fixture("jacksboro_utm.tif"), dir.join("dem.tif")).unwrap();
    dir.write_text("stations.csv", &stations_joined(","));
    dir.write_text(
        "plan.toml",
        "inner_cells = 1\n\
         [[ring]]\nname = \"near\"\nouter = \"300m\"\nmethod = \"prisms\"\n\
         [[ring]]\nname = \"mid\"\nouter = \"1km\"\nmethod = \"blocks\"\nblock_ratio = 0.25\n\
         [[ring]]\nname = \"far\"\nouter = \"2km\"\nmethod = \"sectors\"\ncompartments = 24\n",
    );
    dir.make_dir("out");
    let args = [
        "correct",
        "--dem",
        "dem.tif",
        "--stations",
        "stations.csv",
        "--zones",
        "plan.toml",
        "--outer-radius",
        "2km",
        "--quiet",
        "--out",
        "out/tc.csv",
    ];
    ringsum(&dir).args(args).assert().success();
    assert_eq!(entries(&dir.join("out")), ["tc.csv", "tc.csv.run.json"]);
    let record = read_json(&dir.join("out/tc.csv.run.json"));

    assert_eq!(record["program"], "ringsum");
    assert_eq!(record["version"], env!("CARGO_PKG_VERSION"));
    assert_eq!(record["command"], "correct");
    let line: Vec<&str> = record["command_line"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    assert_eq!(line[1..], args);
    assert_eq!(record["outputs"], serde_json::json!(["out/tc.csv"]));
    assert_eq!(record["stations"], 8);

    // Every input, with the role it had, its size and its SHA-256.
    let inputs = record["inputs"].as_array().unwrap();
    let roles: Vec<(&str, &str)> = inputs
        .iter()
        .map(|i| (i["role"].as_str().unwrap(), i["path"].as_str().unwrap()))
        .collect();
    assert_eq!(
        roles,
        [
            ("dem", "dem.tif"),
            ("stations", "stations.csv"),
            ("zone_plan", "plan.toml")
        ]
    );
    for input in inputs {
        let path = dir.join(input["path"].as_str().unwrap());
        assert_eq!(input["sha256"].as_str().unwrap(), sha256(&path));
        assert_eq!(
            input["size_bytes"].as_u64().unwrap(),
            std::fs::metadata(&path).unwrap().len()
        );
        assert_eq!(
            Path::new(input["absolute_path"].as_str().unwrap()),
            path.canonicalize().unwrap()
        );
    }

    // The settings after defaults: lengths in metres, the plan's rings as given.
    let settings = &record["settings"];
    assert_eq!(settings["outer_radius_m"], 2000.0);
    assert_eq!(settings["method"], "zoned");
    assert_eq!(settings["convention"], "spherical");
    assert_eq!(settings["density_kg_m3"], 2670.0);
    assert_eq!(settings["zones"], "plan.toml");
    let rings: Vec<(&str, f64, f64, &str)> = settings["rings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| {
            (
                r["name"].as_str().unwrap(),
                r["inner_m"].as_f64().unwrap(),
                r["outer_m"].as_f64().unwrap(),
                r["method"].as_str().unwrap(),
            )
        })
        .collect();
    assert_eq!(
        rings,
        [
            ("near", 0.0, 300.0, "prisms"),
            ("mid", 300.0, 1000.0, "blocks"),
            ("far", 1000.0, 2000.0, "sectors")
        ]
    );
    assert_eq!(settings["rings"][1]["block_ratio"], 0.25);
    assert_eq!(settings["rings"][2]["compartments"], 24);
    let dem = &record["dems"][0];
    assert_eq!(dem["source"], "dem.tif");
    assert_eq!(dem["cell_size_m"], 90.0);

    // Another method and radius are recorded as given.
    ringsum(&dir)
        .args(["correct", "--dem", "dem.tif", "--stations", "stations.csv"])
        .args(["--method", "exact", "--outer-radius", "1.5km", "--quiet"])
        .args(["--out", "out/exact.csv"])
        .assert()
        .success();
    let record = read_json(&dir.join("out/exact.csv.run.json"));
    assert_eq!(record["settings"]["method"], "exact");
    assert_eq!(record["settings"]["outer_radius_m"], 1500.0);
    assert_eq!(record["settings"]["zones"], "auto");
}

#[test]
fn standard_output_gets_a_record_only_when_asked() {
    let dir = TestDir::new();
    std::fs::copy(fixture("jacksboro_stations.csv"), dir.join("stations.csv")).unwrap();
    let run = |extra: &[&str]| {
        ringsum(&dir)
            .arg("correct")
            .arg("--dem")
            .arg(fixture("jacksboro_utm.tif"))
            .args(["--stations", "stations.csv", "--outer-radius", "2km"])
            .args(["--quiet", "--out", "-"])
            .args(extra)
            .assert()
            .success()
            .get_output()
            .stdout
            .clone()
    };
    let plain = run(&[]);
    assert_eq!(entries(dir.path()), ["stations.csv"]);
    let recorded = run(&["--record", "run.json"]);
    assert_eq!(recorded, plain);
    assert_eq!(entries(dir.path()), ["run.json", "stations.csv"]);
    let record = read_json(&dir.join("run.json"));
    assert_eq!(record["outputs"], serde_json::json!([]));
    assert_eq!(record["stations"], 8);
    assert_eq!(
        record["inputs"][1]["sha256"].as_str().unwrap(),
        sha256(&dir.join("stations.csv"))
    );
}

#[test]
fn a_sweep_record_lists_the_dems_it_compares_with() {
    let dir = TestDir::new();
    std::fs::copy(fixture("jacksboro_utm.tif"), dir.join("dem.tif")).unwrap();
    std::fs::copy(fixture("jacksboro_utm.tif"), dir.join("other.tif")).unwrap();
    std::fs::copy(fixture("jacksboro_stations.csv"), dir.join("stations.csv")).unwrap();
    dir.make_dir("out");
    ringsum(&dir)
        .args(["sweep", "--dem", "dem.tif", "--compare-dem", "other.tif"])
        .args(["--stations", "stations.csv", "--outer-radius", "2km"])
        .args(["--quiet", "--out", "out/sweep.csv"])
        .assert()
        .success();
    let record = read_json(&dir.join("out/sweep.csv.run.json"));
    let inputs = record["inputs"].as_array().unwrap();
    let compared = inputs
        .iter()
        .find(|i| i["role"] == "compare_dem")
        .expect("the compared DEM is an input");
    assert_eq!(compared["path"], "other.tif");
    assert_eq!(
        compared["sha256"].as_str().unwrap(),
        sha256(&dir.join("other.tif"))
    );
}
