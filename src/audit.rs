//! `ringsum audit`: checks the inputs before a long run, and compares with a legacy TC.
//!
//! Per station it reports the DEM height and slope there, the station-minus-DEM height
//! (and how far the station would have to move on that slope to explain it), the distance
//! to the DEM's edge, the coverage of the outer-radius disc, the other stations within the
//! near-duplicate distance, and a list of problem codes. With a legacy TC column it runs
//! the engine on every station on DEM data and reports new minus legacy per station, with
//! statistics, the worst stations, a scatter plot and a histogram; with the Hammer preset
//! and per-zone legacy columns, zone by zone as well.
//!
//! Nothing here stops at the first problem: the report lists every station's, and only
//! inputs that cannot be read at all (or legacy values that are not numbers, unless
//! `--skip-bad-legacy`) end the run, before anything is written.

use crate::app::{load_inputs, with_threads, Settings};
use crate::cli::InputArgs;
use crate::engine::pyramid::Pyramid;
use crate::engine::{coverage_with_pyramid, Engine, Point, StationResult};
use crate::output::{check_target, fixed, write_table, Table, Target};
use crate::plot::{
    parse_plot_size, quantile, write_figure, HistogramFigure, PlotFormat, PlotTarget,
    ScatterFigure, ZoneFigure,
};
use crate::sens_cli::{AuditArgs, PlotFormatArg};
use crate::stations::StationTable;
use crate::units::{format_length, parse_length_m, to_mgal, G};
use anyhow::{bail, Context};
use std::collections::HashMap;

/// Names tried, in order, for the legacy TC column (case-insensitive).
pub const LEGACY_NAMES: &[&str] = &[
    "legacy_tc",
    "legacy_tc_mgal",
    "old_tc",
    "old_tc_mgal",
    "tc_old",
    "tc_old_mgal",
    "tc_legacy",
    "tc_legacy_mgal",
];

/// Prefix of the per-zone legacy columns of the Hammer preset: `legacy_tc_B` ... `legacy_tc_M`
/// (and `legacy_tc_A` for the station zone).
pub const LEGACY_ZONE_PREFIX: &str = "legacy_tc_";

/// Slopes below this (degrees) explain no height mismatch by position.
const FLAT_SLOPE_DEG: f64 = 0.5;

/// Problem codes of the report, in the order they are listed.
pub const PROBLEMS: [&str; 6] = [
    "outside_dem",
    "on_nodata",
    "partial_coverage",
    "height_mismatch",
    "near_duplicate",
    "bad_legacy",
];

/// A length option that may be zero (`allow_zero`) or must be positive.
fn parse_threshold(text: &str, option: &str, allow_zero: bool) -> anyhow::Result<f64> {
    let v = parse_length_m(text).map_err(|e| anyhow::anyhow!("{option}: {e}"))?;
    if v < 0.0 || (!allow_zero && v == 0.0) {
        bail!(
            "{option} {text}: give a {} length, e.g. {}",
            if allow_zero {
                "non-negative"
            } else {
                "positive"
            },
            if allow_zero { "1m" } else { "5m" }
        );
    }
    Ok(v)
}

/// Lists up to eight items and how many more there are.
fn list_some(items: &[String]) -> String {
    let shown: Vec<&str> = items.iter().take(8).map(String::as_str).collect();
    let mut s = shown.join("; ");
    if items.len() > 8 {
        s.push_str(&format!("; and {} more", items.len() - 8));
    }
    s
}

