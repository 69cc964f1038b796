//! Hammer's zones against the exact method: per station the total and the worst zone,
//! the chart-era sector rings (Hammer's radii and compartments, a plan file's
//! `method = "sectors"`) against the same, and the cost of the Hammer plan against the
//! automatic one. Heavy (brute-force prism sums); run by hand:
//!
//! ```text
//! cargo run --release --example hammer_zones -- [radius_km] [surface|prisms] [dem] [stations]
//! ```
//!
//! Defaults: 10 km, the surface inner model, the demo's 30 m DEM and its 40 stations.

use ringsum::dem::read::read_dem;
use ringsum::engine::{Convention, Engine, EngineConfig, InnerModel, Method, Point};
use ringsum::units::{to_mgal, G};
use ringsum::zones::{
    hammer_zone_radii, AutoSettings, ZonePlan, HAMMER_ZONES, HAMMER_ZONE_A_RADIUS_M,
};
use std::time::Instant;

/// Passes over the stations when timing.
const PASSES: usize = 7;

fn mgal(k: f64) -> f64 {
    to_mgal(G * 2670.0 * k)
}

/// Ratio of a difference to the target max(0.01 mGal, 0.5 %).
fn to_target(value: f64, reference: f64) -> f64 {
    (value - reference).abs() / 0.01f64.max(0.005 * reference.abs())
}

/// The chart-era plan: Hammer's radii and compartment counts as sector rings (16
/// compartments beyond zone M), the 2 m zone A disc as the inner zone; a plan file.
fn chart_plan(outer_m: f64) -> ZonePlan {
    let mut text = format!("inner_radius = {HAMMER_ZONE_A_RADIUS_M}\n");
    for (name, inner, outer) in hammer_zone_radii(outer_m) {
        let compartments = HAMMER_ZONES
            .iter()
            .find(|z| z.0 == name)
            .map_or(16, |z| z.2);
        text.push_str(&format!(
            "[[ring]]\nname = \"{name}\"\ninner = {inner}\nouter = {outer}\nmethod = \"sectors\"\ncompartments = {compartments}\n"
        ));
    }
    ZonePlan::from_toml(&text, "chart-era sectors").unwrap()
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let radius_km: f64 = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(10.0);
    let inner_model = match args.get(2).map(String::as_str) {
        Some("prisms") => InnerModel::Prisms,
        _ => InnerModel::Surface,
    };
    let dem_path = args
        .get(3)
        .cloned()
        .unwrap_or("demo-dem/quillerun_30m.tif".into());
    let stations_path = args
        .get(4)
        .cloned()
        .unwrap_or("demo-dem/stations.csv".into());
    let radius = radius_km * 1000.0;
    let dem = read_dem(std::path::Path::new(&dem_path)).unwrap();
    let text = std::fs::read_to_string(&stations_path).unwrap();
    let stations: Vec<(String, Point)> = text
        .lines()
        .skip(1)
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            let p = Point {
                x: f[1].parse().unwrap(),
                y: f[2].parse().unwrap(),
                elev: f[3].parse().unwrap(),
            };
            (f[0].to_string(), p)
        })
        .collect();
    let hammer = ZonePlan::hammer(dem.cell_size_m(), radius);
    let auto = ZonePlan::auto(dem.cell_size_m(), radius, &AutoSettings::default());
    let chart = chart_plan(radius);
    let columns = hammer.zone_columns();
    for convention in [Convention::Planar, Convention::Spherical] {
        let config = |method| EngineConfig {
            outer_radius_m: radius,
            convention,
            method,
            inner_model,
        };
        let zoned = Engine::new(&dem, config(Method::Zoned), hammer.clone());
        let exact = Engine::new(&dem, config(Method::Exact), hammer.clone());
        let automatic = Engine::new(&dem, config(Method::Zoned), auto.clone());
        let sectors = Engine::new(&dem, config(Method::Zoned), chart.clone());
        println!("{convention:?}, {radius_km} km, {inner_model:?} inner model, {dem_path}");
        println!("station   exact_mgal  hammer-exact  /target  auto-exact  chart-exact  /target  worst zone (hammer - exact, mGal)");
        let mut worst_zone = (0.0f64, String::new());
        let (mut worst_hammer, mut worst_chart) = (0.0f64, 0.0f64);
        let (mut e_hammer, mut e_auto) = (0u64, 0u64);
        for (name, p) in &stations {
            let z = zoned.compute(*p);
            let a = automatic.compute(*p);
            let e = exact.compute(*p);
            let c = sectors.compute(*p);
            e_hammer += z.inner_elements + z.ring_elements.iter().sum::<u64>();
            e_auto += a.inner_elements + a.ring_elements.iter().sum::<u64>();
            let te = mgal(e.kernel_sum_m());
            let (tz, ta, tc) = (
                mgal(z.kernel_sum_m()),
                mgal(a.kernel_sum_m()),
                mgal(c.kernel_sum_m()),
            );
            worst_hammer = worst_hammer.max(to_target(tz, te));
            worst_chart = worst_chart.max(to_target(tc, te));
            let mut station_worst = (mgal(z.inner_m) - mgal(e.inner_m), "A".to_string());
            for column in &columns {
                let sum = |rings: &[f64]| mgal(rings[column.rings.clone()].iter().sum());
                let d = sum(&z.rings_m) - sum(&e.rings_m);
                if d.abs() > station_worst.0.abs() {
                    station_worst = (d, column.name.clone());
                }
            }
            if station_worst.0.abs() > worst_zone.0.abs() {
                worst_zone = (
                    station_worst.0,
                    format!("zone {} at {name}", station_worst.1),
                );
            }
            println!(
                "{name:<8} {te:>11.5} {:>+13.5} {:>8.3} {:>+11.5} {:>+12.5} {:>8.3}  {} {:+.5}",
                tz - te,
                to_target(tz, te),
                ta - te,
                tc - te,
                to_target(tc, te),
                station_worst.1,
                station_worst.0
            );
        }
        let n = stations.len() as f64;
        // Time per station: the fastest of several passes over the stations (one thread),
        // which is the least disturbed by other work on the machine.
        let time = |engine: &Engine| {
            (0..PASSES)
                .map(|_| {
                    let t0 = Instant::now();
                    for (_, p) in &stations {
                        std::hint::black_box(engine.compute(*p));
                    }
                    t0.elapsed().as_secs_f64() / n
                })
                .fold(f64::INFINITY, f64::min)
        };
        let (t_hammer, t_auto) = (time(&zoned), time(&automatic));
        println!(
            "worst: hammer {worst_hammer:.3} of the target, chart-era sectors {worst_chart:.3}; worst zone {:+.5} mGal ({})",
            worst_zone.0, worst_zone.1
        );
        println!(
            "per station (one thread, fastest of {PASSES} passes): hammer {:.2} ms, {:.0} elements; auto {:.2} ms, {:.0} elements",
            1e3 * t_hammer,
            e_hammer as f64 / n,
            1e3 * t_auto,
            e_auto as f64 / n
        );
    }
}
