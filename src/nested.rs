//! Several DEMs in one `correct` or `plan` run (finest first), and DEMs read only where
//! the stations need them.
//!
//! Loading: each DEM's header is read and checked; the DEMs are put finest first (with a
//! note when the command line had them in another order); DEMs whose metadata declare
//! different vertical datums are refused; the stations are read in the finest DEM's CRS
//! and converted into each other DEM's with PROJ; of each DEM only the window holding
//! every station's disc of the outer radius is read. Then each coarser DEM gets its
//! weights (see [`crate::engine::layers`]).

use crate::app::{list_some, Inputs, Settings};
use crate::cli::InputArgs;
use crate::dem::read::DemHeader;
use crate::dem::Dem;
use crate::engine::layers::{
    set_weights, transform_between, LayeredEngine, LayeredResult, Transform,
};
use crate::engine::{Engine, Point};
use crate::output::{fixed, Table};
use crate::stations::{read_stations, ColumnChoice};
use crate::units::format_length;
use crate::zones::{ZoneGroup, ZonePlan};
use anyhow::bail;
use rayon::prelude::*;

/// A coarser DEM of a layered run and the stations' positions in its CRS.
pub struct Layer {
    pub dem: Dem,
    pub points: Vec<Point>,
}

/// How much of a DEM file a run reads.
#[derive(Debug, Clone)]
pub struct ReadReport {
    pub path: String,
    pub cells_read: usize,
    pub cells_in_file: usize,
    pub cell_size_m: f64,
}

impl ReadReport {
    /// One line for `plan` and the run summary.
    pub fn describe(&self) -> String {
        format!(
            "{}: {} of {} cells read ({:.1} MB, {:.1} % of the file), cells of {}",
            self.path,
            self.cells_read,
            self.cells_in_file,
            (self.cells_read * 4) as f64 / 1e6,
            100.0 * self.cells_read as f64 / self.cells_in_file.max(1) as f64,
            format_length(self.cell_size_m)
        )
    }
}

/// Transforms points (x, y) with `t` (identity for `None`).
fn convert(t: &Transform, x: f64, y: f64) -> anyhow::Result<(f64, f64)> {
    match t {
        None => Ok((x, y)),
        Some(t) => t.convert((x, y)).map_err(|e| anyhow::anyhow!("{e}")),
    }
}

/// Grid-unit margin around the stations that holds their discs of `radius` m.
fn margin(header: &DemHeader, max_abs_lat: f64, radius: f64) -> (f64, f64) {
    let gt = header.geotransform;
    match header.kind {
        crate::dem::GridKind::Projected => (radius + 2.0 * gt[1], radius - 2.0 * gt[5]),
        crate::dem::GridKind::Geographic(_) => {
            // 110.5 km per degree of latitude is a lower bound of its length.
            let lat = radius / 110_500.0 * 1.02 - 2.0 * gt[5];
            let cos = (max_abs_lat + lat).min(89.0).to_radians().cos();
            (radius / (110_500.0 * cos) * 1.02 + 2.0 * gt[1], lat)
        }
    }
}

/// Widens a cell window so that its ends fall on multiples of the largest pyramid block
/// the zoned engine can use at this radius: the blocks of the window are then the blocks
/// of the whole file, and the results do not depend on how much of the file was read.
fn aligned(
    w: (usize, usize, usize, usize),
    header: &DemHeader,
    radius: f64,
) -> (usize, usize, usize, usize) {
    let cells = (0.6 * radius / header.cell_size_m()).max(1.0);
    let level = (cells.log2().ceil() as u32 + 1).min(20);
    let a = 1usize << level;
    let (c0, r0) = (w.0 / a * a, w.1 / a * a);
    let c1 = ((w.0 + w.2).div_ceil(a) * a).min(header.cols);
    let r1 = ((w.1 + w.3).div_ceil(a) * a).min(header.rows);
    (c0, r0, c1 - c0, r1 - r0)
}

