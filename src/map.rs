//! `ringsum map`: the terrain correction on a regular grid, written as a GeoTIFF with a
//! PNG preview.
//!
//! # The grid
//! Nodes lie at whole multiples of the spacing inside the extent, so maps of one spacing
//! line up with each other; each node is the centre of its GeoTIFF cell (the geotransform
//! starts half a spacing west and north of the first node). Every node is computed as a
//! station standing on the terrain: at the bilinear DEM height there, with the same
//! engine and zone plan as `correct`, in parallel. A node on nodata, and a node whose
//! outer-radius disc is not wholly on DEM data unless gaps are allowed, is written as
//! nodata.
//!
//! # Size
//! The grid is held in memory as 4-byte values (plus one copy while it is written); the
//! stations are computed a block of rows at a time. Grids of more than [`MAX_NODES`]
//! nodes are refused before any work, with the spacing that would fit.

use crate::app::{with_threads, Settings};
use crate::dem::read::read_dem;
use crate::dem::write::NODATA;
use crate::dem::Dem;
use crate::engine::{Engine, Point};
use crate::plot::{check_plot_target, parse_plot_size, write_figure, MapFigure};
use crate::sens_cli::MapArgs;
use crate::stations::{read_stations, ColumnChoice};
use crate::units::{format_length, parse_length_m, to_mgal};
use anyhow::{bail, Context};
use gdal::raster::{Buffer, RasterCreationOptions};
use gdal::spatial_ref::SpatialRef;
use gdal::{DriverManager, Metadata};
use std::path::{Path, PathBuf};
use std::time::Instant;

/// Largest grid `map` computes, nodes (about 1.6 GB of grid values while writing).
pub const MAX_NODES: f64 = 2e8;

/// Bytes per node while the grid is computed and written (a 4-byte value and its copy
/// in the writer's buffer).
pub const BYTES_PER_NODE: f64 = 8.0;

/// A regular grid of nodes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NodeGrid {
    /// Easting of the westernmost nodes, m.
    pub x_first: f64,
    /// Northing of the northernmost nodes, m.
    pub y_first: f64,
    pub spacing: f64,
    pub cols: usize,
    pub rows: usize,
}

