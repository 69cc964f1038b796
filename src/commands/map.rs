//! `ringsum map`: the terrain correction on a regular grid, written as a GeoTIFF with a
//! PNG preview (see [`crate::analysis::grid`] for the grid).
//!
//! Every node is computed as a station standing on the terrain: at the height of the
//! finest DEM with data there, through the same pipeline as `correct` (all the DEMs, the
//! zone plan, a density raster, water), in parallel. A node on nodata, a node the water
//! model cannot take, and a node whose outer-radius disc is not wholly on DEM data unless
//! gaps are allowed, is written as nodata. The grid is held in memory as 4-byte values
//! and computed a block of rows at a time; grids of more than
//! [`crate::analysis::grid::MAX_NODES`] nodes are refused before any work, with the
//! spacing that would fit.

use crate::analysis::grid::{extent_of, node_grid, NodeGrid, BYTES_PER_NODE};
use crate::cli::MapArgs;
use crate::compute::Engines;
use crate::config::{usage, DensityModel, RunSettings, TcSettings};
use crate::dem::GridKind;
use crate::engine::{run, Convention, InnerModel, Method, Point};
use crate::inputs::{Inputs, Opened};
use crate::output::files::{check_extension, check_writable};
use crate::output::geotiff::{write_grid, GridLabels, GridPlacement};
use crate::output::plot::{check_plot_target, parse_plot_size, write_figure, MapFigure};
use crate::output::record::SettingsRecord;
use crate::text::{bytes_text, duration_text, number};
use crate::units::{format_length, parse_length_m, to_mgal};
use anyhow::bail;
use std::time::Instant;

/// Counts of what happened to the nodes.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct NodeCounts {
    pub computed: usize,
    pub on_nodata: usize,
    pub on_water: usize,
    pub without_whole_disc: usize,
}

/// The nodes of rows `row0..row1` in every DEM's CRS at the serving DEM's height, and
/// their indices in the grid; nodes on no DEM's data are counted and left out.
fn block_points(
    inputs: &Inputs,
    grid: &NodeGrid,
    row0: usize,
    row1: usize,
    counts: &mut NodeCounts,
) -> anyhow::Result<(Vec<usize>, Vec<Vec<Point>>)> {
    let mut xy = Vec::with_capacity((row1 - row0) * grid.cols);
    for row in row0..row1 {
        for col in 0..grid.cols {
            xy.push(grid.node(col, row));
        }
    }
    let located = inputs
        .dems
        .locate(&xy, &|i| format!("grid node {:?}", xy[i]))?;
    let mut index = Vec::new();
    let mut points: Vec<Vec<Point>> = vec![Vec::new(); located.len()];
    for i in 0..xy.len() {
        let Some(k) = inputs.dems.serving(&located, i) else {
            counts.on_nodata += 1;
            continue;
        };
        let (x, y) = located[k][i];
        let elev = inputs.dems.dems[k]
            .bilinear(x, y)
            .expect("the serving DEM has data");
        index.push(row0 * grid.cols + i);
        for (per_dem, loc) in points.iter_mut().zip(&located) {
            per_dem.push(Point {
                x: loc[i].0,
                y: loc[i].1,
                elev,
            });
        }
    }
    Ok((index, points))
}