/// Refuses a station file with repeated ids, listing all of them (the station reader
/// stops at the first).
pub fn check_duplicate_ids(input: &InputArgs) -> anyhow::Result<()> {
    let path = &input.stations;
    let Ok(mut reader) = csv::ReaderBuilder::new()
        .flexible(true)
        .trim(csv::Trim::All)
        .from_path(path)
    else {
        return Ok(()); // the station reader reports unreadable files
    };
    let Ok(headers) = reader.headers().cloned() else {
        return Ok(());
    };
    let names: Vec<String> = match &input.station_col {
        Some(n) => vec![n.clone()],
        None => crate::stations::STATION_NAMES
            .iter()
            .map(|s| s.to_string())
            .collect(),
    };
    let Some(col) = names.iter().find_map(|n| {
        headers
            .iter()
            .position(|h| h.trim_start_matches('\u{feff}').eq_ignore_ascii_case(n))
    }) else {
        return Ok(());
    };
    let mut lines: HashMap<String, Vec<u64>> = HashMap::new();
    let mut order = Vec::new();
    for record in reader.records().flatten() {
        let id = record.get(col).unwrap_or("").trim().to_string();
        if id.is_empty() {
            continue;
        }
        let line = record.position().map(|p| p.line()).unwrap_or(0);
        let entry = lines.entry(id.clone()).or_default();
        if entry.is_empty() {
            order.push(id);
        }
        entry.push(line);
    }
    let repeated: Vec<String> = order
        .iter()
        .filter(|id| lines[*id].len() > 1)
        .map(|id| {
            let l: Vec<String> = lines[id].iter().map(|n| n.to_string()).collect();
            format!("{id} (lines {})", l.join(", "))
        })
        .collect();
    if !repeated.is_empty() {
        bail!(
            "{}: {} station id(s) are used more than once: {}; give each station a unique id (a re-occupied station needs its own id)",
            path.display(),
            repeated.len(),
            list_some(&repeated)
        );
    }
    Ok(())
}

/// Pairs of stations within `distance` (horizontal, m) of each other, as
/// `(i, j, distance)` with `i < j`.
pub fn near_pairs(xy: &[(f64, f64)], distance: f64) -> Vec<(usize, usize, f64)> {
    let mut order: Vec<usize> = (0..xy.len()).collect();
    order.sort_by(|&a, &b| xy[a].0.total_cmp(&xy[b].0));
    let mut pairs = Vec::new();
    for (k, &i) in order.iter().enumerate() {
        for &j in &order[k + 1..] {
            if xy[j].0 - xy[i].0 > distance {
                break;
            }
            let d = (xy[j].0 - xy[i].0).hypot(xy[j].1 - xy[i].1);
            if d <= distance {
                pairs.push((i.min(j), i.max(j), d));
            }
        }
    }
    pairs.sort_by_key(|p| (p.0, p.1));
    pairs
}

/// Summary statistics of differences.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stats {
    pub n: usize,
    pub mean: f64,
    pub median: f64,
    pub sd: f64,
    pub rms: f64,
    pub min: f64,
    pub max: f64,
}

/// Statistics of `values` (`None` when empty). `sd` is the sample standard deviation
/// (n - 1; 0 for one value).
pub fn stats(values: &[f64]) -> Option<Stats> {
    if values.is_empty() {
        return None;
    }
    let n = values.len();
    let mean = values.iter().sum::<f64>() / n as f64;
    let var = if n > 1 {
        values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64
    } else {
        0.0
    };
    let rms = (values.iter().map(|v| v * v).sum::<f64>() / n as f64).sqrt();
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    Some(Stats {
        n,
        mean,
        median: quantile(&sorted, 0.5),
        sd: var.sqrt(),
        rms,
        min: sorted[0],
        max: sorted[n - 1],
    })
}

/// A legacy column: its header and each station's value (`None` where it is bad).
#[derive(Debug, Clone)]
pub struct LegacyColumn {
    pub name: String,
    pub values: Vec<Option<f64>>,
}

/// Reads column `col` as legacy values; bad fields (empty, not a number) are collected
/// as "line N (station X): 'text'" into `bad`.
fn legacy_values(table: &StationTable, col: usize, bad: &mut Vec<(usize, String)>) -> LegacyColumn {
    let name = table.headers[col].clone();
    let values = (0..table.stations.len())
        .map(|i| {
            let text = table.records[i][col].trim();
            match text.parse::<f64>() {
                Ok(v) if v.is_finite() => Some(v),
                _ => {
                    let s = &table.stations[i];
                    bad.push((
                        i,
                        format!("line {} (station {}): {name} is '{text}'", s.line, s.id),
                    ));
                    None
                }
            }
        })
        .collect();
    LegacyColumn { name, values }
}

