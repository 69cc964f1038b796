//! End-to-end runs of `sweep`, `audit` and `map`: the sweep's outer radius against
//! `correct`, cumulative TC and density scaling, an annulus step against Hammer's ring
//! formula, DEM comparison, audits of crafted inputs, legacy comparisons (total and per
//! Hammer zone), the map's nodes against stations, its GeoTIFF read back through GDAL,
//! picture sizes, and every refused input.

#[macro_use]
mod common;

use common::{entries, ringsum, Csv, TestDir};
use ringsum::dem::Dem;
use ringsum::units::{to_mgal, G};
use std::f64::consts::PI;
use std::path::{Path, PathBuf};

/// Western and northern edges of the test DEMs (UTM 33N, m).
const X0: f64 = 500_000.0;
const Y0: f64 = 5_002_000.0;

/// A smooth hill on a gentle slope with some roughness: 80 x 80 cells of 25 m.
fn hill_dem() -> Dem {
    let rough = ringsum::synthetic::Fractal {
        seed: 3,
        amplitude: 25.0,
        longest: 800.0,
        shortest: 50.0,
        hurst: 0.8,
    };
    Dem::from_fn("hill", 80, 80, X0, Y0, 25.0, |x, y| {
        let (dx, dy) = (x - (X0 + 1100.0), y - (Y0 - 900.0));
        300.0
            + 150.0 * (-(dx * dx + dy * dy) / (2.0 * 300.0 * 300.0)).exp()
            + 0.01 * (x - X0)
            + rough.height(x, y)
    })
}

/// Four stations in the middle of the hill DEM, a few metres off the terrain.
fn hill_stations(dem: &Dem) -> Vec<(String, f64, f64, f64)> {
    [
        (900.0, 700.0),
        (1130.3, 905.1),
        (1251.0, 1180.5),
        (700.4, 1300.2),
    ]
    .iter()
    .enumerate()
    .map(|(k, (ex, ny))| {
        let (x, y) = (X0 + ex, Y0 - ny);
        let h = dem.bilinear(x, y).unwrap();
        (format!("H{k}"), x, y, h + 1.5 * k as f64 - 2.0)
    })
    .collect()
}

fn station_text(stations: &[(String, f64, f64, f64)]) -> String {
    let mut text = String::from("station,x,y,elev\n");
    for (id, x, y, elev) in stations {
        text.push_str(&format!("{id},{x},{y},{elev}\n"));
    }
    text
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8(bytes.to_vec()).expect("UTF-8 output")
}

/// Width and height from a PNG file's IHDR chunk (PNG specification, section 11.2.2).
fn png_size(path: &Path) -> (u32, u32) {
    let bytes = std::fs::read(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    assert_eq!(
        &bytes[..8],
        b"\x89PNG\r\n\x1a\n",
        "{} is not a PNG",
        path.display()
    );
    assert_eq!(&bytes[12..16], b"IHDR");
    let be = |b: &[u8]| u32::from_be_bytes([b[0], b[1], b[2], b[3]]);
    (be(&bytes[16..20]), be(&bytes[20..24]))
}

/// Rows of one station in a sweep table.
fn rows_of<'a>(t: &'a Csv, id: &str) -> Vec<&'a Vec<String>> {
    let c = t.col("station");
    t.rows.iter().filter(|r| r[c] == id).collect()
}

/// Runs `correct` and returns its table.
fn correct(dir: &TestDir, dem: &Path, stations: &Path, extra: &[&str]) -> Csv {
    let out = dir.join(&format!(
        "correct-{}.csv",
        extra.join("_").replace(['-', ' '], "")
    ));
    ringsum(dir)
        .arg("correct")
        .arg("--dem")
        .arg(dem)
        .arg("--stations")
        .arg(stations)
        .args(extra)
        .args(["--quiet", "--out"])
        .arg(&out)
        .assert()
        .success();
    Csv::read(&out)
}

/// Runs `sweep` to a CSV and returns the table and standard output.
fn sweep(dir: &TestDir, dem: &Path, stations: &Path, extra: &[&str]) -> (Csv, String) {
    let out = dir.join("sweep.csv");
    let assert = ringsum(dir)
        .arg("sweep")
        .arg("--dem")
        .arg(dem)
        .arg("--stations")
        .arg(stations)
        .args(extra)
        .arg("--out")
        .arg(&out)
        .assert()
        .success();
    (Csv::read(&out), text(&assert.get_output().stdout))
}

struct Hill {
    dir: TestDir,
    dem: PathBuf,
    stations: PathBuf,
    grid: Dem,
}

fn hill() -> Hill {
    let dir = TestDir::new();
    let grid = hill_dem();
    let dem = dir.write_dem("hill.tif", &grid);
    let stations = dir.write_text("stations.csv", &station_text(&hill_stations(&grid)));
    Hill {
        dir,
        dem,
        stations,
        grid,
    }
}

// ---------------------------------------------------------------------------------------
// sweep
// ---------------------------------------------------------------------------------------

#[test]
fn sweep_at_the_outer_radius_is_the_correct_value() {
    let h = hill();
    for extra in [
        vec!["--outer-radius", "500m"],
        vec!["--outer-radius", "500m", "--convention", "planar"],
        vec!["--outer-radius", "500m", "--method", "exact"],
        vec!["--outer-radius", "500m", "--zones", "hammer"],
        vec!["--outer-radius", "450m", "--radii", "100m,200m,300m"],
    ] {
        // `correct` takes the same options, less the sweep's radii.
        let same: Vec<&str> = match extra.iter().position(|&a| a == "--radii") {
            Some(k) => [&extra[..k], &extra[k + 2..]].concat(),
            None => extra.clone(),
        };
        let c = correct(&h.dir, &h.dem, &h.stations, &same);
        let (s, _) = sweep(&h.dir, &h.dem, &h.stations, &extra);
        assert_eq!(s.rows.len() % c.rows.len(), 0);
        for i in 0..c.rows.len() {
            let id = c.get(i, "station");
            let rows = rows_of(&s, id);
            let last = rows.last().unwrap();
            let outer = extra[1].trim_end_matches('m');
            assert_eq!(last[s.col("radius_m")], format!("{outer}.0"), "{extra:?}");
            assert_eq!(
                last[s.col("tc_mgal")],
                c.get(i, "tc_mgal"),
                "{extra:?} station {id}"
            );
            assert_eq!(last[s.col("remaining_mgal")], "0.0000");
            assert_eq!(last[s.col("coverage")], "1.0000");
        }
    }
}