/// Computes the TC (mGal) at every node, a block of rows at a time (in parallel within a
/// block, on the current pool).
fn compute_grid(
    inputs: &Inputs,
    tc: &TcSettings,
    engines: &Engines,
    grid: &NodeGrid,
    density: f64,
    tick: &(dyn Fn(u64) + Sync),
) -> anyhow::Result<(Vec<f32>, NodeCounts)> {
    let mut values = vec![f32::NAN; grid.len()];
    let mut counts = NodeCounts::default();
    let rows_per_block = (65_536 / grid.cols.max(1)).max(1);
    for row0 in (0..grid.rows).step_by(rows_per_block) {
        let row1 = (row0 + rows_per_block).min(grid.rows);
        let before = counts.on_nodata;
        let (index, points) = block_points(inputs, grid, row0, row1, &mut counts)?;
        tick((counts.on_nodata - before) as u64);
        let n = index.len();
        let results = engines.points(&points, &vec![None; n], &vec![density; n], tick);
        for (j, (k, r)) in index.into_iter().zip(results).enumerate() {
            let Some(r) = r else {
                counts.on_nodata += 1;
                continue;
            };
            if let Some(w) = &inputs.water {
                let p = points[r.serving][j];
                if w.problem(
                    &inputs.dems.dems,
                    r.serving,
                    p.x,
                    p.y,
                    p.elev,
                    tc.engine.inner_model,
                )
                .is_some()
                {
                    counts.on_water += 1;
                    continue;
                }
            }
            if r.coverage < 1.0 && !tc.allow_gaps {
                counts.without_whole_disc += 1;
                continue;
            }
            let value = to_mgal(r.tc_m_s2());
            if !value.is_finite() {
                bail!(
                    "internal error: the TC at node {:?} is not finite; please report this with the input that caused it",
                    grid.node(k % grid.cols, k / grid.cols)
                );
            }
            values[k] = value as f32;
            counts.computed += 1;
        }
    }
    Ok((values, counts))
}

/// The node spacing in the finest DEM's units: a length on a projected grid; arc-seconds
/// (`3s`) or degrees (`0.001deg`) on a geographic one.
fn grid_spacing(text: &str, geographic: bool, dem: &str) -> anyhow::Result<f64> {
    let t = text.trim().to_ascii_lowercase();
    let angle = |number: &str, per_degree: f64| -> anyhow::Result<f64> {
        let v: f64 = number.trim().parse().map_err(|_| {
            anyhow::anyhow!(
                "--spacing {text}: give a number of arc-seconds or degrees, e.g. 3s or 0.001deg"
            )
        })?;
        if !(v.is_finite() && v > 0.0) {
            bail!("--spacing {text}: give a positive angle, e.g. 3s");
        }
        Ok(v / per_degree)
    };
    if geographic {
        if let Some(n) = t.strip_suffix("deg") {
            return angle(n, 1.0);
        }
        if let Some(n) = t.strip_suffix('s') {
            return angle(n, 3600.0);
        }
        bail!(
            "--spacing {text}: {dem} is on longitude and latitude, so the grid's spacing is an angle; give arc-seconds (e.g. 3s) or degrees (e.g. 0.001deg)"
        );
    }
    if t.ends_with("deg") || (t.ends_with('s') && !t.ends_with("ms")) {
        bail!(
            "--spacing {text}: {dem} is in a projected CRS, so the grid's spacing is a length; give m or km, e.g. 250m"
        );
    }
    let spacing = parse_length_m(text).map_err(|e| anyhow::anyhow!("--spacing: {e}"))?;
    if spacing <= 0.0 {
        bail!("--spacing {text}: give a positive length, e.g. 250m");
    }
    Ok(spacing)
}

/// The outline of the grid (its edges sampled), for the DEM windows.
fn outline(grid: &NodeGrid) -> Vec<(f64, f64)> {
    let mut out = Vec::new();
    let (c, r) = (grid.cols - 1, grid.rows - 1);
    for k in 0..=16 {
        let (fc, fr) = (c * k / 16, r * k / 16);
        out.extend([
            grid.node(fc, 0),
            grid.node(fc, r),
            grid.node(0, fr),
            grid.node(c, fr),
        ]);
    }
    out
}

