//! `ringsum plan`: the zone plan, and its cost measured on sample stations.

use crate::cli::PlanArgs;
use crate::compute::{check_sector_rings, Engines};
use crate::config::{RunSettings, TcSettings};
use crate::engine::{run, InnerModel, Method, Point};
use crate::inputs::Opened;
use crate::text::bytes_text;
use crate::units::format_length;
use crate::zones::{InnerZone, RingMethod};
use std::time::Instant;

/// Stations the cost is measured on.
pub const SAMPLE_STATIONS: usize = 25;

/// Up to 25 points on a 5 x 5 grid over the part of the extent `(x_lo, x_hi, y_lo,
/// y_hi)` where the outer radius fits (or over the whole extent when it fits nowhere).
fn sample_xy(extent: (f64, f64, f64, f64), radius: f64, geographic: bool) -> Vec<(f64, f64)> {
    let (x0, x1, y0, y1) = extent;
    let (w, h) = (x1 - x0, y1 - y0);
    // Degrees on a geographic grid: the margin in metres is taken at 111 km a degree.
    let r = if geographic {
        radius / 111_000.0
    } else {
        radius
    };
    let (mx, my) = (r.min(0.45 * w), r.min(0.45 * h));
    let mut out = Vec::new();
    for i in 0..5 {
        for j in 0..5 {
            out.push((
                x0 + mx + (w - 2.0 * mx) * (i as f64 + 0.5) / 5.0,
                y0 + my + (h - 2.0 * my) * (j as f64 + 0.5) / 5.0,
            ));
        }
    }
    out
}

/// `ringsum plan`: the rings, and their cost measured on sample points.
pub fn plan(args: &PlanArgs) -> anyhow::Result<()> {
    let tc = TcSettings::from_args(&args.tc)?;
    let run_settings = RunSettings::from_args(&args.run)?;
    let radius = tc.engine.outer_radius_m;
    let opened = Opened::open(&tc)?;
    let (footprint, measured_xy) = match &opened.stations {
        Some(_) => {
            let xy = opened.station_xy();
            let first: Vec<(f64, f64)> = xy.iter().take(SAMPLE_STATIONS).copied().collect();
            (xy, first)
        }
        None => {
            let geographic = !matches!(opened.dems.primary_kind(), crate::dem::GridKind::Projected);
            let xy = sample_xy(opened.dems.primary_extent(), radius, geographic);
            (xy.clone(), xy)
        }
    };
    let inputs = opened.read(&tc, &footprint)?;
    let plan = tc.plan(inputs.cell_m())?;
    let located = inputs
        .dems
        .locate(&measured_xy, &|i| format!("sample point {}", i + 1))?;
    // The points' heights: the stations' own, or the terrain's for sample points.
    let elevations: Vec<Option<f64>> = (0..measured_xy.len())
        .map(|i| match &inputs.stations {
            Some(t) => Some(t.stations[i].elev),
            None => inputs
                .dems
                .serving(&located, i)
                .and_then(|k| inputs.dems.dems[k].bilinear(located[k][i].0, located[k][i].1)),
        })
        .collect();
    let keep: Vec<usize> = (0..measured_xy.len())
        .filter(|&i| elevations[i].is_some() && inputs.dems.serving(&located, i).is_some())
        .collect();
    let points: Vec<Vec<Point>> = located
        .iter()
        .map(|per_dem| {
            keep.iter()
                .map(|&i| Point {
                    x: per_dem[i].0,
                    y: per_dem[i].1,
                    elev: elevations[i].expect("kept"),
                })
                .collect()
        })
        .collect();
    let density = tc.density_kg_m3;
    let (engines_s, per_station_s, results, checks) = run::with_threads(Some(1), || {
        let build = Instant::now();
        let engines = Engines::build(&inputs, &tc, &plan);
        let build_s = build.elapsed().as_secs_f64();
        let started = Instant::now();
        let results: Vec<_> = (0..keep.len())
            .filter_map(|i| {
                let ps: Vec<Point> = points.iter().map(|p| p[i]).collect();
                engines.point(&ps, None, density)
            })
            .collect();
        let per_station = started.elapsed().as_secs_f64() / results.len().max(1) as f64;
        let checks = check_sector_rings(&inputs, &tc, &plan, &points, density);
        let pyramid_bytes: usize = engines.rock.engines.iter().map(|e| e.pyramid.bytes()).sum();
        ((build_s, pyramid_bytes), per_station, results, checks)
    })?;
    let n = results.len().max(1) as f64;
    let mean = |f: &dyn Fn(&crate::results::PointTc) -> u64| {
        results.iter().map(|r| f(r) as f64).sum::<f64>() / n
    };
    let method = match tc.engine.method {
        Method::Zoned => "zoned",
        Method::Exact => "exact",
    };
    let finest = inputs.dems.finest();
    println!(
        "ringsum plan: {} ({} x {} cells of {}), outer radius {}, method {}, zones {}",
        finest.source,
        finest.cols,
        finest.rows,
        format_length(inputs.cell_m()),
        format_length(radius),
        method,
        tc.zones.name()
    );
    println!(
        "{:<10} {:>10} {:>10}  {:<8} {:<28} {:>12}",
        "ring", "inner", "outer", "method", "detail", "elements"
    );
    let inner_detail = match plan.inner {
        InnerZone::Cells { half_width } => format!("{0}x{0} cells", 2 * half_width + 1),
        InnerZone::Disc { radius_m } => format!("disc of {}", format_length(radius_m)),
    };
    let inner_method = match tc.engine.inner_model {
        InnerModel::Surface => "surface",
        InnerModel::Prisms => "prisms",
    };
    println!(
        "{:<10} {:>10} {:>10}  {:<8} {:<28} {:>12.0}",
        "inner",
        "0m",
        "",
        inner_method,
        inner_detail,
        mean(&|r| r.inner_elements)
    );
    for (i, ring) in plan.rings.iter().enumerate() {
        let detail = match ring.method {
            RingMethod::Prisms => format!("{} cells", format_length(inputs.cell_m())),
            RingMethod::Blocks { ratio } => format!("block side <= {ratio} x distance"),
            RingMethod::Sectors { compartments } => format!("{compartments} compartments"),
        };
        println!(
            "{:<10} {:>10} {:>10}  {:<8} {:<28} {:>12.0}",
            ring.name,
            format_length(ring.inner_m),
            format_length(ring.outer_m),
            ring.method.name(),
            detail,
            mean(&|r| r.ring_elements[i])
        );
    }
    let total = mean(&|r| r.inner_elements + r.ring_elements.iter().sum::<u64>());
    println!(
        "per station: {total:.0} elements, {:.3} ms measured on {} {} (one thread); setting up the engine took {:.2} s",
        per_station_s * 1e3,
        results.len(),
        if inputs.stations.is_some() { "stations" } else { "sample points" },
        engines_s.0
    );
    for report in &inputs.dems.reads {
        println!("read: {}", report.describe());
    }
    println!("block pyramids: {}", bytes_text(engines_s.1 as f64));
    for c in &checks {
        let verdict = if c.worst_of_target > 1.0 {
            "WARNING: outside the target max(0.01 mGal, 0.5 %); blocks are more accurate there"
        } else {
            "within the target"
        };
        println!(
            "sector ring {}: at most {:.4} mGal from the same ring integrated with blocks ({:.2} of the target); {verdict}",
            c.ring, c.worst_mgal, c.worst_of_target
        );
    }
    for note in &inputs.notes {
        println!("note: {note}");
    }
    let _ = run_settings;
    Ok(())
}
