//! `ringsum audit`: checks the inputs before a long run, and compares with a legacy TC.
//!
//! Per station it reports the DEM height and slope there (from the finest DEM with data
//! at the station), the station-minus-DEM height (and how far the station would have to
//! move on that slope to explain it), the distance to the nearest edge of the DEMs, the
//! coverage of the outer-radius disc by all DEMs, the other stations within the
//! near-duplicate distance, and a list of problem codes. With a legacy TC column it runs
//! the same pipeline as `correct` on every station on DEM data (so the new TC is
//! `correct`'s, with every input kind) and reports new minus legacy per station, with
//! statistics, the worst stations, a scatter plot and a histogram; with the Hammer preset
//! and per-zone legacy columns, zone by zone as well.
//!
//! Nothing here stops at the first problem: the report lists every station's, and only
//! inputs that cannot be read at all (or legacy values that are not numbers, unless
//! `--skip-bad-legacy`) end the run, before anything is written.

use crate::analysis::checks::{
    check_duplicate_ids, legacy_values, near_pairs, parse_threshold, stats, LegacyColumn,
    FLAT_SLOPE_DEG, LEGACY_NAMES, LEGACY_ZONE_PREFIX,
};
use crate::cli::{AuditArgs, PlotFormatArg};
use crate::compute::{self, Work};
use crate::config::{RunSettings, TcSettings, ZonesChoice};
use crate::engine::Point;
use crate::inputs::Opened;
use crate::output::files::TableTarget;
use crate::output::plot::{
    parse_plot_size, write_figure, HistogramFigure, PlotFormat, PlotTarget, ScatterFigure,
    ZoneFigure,
};
use crate::output::record::SettingsRecord;
use crate::output::station_table::{zone_columns, StationColumns, LEADING_COLUMNS};
use crate::output::table::{from_units, to_units, Cell, Table};
use crate::results::PointTc;
use crate::text::list_some;
use crate::units::{format_length, to_mgal};
use anyhow::{bail, Context};

/// One zone compared with its legacy column.
struct ZoneColumn {
    /// Zone name (A for the station zone, else the plan's zone name).
    zone: String,
    /// `None` for the inner zone, else the plan rings the zone sums.
    rings: Option<Vec<usize>>,
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
    let tc = TcSettings::from_args(&args.tc)?;
    let run = RunSettings::from_args(&args.run)?;
    let source = tc.require_stations("audit")?;
    let target = TableTarget::check(&args.out, "--out")?;
    let threshold = parse_threshold(&args.mismatch_threshold, "--mismatch-threshold", false)?;
    let dup_distance = parse_threshold(&args.duplicate_distance, "--duplicate-distance", true)?;
    let plot_size = parse_plot_size(&args.plot_size.plot_size)?;
    check_duplicate_ids(&source.path, source.columns.station.as_deref())?;
    let ext = match args.plot_format {
        PlotFormatArg::Png => "png",
        PlotFormatArg::Svg => "svg",
    };
    let plot_files: Vec<std::path::PathBuf> = match &args.plots {
        Some(dir) => ["legacy_scatter", "legacy_histogram", "legacy_zones"]
            .iter()
            .map(|name| dir.join(format!("{name}.{ext}")))
            .collect(),
        None => Vec::new(),
    };
    let mut outputs: Vec<(&std::path::Path, &str)> = vec![(&args.out, "--out")];
    outputs.extend(plot_files.iter().map(|p| (p.as_path(), "--plots")));
    let mut book = super::RunBook::start("audit", &tc, &run, target.path(), &outputs)?;
    let opened = Opened::open(&tc)?;
    let footprint = opened.station_xy();
    let inputs = opened.read(&tc, &footprint)?;
    super::print_notes(&inputs, run.quiet);
    let table = inputs.table();
    let stations = &table.stations;
    let plan = tc.plan(inputs.cell_m())?;
    super::warn_sector_rings(&mut book, &inputs, &tc, &plan, &run)?;
    let radius = tc.engine.outer_radius_m;

