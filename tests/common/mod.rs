//! Helpers shared by the integration tests: a temporary folder per test, small GeoTIFF
//! DEMs and station files written into it, the `ringsum` binary run inside it, CSV output
//! read back into rows, and a closeness assertion that prints expected against actual.
//!
//! Each integration test binary uses a different part of this module.
#![allow(dead_code)]

pub mod bad_input;

use ringsum::dem::Dem;
use ringsum::output::geotiff::write_dem;
use std::path::{Path, PathBuf};

/// The CRS the synthetic test DEMs are written in (WGS 84 / UTM zone 33N).
pub const TEST_CRS: &str = "EPSG:32633";

/// Asserts `|actual - expected| <= tol`, printing both values, their difference and the
/// tolerance (and an optional message) when it fails.
#[macro_export]
macro_rules! assert_close {
    ($actual:expr, $expected:expr, $tol:expr $(,)?) => {
        $crate::assert_close!($actual, $expected, $tol, "")
    };
    ($actual:expr, $expected:expr, $tol:expr, $($msg:tt)+) => {{
        let actual: f64 = $actual;
        let expected: f64 = $expected;
        let tol: f64 = $tol;
        let diff = (actual - expected).abs();
        if diff.is_nan() || diff > tol {
            panic!(
                "values differ{}\n  expected: {:.12e}\n  actual:   {:.12e}\n  |diff|:   {:.3e} (relative {:.3e})\n  allowed:  {:.3e}",
                {
                    let m = format!($($msg)+);
                    if m.is_empty() { m } else { format!(" ({m})") }
                },
                expected,
                actual,
                diff,
                diff / expected.abs(),
                tol
            );
        }
    }};
}

/// Path of a committed fixture.
pub fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures")
        .join(name)
}

/// A temporary folder that lives as long as the test (removed when dropped).
pub struct TestDir {
    dir: tempfile::TempDir,
}

impl TestDir {
    pub fn new() -> TestDir {
        TestDir {
            dir: tempfile::Builder::new()
                .prefix("ringsum-test-")
                .tempdir()
                .expect("create a temporary folder"),
        }
    }

    pub fn path(&self) -> &Path {
        self.dir.path()
    }

    /// Path of `name` inside the folder.
    pub fn join(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    /// Writes `dem` as a GeoTIFF in [`TEST_CRS`] and returns its path.
    pub fn write_dem(&self, name: &str, dem: &Dem) -> PathBuf {
        self.write_dem_crs(name, dem, TEST_CRS)
    }

    /// Writes `dem` as a GeoTIFF in the CRS `crs` and returns its path.
    pub fn write_dem_crs(&self, name: &str, dem: &Dem, crs: &str) -> PathBuf {
        let path = self.join(name);
        write_dem(dem, &path, Some(crs)).expect("write the test DEM");
        path
    }

    /// Writes a text file (a station CSV, or anything else) and returns its path.
    pub fn write_text(&self, name: &str, text: &str) -> PathBuf {
        let path = self.join(name);
        std::fs::write(&path, text).expect("write a test file");
        path
    }

    /// Writes a station CSV with the header `station,x,y,elev` and returns its path.
    pub fn write_stations(&self, name: &str, stations: &[(&str, f64, f64, f64)]) -> PathBuf {
        let mut text = String::from("station,x,y,elev\n");
        for (id, x, y, elev) in stations {
            text.push_str(&format!("{id},{x},{y},{elev}\n"));
        }
        self.write_text(name, &text)
    }

    /// Creates an empty sub-folder (for outputs) and returns its path.
    pub fn make_dir(&self, name: &str) -> PathBuf {
        let path = self.join(name);
        std::fs::create_dir_all(&path).expect("create a sub-folder");
        path
    }
}

/// Names of every entry in a folder, hidden ones (temporary files) included, sorted.
pub fn entries(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .expect("list the folder")
        .map(|e| {
            e.expect("folder entry")
                .file_name()
                .to_string_lossy()
                .into_owned()
        })
        .collect();
    names.sort();
    names
}

/// The `ringsum` binary, run inside `dir` so that anything it writes by mistake stays
/// in the test's folder.
pub fn ringsum(dir: &TestDir) -> assert_cmd::Command {
    let mut cmd = assert_cmd::Command::cargo_bin("ringsum").expect("the ringsum binary");
    cmd.current_dir(dir.path());
    cmd
}

/// Runs `correct --quiet --out -` on `dems` (finest first) and `stations` with the outer
/// radius `radius` and the `extra` options, expects success, and reads the table.
pub fn correct_table(
    dir: &TestDir,
    dems: &[&Path],
    stations: &Path,
    radius: &str,
    extra: &[&str],
) -> Csv {
    let mut cmd = ringsum(dir);
    cmd.args(["correct", "--quiet", "--out", "-", "--outer-radius", radius]);
    for d in dems {
        cmd.arg("--dem").arg(d);
    }
    cmd.arg("--stations").arg(stations).args(extra);
    Csv::parse(&String::from_utf8_lossy(
        &cmd.assert().success().get_output().stdout,
    ))
}

/// A CSV table read back: the header and the rows as text.
#[derive(Debug, Clone)]
pub struct Csv {
    pub headers: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

impl Csv {
    /// Parses CSV text (strict: every row as long as the header).
    pub fn parse(text: &str) -> Csv {
        let mut reader = csv::ReaderBuilder::new()
            .flexible(false)
            .from_reader(text.as_bytes());
        let headers = reader
            .headers()
            .expect("a CSV header")
            .iter()
            .map(str::to_string)
            .collect();
        let rows = reader
            .records()
            .map(|r| r.expect("a CSV row").iter().map(str::to_string).collect())
            .collect();
        Csv { headers, rows }
    }

    pub fn read(path: &Path) -> Csv {
        let text = std::fs::read_to_string(path)
            .unwrap_or_else(|e| panic!("{}: cannot read it ({e})", path.display()));
        Csv::parse(&text)
    }

    /// Index of a column; panics with the header when it is absent.
    pub fn col(&self, name: &str) -> usize {
        self.headers
            .iter()
            .position(|h| h == name)
            .unwrap_or_else(|| panic!("no column '{name}' in {:?}", self.headers))
    }

    /// The text of column `name` in row `row`.
    pub fn get(&self, row: usize, name: &str) -> &str {
        &self.rows[row][self.col(name)]
    }

    /// Column `name` of row `row` as a number.
    pub fn num(&self, row: usize, name: &str) -> f64 {
        let text = self.get(row, name);
        text.parse()
            .unwrap_or_else(|_| panic!("row {row}, column {name}: '{text}' is not a number"))
    }

    /// Index of the row whose `station` column is `id`.
    pub fn station_row(&self, id: &str) -> usize {
        let c = self.col("station");
        self.rows
            .iter()
            .position(|r| r[c] == id)
            .unwrap_or_else(|| panic!("no station {id} in the table"))
    }
}
