//! A density raster: each element of the terrain correction at its own density.

mod common;

use common::{correct_table, ringsum, Csv, TestDir};
use ringsum::dem::Dem;
use ringsum::engine::{Convention, Engine, EngineConfig, InnerModel, Method, Point};
use ringsum::synthetic::Terrain;
use ringsum::units::{to_mgal, G};
use ringsum::zones::{AutoSettings, ZonePlan};

const X0: f64 = 500_000.0;
const Y0: f64 = 5_000_000.0;

fn dem() -> Dem {
    let mut d = Terrain::LonePeak.dem(200, 30.0);
    d.x_left += X0;
    d.y_top += Y0;
    d
}

fn density_grid(f: impl Fn(f64, f64) -> f64) -> Dem {
    // A coarser grid (90 m) over the same ground: densities need not share the DEM's grid.
    Dem::from_fn("rho", 70, 70, X0 - 3150.0, Y0 + 3150.0, 90.0, f)
}

fn run(dir: &TestDir, dem: &std::path::Path, st: &std::path::Path, extra: &[&str]) -> Csv {
    correct_table(dir, &[dem], st, "2km", extra)
}

fn stations(dir: &TestDir, d: &Dem) -> std::path::PathBuf {
    let pts = [
        ("D1", X0 + 213.0, Y0 + 17.0),
        ("D2", X0 - 480.0, Y0 + 350.0),
        ("D3", X0 + 615.0, Y0 - 505.0),
    ];
    let rows: Vec<(&str, f64, f64, f64)> = pts
        .iter()
        .map(|&(id, x, y)| (id, x, y, d.bilinear(x, y).unwrap() + 0.4))
        .collect();
    dir.write_stations("s.csv", &rows)
}

#[test]
fn a_raster_of_the_constant_density_gives_the_constant_result() {
    let dir = TestDir::new();
    let d = dem();
    let dem_path = dir.write_dem("dem.tif", &d);
    let st = stations(&dir, &d);
    let raster = dir.write_dem("rho.tif", &density_grid(|_, _| 2670.0));
    let constant = run(&dir, &dem_path, &st, &[]);
    let with_raster = run(
        &dir,
        &dem_path,
        &st,
        &["--density-raster", raster.to_str().unwrap()],
    );
    for i in 0..constant.rows.len() {
        assert_eq!(constant.get(i, "tc_mgal"), with_raster.get(i, "tc_mgal"));
        assert_eq!(with_raster.get(i, "density_kg_m3"), "2670");
    }
    // Another constant scales exactly (the kernel sums are linear in the density).
    let raster = dir.write_dem("rho2.tif", &density_grid(|_, _| 2000.0));
    let r2000 = run(
        &dir,
        &dem_path,
        &st,
        &["--density-raster", raster.to_str().unwrap()],
    );
    let c2000 = run(&dir, &dem_path, &st, &["--density", "2000"]);
    for i in 0..constant.rows.len() {
        assert!((r2000.num(i, "tc_mgal") - c2000.num(i, "tc_mgal")).abs() <= 1.5e-4);
    }
}