/// One zone compared with its legacy column.
struct ZoneColumn {
    /// Zone name (A for the station zone, else the plan ring's name).
    zone: String,
    /// `None` for the inner zone, else the zone's rings in the plan.
    ring: Option<std::ops::Range<usize>>,
    legacy: LegacyColumn,
}

/// What was checked at one station.
struct Check {
    dem_elev: Option<f64>,
    slope: Option<f64>,
    edge: f64,
    coverage: f64,
    near: Vec<(usize, f64)>,
    problems: Vec<&'static str>,
}

/// `ringsum audit`.
pub fn audit(args: &AuditArgs) -> anyhow::Result<()> {
    let settings = Settings::from_args(&args.physics)?;
    let target = check_target(&args.out)?;
    let threshold = parse_threshold(&args.mismatch_threshold, "--mismatch-threshold", false)?;
    let dup_distance = parse_threshold(&args.duplicate_distance, "--duplicate-distance", true)?;
    let plot_size = parse_plot_size(&args.plot_size)?;
    check_duplicate_ids(&args.input)?;
    let inputs = load_inputs(&args.input)?;
    let dem = &inputs.dem;
    let table = &inputs.stations;
    let stations = &table.stations;
    let plan = settings.plan(dem.cell_size_m())?;
    let radius = settings.engine.outer_radius_m;

    // Legacy columns.
    let mut bad: Vec<(usize, String)> = Vec::new();
    let legacy_col = match &args.legacy_col {
        Some(name) => Some(table.named_column(name, "--legacy-col")?),
        None => table.find_column(LEGACY_NAMES),
    };
    let legacy = legacy_col.map(|c| legacy_values(table, c, &mut bad));
    let plan_zones = plan.zone_columns();
    let mut zone_columns = Vec::new();
    let mut unmatched_zone_columns = Vec::new();
    for (c, h) in table.headers.iter().enumerate() {
        let lower = h.to_ascii_lowercase();
        let Some(zone) = lower.strip_prefix(LEGACY_ZONE_PREFIX) else {
            continue;
        };
        if Some(c) == legacy_col || zone.is_empty() || zone == "mgal" {
            continue;
        }
        let plan_zone = plan_zones
            .iter()
            .find(|z| z.name.eq_ignore_ascii_case(zone));
        let matched = settings.zones == crate::app::ZonesChoice::Hammer
            && (plan_zone.is_some() || zone == "a");
        if matched {
            zone_columns.push(ZoneColumn {
                zone: match plan_zone {
                    Some(z) => z.name.clone(),
                    None => "A".to_string(),
                },
                ring: plan_zone.map(|z| z.rings.clone()),
                legacy: legacy_values(table, c, &mut bad),
            });
        } else {
            unmatched_zone_columns.push(h.clone());
        }
    }
    // Zones in plan order (A first).
    zone_columns.sort_by_key(|z| z.ring.as_ref().map(|r| r.start + 1).unwrap_or(0));
    if !bad.is_empty() && !args.skip_bad_legacy {
        let items: Vec<String> = bad.iter().map(|(_, s)| s.clone()).collect();
        bail!(
            "{}: {} legacy value(s) are empty or not numbers: {}; fix those lines, or pass --skip-bad-legacy to leave those stations out of the comparison",
            table.path.display(),
            items.len(),
            list_some(&items)
        );
    }
    let bad_stations: std::collections::BTreeSet<usize> = bad.iter().map(|(i, _)| *i).collect();
    let plots = match &args.plots {
        Some(dir) => {
            std::fs::create_dir_all(dir)
                .with_context(|| format!("--plots {}: cannot create the folder", dir.display()))?;
            Some(dir.clone())
        }
        None => None,
    };

    // Input checks.
    let pyramid = Pyramid::build(dem);
    let xy: Vec<(f64, f64)> = stations.iter().map(|s| (s.x, s.y)).collect();
    let pairs = near_pairs(&xy, dup_distance);
    let mut checks: Vec<Check> = stations
        .iter()
        .map(|s| {
            let on_grid = dem.contains(s.x, s.y);
            let dem_elev = dem.bilinear(s.x, s.y);
            let mut problems = Vec::new();
            if !on_grid {
                problems.push("outside_dem");
            } else if dem_elev.is_none() {
                problems.push("on_nodata");
            }
            let coverage = coverage_with_pyramid(dem, &pyramid, s.x, s.y, radius);
            if on_grid && dem_elev.is_some() && coverage < 1.0 {
                problems.push("partial_coverage");
            }
            if let Some(h) = dem_elev {
                if (s.elev - h).abs() > threshold {
                    problems.push("height_mismatch");
                }
            }
            Check {
                dem_elev,
                slope: dem.slope_deg(s.x, s.y),
                edge: dem.distance_inside(s.x, s.y),
                coverage,
                near: Vec::new(),
                problems,
            }
        })
        .collect();
    for &(i, j, d) in &pairs {
        checks[i].near.push((j, d));
        checks[j].near.push((i, d));
    }
    for (i, c) in checks.iter_mut().enumerate() {
        if !c.near.is_empty() {
            c.problems.push("near_duplicate");
        }
        if bad_stations.contains(&i) {
            c.problems.push("bad_legacy");
        }
    }

    // New TC where a comparison is asked for.
    let compare = legacy.is_some() || !zone_columns.is_empty();
    let mut results: Vec<Option<StationResult>> = vec![None; stations.len()];
    if compare {
        let engine = Engine::new(dem, settings.engine, plan.clone());
        let todo: Vec<usize> = (0..stations.len())
            .filter(|&i| checks[i].dem_elev.is_some())
            .collect();
        let points: Vec<Point> = todo
            .iter()
            .map(|&i| Point {
                x: stations[i].x,
                y: stations[i].y,
                elev: stations[i].elev,
            })
            .collect();
        let bar = crate::progress::station_bar(points.len() as u64, args.run.quiet, "stations");
        let computed = with_threads(args.run.threads, || {
            engine.compute_all(&points, &|| bar.inc(1))
        })?;
        bar.finish_and_clear();
        for (i, r) in todo.into_iter().zip(computed) {
            results[i] = Some(r);
        }
    }
    let rho = settings.density_kg_m3;
    let mgal = |k: f64| to_mgal(G * rho * k);
    // A station enters the comparison when its new TC has the whole disc (or gaps are
    // allowed) and its legacy value is good.
    let comparable =
        |i: usize| results[i].is_some() && (checks[i].coverage >= 1.0 || settings.allow_gaps);

    // The report.
    let transformed = table.input_crs.is_some();
    let mut headers: Vec<String> = vec!["station".into(), "x".into(), "y".into()];
    if transformed {
        headers.extend(["x_dem".to_string(), "y_dem".to_string()]);
    }
    for h in [
        "elev_m",
        "dem_elev_m",
        "elev_minus_dem_m",
        "dem_slope_deg",
        "shift_for_mismatch_m",
        "distance_to_dem_edge_m",
        "coverage",
        "near_stations",
        "near_distance_m",
        "problems",
    ] {
        headers.push(h.to_string());
    }
    if legacy.is_some() {
        headers.extend(
            ["legacy_tc_mgal", "tc_mgal", "new_minus_legacy_mgal"]
                .iter()
                .map(|s| s.to_string()),
        );
    }
    for z in &zone_columns {
        headers.push(format!("tc_{}_mgal", z.zone));
        headers.push(format!("legacy_tc_{}_mgal", z.zone));
        headers.push(format!("diff_{}_mgal", z.zone));
    }
    let mut report = Table {
        headers,
        rows: Vec::new(),
    };
    let opt = |v: Option<f64>, d: usize, what: &str| -> anyhow::Result<String> {
        match v {
            Some(v) => fixed(v, d, what),
            None => Ok(String::new()),
        }
    };
    let round4 = |v: f64| (v * 1e4).round() / 1e4;
    let mut diffs: Vec<(usize, f64)> = Vec::new();
    let mut zone_diffs: Vec<Vec<f64>> = vec![Vec::new(); zone_columns.len()];
    for (i, (s, c)) in stations.iter().zip(&checks).enumerate() {
        let what = |col: &str| format!("{col} of station {}", s.id);
        let mut row = vec![
            s.id.clone(),
            trim_coord(s.input_xy.0),
            trim_coord(s.input_xy.1),
        ];
        if transformed {
            row.push(fixed(s.x, 3, &what("x_dem"))?);
            row.push(fixed(s.y, 3, &what("y_dem"))?);
        }
        let dh = c.dem_elev.map(|h| s.elev - h);
        let shift = match (dh, c.slope) {
            (Some(dh), Some(slope)) if slope >= FLAT_SLOPE_DEG => {
                Some(dh.abs() / slope.to_radians().tan())
            }
            _ => None,
        };
        row.push(fixed(s.elev, 3, &what("elev_m"))?);
        row.push(opt(c.dem_elev, 3, &what("dem_elev_m"))?);
        row.push(opt(dh, 3, &what("elev_minus_dem_m"))?);
        row.push(opt(c.slope, 2, &what("dem_slope_deg"))?);
        row.push(opt(shift, 1, &what("shift_for_mismatch_m"))?);
        row.push(fixed(c.edge, 1, &what("distance_to_dem_edge_m"))?);
        row.push(fixed(c.coverage, 4, &what("coverage"))?);
        let near_ids: Vec<&str> = c
            .near
            .iter()
            .map(|&(j, _)| stations[j].id.as_str())
            .collect();
        row.push(near_ids.join(";"));
        row.push(opt(
            c.near.iter().map(|&(_, d)| d).reduce(f64::min),
            3,
            &what("near_distance_m"),
        )?);
        row.push(c.problems.join(";"));
        if let Some(l) = &legacy {
            let new = results[i].as_ref().map(|r| round4(mgal(r.kernel_sum_m())));
            let old = l.values[i];
            let diff = match (new, old) {
                (Some(n), Some(o)) => Some(n - o),
                _ => None,
            };
            if let (Some(d), true) = (diff, comparable(i)) {
                diffs.push((i, d));
            }
            row.push(opt(old, 4, &what("legacy_tc_mgal"))?);
            row.push(opt(new, 4, &what("tc_mgal"))?);
            row.push(opt(diff, 4, &what("new_minus_legacy_mgal"))?);
        }
        for (k, z) in zone_columns.iter().enumerate() {
            let new = results[i].as_ref().map(|r| {
                round4(mgal(match &z.ring {
                    None => r.inner_m,
                    Some(rings) => r.rings_m[rings.clone()].iter().sum(),
                }))
            });
            let old = z.legacy.values[i];
            let diff = match (new, old) {
                (Some(n), Some(o)) => Some(n - o),
                _ => None,
            };
            if let (Some(d), true) = (diff, comparable(i)) {
                zone_diffs[k].push(d);
            }
            row.push(opt(new, 4, &what("tc zone"))?);
            row.push(opt(old, 4, &what("legacy zone"))?);
            row.push(opt(diff, 4, &what("diff zone"))?);
        }
        report.rows.push(row);
    }

    // Plots.
    let ext = match args.plot_format {
        PlotFormatArg::Png => "png",
        PlotFormatArg::Svg => "svg",
    };
    let format = match args.plot_format {
        PlotFormatArg::Png => PlotFormat::Png,
        PlotFormatArg::Svg => PlotFormat::Svg,
    };
    let mut written_plots = Vec::new();
    let mut ranked = diffs.clone();
    ranked.sort_by(|a, b| b.1.abs().total_cmp(&a.1.abs()));
    if let (Some(dir), Some(l)) = (&plots, &legacy) {
        if !diffs.is_empty() {
            let points: Vec<(f64, f64)> = diffs
                .iter()
                .map(|&(i, d)| {
                    let old = l.values[i].unwrap_or(0.0);
                    (old, old + d)
                })
                .collect();
            let labels: Vec<(usize, String)> = ranked
                .iter()
                .take(5)
                .filter(|(_, d)| *d != 0.0)
                .map(|&(i, _)| {
                    let k = diffs
                        .iter()
                        .position(|&(j, _)| j == i)
                        .expect("ranked from diffs");
                    (k, stations[i].id.clone())
                })
                .collect();
            let scatter = ScatterFigure {
                title: format!(
                    "New against legacy terrain correction ({} stations)",
                    diffs.len()
                ),
                x_desc: format!("legacy TC, column {} (mGal)", l.name),
                y_desc: format!(
                    "new TC, {} kg/m3 to {} (mGal)",
                    density_text(rho),
                    format_length(radius)
                ),
                points,
                labels,
            };
            let path = dir.join(format!("legacy_scatter.{ext}"));
            write_figure(
                &PlotTarget {
                    path: path.clone(),
                    format,
                },
                plot_size,
                &scatter,
            )?;
            written_plots.push(path);
            let hist = HistogramFigure {
                title: format!(
                    "New minus legacy terrain correction ({} stations)",
                    diffs.len()
                ),
                x_desc: "new minus legacy TC (mGal)".into(),
                values: diffs.iter().map(|&(_, d)| d).collect(),
            };
            let path = dir.join(format!("legacy_histogram.{ext}"));
            write_figure(
                &PlotTarget {
                    path: path.clone(),
                    format,
                },
                plot_size,
                &hist,
            )?;
            written_plots.push(path);
        }
    }
    if let Some(dir) = &plots {
        let zones: Vec<(String, f64, f64, f64, f64)> = zone_columns
            .iter()
            .zip(&zone_diffs)
            .filter_map(|(z, d)| stats(d).map(|s| (z.zone.clone(), s.mean, s.sd, s.min, s.max)))
            .collect();
        if !zones.is_empty() {
            let fig = ZoneFigure {
                title: "New minus legacy TC per Hammer zone (mean, 1 sd, extremes)".into(),
                y_desc: "new minus legacy TC (mGal)".into(),
                zones,
            };
            let path = dir.join(format!("legacy_zones.{ext}"));
            write_figure(
                &PlotTarget {
                    path: path.clone(),
                    format,
                },
                plot_size,
                &fig,
            )?;
            written_plots.push(path);
        }
    }

    write_table(&target, &report)?;

    // The human summary.
    let mut out = String::new();
    let where_to = match &target {
        Target::Stdout => "standard output".to_string(),
        Target::Csv(p) => p.display().to_string(),
    };
    out.push_str(&format!(
        "ringsum audit: {} station(s) in {} against {} (outer radius {}); report written to {where_to}\n",
        stations.len(),
        table.path.display(),
        dem.source,
        format_length(radius)
    ));
    let with = |code: &str| -> Vec<usize> {
        (0..stations.len())
            .filter(|&i| checks[i].problems.contains(&code))
            .collect()
    };
    let name = |i: usize| format!("{} (line {})", stations[i].id, stations[i].line);
    let outside = with("outside_dem");
    if !outside.is_empty() {
        let items: Vec<String> = outside
            .iter()
            .map(|&i| format!("{}, {} outside", name(i), format_length(-checks[i].edge)))
            .collect();
        out.push_str(&format!(
            "  outside the DEM: {}: {}\n",
            outside.len(),
            list_some(&items)
        ));
    }
    let nodata = with("on_nodata");
    if !nodata.is_empty() {
        let items: Vec<String> = nodata.iter().map(|&i| name(i)).collect();
        out.push_str(&format!(
            "  on nodata of the DEM: {}: {}\n",
            nodata.len(),
            list_some(&items)
        ));
    }
    let partial = with("partial_coverage");
    if !partial.is_empty() {
        let mut items: Vec<(f64, String)> = partial
            .iter()
            .map(|&i| {
                (
                    checks[i].coverage,
                    format!("{} coverage {:.4}", stations[i].id, checks[i].coverage),
                )
            })
            .collect();
        items.sort_by(|a, b| a.0.total_cmp(&b.0));
        let items: Vec<String> = items.into_iter().map(|(_, s)| s).collect();
        out.push_str(&format!(
            "  disc of {} not wholly on DEM data: {} station(s), lowest first: {}\n",
            format_length(radius),
            partial.len(),
            list_some(&items)
        ));
    }
    let on_grid: Vec<usize> = (0..stations.len())
        .filter(|&i| checks[i].dem_elev.is_some())
        .collect();
    if let Some(&nearest) = on_grid
        .iter()
        .min_by(|&&a, &&b| checks[a].edge.total_cmp(&checks[b].edge))
    {
        out.push_str(&format!(
            "  nearest DEM edge: {} from station {} (a larger outer radius reaches past the DEM there)\n",
            format_length(checks[nearest].edge),
            stations[nearest].id
        ));
    }
    let mismatch = with("height_mismatch");
    if !mismatch.is_empty() {
        let items: Vec<String> = mismatch
            .iter()
            .map(|&i| {
                let dh = stations[i].elev - checks[i].dem_elev.unwrap_or(f64::NAN);
                match checks[i].slope {
                    Some(sl) => format!("{} {:+.1} m on a {:.1} deg slope", stations[i].id, dh, sl),
                    None => format!("{} {:+.1} m", stations[i].id, dh),
                }
            })
            .collect();
        out.push_str(&format!(
            "  station minus DEM height beyond {}: {}: {}\n",
            format_length(threshold),
            mismatch.len(),
            list_some(&items)
        ));
    }
    let dh: Vec<f64> = on_grid
        .iter()
        .map(|&i| stations[i].elev - checks[i].dem_elev.unwrap_or(0.0))
        .collect();
    if let Some(st) = stats(&dh) {
        out.push_str(&format!(
            "  station minus DEM height: median {:+.2} m, range {:+.2} to {:+.2} m over {} station(s)\n",
            st.median, st.min, st.max, st.n
        ));
        if st.median.abs() > threshold {
            out.push_str(&format!(
                "  vertical datum: the stations lie {:+.1} m from the DEM at the median station; check that both heights are on the same vertical datum (ellipsoidal and orthometric heights differ by the geoid height)\n",
                st.median
            ));
        }
    }
    if !pairs.is_empty() {
        let items: Vec<String> = pairs
            .iter()
            .map(|&(i, j, d)| format!("{} and {} {:.3} m apart", stations[i].id, stations[j].id, d))
            .collect();
        out.push_str(&format!(
            "  near-duplicates within {}: {} pair(s): {}\n",
            format_length(dup_distance),
            pairs.len(),
            list_some(&items)
        ));
    }
    if !bad.is_empty() {
        let items: Vec<String> = bad.iter().map(|(_, s)| s.clone()).collect();
        out.push_str(&format!(
            "  legacy values skipped (--skip-bad-legacy): {}: {}\n",
            items.len(),
            list_some(&items)
        ));
    }
    match &legacy {
        None => out.push_str(&format!(
            "  legacy TC: no column found (looked for {}); name one with --legacy-col\n",
            LEGACY_NAMES.join(", ")
        )),
        Some(l) => {
            let d: Vec<f64> = diffs.iter().map(|&(_, d)| d).collect();
            match stats(&d) {
                None => out.push_str(&format!(
                    "  legacy TC ({}): no station could be compared\n",
                    l.name
                )),
                Some(st) => {
                    let (num, den) = diffs.iter().fold((0.0, 0.0), |(a, b), &(i, dd)| {
                        let old = l.values[i].unwrap_or(0.0);
                        (a + old * (old + dd), b + old * old)
                    });
                    out.push_str(&format!(
                        "  legacy TC ({}): {} station(s) compared at {} kg/m3; new minus legacy mean {:+.4}, median {:+.4}, sd {:.4}, rms {:.4}, range {:+.4} to {:+.4} mGal\n",
                        l.name,
                        st.n,
                        density_text(rho),
                        st.mean,
                        st.median,
                        st.sd,
                        st.rms,
                        st.min,
                        st.max
                    ));
                    if den > 0.0 {
                        out.push_str(&format!(
                            "    new = {:.4} x legacy (least squares through the origin; a ratio far from 1 points to another density or outer radius)\n",
                            num / den
                        ));
                    }
                    let left_out = (0..stations.len())
                        .filter(|&i| l.values[i].is_some() && !comparable(i))
                        .count();
                    if left_out > 0 {
                        out.push_str(&format!(
                            "    {left_out} station(s) with a legacy value left out: off the DEM data, or without the whole disc (--allow-gaps compares them too)\n"
                        ));
                    }
                    let worst: Vec<String> = ranked
                        .iter()
                        .take(args.worst)
                        .map(|&(i, dd)| {
                            let old = l.values[i].unwrap_or(0.0);
                            format!(
                                "{} {:+.4} (new {:.4}, legacy {:.4})",
                                stations[i].id,
                                dd,
                                old + dd,
                                old
                            )
                        })
                        .collect();
                    if !worst.is_empty() {
                        out.push_str(&format!("    largest differences: {}\n", worst.join("; ")));
                    }
                }
            }
        }
    }
    for (z, d) in zone_columns.iter().zip(&zone_diffs) {
        if let Some(st) = stats(d) {
            out.push_str(&format!(
                "  zone {} ({}): {} station(s), new minus legacy mean {:+.4}, sd {:.4}, rms {:.4}, range {:+.4} to {:+.4} mGal\n",
                z.zone, z.legacy.name, st.n, st.mean, st.sd, st.rms, st.min, st.max
            ));
        }
    }
    if !unmatched_zone_columns.is_empty() {
        out.push_str(&format!(
            "  per-zone legacy columns not compared ({}): they are compared zone by zone with --zones hammer, for the zones within the outer radius\n",
            unmatched_zone_columns.join(", ")
        ));
    }
    if plots.is_some() {
        if written_plots.is_empty() {
            out.push_str(
                "  plots: none (they need a legacy column and at least one compared station)\n",
            );
        } else {
            let names: Vec<String> = written_plots
                .iter()
                .map(|p| p.display().to_string())
                .collect();
            out.push_str(&format!("  plots: {}\n", names.join(", ")));
        }
    }
    let flagged = checks.iter().filter(|c| !c.problems.is_empty()).count();
    if flagged == 0 {
        out.push_str("  no problems found\n");
    } else {
        out.push_str(&format!(
            "  {flagged} station(s) with problems; see the problems column of the report\n"
        ));
    }
    match target {
        Target::Stdout => {
            if !args.run.quiet {
                eprint!("{out}");
            }
        }
        Target::Csv(_) => print!("{out}"),
    }
    Ok(())
}