impl NodeGrid {
    /// Western edge of the GeoTIFF cells (half a spacing west of the first node).
    pub fn x_left(&self) -> f64 {
        self.x_first - 0.5 * self.spacing
    }
    /// Northern edge of the GeoTIFF cells.
    pub fn y_top(&self) -> f64 {
        self.y_first + 0.5 * self.spacing
    }
    /// Position of node `(col, row)`, m.
    pub fn node(&self, col: usize, row: usize) -> (f64, f64) {
        (
            self.x_first + col as f64 * self.spacing,
            self.y_first - row as f64 * self.spacing,
        )
    }
    pub fn len(&self) -> usize {
        self.cols * self.rows
    }
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

/// The node counts of the grid at `spacing` over the extent `(xmin, ymin, xmax, ymax)`,
/// as (first node index, count) along each axis, in floating point (the count may be too
/// large for memory).
fn axis(lo: f64, hi: f64, spacing: f64) -> (f64, f64) {
    let first = (lo / spacing - 1e-9).ceil();
    let last = (hi / spacing + 1e-9).floor();
    (first, (last - first + 1.0).max(0.0))
}

/// A spacing of 1, 2 or 5 times a power of ten at least `spacing * sqrt(nodes / limit)`.
pub fn suggest_spacing(spacing: f64, nodes: f64, limit: f64) -> f64 {
    let need = spacing * (nodes / limit).sqrt() * 1.0001;
    let mut p = 10f64.powf(need.log10().floor());
    loop {
        for m in [1.0, 2.0, 5.0] {
            if m * p >= need {
                return m * p;
            }
        }
        p *= 10.0;
    }
}

/// The node grid over an extent, refused when it holds no node or more than
/// [`MAX_NODES`].
pub fn node_grid(extent: (f64, f64, f64, f64), spacing: f64) -> anyhow::Result<NodeGrid> {
    let (xmin, ymin, xmax, ymax) = extent;
    let (kx, nx) = axis(xmin, xmax, spacing);
    let (_, ny) = axis(ymin, ymax, spacing);
    if nx < 1.0 || ny < 1.0 {
        bail!(
            "the extent ({:.1} to {:.1} east, {:.1} to {:.1} north) holds no multiple of the {} spacing; give a smaller --spacing or a larger --extent",
            xmin,
            xmax,
            ymin,
            ymax,
            format_length(spacing)
        );
    }
    let nodes = nx * ny;
    if nodes > MAX_NODES {
        let better = suggest_spacing(spacing, nodes, MAX_NODES);
        let (_, bx) = axis(xmin, xmax, better);
        let (_, by) = axis(ymin, ymax, better);
        bail!(
            "a grid of {:.0} x {:.0} = {:.2e} nodes at {} spacing would need about {:.1} GB and is over the limit of {:.0e} nodes; give --spacing {} ({:.2e} nodes) or a smaller --extent",
            nx,
            ny,
            nodes,
            format_length(spacing),
            nodes * BYTES_PER_NODE / 1e9,
            MAX_NODES,
            format_length(better),
            bx * by
        );
    }
    let top = (ymax / spacing + 1e-9).floor();
    Ok(NodeGrid {
        x_first: kx * spacing,
        y_first: top * spacing,
        spacing,
        cols: nx as usize,
        rows: ny as usize,
    })
}

/// The extent named by `--extent`.
pub fn extent_of(
    text: &str,
    dem: &Dem,
    stations: Option<&[(f64, f64)]>,
    outer_m: f64,
    allow_gaps: bool,
    spacing: f64,
) -> anyhow::Result<(f64, f64, f64, f64)> {
    match text.trim() {
        "dem" => {
            let inset = if allow_gaps { 0.0 } else { outer_m };
            let e = (
                dem.x_left + inset,
                dem.y_bottom() + inset,
                dem.x_right() - inset,
                dem.y_top - inset,
            );
            if e.0 > e.2 || e.1 > e.3 {
                bail!(
                    "{} ({} x {}) is too small for a {} outer radius: no node would have the whole disc on the DEM; give a smaller --outer-radius, --allow-gaps, or --extent",
                    dem.source,
                    format_length(dem.x_right() - dem.x_left),
                    format_length(dem.y_top - dem.y_bottom()),
                    format_length(outer_m)
                );
            }
            Ok(e)
        }
        "stations" => {
            let Some(xy) = stations else {
                bail!("--extent stations needs --stations PATH");
            };
            let (mut e, mut n) = (
                (f64::INFINITY, f64::INFINITY),
                (f64::NEG_INFINITY, f64::NEG_INFINITY),
            );
            for &(x, y) in xy {
                e = (e.0.min(x), e.1.min(y));
                n = (n.0.max(x), n.1.max(y));
            }
            Ok((e.0 - spacing, e.1 - spacing, n.0 + spacing, n.1 + spacing))
        }
        other => {
            let parts: Vec<&str> = other.split(',').map(str::trim).collect();
            let bad = || {
                anyhow::anyhow!(
                    "--extent {other}: give dem, stations, or XMIN,YMIN,XMAX,YMAX in the DEM's CRS (m), e.g. 500000,5000000,520000,5020000"
                )
            };
            if parts.len() != 4 {
                return Err(bad());
            }
            let v: Vec<f64> = parts
                .iter()
                .map(|p| p.parse::<f64>().ok().filter(|v| v.is_finite()))
                .collect::<Option<_>>()
                .ok_or_else(bad)?;
            if v[0] >= v[2] || v[1] >= v[3] {
                bail!(
                    "--extent {other}: XMIN must be below XMAX and YMIN below YMAX; give XMIN,YMIN,XMAX,YMAX"
                );
            }
            Ok((v[0], v[1], v[2], v[3]))
        }
    }
}

/// Checks the GeoTIFF output path: `.tif` or `.tiff`, in an existing folder.
fn check_tif_target(path: &Path) -> anyhow::Result<PathBuf> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    if !matches!(ext.as_deref(), Some("tif") | Some("tiff")) {
        bail!(
            "--out {}: the map is written as a GeoTIFF; give a path ending in .tif",
            path.display()
        );
    }
    let dir = parent_dir(path);
    if !dir.is_dir() {
        bail!(
            "--out {}: the folder {} does not exist; create it first",
            path.display(),
            dir.display()
        );
    }
    Ok(path.to_path_buf())
}