#[test]
fn sweep_radii_default_to_e12_and_can_be_given() {
    let h = hill();
    let (s, stdout) = sweep(&h.dir, &h.dem, &h.stations, &["--outer-radius", "500m"]);
    let radii: Vec<f64> = rows_of(&s, "H0")
        .iter()
        .map(|r| r[s.col("radius_m")].parse().unwrap())
        .collect();
    // The inner zone's edge (1.5 cells of 25 m), E12 values, the outer radius.
    let expect = [
        37.5, 39.0, 47.0, 56.0, 68.0, 82.0, 100.0, 120.0, 150.0, 180.0, 220.0, 270.0, 330.0, 390.0,
        470.0, 500.0,
    ];
    assert_eq!(radii, expect);
    assert!(
        stdout.contains("how far: 95% of the final TC is reached by"),
        "{stdout}"
    );
    let (s, _) = sweep(
        &h.dir,
        &h.dem,
        &h.stations,
        &["--outer-radius", "500m", "--radii", "0.1km,250m"],
    );
    let radii: Vec<&str> = rows_of(&s, "H2")
        .iter()
        .map(|r| r[s.col("radius_m")].as_str())
        .collect();
    assert_eq!(radii, ["100.0", "250.0", "500.0"]);
}

#[test]
fn cumulative_tc_never_decreases_in_the_planar_convention() {
    // Rough ground on both sides of the stations' height: every element adds to the TC.
    let dir = TestDir::new();
    let rough = ringsum::synthetic::Fractal {
        seed: 19,
        amplitude: 250.0,
        longest: 3000.0,
        shortest: 25.0,
        hurst: 0.7,
    };
    let grid = Dem::from_fn("rough", 120, 120, X0, Y0, 25.0, |x, y| {
        900.0 + rough.height(x, y)
    });
    let dem = dir.write_dem("rough.tif", &grid);
    let mut stations = Vec::new();
    for k in 0..9 {
        let (x, y) = (
            X0 + 1100.0 + 97.3 * (k % 3) as f64,
            Y0 - 1100.0 - 101.1 * (k / 3) as f64,
        );
        let h = grid.bilinear(x, y).unwrap() + [0.0, 30.0, -30.0][k % 3];
        stations.push((format!("R{k}"), x, y, h));
    }
    let stations = dir.write_text("stations.csv", &station_text(&stations));
    for method in ["zoned", "exact"] {
        let (s, _) = sweep(
            &dir,
            &dem,
            &stations,
            &[
                "--outer-radius",
                "1km",
                "--convention",
                "planar",
                "--method",
                method,
            ],
        );
        for k in 0..9 {
            let id = format!("R{k}");
            let tc: Vec<f64> = rows_of(&s, &id)
                .iter()
                .map(|r| r[s.col("tc_mgal")].parse().unwrap())
                .collect();
            assert_eq!(tc.len(), 19);
            for w in tc.windows(2) {
                assert!(w[1] >= w[0], "{method} {id}: {tc:?}");
            }
            assert!(tc[tc.len() - 1] > tc[0], "{method} {id}: {tc:?}");
        }
    }
}

#[test]
fn densities_scale_exactly() {
    let h = hill();
    let (s, stdout) = sweep(
        &h.dir,
        &h.dem,
        &h.stations,
        &["--outer-radius", "500m", "--densities", "2000,2300.5,2670"],
    );
    for name in ["tc_rho2000_mgal", "tc_rho2300.5_mgal", "tc_rho2670_mgal"] {
        s.col(name);
    }
    // At 2670 the column is the main one, at every radius.
    for r in 0..s.rows.len() {
        assert_eq!(s.get(r, "tc_rho2670_mgal"), s.get(r, "tc_mgal"));
        let scaled = s.num(r, "tc_mgal") * 2000.0 / 2670.0;
        // Both are rounded to 1e-4 from the same exact sum.
        assert_close!(s.num(r, "tc_rho2000_mgal"), scaled, 1e-4);
    }
    // A separate run at 2000 kg/m3 gives the same value to the last digit.
    let c = correct(
        &h.dir,
        &h.dem,
        &h.stations,
        &["--outer-radius", "500m", "--density", "2000"],
    );
    for i in 0..c.rows.len() {
        let rows = rows_of(&s, c.get(i, "station"));
        assert_eq!(
            rows.last().unwrap()[s.col("tc_rho2000_mgal")],
            c.get(i, "tc_mgal")
        );
    }
    assert!(stdout.contains("what density:"), "{stdout}");
}

/// Hammer's full ring (Hammer 1939; the on-axis cylinder of radius r2 minus that of r1):
/// 2 pi G rho [(r2 - r1) + sqrt(r1^2 + h^2) - sqrt(r2^2 + h^2)], mGal at 2670 kg/m3.
fn hammer_ring_mgal(r1: f64, r2: f64, h: f64) -> f64 {
    to_mgal(2.0 * PI * G * 2670.0 * ((r2 - r1) + r1.hypot(h) - r2.hypot(h)))
}

/// A plain at 0 m with a 200 m high annulus from 100 m to 1000 m around the DEM's centre
/// (cell-centre heights, 10 m cells, centre on a grid node).
fn annulus_dem(high: bool) -> Dem {
    let w = 2100.0;
    let (cx, cy) = (X0 + w, Y0 - w);
    Dem::from_fn("annulus", 420, 420, X0, Y0, 10.0, |x, y| {
        let r = (x - cx).hypot(y - cy);
        if high && (100.0..1000.0).contains(&r) {
            200.0
        } else {
            0.0
        }
    })
}

