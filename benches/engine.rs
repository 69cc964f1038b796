//! The engine on the benchmark scenario (src/benchdata.rs: a 30 m fractal DEM for a full
//! 166.7 km correction around a 10 km survey): `cargo bench --bench engine`.
//!
//! Measures loading (GDAL's own read of the file against `read_dem`), the pyramid build,
//! the time per station against the outer radius, and prints the stations per second of
//! a 10,000-station run on all cores and the error against `--method exact` for a few
//! stations at 166.7 km.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use ringsum::benchdata;
use ringsum::dem::read::read_dem;
use ringsum::engine::pyramid::Pyramid;
use ringsum::engine::{Convention, Engine, EngineConfig, InnerModel, Method, Point};
use ringsum::units::{to_mgal, G, STANDARD_OUTER_RADIUS_M};
use ringsum::zones::{AutoSettings, ZonePlan};
use std::time::Instant;

fn config(radius: f64, method: Method) -> EngineConfig {
    EngineConfig {
        outer_radius_m: radius,
        convention: Convention::Spherical,
        method,
        inner_model: InnerModel::Surface,
    }
}

fn engine(c: &mut Criterion) {
    benchdata::ensure_written().expect("benchmark data");
    let path = benchdata::dem_path();
    let mut g = c.benchmark_group("load");
    g.sample_size(10);
    g.bench_function("GDAL read of the file", |b| {
        b.iter(|| {
            let ds = gdal::Dataset::open(&path).unwrap();
            let band = ds.rasterband(1).unwrap();
            let size = ds.raster_size();
            band.read_as::<f32>((0, 0), size, size, None).unwrap()
        })
    });
    g.bench_function("read_dem", |b| b.iter(|| read_dem(&path).unwrap()));
    let dem = read_dem(&path).unwrap();
    g.bench_function("pyramid build", |b| b.iter(|| Pyramid::build(&dem)));
    g.finish();

    let stations: Vec<Point> = std::fs::read_to_string(benchdata::stations_path())
        .unwrap()
        .lines()
        .skip(1)
        .map(|l| {
            let f: Vec<f64> = l.split(',').skip(1).map(|v| v.parse().unwrap()).collect();
            Point {
                x: f[0],
                y: f[1],
                elev: f[2],
            }
        })
        .collect();
    let mut g = c.benchmark_group("station");
    for radius_km in [2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 166.735] {
        let radius = radius_km * 1000.0;
        let e = Engine::new(
            &dem,
            config(radius, Method::Zoned),
            ZonePlan::auto(dem.dx, radius, &AutoSettings::default()),
        );
        let mut k = 0;
        g.bench_with_input(
            BenchmarkId::new("zoned, outer radius km", radius_km),
            &radius,
            |b, _| {
                b.iter(|| {
                    k = (k + 37) % stations.len();
                    e.compute(stations[k])
                })
            },
        );
    }
    g.finish();

    let radius = STANDARD_OUTER_RADIUS_M;
    let plan = ZonePlan::auto(dem.dx, radius, &AutoSettings::default());
    let zoned = Engine::new(&dem, config(radius, Method::Zoned), plan.clone());
    let started = Instant::now();
    let results = zoned.compute_all(&stations, &|| ());
    let seconds = started.elapsed().as_secs_f64();
    println!(
        "\n{} stations, 166.7 km, zoned, {} threads: {:.2} s, {:.0} stations/s",
        results.len(),
        rayon::current_num_threads(),
        seconds,
        results.len() as f64 / seconds
    );
    let exact = Engine::new(&dem, config(radius, Method::Exact), plan);
    let mgal = |k: f64| to_mgal(G * 2670.0 * k);
    let mut worst: f64 = 0.0;
    let started = Instant::now();
    let picks = [0usize, 4_321, 9_999];
    for &i in &picks {
        let z = mgal(results[i].kernel_sum_m());
        let x = mgal(exact.compute(stations[i]).kernel_sum_m());
        let ratio = (z - x).abs() / (0.01f64).max(0.005 * x.abs());
        worst = worst.max(ratio);
        println!("station {i}: zoned {z:.4} mGal, exact {x:.4} mGal, difference {:+.4} mGal ({:.2} of the target)", z - x, ratio);
    }
    let exact_s = started.elapsed().as_secs_f64() / picks.len() as f64;
    println!(
        "exact: {:.1} s per station; zoned: {:.3} ms per station per thread; exact / zoned = {:.0}",
        exact_s,
        1e3 * seconds * rayon::current_num_threads() as f64 / results.len() as f64,
        exact_s / (seconds * rayon::current_num_threads() as f64 / results.len() as f64)
    );
    println!("worst error against exact: {worst:.2} of max(0.01 mGal, 0.5 %)");
}

criterion_group!(benches, engine);
criterion_main!(benches);
