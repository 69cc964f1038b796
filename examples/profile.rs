//! Elements and time per station of the zoned engine on a synthetic terrain.
//!
//! ```text
//! cargo run --release --example profile -- [radius_km] [cell_m] [terrain]
//! ```

use ringsum::engine::{Convention, Engine, EngineConfig, InnerModel, Method, Point};
use ringsum::synthetic::Terrain;
use ringsum::zones::{AutoSettings, ZonePlan};
use std::time::Instant;

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let radius_km: f64 = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(20.0);
    let cell: f64 = args.get(2).and_then(|s| s.parse().ok()).unwrap_or(30.0);
    let terrain = match args.get(3).map(String::as_str) {
        Some("cliff") => Terrain::Cliff,
        Some("valley") => Terrain::NarrowValley,
        Some("peak") => Terrain::LonePeak,
        _ => Terrain::Fractal,
    };
    let radius = radius_km * 1000.0;
    let cells = ((2.0 * radius + 4.0 * cell) / cell).ceil() as usize;
    let t0 = Instant::now();
    let dem = terrain.dem(cells, cell);
    println!(
        "DEM {cells} x {cells} built in {:.2} s",
        t0.elapsed().as_secs_f64()
    );
    let plan = ZonePlan::auto(cell, radius, &settings_from_env());
    for inner_model in [InnerModel::Prisms, InnerModel::Surface] {
        let cfg = EngineConfig {
            outer_radius_m: radius,
            convention: Convention::Spherical,
            method: Method::Zoned,
            inner_model,
        };
        let t0 = Instant::now();
        let engine = Engine::new(&dem, cfg, plan.clone());
        println!("engine set up in {:.3} s", t0.elapsed().as_secs_f64());
        let points: Vec<Point> = (0..std::env::var("NPTS")
            .ok()
            .and_then(|s| s.parse().ok())
            .unwrap_or(200))
            .map(|k| {
                let x = ((k * 37) % 200) as f64 * 7.3 - 700.0;
                let y = ((k * 91) % 200) as f64 * 6.1 - 600.0;
                Point {
                    x,
                    y,
                    elev: dem.bilinear(x, y).unwrap() + 0.7,
                }
            })
            .collect();
        let t0 = Instant::now();
        let mut inner = 0;
        let mut rings = vec![0u64; plan.rings.len()];
        for p in &points {
            let r = engine.compute(*p);
            inner += r.inner_elements;
            for (a, b) in rings.iter_mut().zip(&r.ring_elements) {
                *a += b;
            }
        }
        let n = points.len() as f64;
        println!(
            "{inner_model:?}: {:.3} ms per station; inner evaluations {:.0}; per ring {:?}",
            1e3 * t0.elapsed().as_secs_f64() / n,
            inner as f64 / n,
            plan.rings
                .iter()
                .zip(&rings)
                .map(|(r, e)| format!("{}:{:.0}", r.name, *e as f64 / n))
                .collect::<Vec<_>>()
        );
    }
}

/// The automatic plan's settings, with overrides from the environment for studies:
/// FAR_START_KM, BLOCK_RATIO, NEAR_CELLS, FAR_RING_RATIO.
fn settings_from_env() -> AutoSettings {
    let get = |k: &str| std::env::var(k).ok().and_then(|v| v.parse::<f64>().ok());
    let mut s = AutoSettings::default();
    if let Some(v) = get("FAR_START_KM") {
        s.far_start_m = v * 1000.0;
    }
    if let Some(v) = get("BLOCK_RATIO") {
        s.block_ratio = v;
    }
    if let Some(v) = get("NEAR_CELLS") {
        s.near_cells = v;
    }
    if std::env::var("FAR_METHOD").as_deref() == Ok("sectors") {
        s.far_method = ringsum::zones::FarMethod::Sectors;
    }
    if let Some(v) = get("FAR_RING_RATIO") {
        s.far_ring_ratio = v;
    }
    s
}