#[test]
fn an_annulus_is_a_step_of_hammers_ring_size_at_its_radii() {
    // With CODATA 2018 G, r1 = 100 m, r2 = 1000 m, h = 200 m gives 11.622681 mGal (derived
    // again with mpmath).
    let ring = hammer_ring_mgal(100.0, 1000.0, 200.0);
    assert_close!(
        ring,
        11.622_681,
        5e-7,
        "Hammer 1939 ring formula, CODATA 2018 G"
    );
    let dir = TestDir::new();
    let dem = dir.write_dem("annulus.tif", &annulus_dem(true));
    let flat = dir.write_dem("flat.tif", &annulus_dem(false));
    let stations = dir.write_text(
        "stations.csv",
        &format!("station,x,y,elev\nC,{},{},0\n", X0 + 2100.0, Y0 - 2100.0),
    );
    let radii = "50m,100m,500m,1000m,1200m";
    // Exact method: every cell counts to the radius of its centre, so the sweep is flat
    // up to 100 m, steps by the (cell-centre) annulus between 100 m and 1000 m, and is
    // flat again beyond. Its size differs from the formula only by the staircase edges
    // of the rasterised ring: measured 11.6087 against 11.6227 mGal (-0.014) at 10 m
    // cells, as tests/reference.rs finds for the same ring.
    let (s, _) = sweep(
        &dir,
        &dem,
        &stations,
        &[
            "--outer-radius",
            "1500m",
            "--convention",
            "planar",
            "--method",
            "exact",
            "--radii",
            radii,
            "--compare-dem",
            flat.to_str().unwrap(),
        ],
    );
    let tc = |r: usize| s.num(r, "tc_mgal");
    assert_eq!(s.rows.len(), 6);
    assert_eq!(tc(0), 0.0);
    assert_eq!(tc(1), 0.0);
    let step = tc(3) - tc(1);
    eprintln!("exact: step {step:.4} mGal against the ring formula {ring:.4}");
    assert_close!(step, ring, 0.02, "exact step");
    assert_eq!(tc(4), tc(3));
    assert_eq!(tc(5), tc(3));
    // Half-way, the inner part of the ring: 100 m to 500 m.
    assert_close!(tc(2) - tc(1), hammer_ring_mgal(100.0, 500.0, 200.0), 0.05);
    // The flat DEM has no TC: the difference is minus the ring, at every radius.
    for r in 0..6 {
        assert_close!(s.num(r, "diff_dem_flat_mgal"), -tc(r), 1e-4);
        assert_eq!(s.num(r, "tc_dem_flat_mgal"), 0.0);
    }
    // Zoned method: blocks straddling 1000 m count whole to the side of their centroid,
    // so the step's edge is smeared by a block there: measured 11.5593 from 100 m to
    // 1000 m, and 0.043 mGal more by 1200 m (0.4% of the ring). Across the whole step
    // (50 m to 1200 m) it is the ring to the zoned method's own accuracy (measured
    // 11.6021, -0.021), and nothing comes from beyond.
    let (z, _) = sweep(
        &dir,
        &dem,
        &stations,
        &[
            "--outer-radius",
            "1500m",
            "--convention",
            "planar",
            "--radii",
            radii,
        ],
    );
    let zt = |r: usize| z.num(r, "tc_mgal");
    eprintln!(
        "zoned: {:.4} at 100 m, step 100-1000 m {:.4}, 50-1200 m {:.4}, beyond {:.4}",
        zt(1),
        zt(3) - zt(1),
        zt(4) - zt(0),
        zt(5) - zt(4)
    );
    assert_close!(zt(4) - zt(0), ring, 0.03, "zoned step");
    assert_close!(zt(3) - zt(1), ring, 0.1, "zoned step to 1000 m");
    assert!(zt(0).abs() < 1e-3, "{}", zt(0));
    assert!((zt(5) - zt(4)).abs() < 1e-3);
}

#[test]
fn compare_dem_reports_the_difference_at_every_radius() {
    let h = hill();
    let copy = h.dir.write_dem("hill_copy.tif", &h.grid);
    // A coarser DEM of the same ground: 50 m cells, the mean of each 2 x 2 block.
    let coarse = {
        let g = &h.grid;
        let mut heights = Vec::new();
        for r in 0..40 {
            for c in 0..40 {
                let mut s = 0.0;
                for (dc, dr) in [(0, 0), (1, 0), (0, 1), (1, 1)] {
                    s += g.height(2 * c + dc, 2 * r + dr).unwrap();
                }
                heights.push((s / 4.0) as f32);
            }
        }
        Dem {
            source: "coarse".into(),
            cols: 40,
            rows: 40,
            x_left: X0,
            y_top: Y0,
            dx: 50.0,
            dy: 50.0,
            heights,
            crs_wkt: String::new(),
            kind: ringsum::dem::GridKind::Projected,
            weights: None,
        }
    };
    let coarse = h.dir.write_dem("hill_50m.tif", &coarse);
    let out = h.dir.join("cmp.csv");
    let assert = ringsum(&h.dir)
        .arg("sweep")
        .arg("--dem")
        .arg(&h.dem)
        .arg("--stations")
        .arg(&h.stations)
        .args(["--outer-radius", "500m", "--compare-dem"])
        .arg(&copy)
        .arg("--compare-dem")
        .arg(&coarse)
        .arg("--out")
        .arg(&out)
        .assert()
        .success();
    let stdout = text(&assert.get_output().stdout);
    let s = Csv::read(&out);
    for r in 0..s.rows.len() {
        assert_eq!(s.get(r, "tc_dem_hill_copy_mgal"), s.get(r, "tc_mgal"));
        assert_eq!(s.get(r, "diff_dem_hill_copy_mgal"), "0.0000");
        // The 50 m DEM's inner zone reaches 75 m: no value inside it.
        let radius = s.num(r, "radius_m");
        let v = s.get(r, "tc_dem_hill_50m_mgal");
        if radius < 75.0 {
            assert_eq!(v, "", "radius {radius}");
        } else {
            let diff = s.num(r, "diff_dem_hill_50m_mgal");
            assert_close!(
                diff,
                s.num(r, "tc_dem_hill_50m_mgal") - s.num(r, "tc_mgal"),
                1.51e-4
            );
        }
    }
    assert!(
        stdout.contains("which DEM: ") && stdout.contains("hill_50m.tif in place of"),
        "{stdout}"
    );
    // The last radius of the coarse DEM is its own `correct` value.
    let c = correct(&h.dir, &coarse, &h.stations, &["--outer-radius", "500m"]);
    for i in 0..c.rows.len() {
        let rows = rows_of(&s, c.get(i, "station"));
        assert_eq!(
            rows.last().unwrap()[s.col("tc_dem_hill_50m_mgal")],
            c.get(i, "tc_mgal")
        );
    }
}