/// Reads the DEMs and the station file for a run of outer radius `radius` m (`None`:
/// read every DEM whole).
pub fn load(input: &InputArgs, radius: Option<f64>) -> anyhow::Result<Inputs> {
    let mut headers = Vec::new();
    for path in &input.dem {
        headers.push(DemHeader::open(path)?);
    }
    let given: Vec<String> = input.dem.iter().map(|p| p.display().to_string()).collect();
    let mut order: Vec<usize> = (0..headers.len()).collect();
    order.sort_by(|&a, &b| {
        headers[a]
            .cell_size_m()
            .total_cmp(&headers[b].cell_size_m())
    });
    let mut notes = Vec::new();
    if order.iter().enumerate().any(|(i, &k)| i != k) {
        notes.push(format!(
            "the DEMs were put finest first: {}",
            order
                .iter()
                .map(|&k| format!("{} ({})", given[k], format_length(headers[k].cell_size_m())))
                .collect::<Vec<_>>()
                .join(", ")
        ));
    }
    let mut sorted: Vec<(String, DemHeader)> = Vec::new();
    let mut headers: Vec<Option<DemHeader>> = headers.into_iter().map(Some).collect();
    for &k in &order {
        sorted.push((given[k].clone(), headers[k].take().expect("each DEM once")));
    }
    // Vertical datums, where the files declare them.
    for w in sorted.windows(2) {
        if let (Some(a), Some(b)) = (&w[0].1.vertical_crs, &w[1].1.vertical_crs) {
            if a != b {
                bail!(
                    "{} has heights on {a} but {} on {b}; give DEMs on one vertical datum (convert one with a geoid model first)",
                    w[0].0,
                    w[1].0
                );
            }
        }
    }
    let columns = ColumnChoice {
        station: input.station_col.clone(),
        x: input.x_col.clone(),
        y: input.y_col.clone(),
        elev: input.elev_col.clone(),
    };
    let mut stations = read_stations(
        &input.stations,
        &columns,
        input.stations_crs.as_deref(),
        &sorted[0].1.crs_wkt,
    )?;
    let base_wkt = sorted[0].1.crs_wkt.clone();
    let mut reads = Vec::new();
    let mut dems: Vec<(Dem, Vec<Point>)> = Vec::new();
    for (name, header) in &sorted {
        let t = transform_between(&base_wkt, &header.crs_wkt)?;
        let mut points = Vec::with_capacity(stations.stations.len());
        for s in &stations.stations {
            let (x, y) = convert(&t, s.x, s.y).map_err(|e| {
                anyhow::anyhow!(
                    "{}: station {} (line {}) cannot be placed in the CRS of {name} ({e}); check its coordinates",
                    stations.path.display(),
                    s.id,
                    s.line
                )
            })?;
            points.push(Point { x, y, elev: s.elev });
        }
        let window = match radius {
            None => None,
            Some(r) => {
                let max_lat = points.iter().map(|p| p.y.abs()).fold(0.0, f64::max);
                let (mx, my) = margin(header, max_lat, r);
                let x_lo = points.iter().map(|p| p.x).fold(f64::INFINITY, f64::min) - mx;
                let x_hi = points.iter().map(|p| p.x).fold(f64::NEG_INFINITY, f64::max) + mx;
                let y_lo = points.iter().map(|p| p.y).fold(f64::INFINITY, f64::min) - my;
                let y_hi = points.iter().map(|p| p.y).fold(f64::NEG_INFINITY, f64::max) + my;
                match header.window(x_lo, x_hi, y_lo, y_hi) {
                    Some(w) => Some(aligned(w, header, r)),
                    None => {
                        notes.push(format!(
                            "{name} does not reach any station's disc and is left out"
                        ));
                        continue;
                    }
                }
            }
        };
        let dem = header.read(window)?;
        reads.push(ReadReport {
            path: name.clone(),
            cells_read: dem.len(),
            cells_in_file: header.cols * header.rows,
            cell_size_m: header.cell_size_m(),
        });
        dems.push((dem, points));
    }
    if dems.is_empty() {
        bail!(
            "{}: none of the DEMs ({}) reaches any station; check the coordinates and --stations-crs",
            stations.path.display(),
            given.join(", ")
        );
    }
    // The stations' positions are kept in the primary (finest remaining) DEM's CRS.
    let primary_points = dems[0].1.clone();
    for (s, p) in stations.stations.iter_mut().zip(&primary_points) {
        s.x = p.x;
        s.y = p.y;
    }
    // Weights of each coarser DEM from the finer ones.
    for k in 1..dems.len() {
        let (finer, rest) = dems.split_at_mut(k);
        let coarse = &mut rest[0].0;
        let mut to_finer = Vec::new();
        for (f, _) in finer.iter() {
            to_finer.push(transform_between(&coarse.crs_wkt, &f.crs_wkt)?);
        }
        let finer_dems: Vec<&Dem> = finer.iter().map(|(d, _)| d).collect();
        set_weights(coarse, &finer_dems, &to_finer)?;
    }
    let mut iter = dems.into_iter();
    let (dem, _) = iter.next().expect("one DEM at least");
    let layers = iter.map(|(dem, points)| Layer { dem, points }).collect();
    Ok(Inputs {
        dem,
        stations,
        layers,
        notes,
        reads,
    })
}

/// The stations' positions in every DEM of the run, finest first.
pub fn points_per_dem(inputs: &Inputs) -> Vec<Vec<Point>> {
    let primary: Vec<Point> = inputs
        .stations
        .stations
        .iter()
        .map(|s| Point {
            x: s.x,
            y: s.y,
            elev: s.elev,
        })
        .collect();
    let mut out = vec![primary];
    out.extend(inputs.layers.iter().map(|l| l.points.clone()));
    out
}

