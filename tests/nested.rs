//! Several DEMs in one run: a fine DEM inside a coarse one, a gap filled from the coarse
//! one, DEMs in different CRS, the order of the DEMs, vertical datums.

mod common;

use common::{correct_table, fixture, ringsum, Csv, TestDir};
use ringsum::dem::Dem;
use ringsum::synthetic::Fractal;

/// Rough terrain in UTM 33N coordinates around (500 km, 5000 km).
fn height(x: f64, y: f64) -> f64 {
    1200.0
        + Fractal {
            seed: 3,
            amplitude: 500.0,
            longest: 8000.0,
            shortest: 40.0,
            hurst: 0.8,
        }
        .height(x - 500_000.0, y - 5_000_000.0)
}

const X0: f64 = 491_000.0;
const Y0: f64 = 5_009_000.0;

/// The fine grid: 30 m, 600 x 600 cells (18 km) from (X0, Y0).
fn fine_big() -> Dem {
    Dem::from_fn("fine", 600, 600, X0, Y0, 30.0, height)
}

/// A window of a grid, `cols` x `rows` cells from cell (c0, r0).
fn cut(dem: &Dem, c0: usize, r0: usize, cols: usize, rows: usize) -> Dem {
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
        ..dem.clone()
    }
}

/// Block averages of `k` x `k` cells.
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
        ..dem.clone()
    }
}

fn run(
    dir: &TestDir,
    dems: &[&std::path::Path],
    stations: &std::path::Path,
    extra: &[&str],
) -> Csv {
    correct_table(dir, dems, stations, "8km", extra)
}

fn stations(dir: &TestDir, dem: &Dem) -> std::path::PathBuf {
    let pts = [
        ("N1", 500_013.0, 5_000_007.0),
        ("N2", 500_837.0, 4_999_222.0),
        ("N3", 499_201.0, 5_000_850.0),
    ];
    let rows: Vec<(&str, f64, f64, f64)> = pts
        .iter()
        .map(|&(id, x, y)| (id, x, y, dem.bilinear(x, y).unwrap()))
        .collect();
    dir.write_stations("stations.csv", &rows)
}

#[test]
fn a_fine_dem_inside_a_coarse_one_gives_the_fine_result() {
    // The fine DEM alone (18 km, enough for 8 km around the stations) against a 6 km cut of
    // it placed in a 4x block average of the whole: outside the cut the coarse grid stands
    // in for the fine one, and the correction must stay within the engine's target
    // max(0.01 mGal, 0.5 %) of the fine DEM's.
    let dir = TestDir::new();
    let big = fine_big();
    let fine = dir.write_dem("fine.tif", &big);
    let small = dir.write_dem("small.tif", &cut(&big, 200, 200, 200, 200));
    let coarse = dir.write_dem("coarse.tif", &coarsen(&big, 4));
    let st = stations(&dir, &big);
    let alone = run(&dir, &[&fine], &st, &[]);
    let nested = run(&dir, &[&small, &coarse], &st, &[]);
    for i in 0..alone.rows.len() {
        let (a, n) = (alone.num(i, "tc_mgal"), nested.num(i, "tc_mgal"));
        println!(
            "{}: fine alone {a:.4}, nested {n:.4}",
            alone.get(i, "station")
        );
        assert!(
            (a - n).abs() <= 0.01f64.max(0.005 * a),
            "{}: fine {a} vs nested {n}",
            alone.get(i, "station")
        );
        assert_eq!(nested.get(i, "coverage"), "1.0000");
        assert_eq!(nested.get(i, "dems_inner"), "1");
        assert_eq!(nested.get(i, "dems_near"), "1");
        assert!(nested.get(i, "dems_mid").contains('2'));
        let served = nested.num(i, "coverage_dem1") + nested.num(i, "coverage_dem2");
        assert!((served - 1.0).abs() < 2e-3, "coverage split {served}");
    }
}

#[test]
fn a_gap_in_the_fine_dem_is_filled_from_the_coarse_one() {
    // A 1.5 km hole of nodata in the fine DEM, 2-3 km from the stations: alone, the discs
    // have gaps (refused without --allow-gaps); with the coarse DEM the hole is taken from
    // it, the coverage is 1 and the correction is that of the fine DEM without the hole
    // within the target.
    let dir = TestDir::new();
    let big = fine_big();
    let mut holed = big.clone();
    for r in 250..300 {
        for c in 380..430 {
            holed.heights[r * holed.cols + c] = f32::NAN;
        }
    }
    let whole = dir.write_dem("whole.tif", &big);
    let holed_path = dir.write_dem("holed.tif", &holed);
    let coarse = dir.write_dem("coarse.tif", &coarsen(&big, 4));
    let st = stations(&dir, &big);
    let reference = run(&dir, &[&whole], &st, &[]);
    let with_gap = run(&dir, &[&holed_path], &st, &["--allow-gaps"]);
    let filled = run(&dir, &[&holed_path, &coarse], &st, &[]);
    for i in 0..reference.rows.len() {
        assert!(with_gap.num(i, "coverage") < 1.0);
        assert_eq!(filled.get(i, "coverage"), "1.0000");
        let (a, f) = (reference.num(i, "tc_mgal"), filled.num(i, "tc_mgal"));
        println!("whole {a:.4}, holed and filled {f:.4}");
        assert!(
            (a - f).abs() <= 0.01f64.max(0.005 * a),
            "whole {a} vs filled {f}"
        );
    }
    // Without --allow-gaps the holed DEM alone is refused.
    let mut cmd = ringsum(&dir);
    cmd.args([
        "correct",
        "--quiet",
        "--out",
        "-",
        "--outer-radius",
        "8km",
        "--dem",
    ])
    .arg(&holed_path)
    .arg("--stations")
    .arg(&st);
    let err = String::from_utf8_lossy(&cmd.assert().code(1).get_output().stderr).to_string();
    assert!(
        err.contains("coverage") && err.contains("--allow-gaps"),
        "{err}"
    );
}

