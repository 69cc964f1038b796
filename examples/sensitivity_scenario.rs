//! Writes a small invented scenario for trying `sweep`, `audit` and `map` into a folder: a
//! 30 m DEM of a synthetic mountain valley, a 500 m DEM of the same ground (block means), and
//! a station file with an invented "old survey" TC, total and per Hammer zone, with height
//! errors and a re-occupied station for the audit to find. (docs/sensitivity.md runs on the
//! demo scenario in demo-dem/ instead.)
//!
//! ```text
//! cargo run --example sensitivity_scenario -- OUT_DIR
//! ```
//!
//! Everything is made up: the terrain is fractal noise on a valley shape
//! ([`ringsum::synthetic::Fractal`]); the old survey's values are this program's own
//! planar Hammer-zone TC with invented errors: the inner zones B and C taken 20% low (as a
//! field estimate of the nearest ground might be), every zone read with 4% scatter, and
//! two stations with a blunder. The CRS is a UTM zone only so that GDAL has a projected
//! frame; the ground is nowhere.

use ringsum::dem::write::write_geotiff;
use ringsum::dem::Dem;
use ringsum::engine::{Convention, Engine, EngineConfig, InnerModel, Method, Point};
use ringsum::synthetic::Fractal;
use ringsum::units::{to_mgal, G};
use ringsum::zones::ZonePlan;
use std::fmt::Write as _;
use std::path::PathBuf;

/// West and north edges of the fine DEM (m, in the scenario's UTM frame).
const X0: f64 = 600_000.0;
const Y0: f64 = 5_200_000.0;
/// Fine DEM: 2000 x 2000 cells of 30 m (60 km square).
const CELLS: usize = 2000;
const CELL: f64 = 30.0;
/// Coarse DEM: 500 m cells over the same square.
const COARSE: f64 = 500.0;
const CRS: &str = "EPSG:32633";

/// Heights of the valley: a north-south trough with ridges either side, fractal relief.
fn height(x: f64, y: f64) -> f64 {
    let relief = Fractal {
        seed: 41,
        amplitude: 300.0,
        longest: 8_000.0,
        shortest: 30.0,
        hurst: 0.8,
    };
    let cx = X0 + 30_000.0 + 1500.0 * ((y - Y0) / 7000.0).sin();
    let across = (x - cx) / 1000.0;
    let trough = 500.0 * (1.0 - (-across * across / 2.0).exp());
    700.0 + trough + relief.height(x, y) + 0.02 * (Y0 - y)
}

/// A deterministic uniform number in -1..1.
fn noise(k: u64) -> f64 {
    let mut z = k.wrapping_mul(0x9e37_79b9_7f4a_7c15).wrapping_add(12345);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^= z >> 31;
    (z >> 11) as f64 / (1u64 << 52) as f64 - 1.0
}

fn main() {
    let out: PathBuf = std::env::args()
        .nth(1)
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from("scenario"));
    std::fs::create_dir_all(&out).expect("create the output folder");

    let fine = Dem::from_fn("valley_30m", CELLS, CELLS, X0, Y0, CELL, height);
    write_geotiff(&fine, &out.join("valley_30m.tif"), Some(CRS)).expect("write the 30 m DEM");
    // Coarse DEM: each 500 m cell the mean of 10 x 10 samples of the same ground.
    let n = (CELLS as f64 * CELL / COARSE) as usize;
    let coarse = Dem::from_fn("valley_500m", n, n, X0, Y0, COARSE, |x, y| {
        let mut sum = 0.0;
        for i in 0..10 {
            for j in 0..10 {
                let dx = (i as f64 + 0.5) / 10.0 - 0.5;
                let dy = (j as f64 + 0.5) / 10.0 - 0.5;
                sum += height(x + dx * COARSE, y + dy * COARSE);
            }
        }
        sum / 100.0
    });
    write_geotiff(&coarse, &out.join("valley_500m.tif"), Some(CRS)).expect("write the 500 m DEM");

    // 24 stations along the valley floor and up its sides, within 2 km of the centre
    // line, heights within a metre of the DEM; V07 carries a 9 m height error, and V13b
    // re-occupies V13 0.4 m away.
    let mut stations = Vec::new();
    for k in 0..24u64 {
        let y = Y0 - 24_000.0 - 500.0 * k as f64;
        let cx = X0 + 30_000.0 + 1500.0 * ((y - Y0) / 7000.0).sin();
        let x = cx + 1800.0 * noise(k);
        let mut elev = fine.bilinear(x, y).expect("on the DEM") + 0.8 * noise(100 + k);
        if k == 7 {
            elev += 9.0;
        }
        stations.push((format!("V{:02}", k + 1), x, y, elev));
    }
    let (_, x13, y13, e13) = stations[12].clone();
    stations.push(("V13b".to_string(), x13 + 0.4, y13, e13 + 0.1));

    // The old survey: planar Hammer zones to 10 km at 2670 kg/m3, with invented errors.
    let outer = 10_000.0;
    let plan = ZonePlan::hammer(outer);
    let config = EngineConfig {
        outer_radius_m: outer,
        convention: Convention::Planar,
        method: Method::Zoned,
        inner_model: InnerModel::Surface,
    };
    let engine = Engine::new(&fine, config, plan.clone());
    let points: Vec<Point> = stations
        .iter()
        .map(|(_, x, y, elev)| Point {
            x: *x,
            y: *y,
            elev: *elev,
        })
        .collect();
    let results = engine.compute_all(&points, &|| ());
    let mgal = |k: f64| to_mgal(G * 2670.0 * k);
    let mut text = String::from("station,x,y,elev,tc_old");
    for ring in &plan.rings {
        write!(text, ",legacy_tc_{}", ring.name).unwrap();
    }
    text.push('\n');
    for (i, ((id, x, y, elev), r)) in stations.iter().zip(&results).enumerate() {
        let mut zones = Vec::new();
        for (j, ring) in plan.rings.iter().enumerate() {
            let bias = if ring.name == "B" || ring.name == "C" {
                0.8
            } else {
                1.0
            };
            let scatter = 1.0 + 0.04 * noise(1000 + 100 * i as u64 + j as u64);
            zones.push(mgal(r.rings_m[j]) * bias * scatter);
        }
        let mut total: f64 = zones.iter().sum();
        if id == "V05" {
            total += 1.5;
        }
        if id == "V18" {
            total -= 0.9;
        }
        write!(text, "{id},{x:.2},{y:.2},{elev:.2},{total:.3}").unwrap();
        for z in zones {
            write!(text, ",{z:.3}").unwrap();
        }
        text.push('\n');
    }
    std::fs::write(out.join("stations.csv"), text).expect("write the stations");
    println!(
        "scenario written to {}: valley_30m.tif, valley_500m.tif, stations.csv ({} stations)",
        out.display(),
        stations.len()
    );
}
