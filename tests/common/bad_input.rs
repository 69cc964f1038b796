//! The bad inputs ringsum refuses, each with the files it needs and the words its one
//! sentence must hold. tests/robust.rs runs every case as a test; tests/docs.rs runs them
//! again to write the README's "Bad input" table, so the table holds what ringsum prints.
//!
//! A refusal is checked the documented way ([`refuse`]): the exit status, nothing on
//! stdout, one line on stderr (no library's own lines), the key words, and every file
//! of the case's folder (inputs included) unchanged to the byte, with none added.

use super::{fixture, ringsum, TestDir};
use sha2::{Digest, Sha256};
use std::collections::BTreeMap;
use std::path::Path;

/// One refused input.
pub struct BadInput {
    /// Short name, to find the case from a test.
    pub name: &'static str,
    /// What is refused, as the README's table says it.
    pub what: &'static str,
    /// Writes the case's files into the folder and gives the command line (paths
    /// relative to the folder, where ringsum runs).
    pub setup: fn(&TestDir) -> Vec<String>,
    /// Words the sentence must hold.
    pub keys: &'static [&'static str],
    /// Exit status.
    pub status: i32,
}

/// Every file under `dir` (hidden ones included) with its SHA-256; folders as `dir`.
pub fn snapshot(dir: &Path) -> BTreeMap<String, String> {
    fn walk(root: &Path, dir: &Path, out: &mut BTreeMap<String, String>) {
        for entry in std::fs::read_dir(dir).expect("list the folder") {
            let path = entry.expect("folder entry").path();
            let name = path
                .strip_prefix(root)
                .unwrap()
                .to_string_lossy()
                .into_owned();
            let meta = std::fs::symlink_metadata(&path).unwrap();
            if meta.is_dir() {
                out.insert(name, "dir".into());
                walk(root, &path, out);
            } else if meta.file_type().is_symlink() {
                let target = std::fs::read_link(&path).unwrap();
                out.insert(name, format!("link to {}", target.display()));
            } else {
                out.insert(name, sha256(&path));
            }
        }
    }
    let mut out = BTreeMap::new();
    walk(dir, dir, &mut out);
    out
}

