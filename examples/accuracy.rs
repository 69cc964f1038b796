//! Zoned against exact on the synthetic test terrains and the real-DEM fixture: the
//! accuracy study of the README's performance section. Heavy (brute-force prism sums);
//! run by hand:
//!
//! ```text
//! cargo run --release --example accuracy -- [max_radius_km] [cell_m]
//! ```

use ringsum::dem::read::read_dem;
use ringsum::dem::Dem;
use ringsum::engine::{Convention, Engine, EngineConfig, InnerModel, Method, Point};
use ringsum::synthetic::{test_positions, Terrain};
use ringsum::units::{to_mgal, G};
use ringsum::zones::{AutoSettings, ZonePlan};
use std::time::Instant;

fn mgal(k: f64) -> f64 {
    to_mgal(G * 2670.0 * k)
}

/// A named DEM with named stations.
type TestSet = (String, Dem, Vec<(String, Point)>);

struct Worst {
    abs: f64,
    rel: f64,
    ratio_to_target: f64,
    what: String,
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let max_radius_km: f64 = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(20.0);
    let cell: f64 = args.get(2).and_then(|s| s.parse().ok()).unwrap_or(30.0);
    let radii: Vec<f64> = [2.0, 5.0, 10.0, 20.0, 50.0]
        .into_iter()
        .filter(|&r| r <= max_radius_km)
        .collect();
    let r_max = radii.iter().cloned().fold(0.0, f64::max) * 1000.0;
    let cells = ((2.0 * r_max + 4.0 * cell) / cell).ceil() as usize;
    let settings = settings_from_env();
    println!("terrain        radius conv      inner    worst_abs_mgal worst_rel   worst/target  mean_zoned_ms mean_exact_ms  worst at");
    let mut sets: Vec<TestSet> = Vec::new();
    for t in Terrain::ALL {
        let dem = t.dem(cells, cell);
        let points = test_positions(cell)
            .into_iter()
            .map(|(name, x, y)| {
                let elev = dem.bilinear(x, y).unwrap() + if name == "random" { 1.5 } else { 0.0 };
                (name.to_string(), Point { x, y, elev })
            })
            .collect();
        sets.push((t.name().to_string(), dem, points));
    }
    if let Ok(dem) = read_dem(std::path::Path::new("fixtures/jacksboro_utm.tif")) {
        let text = std::fs::read_to_string("fixtures/jacksboro_stations.csv").unwrap();
        let points = text
            .lines()
            .skip(1)
            .map(|l| {
                let f: Vec<&str> = l.split(',').collect();
                (
                    f[0].to_string(),
                    Point {
                        x: f[1].parse().unwrap(),
                        y: f[2].parse().unwrap(),
                        elev: f[3].parse().unwrap(),
                    },
                )
            })
            .collect();
        sets.push(("jacksboro".into(), dem, points));
    }
    for (name, dem, points) in &sets {
        for &radius_km in &radii {
            let radius = radius_km * 1000.0;
            if name == "jacksboro" && radius > 5000.0 {
                continue;
            }
            for convention in [Convention::Planar, Convention::Spherical] {
                for inner_model in [InnerModel::Prisms, InnerModel::Surface] {
                    let plan = ZonePlan::auto(dem.dx, radius, &settings);
                    let cfg = |method| EngineConfig {
                        outer_radius_m: radius,
                        convention,
                        method,
                        inner_model,
                    };
                    let zoned = Engine::new(dem, cfg(Method::Zoned), plan.clone());
                    let exact = Engine::new(dem, cfg(Method::Exact), plan.clone());
                    let mut worst = Worst {
                        abs: 0.0,
                        rel: 0.0,
                        ratio_to_target: 0.0,
                        what: String::new(),
                    };
                    let (mut tz, mut te) = (0.0, 0.0);
                    for (pname, p) in points {
                        let t0 = Instant::now();
                        let z = mgal(zoned.compute(*p).kernel_sum_m());
                        tz += t0.elapsed().as_secs_f64();
                        let t0 = Instant::now();
                        let e = mgal(exact.compute(*p).kernel_sum_m());
                        te += t0.elapsed().as_secs_f64();
                        let err = (z - e).abs();
                        let target = (0.01f64).max(0.005 * e.abs());
                        if err / target > worst.ratio_to_target {
                            worst = Worst {
                                abs: err,
                                rel: err / e.abs(),
                                ratio_to_target: err / target,
                                what: format!("{pname} exact {e:.4} zoned {z:.4}"),
                            };
                        }
                    }
                    let n = points.len() as f64;
                    println!(
                        "{:<14} {:>4}km {:<9} {:<8} {:>14.5} {:>10.2e} {:>12.3} {:>14.3} {:>13.1}  {}",
                        name,
                        radius_km,
                        format!("{convention:?}"),
                        format!("{inner_model:?}"),
                        worst.abs,
                        worst.rel,
                        worst.ratio_to_target,
                        1e3 * tz / n,
                        1e3 * te / n,
                        worst.what
                    );
                }
            }
        }
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
