//! The benchmark scenario: a synthetic 30 m fractal DEM large enough for a full 166.7 km
//! correction around a 10 km x 10 km survey, and a grid of stations on it. Written once
//! to `target/bench-data/` by `cargo run --release --example make_bench_data` (or by the
//! benchmarks when missing) and shared by the benchmarks and the command-line timings.

use crate::dem::Dem;
use crate::output::geotiff::write_dem;
use crate::synthetic::Terrain;
use crate::units::STANDARD_OUTER_RADIUS_M;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Cell size of the benchmark DEM, m.
pub const CELL_M: f64 = 30.0;
/// Half-width of the survey area at the DEM's centre, m.
pub const SURVEY_HALF_WIDTH_M: f64 = 5_000.0;
/// Stations per side of the benchmark's station grid (100 x 100 = 10,000 stations).
pub const STATIONS_PER_SIDE: usize = 100;

/// Folder of the benchmark data.
pub fn folder() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("target")
        .join("bench-data")
}

/// Path of the benchmark DEM.
pub fn dem_path() -> PathBuf {
    folder().join("fractal_30m.tif")
}

/// Path of the benchmark station file.
pub fn stations_path() -> PathBuf {
    folder().join("stations_10000.csv")
}

/// Cells per side: the survey area plus the standard outer radius plus a margin.
pub fn cells_per_side() -> usize {
    (2.0 * (SURVEY_HALF_WIDTH_M + STANDARD_OUTER_RADIUS_M + 1_000.0) / CELL_M).ceil() as usize
}

/// The benchmark DEM in memory (about 15 s on two cores).
pub fn make_dem() -> Dem {
    Terrain::Fractal.dem(cells_per_side(), CELL_M)
}

/// The station grid over the survey area: `(id, x, y)`, heights from `dem`.
pub fn stations(dem: &Dem) -> Vec<(String, f64, f64, f64)> {
    let n = STATIONS_PER_SIDE;
    let mut out = Vec::with_capacity(n * n);
    for i in 0..n {
        for j in 0..n {
            // A little off the regular lattice so that stations fall anywhere in a cell.
            let x = -SURVEY_HALF_WIDTH_M + (i as f64 + 0.37) * 2.0 * SURVEY_HALF_WIDTH_M / n as f64;
            let y = -SURVEY_HALF_WIDTH_M + (j as f64 + 0.61) * 2.0 * SURVEY_HALF_WIDTH_M / n as f64;
            let elev = dem.bilinear(x, y).expect("the survey area is on the DEM");
            out.push((
                format!("B{:05}", i * n + j),
                x + 500_000.0,
                y + 5_000_000.0,
                elev,
            ));
        }
    }
    out
}

/// Writes the DEM (shifted into UTM zone 33N coordinates) and the stations, unless they
/// exist already.
pub fn ensure_written() -> anyhow::Result<()> {
    if dem_path().exists() && stations_path().exists() {
        return Ok(());
    }
    std::fs::create_dir_all(folder())?;
    let mut dem = make_dem();
    let stations = stations(&dem);
    dem.x_left += 500_000.0;
    dem.y_top += 5_000_000.0;
    write_dem(&dem, &dem_path(), Some("EPSG:32633"))?;
    let mut f = std::fs::File::create(stations_path())?;
    writeln!(f, "station,x,y,elev")?;
    for (id, x, y, elev) in stations {
        writeln!(f, "{id},{x:.3},{y:.3},{elev:.3}")?;
    }
    Ok(())
}