fn parent_dir(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Writes the grid as a float32 GeoTIFF (mGal, NaN as [`NODATA`]) with the CRS `crs_wkt`,
/// through a temporary file renamed at the end.
pub fn write_tc_geotiff(
    path: &Path,
    grid: &NodeGrid,
    values: &[f32],
    crs_wkt: &str,
    metadata: &[(&str, String)],
) -> anyhow::Result<()> {
    let dir = parent_dir(path);
    let tmp = tempfile::Builder::new()
        .prefix(".ringsum-")
        .suffix(".tif")
        .tempfile_in(&dir)
        .with_context(|| {
            format!(
                "{}: cannot create a file in {}",
                path.display(),
                dir.display()
            )
        })?;
    {
        let driver = DriverManager::get_driver_by_name("GTiff")?;
        let options =
            RasterCreationOptions::from_iter(["COMPRESS=DEFLATE", "PREDICTOR=3", "TILED=YES"]);
        let mut ds = driver
            .create_with_band_type_with_options::<f32, _>(
                tmp.path(),
                grid.cols,
                grid.rows,
                1,
                &options,
            )
            .with_context(|| format!("{}: GDAL cannot create the GeoTIFF", path.display()))?;
        ds.set_geo_transform(&[
            grid.x_left(),
            grid.spacing,
            0.0,
            grid.y_top(),
            0.0,
            -grid.spacing,
        ])?;
        if !crs_wkt.is_empty() {
            ds.set_spatial_ref(&SpatialRef::from_wkt(crs_wkt)?)?;
        }
        for (k, v) in metadata {
            ds.set_metadata_item(k, v, "")?;
        }
        let mut band = ds.rasterband(1)?;
        band.set_no_data_value(Some(NODATA))?;
        band.set_description("terrain correction (mGal)")?;
        band.set_metadata_item("UNITS", "mGal", "")?;
        let data: Vec<f32> = values
            .iter()
            .map(|&v| if v.is_nan() { NODATA as f32 } else { v })
            .collect();
        let mut buffer = Buffer::new((grid.cols, grid.rows), data);
        band.write((0, 0), (grid.cols, grid.rows), &mut buffer)?;
        ds.flush_cache()?;
    }
    crate::plot::make_readable(tmp.as_file());
    tmp.persist(path).map_err(|e| {
        anyhow::anyhow!(
            "{}: cannot move the finished GeoTIFF into place ({})",
            path.display(),
            e.error
        )
    })?;
    Ok(())
}

/// Counts of what happened to the nodes.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct NodeCounts {
    pub computed: usize,
    pub on_nodata: usize,
    pub without_whole_disc: usize,
}

/// Computes the TC (mGal) at every node, a block of rows at a time (in parallel within a
/// block, on the current rayon pool); nodes on nodata, and nodes whose disc is not wholly
/// on data unless `allow_gaps`, are NaN.
pub fn compute_grid(
    engine: &Engine,
    grid: &NodeGrid,
    density: f64,
    allow_gaps: bool,
    tick: &(dyn Fn(u64) + Sync),
) -> anyhow::Result<(Vec<f32>, NodeCounts)> {
    let dem = engine.dem;
    let mut values = vec![f32::NAN; grid.len()];
    let mut counts = NodeCounts::default();
    let rows_per_block = (65_536 / grid.cols.max(1)).max(1);
    for row0 in (0..grid.rows).step_by(rows_per_block) {
        let row1 = (row0 + rows_per_block).min(grid.rows);
        let mut index = Vec::new();
        let mut points = Vec::new();
        for row in row0..row1 {
            for col in 0..grid.cols {
                let (x, y) = grid.node(col, row);
                match dem.bilinear(x, y) {
                    Some(elev) => {
                        index.push(row * grid.cols + col);
                        points.push(Point { x, y, elev });
                    }
                    None => counts.on_nodata += 1,
                }
            }
        }
        tick(((row1 - row0) * grid.cols - points.len()) as u64);
        let results = engine.compute_all(&points, &|| tick(1));
        for (k, r) in index.into_iter().zip(results) {
            if r.coverage < 1.0 && !allow_gaps {
                counts.without_whole_disc += 1;
                continue;
            }
            let tc = to_mgal(r.tc_m_s2(density));
            if !tc.is_finite() {
                bail!(
                    "internal error: the TC at node {:?} is not finite; please report this with the input that caused it",
                    grid.node(k % grid.cols, k / grid.cols)
                );
            }
            values[k] = tc as f32;
            counts.computed += 1;
        }
    }
    Ok((values, counts))
}