#[test]
fn two_densities_add_up_as_two_bodies() {
    // West of the peak 2200 kg/m3, east of it 3000: the exact sum with the raster equals the
    // exact sums of the two halves of the terrain each at its own density (each half a DEM
    // with the other half nodata, gaps allowed), and the zoned engine meets the exact sum
    // within its target.
    let dir = TestDir::new();
    let d = dem();
    let dem_path = dir.write_dem("dem.tif", &d);
    let st = stations(&dir, &d);
    // On an edge of the 90 m density grid, so that the halves and the raster agree cell by cell.
    let split_x = X0 + 90.0;
    let raster = dir.write_dem(
        "rho.tif",
        &density_grid(|x, _| if x < split_x { 2200.0 } else { 3000.0 }),
    );
    let half = |west: bool| {
        let mut h = d.clone();
        for row in 0..h.rows {
            for col in 0..h.cols {
                if (h.col_center_x(col) < split_x) != west {
                    h.heights[row * h.cols + col] = f32::NAN;
                }
            }
        }
        h
    };
    let exact = ["--method", "exact", "--inner-model", "prisms"];
    let with_raster = run(
        &dir,
        &dem_path,
        &st,
        &[&exact[..], &["--density-raster", raster.to_str().unwrap()]].concat(),
    );
    let zoned = run(
        &dir,
        &dem_path,
        &st,
        &[
            "--inner-model",
            "prisms",
            "--density-raster",
            raster.to_str().unwrap(),
        ],
    );
    // The halves through the library (a station may sit on the other half's nodata).
    let (w_dem, e_dem) = (half(true), half(false));
    let config = EngineConfig {
        outer_radius_m: 2000.0,
        convention: Convention::Spherical,
        method: Method::Exact,
        inner_model: InnerModel::Prisms,
    };
    let plan = ZonePlan::auto(30.0, 2000.0, &AutoSettings::default());
    let w_engine = Engine::new(&w_dem, config, plan.clone());
    let e_engine = Engine::new(&e_dem, config, plan);
    for i in 0..with_raster.rows.len() {
        let p = Point {
            x: with_raster.num(i, "x"),
            y: with_raster.num(i, "y"),
            elev: with_raster.num(i, "elev_m"),
        };
        let sum = to_mgal(
            G * (2200.0 * w_engine.compute(p).kernel_sum_m()
                + 3000.0 * e_engine.compute(p).kernel_sum_m()),
        );
        let r = with_raster.num(i, "tc_mgal");
        assert!(
            (r - sum).abs() <= 2.5e-4,
            "{}: raster {r} vs halves {sum}",
            with_raster.get(i, "station")
        );
        let z = zoned.num(i, "tc_mgal");
        assert!(
            (z - r).abs() <= 0.01f64.max(0.005 * r),
            "zoned {z} vs exact {r}"
        );
    }
}

#[test]
fn a_raster_in_lon_lat_works_and_a_short_one_is_refused() {
    let dir = TestDir::new();
    let d = dem();
    let dem_path = dir.write_dem("dem.tif", &d);
    let st = stations(&dir, &d);
    // The same constant density on a lon/lat grid around the area (UTM 33N at 15 E, 45.1 N).
    let geo = Dem::from_fn("rho", 100, 85, 14.90, 45.22, 0.002, |_, _| 2670.0);
    let geo_path = dir.write_dem_crs("rho_geo.tif", &geo, "EPSG:4326");
    let constant = run(&dir, &dem_path, &st, &[]);
    let with_geo = run(
        &dir,
        &dem_path,
        &st,
        &["--density-raster", geo_path.to_str().unwrap()],
    );
    for i in 0..constant.rows.len() {
        assert_eq!(constant.get(i, "tc_mgal"), with_geo.get(i, "tc_mgal"));
    }
    // A raster covering only part of the discs.
    let short = dir.write_dem(
        "short.tif",
        &Dem::from_fn("rho", 20, 20, X0 - 300.0, Y0 + 300.0, 30.0, |_, _| 2670.0),
    );
    let mut cmd = ringsum(&dir);
    cmd.args([
        "correct",
        "--quiet",
        "--out",
        "-",
        "--outer-radius",
        "2km",
        "--density-raster",
    ])
    .arg(&short)
    .arg("--dem")
    .arg(&dem_path)
    .arg("--stations")
    .arg(&st);
    let err = String::from_utf8_lossy(&cmd.assert().code(1).get_output().stderr).to_string();
    assert!(
        err.contains("does not reach over") && err.contains("--allow-gaps"),
        "{err}"
    );
    // Negative densities.
    let bad = dir.write_dem(
        "bad.tif",
        &density_grid(|x, _| if x > X0 + 1000.0 { -5.0 } else { 2670.0 }),
    );
    let mut cmd = ringsum(&dir);
    cmd.args([
        "correct",
        "--quiet",
        "--out",
        "-",
        "--outer-radius",
        "2km",
        "--density-raster",
    ])
    .arg(&bad)
    .arg("--dem")
    .arg(&dem_path)
    .arg("--stations")
    .arg(&st);
    let err = String::from_utf8_lossy(&cmd.assert().code(1).get_output().stderr).to_string();
    assert!(
        err.contains("not positive") && err.contains("kg/m3"),
        "{err}"
    );
}