#[test]
fn sweep_writes_the_station_summary_and_plots_of_the_stated_size() {
    let h = hill();
    let out = h.dir.make_dir("out");
    let assert = ringsum(&h.dir)
        .arg("sweep")
        .arg("--dem")
        .arg(&h.dem)
        .arg("--stations")
        .arg(&h.stations)
        .args(["--outer-radius", "500m", "--densities", "2000"])
        .args([
            "--out",
            "out/sweep.csv",
            "--station-summary",
            "out/stations.csv",
        ])
        .args(["--plot", "out/sweep.png", "--plot", "out/sweep.svg"])
        .args(["--plot-size", "640x480"])
        .assert()
        .success();
    assert!(text(&assert.get_output().stdout).contains("ringsum sweep: 4 station(s)"));
    assert_eq!(
        entries(&out),
        [
            "stations.csv",
            "sweep.csv",
            "sweep.csv.run.json",
            "sweep.png",
            "sweep.svg"
        ]
    );
    assert_eq!(png_size(&out.join("sweep.png")), (640, 480));
    let svg = std::fs::read_to_string(out.join("sweep.svg")).unwrap();
    assert!(
        svg.contains("<svg") && svg.contains("width=\"640\"") && svg.contains("height=\"480\"")
    );
    assert!(svg.contains("outer radius (km, logarithmic)"));
    let summary = Csv::read(&out.join("stations.csv"));
    assert_eq!(
        summary.headers,
        [
            "station",
            "tc_mgal",
            "r95_m",
            "r99_m",
            "coverage",
            "tc_rho2000_mgal"
        ]
    );
    let table = Csv::read(&out.join("sweep.csv"));
    for i in 0..4 {
        let id = summary.get(i, "station");
        let rows = rows_of(&table, id);
        let final_tc = summary.num(i, "tc_mgal");
        assert_eq!(
            rows.last().unwrap()[table.col("tc_mgal")],
            summary.get(i, "tc_mgal")
        );
        // r95: the first radius from which on every value is within 5% of the final one.
        let r95 = summary.num(i, "r95_m");
        for r in &rows {
            let radius: f64 = r[table.col("radius_m")].parse().unwrap();
            let tc: f64 = r[table.col("tc_mgal")].parse().unwrap();
            if radius >= r95 {
                assert!(
                    (tc - final_tc).abs() <= 0.05 * final_tc + 1e-4,
                    "{id} {radius}"
                );
            }
        }
        assert!(summary.num(i, "r99_m") >= r95);
    }
    // Many stations: drawn as a spread, still of the stated size.
    ringsum(&h.dir)
        .arg("sweep")
        .arg("--dem")
        .arg(&h.dem)
        .arg("--stations")
        .arg(&h.stations)
        .args(["--outer-radius", "500m", "--max-lines", "2", "--quiet"])
        .args(["--out", "out/spread.csv", "--plot", "out/spread.png"])
        .assert()
        .success();
    assert_eq!(png_size(&out.join("spread.png")), (1000, 700));
}

#[test]
fn bad_sweep_inputs_are_refused_with_one_sentence_and_no_files() {
    let h = hill();
    let out = h.dir.make_dir("out");
    let run = |extra: &[&str]| {
        let assert = ringsum(&h.dir)
            .arg("sweep")
            .arg("--dem")
            .arg(&h.dem)
            .arg("--stations")
            .arg(&h.stations)
            .args(["--outer-radius", "500m"])
            .args(extra)
            .args(["--out", "out/s.csv", "--plot", "out/s.png"])
            .assert()
            .failure()
            .code(1);
        let stderr = text(&assert.get_output().stderr);
        assert_eq!(stderr.lines().count(), 1, "{stderr}");
        assert!(entries(&out).is_empty(), "{:?}", entries(&out));
        stderr
    };
    let e = run(&["--radii", "100m,300m,200m"]);
    assert!(
        e.contains("the radii must increase, but 300m is followed by 200m"),
        "{e}"
    );
    let e = run(&["--radii", "100m,100m"]);
    assert!(e.contains("must increase"), "{e}");
    let e = run(&["--radii", "100m,2km"]);
    assert!(e.contains("beyond the outer radius 500m"), "{e}");
    let e = run(&["--densities", "2000,-2670"]);
    assert!(
        e.contains("--densities -2670: a density must be a positive number"),
        "{e}"
    );
    let e = run(&["--densities", "0"]);
    assert!(e.contains("must be a positive number"), "{e}");
    let e = run(&["--densities", "2.67"]);
    assert!(e.contains("looks like g/cm3"), "{e}");
    let e = run(&["--plot-size", "big"]);
    assert!(e.contains("WIDTHxHEIGHT"), "{e}");
    // A comparison DEM the stations are not on.
    let far = h.dir.write_dem(
        "far.tif",
        &Dem::from_fn("far", 40, 40, X0 + 50_000.0, Y0, 25.0, |_, _| 300.0),
    );
    let e = run(&["--compare-dem", far.to_str().unwrap()]);
    assert!(e.contains("far.tif") && e.contains("reaches any"), "{e}");
    // Plot paths are checked before the run.
    let assert = ringsum(&h.dir)
        .arg("sweep")
        .arg("--dem")
        .arg(&h.dem)
        .arg("--stations")
        .arg(&h.stations)
        .args(["--out", "out/s.csv", "--plot", "out/s.pdf"])
        .assert()
        .failure()
        .code(1);
    assert!(text(&assert.get_output().stderr).contains("PNG or SVG"));
    assert!(entries(&out).is_empty());
}

// ---------------------------------------------------------------------------------------
// audit
// ---------------------------------------------------------------------------------------

/// The hill DEM with a nodata hole of 4 x 4 cells around (X0 + 300, Y0 - 300).
fn holed_hill() -> Dem {
    let mut dem = hill_dem();
    for r in 10..14 {
        for c in 10..14 {
            dem.heights[r * dem.cols + c] = f32::NAN;
        }
    }
    dem
}