    // Legacy columns.
    let mut bad: Vec<(usize, String)> = Vec::new();
    let legacy_col = match &args.legacy_col {
        Some(name) => Some(table.named_column(name, "--legacy-col")?),
        None => table.find_column(LEGACY_NAMES),
    };
    let legacy = legacy_col.map(|c| legacy_values(table, c, &mut bad));
    let plan_zones = zone_columns(&plan);
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
        let found = plan_zones
            .iter()
            .position(|(name, _)| name.eq_ignore_ascii_case(zone));
        let matched = tc.zones == ZonesChoice::Hammer && (found.is_some() || zone == "a");
        if matched {
            zone_columns.push(ZoneColumn {
                zone: match found {
                    Some(k) => plan_zones[k].0.clone(),
                    None => "A".to_string(),
                },
                rings: found.map(|k| plan_zones[k].1.clone()),
                legacy: legacy_values(table, c, &mut bad),
            });
        } else {
            unmatched_zone_columns.push(h.clone());
        }
    }
    // Zones in plan order (A first).
    zone_columns.sort_by_key(|z| z.rings.as_ref().map(|r| r[0] + 1).unwrap_or(0));
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

    // New TC where a comparison is asked for (through the same pipeline as `correct`),
    // and the coverage of every station's disc by the DEMs together.
    let compare = legacy.is_some() || !zone_columns.is_empty();
    let (results, coverage) = compute::stations_then(
        &inputs,
        &tc,
        &plan,
        &run,
        if compare {
            Work::SkipProblems
        } else {
            Work::CoverageOnly
        },
        "stations",
        |engines, _| engines.rock.coverage_all(&inputs.station_points),
    )?;

    // Input checks.
    let dems = &inputs.dems.dems;
    let xy: Vec<(f64, f64)> = stations.iter().map(|s| (s.x, s.y)).collect();
    let pairs = near_pairs(&xy, dup_distance);
    let mut checks: Vec<Check> = (0..stations.len())
        .map(|i| {
            let s = &stations[i];
            let at: Vec<Point> = inputs.station_points.iter().map(|p| p[i]).collect();
            let serving = dems
                .iter()
                .zip(&at)
                .position(|(d, p)| d.bilinear(p.x, p.y).is_some());
            let on_grid = dems.iter().zip(&at).any(|(d, p)| d.contains(p.x, p.y));
            let dem_elev = serving.and_then(|k| dems[k].bilinear(at[k].x, at[k].y));
            let slope = serving.and_then(|k| dems[k].slope_deg(at[k].x, at[k].y));
            let edge = dems
                .iter()
                .zip(&at)
                .map(|(d, p)| d.distance_inside(p.x, p.y))
                .fold(f64::NEG_INFINITY, f64::max);
            let mut problems = Vec::new();
            if !on_grid {
                problems.push("outside_dem");
            } else if dem_elev.is_none() {
                problems.push("on_nodata");
            }
            let coverage = coverage[i];
            if dem_elev.is_some() && coverage < 1.0 {
                problems.push("partial_coverage");
            }
            if let Some(h) = dem_elev {
                if (s.elev - h).abs() > threshold {
                    problems.push("height_mismatch");
                }
            }
            Check {
                dem_elev,
                slope,
                edge,
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

    let tc_of = |r: &PointTc| from_units(to_units(to_mgal(r.tc_m_s2()), 4), 4);
    // A station enters the comparison when its new TC has the whole disc (or gaps are
    // allowed) and its legacy value is good.
    let comparable =
        |i: usize| results[i].is_some() && (checks[i].coverage >= 1.0 || tc.allow_gaps);

    // The report.
    let columns = StationColumns::of(&inputs, tc.carry_station_columns);
    // The legacy comparison follows the heights, where `correct` has tc_mgal, so that
    // the columns the two tables share come in one order.
    let mut headers: Vec<String> = LEADING_COLUMNS.iter().map(|s| s.to_string()).collect();
    if legacy.is_some() {
        headers.extend(
            ["legacy_tc_mgal", "tc_mgal", "new_minus_legacy_mgal"]
                .iter()
                .map(|s| s.to_string()),
        );
    }
    headers.extend(
        [
            "dem_slope_deg",
            "shift_for_mismatch_m",
            "distance_to_dem_edge_m",
            "coverage",
            "near_stations",
            "near_distance_m",
            "problems",
        ]
        .iter()
        .map(|s| s.to_string()),
    );
    if columns.converted {
        headers.extend(["x_dem".to_string(), "y_dem".to_string()]);
    }
    for z in &zone_columns {
        headers.push(format!("tc_zone_{}_mgal", z.zone));
        headers.push(format!("legacy_tc_{}_mgal", z.zone));
        headers.push(format!("diff_zone_{}_mgal", z.zone));
    }
    let carried = columns.carried_headers(&inputs, &headers);
    headers.extend(carried);
    let mut report = Table::new(&headers);
    report.check_unique_headers("rename the legacy zone column")?;
    report.points = Some(columns.points(&inputs, 1));
    let mut diffs: Vec<(usize, f64)> = Vec::new();
    let mut zone_diffs: Vec<Vec<f64>> = vec![Vec::new(); zone_columns.len()];
    for (i, (s, c)) in stations.iter().zip(&checks).enumerate() {
        let dh = c.dem_elev.map(|h| s.elev - h);
        let shift = match (dh, c.slope) {
            (Some(dh), Some(slope)) if slope >= FLAT_SLOPE_DEG => {
                Some(dh.abs() / slope.to_radians().tan())
            }
            _ => None,
        };
        let mut row = columns.leading(&inputs, i);
        row.push(Cell::num(s.elev, 3));
        row.push(Cell::opt(c.dem_elev, 3));
        row.push(Cell::opt(dh, 3));
        if let Some(l) = &legacy {
            let new = results[i].as_ref().map(tc_of);
            let old = l.values[i];
            let diff = match (new, old) {
                (Some(n), Some(o)) => Some(n - o),
                _ => None,
            };
            if let (Some(d), true) = (diff, comparable(i)) {
                diffs.push((i, d));
            }
            row.push(Cell::opt(old, 4));
            row.push(Cell::opt(new, 4));
            row.push(Cell::opt(diff, 4));
        }
        row.push(Cell::opt(c.slope, 2));
        row.push(Cell::opt(shift, 1));
        row.push(Cell::num(c.edge, 1));
        row.push(Cell::num(c.coverage, 4));
        let near_ids: Vec<&str> = c
            .near
            .iter()
            .map(|&(j, _)| stations[j].id.as_str())
            .collect();
        row.push(Cell::text(near_ids.join(";")));
        row.push(Cell::opt(
            c.near.iter().map(|&(_, d)| d).reduce(f64::min),
            3,
        ));
        row.push(Cell::text(c.problems.join(";")));
        row.extend(columns.converted(&inputs, i));
        for (k, z) in zone_columns.iter().enumerate() {
            let new = results[i].as_ref().map(|r| {
                let kernel = match &z.rings {
                    None => r.inner_m,
                    Some(rings) => rings.iter().map(|&j| r.rings_m[j]).sum(),
                };
                from_units(to_units(to_mgal(r.rock_m_s2(kernel)), 4), 4)
            });
            let old = z.legacy.values[i];
            let diff = match (new, old) {
                (Some(n), Some(o)) => Some(n - o),
                _ => None,
            };
            if let (Some(d), true) = (diff, comparable(i)) {
                zone_diffs[k].push(d);
            }
            row.push(Cell::opt(new, 4));
            row.push(Cell::opt(old, 4));
            row.push(Cell::opt(diff, 4));
        }
        row.extend(columns.carried_cells(&inputs, i));
        report.push(&s.id, row);
    }

    // Plots.
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
                    "new TC, {} to {} (mGal)",
                    tc.density_text(),
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

    report.write(&target)?;
    book.finish(
        Some(SettingsRecord::new(&tc, &plan, None)),
        &inputs,
        super::correct::threads(&run),
    )?;

    // The human summary.
    let mut out = String::new();
    let dem_names: Vec<&str> = dems.iter().map(|d| d.source.as_str()).collect();
    out.push_str(&format!(
        "ringsum audit: {} station(s) in {} against {} (outer radius {}); report written to {}\n",
        stations.len(),
        table.path.display(),
        dem_names.join(", "),
        format_length(radius),
        target.describe()
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
                        "  legacy TC ({}): {} station(s) compared at {}; new minus legacy mean {:+.4}, median {:+.4}, sd {:.4}, rms {:.4}, range {:+.4} to {:+.4} mGal\n",
                        l.name,
                        st.n,
                        tc.density_text(),
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
        TableTarget::Stdout => {
            if !run.quiet {
                eprint!("{out}");
            }
        }
        _ => print!("{out}"),
    }
    Ok(())
}