/// The SHA-256 of a file, in hex.
pub fn sha256(path: &Path) -> String {
    let bytes =
        std::fs::read(path).unwrap_or_else(|e| panic!("{}: cannot read it ({e})", path.display()));
    Sha256::digest(&bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// Lines a library prints on its own (GDAL's `ERROR 1:`, PROJ's `proj_create: ...`).
pub const LIBRARY_LINES: [&str; 4] = ["ERROR 1", "Warning 1", "proj_create", "PROJ:"];

/// Runs `case` in a fresh folder and checks the refusal; returns the sentence without
/// the `ringsum: ` it starts with.
pub fn refuse(case: &BadInput) -> String {
    let dir = TestDir::new();
    let args = (case.setup)(&dir);
    let before = snapshot(dir.path());
    let output = ringsum(&dir).args(&args).output().expect("run ringsum");
    let name = case.name;
    let stderr = String::from_utf8(output.stderr).expect("UTF-8 stderr");
    assert_eq!(
        output.status.code(),
        Some(case.status),
        "{name}: exit status; stderr: {stderr}"
    );
    assert!(
        output.stdout.is_empty(),
        "{name}: stdout: {}",
        String::from_utf8_lossy(&output.stdout)
    );
    assert_eq!(
        stderr.lines().count(),
        1,
        "{name}: not one line: {stderr:?}"
    );
    assert!(
        stderr.starts_with("ringsum: ") && stderr.ends_with('\n'),
        "{name}: {stderr:?}"
    );
    for raw in LIBRARY_LINES {
        assert!(!stderr.contains(raw), "{name}: library text: {stderr:?}");
    }
    for key in case.keys {
        assert!(stderr.contains(key), "{name}: '{key}' not in {stderr:?}");
    }
    assert_eq!(
        snapshot(dir.path()),
        before,
        "{name}: a file was written or changed"
    );
    stderr["ringsum: ".len()..].trim_end().to_string()
}

/// The case called `name`.
pub fn case(name: &str) -> &'static BadInput {
    CASES
        .iter()
        .find(|c| c.name == name)
        .unwrap_or_else(|| panic!("no bad-input case {name}"))
}

// ---------------------------------------------------------------------------------------
// The files the cases use
// ---------------------------------------------------------------------------------------

/// The Jacksboro DEM (90 m, UTM 16N) as `dem.tif`, its eight stations as `stations.csv`,
/// and an empty `out/` folder.
fn base(dir: &TestDir) {
    std::fs::copy(fixture("jacksboro_utm.tif"), dir.join("dem.tif")).unwrap();
    std::fs::copy(fixture("jacksboro_stations.csv"), dir.join("stations.csv")).unwrap();
    dir.make_dir("out");
}

/// `ringsum correct` on the base files to 2 km, then `extra`.
fn correct(extra: &[&str]) -> Vec<String> {
    let mut args = vec![
        "correct",
        "--dem",
        "dem.tif",
        "--stations",
        "stations.csv",
        "--outer-radius",
        "2km",
    ];
    args.extend_from_slice(extra);
    args.into_iter().map(String::from).collect()
}

/// `correct` with the base DEM and `stations` (relative), output `out/tc.csv`.
fn correct_stations(stations: &str, extra: &[&str]) -> Vec<String> {
    let mut args = vec![
        "correct",
        "--dem",
        "dem.tif",
        "--stations",
        stations,
        "--outer-radius",
        "2km",
        "--out",
        "out/tc.csv",
    ];
    args.extend_from_slice(extra);
    args.into_iter().map(String::from).collect()
}

/// The base stations as a GeoJSON point layer (in the DEM's CRS, named by the legacy
/// `crs` member) called `name`.
fn geojson_stations(dir: &TestDir, name: &str) {
    let csv = std::fs::read_to_string(fixture("jacksboro_stations.csv")).unwrap();
    let features: Vec<String> = csv
        .lines()
        .skip(1)
        .map(|line| {
            let f: Vec<&str> = line.split(',').collect();
            format!(
                r#"{{"type":"Feature","properties":{{"station":"{}","elev":{}}},"geometry":{{"type":"Point","coordinates":[{},{}]}}}}"#,
                f[0], f[3], f[1], f[2]
            )
        })
        .collect();
    dir.write_text(
        name,
        &format!(
            r#"{{"type":"FeatureCollection","crs":{{"type":"name","properties":{{"name":"urn:ogc:def:crs:EPSG::32616"}}}},"features":[{}]}}"#,
            features.join(",")
        ),
    );
}

/// Western and northern edges of the synthetic DEMs (UTM 33N, m), 80 x 80 cells of 25 m.
pub const X0: f64 = 500_000.0;
pub const Y0: f64 = 5_002_000.0;

/// Writes an 80 x 80 GeoTIFF of `T` cells (a slope, 300 to 460 m) whose 3 x 3 cells at
/// columns and rows 24-26 hold `void` instead: the corner of the window a 400 m disc
/// around [`VOID_STATION`] reads, outside the disc itself. `nodata` is declared when
/// given.
pub fn void_dem<T: gdal::raster::GdalType + Copy>(
    dir: &TestDir,
    name: &str,
    height: fn(f64) -> T,
    void: T,
    nodata: Option<f64>,
) {
    use gdal::raster::Buffer;
    use gdal::spatial_ref::SpatialRef;
    use gdal::DriverManager;
    let path = dir.join(name);
    let driver = DriverManager::get_driver_by_name("GTiff").unwrap();
    let mut ds = driver
        .create_with_band_type::<T, _>(&path, 80, 80, 1)
        .unwrap();
    ds.set_geo_transform(&[X0, 25.0, 0.0, Y0, 0.0, -25.0])
        .unwrap();
    ds.set_spatial_ref(&SpatialRef::from_definition(super::TEST_CRS).unwrap())
        .unwrap();
    let mut band = ds.rasterband(1).unwrap();
    if let Some(nd) = nodata {
        band.set_no_data_value(Some(nd)).unwrap();
    }
    let mut values = Vec::with_capacity(6400);
    for r in 0..80 {
        for c in 0..80 {
            if (24..27).contains(&r) && (24..27).contains(&c) {
                values.push(void);
            } else {
                values.push(height(300.0 + (r + c) as f64));
            }
        }
    }
    let mut buffer = Buffer::new((80, 80), values);
    band.write((0, 0), (80, 80), &mut buffer).unwrap();
}

/// The station of the void DEMs: the middle of the DEM.
pub const VOID_STATION: (f64, f64) = (X0 + 1000.0, Y0 - 1000.0);

/// `void.csv`, the one station of the void DEMs, a few metres above the terrain.
pub fn void_station(dir: &TestDir) {
    let (x, y) = VOID_STATION;
    dir.write_text("void.csv", &format!("station,x,y,elev\nV1,{x},{y},385\n"));
}

/// `correct` on `dem` (relative) and `void.csv` to 400 m, output `out/tc.csv`.
fn correct_void(dem: &str) -> Vec<String> {
    [
        "correct",
        "--dem",
        dem,
        "--stations",
        "void.csv",
        "--outer-radius",
        "400m",
        "--out",
        "out/tc.csv",
    ]
    .into_iter()
    .map(String::from)
    .collect()
}

fn strings(args: &[&str]) -> Vec<String> {
    args.iter().map(|s| s.to_string()).collect()
}

// ---------------------------------------------------------------------------------------
// The cases
// ---------------------------------------------------------------------------------------

/// Every refused input, in the README's order.
pub const CASES: &[BadInput] = &[
    // Outputs that would replace an input or another output.
    BadInput {
        name: "out-is-stations",
        what: "`--out` is the station file",
        setup: |d| {
            base(d);
            correct(&["--out", "stations.csv"])
        },
        keys: &[
            "--out stations.csv",
            "given with --stations",
            "replace that input",
        ],
        status: 1,
    },
    BadInput {
        name: "out-is-stations-by-symlink",
        what: "`--out` is a symbolic link to the station file",
        setup: |d| {
            base(d);
            std::os::unix::fs::symlink("stations.csv", d.join("link.csv")).unwrap();
            correct(&["--out", "link.csv"])
        },
        keys: &["--out link.csv", "given with --stations (stations.csv)"],
        status: 1,
    },
    BadInput {
        name: "out-is-stations-spelled-otherwise",
        what: "`--out out/../stations.csv` for `--stations stations.csv`",
        setup: |d| {
            base(d);
            correct(&["--out", "out/../stations.csv"])
        },
        keys: &["--out out/../stations.csv", "given with --stations"],
        status: 1,
    },
    BadInput {
        name: "out-is-stations-dot",
        what: "`--out ./stations.csv` for `--stations stations.csv`",
        setup: |d| {
            base(d);
            correct(&["--out", "./stations.csv"])
        },
        keys: &["--out ./stations.csv", "given with --stations"],
        status: 1,
    },
    BadInput {
        name: "out-is-stations-by-hard-link",
        what: "`--out` is a hard link to the station file",
        setup: |d| {
            base(d);
            std::fs::hard_link(d.join("stations.csv"), d.join("same.csv")).unwrap();
            correct(&["--out", "same.csv"])
        },
        keys: &["--out same.csv", "given with --stations (stations.csv)"],
        status: 1,
    },
    BadInput {
        name: "summary-is-out",
        what: "`sweep --station-summary` is the `--out` table",
        setup: |d| {
            base(d);
            strings(&[
                "sweep",
                "--dem",
                "dem.tif",
                "--stations",
                "stations.csv",
                "--outer-radius",
                "2km",
                "--out",
                "out/sweep.csv",
                "--station-summary",
                "out/sweep.csv",
            ])
        },
        keys: &[
            "--station-summary out/sweep.csv",
            "--out out/sweep.csv writes the same file",
        ],
        status: 1,
    },
    BadInput {
        name: "map-out-is-dem",
        what: "`map --out` is the DEM",
        setup: |d| {
            base(d);
            strings(&[
                "map",
                "--dem",
                "dem.tif",
                "--spacing",
                "1km",
                "--outer-radius",
                "1km",
                "--out",
                "dem.tif",
            ])
        },
        keys: &[
            "--out dem.tif",
            "given with --dem (dem.tif)",
            "replace that input",
        ],
        status: 1,
    },
    BadInput {
        name: "record-is-input",
        what: "`--record` is an input (stations as GeoJSON, `stations.json`)",
        setup: |d| {
            base(d);
            geojson_stations(d, "stations.json");
            correct_stations("stations.json", &["--record", "stations.json"])
        },
        keys: &["--record stations.json", "given with --stations"],
        status: 1,
    },
    BadInput {
        name: "default-record-is-input",
        what: "the run record beside `--out tc.csv` (`tc.csv.run.json`) is an input",
        setup: |d| {
            base(d);
            geojson_stations(d, "tc.csv.run.json");
            strings(&[
                "correct",
                "--dem",
                "dem.tif",
                "--stations",
                "tc.csv.run.json",
                "--outer-radius",
                "2km",
                "--out",
                "tc.csv",
            ])
        },
        keys: &["the run record tc.csv.run.json", "given with --stations"],
        status: 1,
    },
    // Output paths.
    BadInput {
        name: "out-is-a-folder",
        what: "`--out` is a folder",
        setup: |d| {
            base(d);
            d.make_dir("tables.csv");
            correct(&["--out", "tables.csv"])
        },
        keys: &["--out tables.csv", "this is a folder"],
        status: 1,
    },
    BadInput {
        name: "out-folder-missing",
        what: "`--out` in a folder that does not exist",
        setup: |d| {
            base(d);
            correct(&["--out", "missing/tc.csv"])
        },
        keys: &["the folder missing does not exist", "create it first"],
        status: 1,
    },
    BadInput {
        name: "out-folder-takes-no-files",
        what: "`--out` in a folder that takes no new files (`/proc`)",
        setup: |d| {
            base(d);
            correct(&["--out", "/proc/tc.csv"])
        },
        keys: &[
            "--out /proc/tc.csv",
            "the folder /proc does not take new files",
        ],
        status: 1,
    },
    // Sizes no run can take.
    BadInput {
        name: "outer-radius-1e30km",
        what: "`--outer-radius 1e30km`",
        setup: |d| {
            base(d);
            strings(&[
                "correct",
                "--dem",
                "dem.tif",
                "--stations",
                "stations.csv",
                "--outer-radius",
                "1e30km",
                "--out",
                "out/tc.csv",
            ])
        },
        keys: &["--outer-radius 1e30km", "at most 500km"],
        status: 1,
    },
    BadInput {
        name: "outer-radius-inside-inner-zone",
        what: "`--outer-radius` inside the inner zone (50 m on a 90 m DEM)",
        setup: |d| {
            base(d);
            strings(&[
                "correct",
                "--dem",
                "dem.tif",
                "--stations",
                "stations.csv",
                "--outer-radius",
                "50m",
                "--out",
                "out/tc.csv",
            ])
        },
        keys: &["--outer-radius 50m", "inside the inner zone"],
        status: 1,
    },
    BadInput {
        name: "threads-100000",
        what: "`--threads 100000`",
        setup: |d| {
            base(d);
            correct(&["--threads", "100000", "--out", "out/tc.csv"])
        },
        keys: &["--threads 100000", "at most 1024"],
        status: 1,
    },
    BadInput {
        name: "plan-ring-of-1e8-compartments",
        what: "a plan file's sector ring of 100000000 compartments",
        setup: |d| {
            base(d);
            d.write_text(
                "plan.toml",
                "[[ring]]\nname = \"near\"\nouter = \"300m\"\nmethod = \"prisms\"\n\
                 [[ring]]\nname = \"far\"\nouter = \"2km\"\nmethod = \"sectors\"\n\
                 compartments = 100000000\n",
            );
            correct(&["--zones", "plan.toml", "--out", "out/tc.csv"])
        },
        keys: &[
            "plan.toml",
            "ring 2 (far)",
            "100000000 compartments",
            "3600",
        ],
        status: 1,
    },
    BadInput {
        name: "plot-size-100000x100000",
        what: "`--plot-size 100000x100000`",
        setup: |d| {
            base(d);
            strings(&[
                "sweep",
                "--dem",
                "dem.tif",
                "--stations",
                "stations.csv",
                "--outer-radius",
                "2km",
                "--out",
                "out/sweep.csv",
                "--plot",
                "out/sweep.png",
                "--plot-size",
                "100000x100000",
            ])
        },
        keys: &["--plot-size 100000x100000", "200 to 8000"],
        status: 1,
    },
    BadInput {
        name: "map-grid-over-the-node-limit",
        what: "a map grid over 2e8 nodes (`--spacing 1mm`)",
        setup: |d| {
            base(d);
            strings(&[
                "map",
                "--dem",
                "dem.tif",
                "--spacing",
                "0.001m",
                "--outer-radius",
                "1km",
                "--out",
                "out/map.tif",
            ])
        },
        keys: &["over the limit of 2e8 nodes", "give --spacing"],
        status: 1,
    },
    // Station files.
    BadInput {
        name: "empty-station-file",
        what: "an empty station file",
        setup: |d| {
            base(d);
            d.write_text("empty.csv", "");
            correct_stations("empty.csv", &[])
        },
        keys: &["empty.csv", "the file is empty"],
        status: 1,
    },
    BadInput {
        name: "header-only",
        what: "a station file with a header and no rows",
        setup: |d| {
            base(d);
            d.write_text("header.csv", "station,x,y,elev\n# no stations yet\n");
            correct_stations("header.csv", &[])
        },
        keys: &["header.csv", "a header but no stations"],
        status: 1,
    },
    BadInput {
        name: "utf-16",
        what: "a UTF-16 station file (with its byte-order mark)",
        setup: |d| {
            base(d);
            let text = std::fs::read_to_string(d.join("stations.csv")).unwrap();
            let mut bytes = vec![0xFF, 0xFE];
            bytes.extend(text.encode_utf16().flat_map(|u| u.to_le_bytes()));
            std::fs::write(d.join("utf16.csv"), bytes).unwrap();
            correct_stations("utf16.csv", &[])
        },
        keys: &["utf16.csv", "UTF-16", "save it as UTF-8"],
        status: 1,
    },
    BadInput {
        name: "utf-16-without-bom",
        what: "a UTF-16 station file without a byte-order mark",
        setup: |d| {
            base(d);
            let text = std::fs::read_to_string(d.join("stations.csv")).unwrap();
            let bytes: Vec<u8> = text.encode_utf16().flat_map(|u| u.to_le_bytes()).collect();
            std::fs::write(d.join("utf16.csv"), bytes).unwrap();
            correct_stations("utf16.csv", &[])
        },
        keys: &["utf16.csv", "UTF-16", "save it as UTF-8"],
        status: 1,
    },
    BadInput {
        name: "latin-1",
        what: "a Latin-1 station file (without `--encoding latin-1`)",
        setup: |d| {
            base(d);
            write_latin1(d);
            correct_stations("latin1.csv", &[])
        },
        keys: &["latin1.csv", "not UTF-8", "line 3", "--encoding latin-1"],
        status: 1,
    },
    BadInput {
        name: "duplicate-header",
        what: "a header naming a column twice",
        setup: |d| {
            base(d);
            d.write_text(
                "twice.csv",
                "station,x,y,elev,Elev\nJ01,743097.34,4049213.83,573.90,573.90\n",
            );
            correct_stations("twice.csv", &[])
        },
        keys: &["twice.csv", "'Elev' twice", "rename one"],
        status: 1,
    },
    BadInput {
        name: "unnamed-column-with-values",
        what: "a column without a name in the header that holds values",
        setup: |d| {
            base(d);
            d.write_text(
                "unnamed.csv",
                "station,x,y,elev,\nJ01,743097.34,4049213.83,573.90,\nJ02,746293.50,4047803.25,515.24,checked\n",
            );
            correct_stations("unnamed.csv", &[])
        },
        keys: &["unnamed.csv", "line 3", "column 5 has no name", "'checked'"],
        status: 1,
    },
    BadInput {
        name: "megabyte-header",
        what: "a header line of 1 MB (without a height column)",
        setup: |d| {
            base(d);
            let name = "A".repeat(1 << 20);
            d.write_text(
                "wide.csv",
                &format!("station,x,y,{name}\nJ01,743097.34,4049213.83,573.90\n"),
            );
            correct_stations("wide.csv", &[])
        },
        keys: &["wide.csv", "no column for the station height", "--elev-col"],
        status: 1,
    },
    BadInput {
        name: "height-1e308",
        what: "a station height of 1e308",
        setup: |d| {
            base(d);
            d.write_text(
                "high.csv",
                "station,x,y,elev\nJ01,743097.34,4049213.83,573.90\nJ02,746293.50,4047803.25,1e308\n",
            );
            correct_stations("high.csv", &[])
        },
        keys: &[
            "high.csv line 3",
            "station J02",
            "1e308",
            "outside the Earth's relief",
        ],
        status: 1,
    },
    BadInput {
        name: "bad-value-after-comments",
        what: "a value that is not a number, after comment and empty lines",
        setup: |d| {
            base(d);
            d.write_text(
                "comments.csv",
                "# survey of 1987\nstation,x,y,elev\n\n# line 2\nJ01,743097.34,4049213.83,573.90\nJ02,746293.50,4047803.25,5l5.24\n",
            );
            correct_stations("comments.csv", &[])
        },
        keys: &[
            "comments.csv line 6",
            "station J02",
            "'5l5.24', not a number",
        ],
        status: 1,
    },
    BadInput {
        name: "raster-as-stations",
        what: "a raster given as `--stations`",
        setup: |d| {
            base(d);
            correct_stations("dem.tif", &[])
        },
        keys: &["dem.tif", "this is a raster", "DEMs go with --dem"],
        status: 1,
    },
    BadInput {
        name: "bad-stations-crs",
        what: "`--stations-crs EPSG:99999`",
        setup: |d| {
            base(d);
            correct_stations("stations.csv", &["--stations-crs", "EPSG:99999"])
        },
        keys: &[
            "stations.csv",
            "EPSG:99999 is not a coordinate reference system",
            "give an EPSG code",
        ],
        status: 1,
    },
    // DEMs.
    BadInput {
        name: "csv-as-dem",
        what: "a CSV given as `--dem`",
        setup: |d| {
            base(d);
            strings(&[
                "correct",
                "--dem",
                "stations.csv",
                "--stations",
                "stations.csv",
                "--out",
                "out/tc.csv",
            ])
        },
        keys: &[
            "stations.csv",
            "looks like a table",
            "stations go with --stations",
        ],
        status: 1,
    },
    BadInput {
        name: "int16-dem-with-undeclared-voids",
        what: "an Int16 DEM whose cells hold -32768 and that declares no nodata",
        setup: |d| {
            void_dem::<i16>(d, "voids.tif", |h| h as i16, -32768, None);
            void_station(d);
            d.make_dir("out");
            correct_void("voids.tif")
        },
        keys: &[
            "voids.tif",
            "9 cell(s) hold -32768",
            "the usual mark of missing data",
            "--dem-nodata -32768",
        ],
        status: 1,
    },
    BadInput {
        name: "dem-cell-of-3.4e38",
        what: "a DEM cell of 3.4e38 (no nodata declared)",
        setup: |d| {
            void_dem::<f32>(d, "huge.tif", |h| h as f32, 3.4e38, None);
            void_station(d);
            d.make_dir("out");
            correct_void("huge.tif")
        },
        keys: &[
            "huge.tif",
            "hold 3.4e38",
            "no height on the Earth",
            "--dem-nodata 3.4e38",
        ],
        status: 1,
    },
];

/// `latin1.csv`: the base stations with a station called Müller on line 3, in Latin-1.
pub fn write_latin1(dir: &TestDir) {
    let text = "station,x,y,elev\nJ01,743097.34,4049213.83,573.90\nM\u{fc}ller,746293.50,4047803.25,515.24\n";
    let bytes: Vec<u8> = text.chars().map(|c| c as u32 as u8).collect();
    std::fs::write(dir.join("latin1.csv"), bytes).unwrap();
}