/// `ringsum map`.
pub fn map(args: &MapArgs) -> anyhow::Result<()> {
    let settings = Settings::from_args(&args.physics)?;
    let spacing = parse_length_m(&args.spacing).map_err(|e| anyhow::anyhow!("--spacing: {e}"))?;
    if spacing <= 0.0 {
        bail!(
            "--spacing {}: give a positive length, e.g. 250m",
            args.spacing
        );
    }
    let out = check_tif_target(&args.out)?;
    let preview = match &args.preview {
        Some(p) => Some(check_plot_target(p, "--preview", true)?),
        None => None,
    };
    let plot_size = parse_plot_size(&args.plot_size)?;
    if args.dem.len() > 1 {
        bail!(
            "{} DEMs were given; nested DEMs are not supported yet: give one --dem",
            args.dem.len()
        );
    }
    let dem = read_dem(&args.dem[0])?;
    let stations: Option<Vec<(f64, f64)>> = match &args.stations {
        Some(path) => {
            let columns = ColumnChoice {
                station: args.station_col.clone(),
                x: args.x_col.clone(),
                y: args.y_col.clone(),
                elev: args.elev_col.clone(),
            };
            let table = read_stations(path, &columns, args.stations_crs.as_deref(), &dem.crs_wkt)?;
            Some(table.stations.iter().map(|s| (s.x, s.y)).collect())
        }
        None => None,
    };
    let outer = settings.engine.outer_radius_m;
    let extent = extent_of(
        &args.extent,
        &dem,
        stations.as_deref(),
        outer,
        settings.allow_gaps,
        spacing,
    )?;
    let grid = node_grid(extent, spacing)?;
    let plan = settings.plan(dem.cell_size_m())?;
    let engine = Engine::new(&dem, settings.engine, plan);

    // Measured cost on a few nodes, before the long run.
    let threads = args
        .run
        .threads
        .unwrap_or_else(rayon::current_num_threads)
        .max(1);
    let samples: Vec<Point> = (0..16)
        .filter_map(|k| {
            let col = (k % 4) * grid.cols.saturating_sub(1) / 3;
            let row = (k / 4) * grid.rows.saturating_sub(1) / 3;
            let (x, y) = grid.node(col, row);
            dem.bilinear(x, y).map(|elev| Point { x, y, elev })
        })
        .collect();
    let started = Instant::now();
    for p in &samples {
        let _ = engine.compute(*p);
    }
    let per_node = started.elapsed().as_secs_f64() / samples.len().max(1) as f64;
    if !args.run.quiet {
        eprintln!(
            "ringsum map: {} x {} = {} nodes at {} spacing (about {} for the grid); estimated {} on {} thread(s), measured on {} nodes",
            grid.cols,
            grid.rows,
            grid.len(),
            format_length(spacing),
            bytes_text(grid.len() as f64 * BYTES_PER_NODE),
            duration_text(per_node * grid.len() as f64 / threads as f64),
            threads,
            samples.len()
        );
    }

    let bar = crate::progress::station_bar(grid.len() as u64, args.run.quiet, "nodes");
    let started = Instant::now();
    let (values, counts) = with_threads(args.run.threads, || {
        compute_grid(
            &engine,
            &grid,
            settings.density_kg_m3,
            settings.allow_gaps,
            &|n| bar.inc(n),
        )
    })??;
    bar.finish_and_clear();
    if counts.computed == 0 {
        bail!(
            "no node of the grid has a value ({} on nodata, {} without the whole {} disc on the DEM); give another --extent, a smaller --outer-radius, or --allow-gaps",
            counts.on_nodata,
            counts.without_whole_disc,
            format_length(outer)
        );
    }
    let convention = match settings.engine.convention {
        crate::engine::Convention::Spherical => "spherical",
        crate::engine::Convention::Planar => "planar",
    };
    let metadata = [
        ("RINGSUM_QUANTITY", "terrain correction, mGal".to_string()),
        ("RINGSUM_OUTER_RADIUS_M", format!("{outer}")),
        (
            "RINGSUM_DENSITY_KG_M3",
            format!("{}", settings.density_kg_m3),
        ),
        ("RINGSUM_CONVENTION", convention.to_string()),
        ("RINGSUM_NODE_HEIGHT", "DEM height at the node".to_string()),
        ("RINGSUM_DEM", dem.source.clone()),
    ];
    write_tc_geotiff(&out, &grid, &values, &dem.crs_wkt, &metadata)?;
    if let Some(target) = &preview {
        let figure = MapFigure {
            title: format!(
                "TC at the terrain: {} grid, {} kg/m3, to {}, {convention}",
                format_length(spacing),
                crate::sweep::density_label(settings.density_kg_m3),
                format_length(outer)
            ),
            values: &values,
            cols: grid.cols,
            rows: grid.rows,
            x_left: grid.x_left(),
            y_top: grid.y_top(),
            spacing,
            dem: &dem,
            stations: stations.clone().unwrap_or_default(),
        };
        write_figure(target, plot_size, &figure)?;
    }
    if !args.run.quiet {
        let (mut lo, mut hi) = (f32::INFINITY, f32::NEG_INFINITY);
        for &v in &values {
            if v.is_finite() {
                lo = lo.min(v);
                hi = hi.max(v);
            }
        }
        eprintln!(
            "ringsum map: {} nodes computed in {:.1} s, TC {:.4} to {:.4} mGal; {} on nodata and {} without the whole disc written as nodata; written to {}{}",
            counts.computed,
            started.elapsed().as_secs_f64(),
            lo,
            hi,
            counts.on_nodata,
            counts.without_whole_disc,
            out.display(),
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

/// A memory size in words: `12 kB`, `3.4 MB`, `1.6 GB`.
fn bytes_text(bytes: f64) -> String {
    if bytes < 1e6 {
        format!("{:.0} kB", (bytes / 1e3).max(1.0))
    } else if bytes < 1e9 {
        format!("{:.1} MB", bytes / 1e6)
    } else {
        format!("{:.1} GB", bytes / 1e9)
    }
}

/// A duration in words: `40 s`, `3.5 min`, `2.1 h`.
fn duration_text(seconds: f64) -> String {
    if seconds < 90.0 {
        format!("{seconds:.0} s")
    } else if seconds < 5400.0 {
        format!("{:.1} min", seconds / 60.0)
    } else {
        format!("{:.1} h", seconds / 3600.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nodes_sit_on_multiples_of_the_spacing() {
        let g = node_grid((1010.0, 2020.0, 1990.0, 2990.0), 250.0).unwrap();
        assert_eq!((g.cols, g.rows), (3, 3));
        assert_eq!(g.node(0, 0), (1250.0, 2750.0));
        assert_eq!(g.node(2, 2), (1750.0, 2250.0));
        assert_eq!(g.x_left(), 1125.0);
        assert_eq!(g.y_top(), 2875.0);
        // Edges on multiples are inside.
        let g = node_grid((0.0, 0.0, 1000.0, 500.0), 250.0).unwrap();
        assert_eq!((g.cols, g.rows), (5, 3));
        assert!(node_grid((10.0, 10.0, 20.0, 20.0), 250.0).is_err());
    }

    #[test]
    fn large_grids_are_refused_with_a_spacing_that_fits() {
        let e = node_grid((0.0, 0.0, 400_000.0, 400_000.0), 10.0)
            .unwrap_err()
            .to_string();
        assert!(e.contains("40001 x 40001 = 1.60e9 nodes"), "{e}");
        assert!(e.contains("12.8 GB"), "{e}");
        assert!(e.contains("--spacing 50m"), "{e}");
        assert_eq!(suggest_spacing(10.0, 1.6e9, 2e8), 50.0);
        assert_eq!(suggest_spacing(250.0, 4e8, 2e8), 500.0);
    }
}