/// A crafted station: id, easting, northing, height, and the problems it must be flagged
/// with.
type Crafted = (String, f64, f64, f64, &'static str);

/// Stations with crafted problems, and what the audit must flag for each.
fn crafted(dem: &Dem) -> Vec<Crafted> {
    let on = |ex: f64, ny: f64, dh: f64| {
        let (x, y) = (X0 + ex, Y0 - ny);
        (x, y, dem.bilinear(x, y).unwrap() + dh)
    };
    let mut out = Vec::new();
    let mut add = |id: &str, (x, y, h): (f64, f64, f64), flags: &'static str| {
        out.push((id.to_string(), x, y, h, flags));
    };
    add("OK1", on(1000.0, 1000.0, 0.3), "");
    add("OK2", on(1400.0, 1200.0, -2.0), "");
    add("LOW", on(1200.0, 1500.0, -4.9), "");
    add("HIGH", on(1500.0, 1000.0, 8.0), "height_mismatch");
    add("DUP1", on(1100.0, 1350.0, 0.0), "near_duplicate");
    add("DUP2", on(1100.6, 1350.0, 0.0), "near_duplicate");
    add("PAIR1", on(1300.0, 800.0, 0.0), "");
    add("PAIR2", on(1301.5, 800.0, 0.0), "");
    add("EDGE", on(1900.0, 1000.0, 0.0), "partial_coverage");
    add("NEARHOLE", on(450.0, 450.0, 0.0), "partial_coverage");
    add("HOLE", (X0 + 300.0, Y0 - 300.0, 320.0), "on_nodata");
    add("OUT", (X0 - 800.0, Y0 - 1000.0, 300.0), "outside_dem");
    out
}

fn crafted_text(stations: &[Crafted], legacy: Option<&dyn Fn(usize) -> String>) -> String {
    let mut text = String::from("station,x,y,elev");
    if legacy.is_some() {
        text.push_str(",tc_old");
    }
    text.push('\n');
    for (i, (id, x, y, h, _)) in stations.iter().enumerate() {
        text.push_str(&format!("{id},{x},{y},{h}"));
        if let Some(f) = legacy {
            text.push(',');
            text.push_str(&f(i));
        }
        text.push('\n');
    }
    text
}

fn audit(dir: &TestDir, dem: &Path, stations: &Path, extra: &[&str]) -> (Csv, String) {
    let out = dir.join("audit.csv");
    let assert = ringsum(dir)
        .arg("audit")
        .arg("--dem")
        .arg(dem)
        .arg("--stations")
        .arg(stations)
        .args(["--outer-radius", "300m"])
        .args(extra)
        .arg("--out")
        .arg(&out)
        .assert()
        .success();
    (Csv::read(&out), text(&assert.get_output().stdout))
}

#[test]
fn audit_flags_exactly_the_crafted_problems() {
    let dir = TestDir::new();
    let grid = holed_hill();
    let dem = dir.write_dem("holed.tif", &grid);
    let stations = crafted(&grid);
    let path = dir.write_text("stations.csv", &crafted_text(&stations, None));
    let (t, stdout) = audit(&dir, &dem, &path, &[]);
    assert_eq!(t.rows.len(), stations.len());
    for (i, (id, x, y, h, flags)) in stations.iter().enumerate() {
        assert_eq!(t.get(i, "station"), id);
        assert_eq!(t.get(i, "problems"), *flags, "station {id}");
        let on_data = !matches!(*flags, "on_nodata" | "outside_dem");
        assert_eq!(t.get(i, "dem_elev_m").is_empty(), !on_data, "{id}");
        if on_data {
            let dem_h = grid.bilinear(*x, *y).unwrap();
            assert_close!(t.num(i, "elev_minus_dem_m"), h - dem_h, 1.5e-3, "{id}");
            assert!(t.num(i, "dem_slope_deg") >= 0.0);
        }
        let coverage = t.num(i, "coverage");
        match *flags {
            "partial_coverage" => assert!(coverage < 1.0 && coverage > 0.5, "{id} {coverage}"),
            "outside_dem" => assert!(coverage < 1.0),
            "on_nodata" => {}
            _ => assert_eq!(coverage, 1.0, "{id}"),
        }
    }
    let out_row = t.station_row("OUT");
    assert_close!(t.num(out_row, "distance_to_dem_edge_m"), -800.0, 1e-6);
    let edge_row = t.station_row("EDGE");
    assert_close!(t.num(edge_row, "distance_to_dem_edge_m"), 100.0, 1e-6);
    let d1 = t.station_row("DUP1");
    assert_eq!(t.get(d1, "near_stations"), "DUP2");
    assert_close!(t.num(d1, "near_distance_m"), 0.6, 1e-6);
    assert_eq!(t.get(t.station_row("PAIR1"), "near_stations"), "");
    // A height mismatch on a slope: the shift that would explain it.
    let hi = t.station_row("HIGH");
    let slope = t.num(hi, "dem_slope_deg").to_radians();
    assert_close!(
        t.num(hi, "shift_for_mismatch_m"),
        t.num(hi, "elev_minus_dem_m").abs() / slope.tan(),
        0.1
    );
    // The summary says the same, in sentences.
    for needle in [
        "outside the DEM: 1: OUT (line 13), 800m outside",
        "on nodata of the DEM: 1: HOLE (line 12)",
        "disc of 300m not wholly on DEM data: 2 station(s)",
        "station minus DEM height beyond 5m: 1: HIGH +8.0 m",
        "near-duplicates within 1m: 1 pair(s): DUP1 and DUP2 0.600 m apart",
        "legacy TC: no column found",
        "7 station(s) with problems",
    ] {
        assert!(stdout.contains(needle), "missing '{needle}' in:\n{stdout}");
    }
    // With --duplicate-distance 2m the second pair is flagged too; with 0 neither.
    let (t, _) = audit(&dir, &dem, &path, &["--duplicate-distance", "2m"]);
    assert_eq!(t.get(t.station_row("PAIR1"), "problems"), "near_duplicate");
    let (t, _) = audit(
        &dir,
        &dem,
        &path,
        &["--duplicate-distance", "0", "--mismatch-threshold", "10m"],
    );
    assert_eq!(t.get(t.station_row("DUP1"), "problems"), "");
    assert_eq!(t.get(t.station_row("HIGH"), "problems"), "");
}