/// A density for text: `2670`, `2300.5`.
fn density_text(d: f64) -> String {
    crate::sweep::density_label(d)
}

/// Coordinates as given: enough decimals for degrees and for metres.
fn trim_coord(v: f64) -> String {
    let s = format!("{v:.8}");
    let s = s.trim_end_matches('0');
    s.trim_end_matches('.').to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn near_pairs_finds_exactly_the_close_ones() {
        let xy = [
            (0.0, 0.0),
            (10.0, 0.0),
            (0.5, 0.0),
            (10.0, 0.9),
            (50.0, 50.0),
            (50.0, 50.0),
        ];
        let pairs = near_pairs(&xy, 1.0);
        let ij: Vec<(usize, usize)> = pairs.iter().map(|p| (p.0, p.1)).collect();
        assert_eq!(ij, [(0, 2), (1, 3), (4, 5)]);
        assert!((pairs[1].2 - 0.9).abs() < 1e-12);
        let exact = near_pairs(&xy, 0.0);
        assert_eq!(exact.len(), 1);
        assert_eq!((exact[0].0, exact[0].1), (4, 5));
    }

    #[test]
    fn statistics_of_differences() {
        let s = stats(&[1.0, -1.0, 3.0, 1.0]).unwrap();
        assert_eq!(s.n, 4);
        assert_eq!(s.mean, 1.0);
        assert_eq!(s.median, 1.0);
        assert!((s.sd - (8.0f64 / 3.0).sqrt()).abs() < 1e-12);
        assert!((s.rms - 3.0f64.sqrt()).abs() < 1e-12);
        assert_eq!((s.min, s.max), (-1.0, 3.0));
        assert!(stats(&[]).is_none());
    }

    #[test]
    fn thresholds_are_checked() {
        assert_eq!(parse_threshold("5m", "--x", false).unwrap(), 5.0);
        assert_eq!(parse_threshold("0", "--x", true).unwrap(), 0.0);
        assert!(parse_threshold("0", "--x", false).is_err());
        assert!(parse_threshold("-1m", "--x", true).is_err());
    }
}
