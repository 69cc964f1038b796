//! Time per station (one thread) of the zoned engine on a DEM file and a station file:
//!
//! ```text
//! cargo run --release --example time_file -- DEM.tif STATIONS.csv [radius_km] [max_stations]
//! ```

use ringsum::dem::read::read_dem;
use ringsum::engine::{Convention, Engine, EngineConfig, InnerModel, Method, Point};
use ringsum::zones::{AutoSettings, ZonePlan};
use std::time::Instant;

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let dem = read_dem(std::path::Path::new(&args[1])).expect("a DEM");
    let radius = args
        .get(3)
        .and_then(|s| s.parse::<f64>().ok())
        .unwrap_or(166.735)
        * 1000.0;
    let max: usize = args.get(4).and_then(|s| s.parse().ok()).unwrap_or(2000);
    let points: Vec<Point> = std::fs::read_to_string(&args[2])
        .unwrap()
        .lines()
        .skip(1)
        .take(max)
        .map(|l| {
            let f: Vec<f64> = l.split(',').skip(1).map(|v| v.parse().unwrap()).collect();
            Point {
                x: f[0],
                y: f[1],
                elev: f[2],
            }
        })
        .collect();
    for inner_model in [InnerModel::Prisms, InnerModel::Surface] {
        let config = EngineConfig {
            outer_radius_m: radius,
            convention: Convention::Spherical,
            method: Method::Zoned,
            inner_model,
        };
        let engine = Engine::new(
            &dem,
            config,
            ZonePlan::auto(dem.cell_size_m(), radius, &AutoSettings::default()),
        );
        let t = Instant::now();
        let mut sum = 0.0;
        for p in &points {
            sum += engine.compute(*p).kernel_sum_m();
        }
        println!(
            "{inner_model:?}: {:.3} ms per station ({} stations; checksum {sum:.6})",
            1e3 * t.elapsed().as_secs_f64() / points.len() as f64,
            points.len()
        );
    }
}