#[test]
fn audit_lists_every_repeated_id_and_writes_nothing() {
    let dir = TestDir::new();
    let dem = dir.write_dem("hill.tif", &hill_dem());
    let stations = dir.write_text(
        "stations.csv",
        &format!(
            "station,x,y,elev\nA,{x},{y},300\nB,{x},{y},300\nA,{x},{y},300\nB,{x},{y},300\nC,{x},{y},300\n",
            x = X0 + 1000.0,
            y = Y0 - 1000.0
        ),
    );
    let assert = ringsum(&dir)
        .arg("audit")
        .arg("--dem")
        .arg(&dem)
        .arg("--stations")
        .arg(&stations)
        .args(["--out", "audit.csv"])
        .assert()
        .failure()
        .code(1);
    let e = text(&assert.get_output().stderr);
    assert!(
        e.contains("2 station id(s) are used more than once: A (lines 2, 4); B (lines 3, 5)"),
        "{e}"
    );
    assert!(!dir.join("audit.csv").exists());
}

/// The good stations of the crafted set (those `correct` accepts) and their TC.
fn legacy_setup() -> (TestDir, PathBuf, Vec<Crafted>, Csv) {
    let dir = TestDir::new();
    let grid = holed_hill();
    let dem = dir.write_dem("holed.tif", &grid);
    let stations: Vec<_> = crafted(&grid)
        .into_iter()
        .filter(|s| s.4.is_empty() || s.4 == "height_mismatch" || s.4 == "near_duplicate")
        .collect();
    let good = dir.write_text("good.csv", &crafted_text(&stations, None));
    let tc = correct(&dir, &dem, &good, &["--outer-radius", "300m"]);
    (dir, dem, stations, tc)
}

#[test]
fn audit_compares_with_a_legacy_column() {
    let (dir, dem, stations, tc) = legacy_setup();
    // The legacy values are the new ones, except two stations off by a known amount.
    let offset = |id: &str| match id {
        "OK2" => 0.5,
        "DUP1" => -1.25,
        _ => 0.0,
    };
    let legacy = |i: usize| format!("{:.4}", tc.num(i, "tc_mgal") + offset(&stations[i].0));
    let path = dir.write_text("legacy.csv", &crafted_text(&stations, Some(&legacy)));
    let plots = dir.join("plots");
    let (t, stdout) = audit(
        &dir,
        &dem,
        &path,
        &["--plots", plots.to_str().unwrap(), "--plot-size", "700x500"],
    );
    for (i, s) in stations.iter().enumerate() {
        assert_eq!(t.get(i, "tc_mgal"), tc.get(i, "tc_mgal"), "{}", s.0);
        assert_close!(
            t.num(i, "new_minus_legacy_mgal"),
            -offset(&s.0),
            1e-9,
            "{}",
            s.0
        );
    }
    for needle in [
        "legacy TC (tc_old): 8 station(s) compared",
        "largest differences: DUP1 +1.2500",
        "; OK2 -0.5000",
        "range -0.5000 to +1.2500 mGal",
    ] {
        assert!(stdout.contains(needle), "missing '{needle}' in:\n{stdout}");
    }
    assert_eq!(
        entries(&plots),
        ["legacy_histogram.png", "legacy_scatter.png"]
    );
    for name in ["legacy_histogram.png", "legacy_scatter.png"] {
        assert_eq!(png_size(&plots.join(name)), (700, 500), "{name}");
    }
}

#[test]
fn bad_legacy_values_are_listed_and_skipped_only_on_request() {
    let (dir, dem, stations, tc) = legacy_setup();
    let legacy = |i: usize| match i {
        2 => "n/a".to_string(),
        5 => String::new(),
        _ => format!("{:.4}", tc.num(i, "tc_mgal")),
    };
    let path = dir.write_text("legacy.csv", &crafted_text(&stations, Some(&legacy)));
    let assert = ringsum(&dir)
        .arg("audit")
        .arg("--dem")
        .arg(&dem)
        .arg("--stations")
        .arg(&path)
        .args([
            "--outer-radius",
            "300m",
            "--plots",
            "plots",
            "--out",
            "audit.csv",
        ])
        .assert()
        .failure()
        .code(1);
    let e = text(&assert.get_output().stderr);
    assert_eq!(e.lines().count(), 1, "{e}");
    assert!(
        e.contains("2 legacy value(s) are empty or not numbers: line 4 (station LOW): tc_old is 'n/a'; line 7 (station DUP2): tc_old is ''")
            && e.contains("--skip-bad-legacy"),
        "{e}"
    );
    assert!(!dir.join("audit.csv").exists() && !dir.join("plots").exists());
    let (t, stdout) = audit(&dir, &dem, &path, &["--skip-bad-legacy"]);
    for (i, s) in stations.iter().enumerate() {
        let problems = t.get(i, "problems");
        let bad = i == 2 || i == 5;
        assert_eq!(problems.contains("bad_legacy"), bad, "{}: {problems}", s.0);
        assert_eq!(t.get(i, "new_minus_legacy_mgal").is_empty(), bad);
    }
    assert!(
        stdout.contains("legacy TC (tc_old): 6 station(s) compared"),
        "{stdout}"
    );
    assert!(
        stdout.contains("legacy values skipped (--skip-bad-legacy): 2"),
        "{stdout}"
    );
    // A named column that is not there.
    let assert = ringsum(&dir)
        .arg("audit")
        .arg("--dem")
        .arg(&dem)
        .arg("--stations")
        .arg(&path)
        .args(["--legacy-col", "tc_1987", "--out", "audit2.csv"])
        .assert()
        .failure()
        .code(1);
    assert!(text(&assert.get_output().stderr).contains("'tc_1987' given with --legacy-col"));
}