/// Refuses stations that are on no DEM's data, and discs that the DEMs together do not
/// cover (unless gaps are allowed).
pub fn preflight(
    inputs: &Inputs,
    settings: &Settings,
    engine: &LayeredEngine,
) -> anyhow::Result<()> {
    let points = points_per_dem(inputs);
    let table = &inputs.stations;
    let per_station = |i: usize| -> Vec<Point> { points.iter().map(|p| p[i]).collect() };
    let mut nowhere = Vec::new();
    for (i, s) in table.stations.iter().enumerate() {
        if engine.serving(&per_station(i)).is_none() {
            nowhere.push(format!("{} (line {})", s.id, s.line));
        }
    }
    if !nowhere.is_empty() {
        bail!(
            "{}: {} station(s) lie on no DEM's data: {}; check the coordinates and --stations-crs, or add a DEM that covers them",
            table.path.display(),
            nowhere.len(),
            list_some(&nowhere)
        );
    }
    if !settings.allow_gaps {
        let coverage: Vec<f64> = (0..table.stations.len())
            .into_par_iter()
            .map(|i| engine.coverage(&per_station(i)))
            .collect();
        crate::app::refuse_gaps(
            table,
            &coverage,
            settings.engine.outer_radius_m,
            "past every DEM given",
        )?;
    }
    Ok(())
}

/// Builds one engine per DEM (each with its own pyramid), all on the same plan.
pub fn engines<'a>(inputs: &'a Inputs, settings: &Settings, plan: &ZonePlan) -> LayeredEngine<'a> {
    let mut engines = vec![Engine::new(&inputs.dem, settings.engine, plan.clone())];
    engines.extend(
        inputs
            .layers
            .iter()
            .map(|l| Engine::new(&l.dem, settings.engine, plan.clone())),
    );
    LayeredEngine { engines }
}

/// Runs every station through the layered engine, in parallel, with a progress bar.
pub fn compute(
    inputs: &Inputs,
    engine: &LayeredEngine,
    zones: &[Option<crate::zones::InnerZone>],
    quiet: bool,
    threads: Option<usize>,
) -> anyhow::Result<Vec<LayeredResult>> {
    let points = points_per_dem(inputs);
    let n = inputs.stations.stations.len();
    let bar = crate::progress::station_bar(n as u64, quiet, "stations");
    let results = crate::app::with_threads(threads, || {
        (0..n)
            .into_par_iter()
            .map(|i| {
                let ps: Vec<Point> = points.iter().map(|p| p[i]).collect();
                let r = engine.compute(&ps, zones[i]);
                bar.inc(1);
                r
            })
            .collect::<Vec<_>>()
    })?;
    bar.finish_and_clear();
    results
        .into_iter()
        .zip(&inputs.stations.stations)
        .map(|(r, s)| r.ok_or_else(|| anyhow::anyhow!("station {} lies on no DEM's data", s.id)))
        .collect()
}

/// Adds the provenance columns: for each zone group the DEMs that served it
/// (`dems_inner`, ... as DEM numbers, finest first, joined by `+`), and for each DEM the
/// fraction of the disc it served (`coverage_dem1`, ...).
pub fn add_columns(
    table: &mut Table,
    plan: &ZonePlan,
    results: &[LayeredResult],
    radius: f64,
) -> anyhow::Result<()> {
    let n_dems = results.first().map(|r| r.per_dem.len()).unwrap_or(0);
    for g in ["inner", "near", "mid", "far"] {
        table.headers.push(format!("dems_{g}"));
    }
    for k in 1..=n_dems {
        table.headers.push(format!("coverage_dem{k}"));
    }
    let disc = std::f64::consts::PI * radius * radius;
    for (row, r) in table.rows.iter_mut().zip(results) {
        let group_area = |res: &crate::engine::StationResult, g: ZoneGroup| -> f64 {
            if g == ZoneGroup::Inner {
                return res.area_m2 - res.ring_area_m2.iter().sum::<f64>();
            }
            plan.rings
                .iter()
                .zip(&res.ring_area_m2)
                .filter(|(ring, _)| ring.group() == g)
                .map(|(_, a)| a)
                .sum()
        };
        for g in [
            ZoneGroup::Inner,
            ZoneGroup::Near,
            ZoneGroup::Middle,
            ZoneGroup::Far,
        ] {
            let total: f64 = r.per_dem.iter().map(|res| group_area(res, g)).sum();
            let served: Vec<String> = r
                .per_dem
                .iter()
                .enumerate()
                .filter(|(k, res)| {
                    let a = group_area(res, g);
                    a > 1e-3 * total && (g != ZoneGroup::Inner || *k == r.serving)
                })
                .map(|(k, _)| (k + 1).to_string())
                .collect();
            row.push(served.join("+"));
        }
        for res in &r.per_dem {
            row.push(fixed((res.area_m2 / disc).min(1.0), 4, "a DEM's coverage")?);
        }
    }
    Ok(())
}