#[test]
fn dems_in_different_crs_work_together() {
    // The real DEM fixture (matplotlib's sample DEM, USGS data; fixtures/README.md) as its
    // 90 m UTM zone 16N grid inside its original 3 arc-second lon/lat grid, which reaches
    // a little further: at 6 km the UTM grid alone leaves gaps (J04, J05), the pair covers
    // at least what either covers (J05 fully), and the result stays within the resampling
    // difference of the two grids (tests/geographic.rs: a few per cent) of the lon/lat
    // grid alone.
    let dir = TestDir::new();
    let st = fixture("jacksboro_stations.csv");
    let utm = fixture("jacksboro_utm.tif");
    let geo = fixture("jacksboro_geographic.tif");
    let utm_alone = correct_table(&dir, &[&utm], &st, "6km", &["--allow-gaps"]);
    let geo_alone = correct_table(
        &dir,
        &[&geo],
        &st,
        "6km",
        &["--allow-gaps", "--stations-crs", "EPSG:32616"],
    );
    let both = correct_table(&dir, &[&utm, &geo], &st, "6km", &["--allow-gaps"]);
    for i in 0..both.rows.len() {
        let id = both.get(i, "station").to_string();
        let c = both.num(i, "coverage");
        assert!(
            c >= utm_alone
                .num(i, "coverage")
                .max(geo_alone.num(i, "coverage"))
                - 1e-4,
            "{id}: {c}"
        );
        assert_eq!(both.get(i, "dems_inner"), "1");
        let (g, b) = (geo_alone.num(i, "tc_mgal"), both.num(i, "tc_mgal"));
        assert!(
            (g - b).abs() <= 0.05 * g,
            "{id}: lon/lat alone {g} vs both {b}"
        );
    }
    let j05 = both.station_row("J05");
    assert!(utm_alone.num(j05, "coverage") < 1.0);
    assert_eq!(both.get(j05, "coverage"), "1.0000");
    assert!(both.get(j05, "dems_far").is_empty() && both.get(j05, "dems_mid").contains('2'));
}

#[test]
fn dems_given_coarse_first_are_put_finest_first_with_a_note() {
    let dir = TestDir::new();
    let big = fine_big();
    let small = dir.write_dem("small.tif", &cut(&big, 150, 150, 300, 300));
    let coarse = dir.write_dem("coarse.tif", &coarsen(&big, 4));
    let st = stations(&dir, &big);
    let fine_first = run(&dir, &[&small, &coarse], &st, &[]);
    let out = ringsum(&dir)
        .args(["correct", "--out", "-", "--outer-radius", "8km", "--dem"])
        .arg(&coarse)
        .arg("--dem")
        .arg(&small)
        .arg("--stations")
        .arg(&st)
        .assert()
        .success();
    let output = out.get_output();
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(stderr.contains("put finest first"), "{stderr}");
    let coarse_first = Csv::parse(&String::from_utf8_lossy(&output.stdout));
    assert_eq!(coarse_first.headers, fine_first.headers);
    assert_eq!(coarse_first.rows, fine_first.rows);
}

#[test]
fn different_vertical_datums_are_refused() {
    let dir = TestDir::new();
    let big = fine_big();
    let a = dir.write_dem_crs("a.tif", &cut(&big, 150, 150, 300, 300), "EPSG:32633+5773");
    let b = dir.write_dem_crs("b.tif", &coarsen(&big, 4), "EPSG:32633+3855");
    let st = stations(&dir, &big);
    let mut cmd = ringsum(&dir);
    cmd.args([
        "correct",
        "--quiet",
        "--out",
        "-",
        "--outer-radius",
        "8km",
        "--dem",
    ])
    .arg(&a)
    .arg("--dem")
    .arg(&b)
    .arg("--stations")
    .arg(&st);
    let err = String::from_utf8_lossy(&cmd.assert().code(1).get_output().stderr).to_string();
    assert!(err.contains("vertical datum"), "{err}");
}