#[test]
fn hammer_zones_are_compared_zone_by_zone() {
    let (dir, dem, stations, _) = legacy_setup();
    let hammer = correct(
        &dir,
        &dem,
        &dir.join("good.csv"),
        &["--outer-radius", "300m", "--zones", "hammer"],
    );
    // Hammer zones within 300 m: B (2-16.6 m), C, D, E (170-390 m, cut at 300 m).
    let zones = ["B", "C", "D", "E"];
    let mut text_out = String::from("station,x,y,elev");
    for z in zones {
        text_out.push_str(&format!(",legacy_tc_{z}"));
    }
    text_out.push('\n');
    for (i, (id, x, y, h, _)) in stations.iter().enumerate() {
        text_out.push_str(&format!("{id},{x},{y},{h}"));
        for z in zones {
            let mut v = hammer.num(i, &format!("tc_zone_{z}_mgal"));
            if id == "OK1" && z == "D" {
                v += 0.1;
            }
            text_out.push_str(&format!(",{v:.4}"));
        }
        text_out.push('\n');
    }
    let path = dir.write_text("zones.csv", &text_out);
    let plots = dir.join("plots");
    let (t, stdout) = audit(
        &dir,
        &dem,
        &path,
        &["--zones", "hammer", "--plots", plots.to_str().unwrap()],
    );
    for (i, (id, ..)) in stations.iter().enumerate() {
        for z in zones {
            let d = t.num(i, &format!("diff_zone_{z}_mgal"));
            let expect = if id == "OK1" && z == "D" { -0.1 } else { 0.0 };
            // correct spreads its rounding over the parts so that they add up; the
            // audit rounds each zone: they may differ by a few units of 1e-4.
            assert_close!(d, expect, 3e-4, "{id} zone {z}");
        }
    }
    assert!(
        stdout.contains("zone D (legacy_tc_D): 8 station(s)"),
        "{stdout}"
    );
    assert_eq!(entries(&plots), ["legacy_zones.png"]);
    assert_eq!(png_size(&plots.join("legacy_zones.png")), (1000, 700));
    // Without the Hammer preset the zone columns are named, not compared.
    let (t, stdout) = audit(&dir, &dem, &path, &[]);
    assert!(t.col("problems") > 0 && !t.headers.iter().any(|h| h.starts_with("diff_")));
    assert!(
        stdout.contains("per-zone legacy columns not compared (legacy_tc_B"),
        "{stdout}"
    );
}

// ---------------------------------------------------------------------------------------
// map
// ---------------------------------------------------------------------------------------

/// Band 1 of a GeoTIFF read back through GDAL.
struct Tif {
    values: Vec<f32>,
    size: (usize, usize),
    geotransform: [f64; 6],
    epsg: Option<i32>,
    nodata: Option<f64>,
}

fn read_tif(path: &Path) -> Tif {
    let ds = gdal::Dataset::open(path).expect("GDAL opens the map");
    let geotransform = ds.geo_transform().expect("a geotransform");
    let srs = ds.spatial_ref().expect("a CRS");
    let band = ds.rasterband(1).unwrap();
    let size = ds.raster_size();
    let buf = band.read_as::<f32>((0, 0), size, size, None).unwrap();
    Tif {
        values: buf.into_shape_and_vec().1,
        size,
        geotransform,
        epsg: srs.auth_code().ok(),
        nodata: band.no_data_value(),
    }
}

#[test]
fn a_map_node_on_a_station_has_the_stations_tc_and_reads_back_through_gdal() {
    let h = hill();
    // Nodes at multiples of 250 m within the DEM inset by the 400 m radius:
    // eastings 500500 ... 501500, northings 5001500 ... 5000500.
    let (sx, sy) = (X0 + 750.0, Y0 - 1000.0);
    let elev = h.grid.bilinear(sx, sy).unwrap();
    let stations = h.dir.write_text(
        "node.csv",
        &format!("station,x,y,elev\nN,{sx},{sy},{elev}\n"),
    );
    let out = h.dir.make_dir("out");
    let assert = ringsum(&h.dir)
        .arg("map")
        .arg("--dem")
        .arg(&h.dem)
        .arg("--stations")
        .arg(&stations)
        .args(["--outer-radius", "400m", "--spacing", "250m"])
        .args([
            "--out",
            "out/tc.tif",
            "--preview",
            "out/tc.png",
            "--plot-size",
            "700x500",
        ])
        .assert()
        .success();
    let stderr = text(&assert.get_output().stderr);
    assert!(
        stderr.contains("5 x 5 = 25 nodes at 250m spacing"),
        "{stderr}"
    );
    assert_eq!(entries(&out), ["tc.png", "tc.tif", "tc.tif.run.json"]);
    assert_eq!(png_size(&out.join("tc.png")), (700, 500));
    let Tif {
        values,
        size,
        geotransform: gt,
        epsg,
        nodata,
    } = read_tif(&out.join("tc.tif"));
    assert_eq!(size, (5, 5));
    assert_eq!(epsg, Some(32633));
    assert_eq!(gt, [X0 + 375.0, 250.0, 0.0, Y0 - 375.0, 0.0, -250.0]);
    assert_eq!(nodata, Some(-9999.0));
    // Node (1, 2) is the station.
    let (col, row) = (
        ((sx - gt[0]) / gt[1]).floor() as usize,
        ((gt[3] - sy) / -gt[5]).floor() as usize,
    );
    assert_eq!((col, row), (1, 2));
    let c = correct(&h.dir, &h.dem, &stations, &["--outer-radius", "400m"]);
    assert_close!(
        values[row * 5 + col] as f64,
        c.num(0, "tc_mgal"),
        0.5e-4 + 1e-5
    );
    assert!(
        values.iter().all(|&v| v.is_finite() && v > 0.0),
        "{values:?}"
    );
}