/// `ringsum map`.
pub fn map(args: &MapArgs) -> anyhow::Result<()> {
    let tc = TcSettings::from_args(&args.tc)?;
    let run_settings = RunSettings::from_args(&args.run)?;
    if matches!(tc.density, DensityModel::Column { .. }) {
        return usage("--density-col gives densities per station, and map computes at grid nodes; give --density or --density-raster");
    }
    if tc.field_inner.is_some() {
        return usage("--field-inner-col gives inner zones per station, and map computes at grid nodes; leave it out");
    }
    check_extension(
        &args.out,
        "--out",
        &["tif", "tiff"],
        "the map is written as a GeoTIFF; give a path ending in .tif",
    )?;
    check_writable(&args.out, "--out")?;
    let preview = match &args.preview {
        Some(p) => Some(check_plot_target(p, "--preview", true)?),
        None => None,
    };
    let plot_size = parse_plot_size(&args.plot_size.plot_size)?;
    let mut outputs: Vec<(&std::path::Path, &str)> = vec![(&args.out, "--out")];
    if let Some(p) = &args.preview {
        outputs.push((p, "--preview"));
    }
    let book = super::RunBook::start("map", &tc, &run_settings, Some(&args.out), &outputs)?;

    let opened = Opened::open(&tc)?;
    let geographic = opened.dems.primary_kind() != GridKind::Projected;
    let spacing = grid_spacing(&args.spacing, geographic, opened.dems.primary_name())?;
    let outer = tc.engine.outer_radius_m;
    let stations_xy = opened.stations.as_ref().map(|_| opened.station_xy());
    let inset_m = if opened.dems.len() == 1 && !tc.allow_gaps {
        outer
    } else {
        0.0
    };
    let (x0, x1, y0, y1) = opened.dems.primary_extent();
    // The inset in the grid's units (degrees of a geographic grid, taken where a degree
    // of longitude is shortest, so the disc stays inside).
    let inset = if geographic {
        let ell = match opened.dems.primary_kind() {
            GridKind::Geographic(e) => e,
            GridKind::Projected => unreachable!("geographic"),
        };
        let lat = y0.abs().max(y1.abs()).min(89.0).to_radians();
        let (n, m) = ell.radii(lat);
        (
            inset_m / (n * lat.cos() * 1f64.to_radians()),
            inset_m / (m * 1f64.to_radians()),
        )
    } else {
        (inset_m, inset_m)
    };
    let extent = extent_of(
        &args.extent,
        (x0, x1, y0, y1),
        opened.dems.primary_name(),
        inset,
        outer,
        stations_xy.as_deref(),
        spacing,
    )?;
    let grid = node_grid(extent, spacing)?;
    let inputs = opened.read(&tc, &outline(&grid))?;
    super::print_notes(&inputs, run_settings.quiet);
    let plan = tc.plan(inputs.cell_m())?;
    let density = tc.density_kg_m3;

    let bar = crate::progress::bar(grid.len() as u64, run_settings.quiet, "nodes");
    let started = Instant::now();
    let (values, counts) = run::with_threads(run_settings.threads, || -> anyhow::Result<_> {
        let engines = Engines::build(&inputs, &tc, &plan);
        // Measured cost on a few nodes, before the long run.
        let samples = NodeGrid {
            cols: 4.min(grid.cols),
            rows: 4.min(grid.rows),
            spacing: spacing * (grid.cols.max(grid.rows) as f64 / 4.0).max(1.0).floor(),
            ..grid
        };
        let mut ignored = NodeCounts::default();
        let (_, points) = block_points(&inputs, &samples, 0, samples.rows, &mut ignored)?;
        let measured = Instant::now();
        let n = points.first().map(Vec::len).unwrap_or(0);
        let _ = engines.points(&points, &vec![None; n], &vec![density; n], &|_| {});
        let per_node = measured.elapsed().as_secs_f64() / n.max(1) as f64;
        if !run_settings.quiet {
            eprintln!(
                "ringsum map: {} x {} = {} nodes at {} spacing (about {} for the grid); estimated {} on {} thread(s), measured on {} nodes",
                grid.cols,
                grid.rows,
                grid.len(),
                args.spacing.trim(),
                bytes_text(grid.len() as f64 * BYTES_PER_NODE),
                duration_text(per_node * grid.len() as f64),
                run::current_threads(),
                n
            );
        }
        bar.reset_elapsed();
        compute_grid(&inputs, &tc, &engines, &grid, density, &|k| bar.inc(k))
    })??;
    bar.finish_and_clear();
    if counts.computed == 0 {
        bail!(
            "no node of the grid has a value ({} on nodata, {} on water, {} without the whole {} disc on the DEMs); give another --extent, a smaller --outer-radius, or --allow-gaps",
            counts.on_nodata,
            counts.on_water,
            counts.without_whole_disc,
            format_length(outer)
        );
    }
    let convention = match tc.engine.convention {
        Convention::Spherical => "spherical",
        Convention::Planar => "planar",
    };
    let method = match tc.engine.method {
        Method::Zoned => "zoned",
        Method::Exact => "exact",
    };
    let inner_model = match tc.engine.inner_model {
        InnerModel::Surface => "surface",
        InnerModel::Prisms => "prisms",
    };
    let dem_names: Vec<&str> = inputs.dems.dems.iter().map(|d| d.source.as_str()).collect();
    let mut metadata = vec![
        ("RINGSUM_QUANTITY", "terrain correction, mGal".to_string()),
        ("RINGSUM_VERSION", env!("CARGO_PKG_VERSION").to_string()),
        ("RINGSUM_OUTER_RADIUS_M", format!("{outer}")),
        ("RINGSUM_DENSITY", tc.density_text()),
        ("RINGSUM_CONVENTION", convention.to_string()),
        ("RINGSUM_METHOD", method.to_string()),
        ("RINGSUM_INNER_MODEL", inner_model.to_string()),
        ("RINGSUM_ZONES", tc.zones.name()),
        (
            "RINGSUM_NODE_HEIGHT",
            "height of the finest DEM with data at the node".to_string(),
        ),
        ("RINGSUM_DEMS", dem_names.join("; ")),
        (
            "RINGSUM_PLAN",
            plan.rings
                .iter()
                .map(|r| {
                    format!(
                        "{} {}-{} m {}",
                        r.name,
                        number(r.inner_m),
                        number(r.outer_m),
                        r.method.name()
                    )
                })
                .collect::<Vec<_>>()
                .join("; "),
        ),
    ];
    if let Some(w) = &inputs.water {
        metadata.push(("RINGSUM_WATER_DENSITY_KG_M3", number(w.density_kg_m3)));
    }
    let placement = GridPlacement {
        x_left: grid.x_left(),
        y_top: grid.y_top(),
        dx: spacing,
        dy: spacing,
        cols: grid.cols,
        rows: grid.rows,
        crs: inputs.dems.base_crs.clone(),
    };
    write_grid(
        &args.out,
        &placement,
        &values,
        &GridLabels {
            description: Some("terrain correction (mGal)"),
            unit: Some("mGal"),
            metadata: &metadata,
        },
    )?;
    if let Some(target) = &preview {
        let figure = MapFigure {
            title: format!(
                "TC at the terrain: {} grid, {}, to {}, {convention}",
                args.spacing.trim(),
                tc.density_text(),
                format_length(outer)
            ),
            values: &values,
            cols: grid.cols,
            rows: grid.rows,
            x_left: grid.x_left(),
            y_top: grid.y_top(),
            spacing,
            dem: inputs.dems.finest(),
            stations: stations_xy.clone().unwrap_or_default(),
            geographic,
        };
        write_figure(target, plot_size, &figure)?;
    }
    book.finish(
        Some(SettingsRecord::new(&tc, &plan, None)),
        &inputs,
        super::correct::threads(&run_settings),
    )?;
    if !run_settings.quiet {
        let (mut lo, mut hi) = (f32::INFINITY, f32::NEG_INFINITY);
        for &v in &values {
            if v.is_finite() {
                lo = lo.min(v);
                hi = hi.max(v);
            }
        }
        eprintln!(
            "ringsum map: {} nodes computed in {:.1} s, TC {:.4} to {:.4} mGal; {} on nodata, {} on water and {} without the whole disc written as nodata; written to {}{}",
            counts.computed,
            started.elapsed().as_secs_f64(),
            lo,
            hi,
            counts.on_nodata,
            counts.on_water,
            counts.without_whole_disc,
            args.out.display(),
            match &preview {
                Some(p) => format!(" and {}", p.path.display()),
                None => String::new(),
            }
        );
        if counts.without_whole_disc > 0 {
            eprintln!("ringsum map: --allow-gaps computes the nodes without the whole disc too, with what data there is");
        }
    }
    Ok(())
}