#[test]
fn map_nodes_on_nodata_or_without_the_whole_disc_are_nodata() {
    let dir = TestDir::new();
    let dem = dir.write_dem("holed.tif", &holed_hill());
    // Whole DEM with gaps allowed: nodes at multiples of 100 m; the node at
    // (X0 + 300, Y0 - 300) is in the hole.
    ringsum(&dir)
        .arg("map")
        .arg("--dem")
        .arg(&dem)
        .args([
            "--outer-radius",
            "200m",
            "--spacing",
            "100m",
            "--allow-gaps",
            "--quiet",
        ])
        .args(["--out", "gaps.tif"])
        .assert()
        .success();
    let Tif {
        values,
        size: (cols, rows),
        geotransform: gt,
        ..
    } = read_tif(&dir.join("gaps.tif"));
    assert_eq!((cols, rows), (21, 21));
    assert_eq!(gt[0], X0 - 50.0);
    let at = |x: f64, y: f64| {
        let c = ((x - gt[0]) / gt[1]).floor() as usize;
        let r = ((gt[3] - y) / -gt[5]).floor() as usize;
        values[r * cols + c]
    };
    assert_eq!(at(X0 + 300.0, Y0 - 300.0), -9999.0);
    assert!(at(X0 + 1000.0, Y0 - 1000.0) > 0.0);
    // Edge nodes have part of the disc: computed with gaps allowed.
    assert!(at(X0, Y0 - 1000.0) > 0.0);
    // Without --allow-gaps, an extent over the edge and the hole: those nodes are nodata.
    let assert = ringsum(&dir)
        .arg("map")
        .arg("--dem")
        .arg(&dem)
        .args(["--outer-radius", "200m", "--spacing", "100m"])
        .args([
            "--extent",
            &format!("{},{},{},{}", X0, Y0 - 2000.0, X0 + 2000.0, Y0),
        ])
        .args(["--out", "strict.tif"])
        .assert()
        .success();
    let stderr = text(&assert.get_output().stderr);
    assert!(
        stderr.contains("written as nodata") && stderr.contains("--allow-gaps"),
        "{stderr}"
    );
    let strict = read_tif(&dir.join("strict.tif")).values;
    let c = |x: f64, y: f64| {
        let c = ((x - gt[0]) / gt[1]).floor() as usize;
        let r = ((gt[3] - y) / -gt[5]).floor() as usize;
        strict[r * cols + c]
    };
    assert_eq!(c(X0, Y0 - 1000.0), -9999.0);
    assert_eq!(c(X0 + 400.0, Y0 - 400.0), -9999.0, "next to the hole");
    assert_eq!(c(X0 + 1000.0, Y0 - 1000.0), at(X0 + 1000.0, Y0 - 1000.0));
}

#[test]
fn bad_map_inputs_are_refused_with_one_sentence_and_no_files() {
    let h = hill();
    let out = h.dir.make_dir("out");
    let run = |extra: &[&str]| {
        let assert = ringsum(&h.dir)
            .arg("map")
            .arg("--dem")
            .arg(&h.dem)
            .args(extra)
            .assert()
            .failure()
            .code(1);
        let stderr = text(&assert.get_output().stderr);
        assert_eq!(stderr.lines().count(), 1, "{stderr}");
        assert!(entries(&out).is_empty(), "{:?}", entries(&out));
        stderr
    };
    let run = |extra: &[&str]| {
        let mut all = vec!["--outer-radius", "400m"];
        if extra.contains(&"--outer-radius") {
            all.clear();
        }
        all.extend_from_slice(extra);
        run(&all)
    };
    let e = run(&[
        "--spacing",
        "0.05m",
        "--out",
        "out/m.tif",
        "--preview",
        "out/m.png",
    ]);
    assert!(
        e.contains(
            "a grid of 24001 x 24001 = 5.76e8 nodes at 0.05m spacing would need about 4.6 GB"
        ) && e.contains("--spacing 0.1m"),
        "{e}"
    );
    let e = run(&["--spacing", "0m", "--out", "out/m.tif"]);
    assert!(e.contains("positive length"), "{e}");
    let e = run(&["--spacing", "100m", "--out", "out/m.png"]);
    assert!(e.contains("GeoTIFF; give a path ending in .tif"), "{e}");
    let e = run(&[
        "--spacing",
        "100m",
        "--out",
        "out/m.tif",
        "--preview",
        "out/m.svg",
    ]);
    assert!(e.contains("written as PNG"), "{e}");
    let e = run(&[
        "--spacing",
        "100m",
        "--out",
        "out/m.tif",
        "--extent",
        "1,2,3",
    ]);
    assert!(e.contains("XMIN,YMIN,XMAX,YMAX"), "{e}");
    let e = run(&[
        "--spacing",
        "100m",
        "--out",
        "out/m.tif",
        "--extent",
        "stations",
    ]);
    assert!(e.contains("--extent stations needs --stations"), "{e}");
    let e = run(&[
        "--spacing",
        "100m",
        "--out",
        "out/m.tif",
        "--outer-radius",
        "5km",
    ]);
    assert!(e.contains("too small for a 5km outer radius"), "{e}");
}

#[test]
fn map_extent_from_the_stations() {
    let h = hill();
    ringsum(&h.dir)
        .arg("map")
        .arg("--dem")
        .arg(&h.dem)
        .arg("--stations")
        .arg(&h.stations)
        .args([
            "--outer-radius",
            "300m",
            "--spacing",
            "200m",
            "--extent",
            "stations",
            "--quiet",
        ])
        .args(["--out", "st.tif"])
        .assert()
        .success();
    let Tif {
        size: (cols, rows),
        geotransform: gt,
        ..
    } = read_tif(&h.dir.join("st.tif"));
    // Stations span eastings 700.4-1251 m and northings 700-1300.2 m from the corner;
    // widened by 200 m: nodes at 600 ... 1400 m east, 1400 ... 600 m south.
    assert_eq!((cols, rows), (5, 5));
    assert_eq!(gt[0], X0 + 500.0);
    assert_eq!(gt[3], Y0 - 500.0);
}

#[test]
fn map_values_do_not_depend_on_the_thread_count() {
    let h = hill();
    let run = |threads: &str, out: &str| {
        ringsum(&h.dir)
            .arg("map")
            .arg("--dem")
            .arg(&h.dem)
            .args(["--outer-radius", "300m", "--spacing", "100m", "--quiet"])
            .args(["--threads", threads, "--out", out])
            .assert()
            .success();
        read_tif(&h.dir.join(out)).values
    };
    let one = run("1", "one.tif");
    let two = run("2", "two.tif");
    assert_eq!(one.len(), 15 * 15);
    assert!(one == two);
}
