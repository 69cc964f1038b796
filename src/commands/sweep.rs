//! `ringsum sweep`: the terrain correction as a function of the outer radius, the density
//! and the DEM (see [`crate::analysis::radius`] for how the radii are computed).
//!
//! # Density and DEM
//! For a constant density the TC is `G rho` times the station's kernel sum, so the TC at
//! another density is the same sum times another `G rho`: exact, with no second run (the
//! water's part, which has its own density, is unchanged). Each `--compare-dem` takes the
//! place of the finest DEM of the main run (the coarser DEMs stay), is swept with its own
//! zone plan cut at the same radii, and the table gives its TC and its difference from the
//! main run's at every radius.

use crate::analysis::checks::quantile;
use crate::analysis::radius::{
    at_radii, convergence_radius, default_radii, inner_zone_radius_m, label_of, parse_densities,
    parse_radii, snap_to_sector_edges,
};
use crate::cli::SweepArgs;
use crate::compute::{self, Work};
use crate::config::{usage, RunSettings, TcSettings};
use crate::engine::{Convention, Point};
use crate::inputs::{Inputs, Opened};
use crate::output::files::TableTarget;
use crate::output::plot::{
    check_plot_target, parse_plot_size, write_figure, PlotTarget, SweepCurve, SweepFigure,
};
use crate::output::record::SettingsRecord;
use crate::output::table::{Cell, Table};
use crate::results::PointTc;
use crate::text::number;
use crate::units::{format_length, to_mgal, G};
use anyhow::{bail, Context};

/// One run (a set of DEMs) swept over the radii.
#[derive(Debug, Clone)]
struct DemSweep {
    /// Short name for column names (the file name of the DEM that differs, no extension).
    label: String,
    /// The DEM this run differs by: the finest DEM's name, or the compared DEM given.
    source: String,
    /// Per station, the TC to each radius, mGal (rock at the run's density plus water).
    tc_mgal: Vec<Vec<f64>>,
    /// Per station, the rock's kernel sums to each radius, m (for other densities).
    rock_m: Vec<Vec<f64>>,
    /// Per station, the water's part to each radius, mGal.
    water_mgal: Vec<Vec<f64>>,
    /// Per station, the fraction of each radius's disc with DEM data.
    coverage: Vec<Vec<f64>>,
    /// Radius of this run's inner zone, m: below it the sums hold the whole inner zone,
    /// so they are not reported.
    inner_radius_m: f64,
}

impl DemSweep {
    /// Whether the value at radius `r` is reported (outside this run's inner zone).
    fn reports(&self, r: f64) -> bool {
        r >= self.inner_radius_m * (1.0 - 1e-9)
    }

    /// The TC at the outer radius of station `i`, mGal.
    fn last(&self, i: usize) -> f64 {
        *self.tc_mgal[i].last().expect("at least one radius")
    }
}

/// Sweeps every station of `inputs` over `radii` (the last one the outer radius).
fn sweep_run(
    inputs: &Inputs,
    tc: &TcSettings,
    radii: &[f64],
    run: &RunSettings,
    label: &str,
) -> anyhow::Result<DemSweep> {
    // A plan file's sector rings are the same for every DEM, so the radii, moved to
    // their edges for the main run, need no moving here.
    let plan = tc.plan(inputs.cell_m())?;
    let split = plan.split_at(radii);
    let (results, coverage) = compute::stations_then(
        inputs,
        tc,
        &split,
        run,
        Work::RefuseProblems,
        &format!("stations on {label}"),
        |engines, _| {
            let points = &inputs.station_points;
            (0..inputs.station_count())
                .map(|i| {
                    let ps: Vec<Point> = points.iter().map(|p| p[i]).collect();
                    radii[..radii.len() - 1]
                        .iter()
                        .map(|&r| engines.rock.coverage_within(&ps, r))
                        .collect::<Vec<f64>>()
                })
                .collect::<Vec<_>>()
        },
    )?;
    let results: Vec<PointTc> = results
        .into_iter()
        .map(|r| r.expect("every station was checked"))
        .collect();
    let mut out = DemSweep {
        label: label.to_string(),
        source: inputs.dems.finest().source.clone(),
        tc_mgal: Vec::new(),
        rock_m: Vec::new(),
        water_mgal: Vec::new(),
        coverage: Vec::new(),
        inner_radius_m: inner_zone_radius_m(&plan, inputs.cell_m()),
    };
    for (r, mut cov) in results.iter().zip(coverage) {
        let tc_ends: Vec<f64> = r.cumulative_m_s2().into_iter().map(to_mgal).collect();
        out.tc_mgal.push(at_radii(
            &split,
            to_mgal(
                r.rock_m_s2(r.inner_m) + r.water.as_ref().map_or(0.0, |w| w.effect_m_s2(w.inner_m)),
            ),
            &tc_ends,
            radii,
        ));
        let mut rock_ends = Vec::with_capacity(r.rings_m.len());
        let mut sum = r.inner_m;
        for k in &r.rings_m {
            sum += k;
            rock_ends.push(sum);
        }
        out.rock_m
            .push(at_radii(&split, r.inner_m, &rock_ends, radii));
        let water: Vec<f64> = out
            .tc_mgal
            .last()
            .expect("just pushed")
            .iter()
            .zip(out.rock_m.last().expect("just pushed"))
            .map(|(t, k)| t - to_mgal(G * r.tc_density_kg_m3 * k))
            .collect();
        out.water_mgal.push(water);
        cov.push(r.coverage);
        out.coverage.push(cov);
    }
    Ok(out)
}

/// `ringsum sweep`.
pub fn sweep(args: &SweepArgs) -> anyhow::Result<()> {
    let tc = TcSettings::from_args(&args.tc)?;
    let run = RunSettings::from_args(&args.run)?;
    tc.require_stations("sweep")?;
    let outer = tc.engine.outer_radius_m;
    let densities = match &args.densities {
        Some(text) => parse_densities(text)?,
        None => Vec::new(),
    };
    if !densities.is_empty() && !matches!(tc.density, crate::config::DensityModel::Constant(_)) {
        return usage("--densities gives the TC at other constant densities; leave it out with --density-col or --density-raster, whose densities vary");
    }
    let target = TableTarget::check(&args.out, "--out")?;
    let summary_target = match &args.station_summary {
        Some(p) => {
            let t = TableTarget::check(p, "--station-summary")?;
            if t == TableTarget::Stdout && target == TableTarget::Stdout {
                return usage("--out and --station-summary both go to standard output; give one of them a .csv path");
            }
            Some(t)
        }
        None => None,
    };
    let plots: Vec<PlotTarget> = args
        .plot
        .iter()
        .map(|p| check_plot_target(p, "--plot", false))
        .collect::<anyhow::Result<_>>()?;
    let plot_size = parse_plot_size(&args.plot_size.plot_size)?;
    if args.max_lines == 0 && !plots.is_empty() {
        bail!("--max-lines 0: give at least 1 (stations beyond it are drawn as a spread)");
    }
    for path in &args.compare_dem {
        if !path.exists() {
            bail!(
                "--compare-dem {}: file not found; check the path",
                path.display()
            );
        }
    }
    let mut outputs: Vec<(&std::path::Path, &str)> = vec![(&args.out, "--out")];
    if let Some(p) = &args.station_summary {
        outputs.push((p, "--station-summary"));
    }
    outputs.extend(args.plot.iter().map(|p| (p.as_path(), "--plot")));
    let compare: Vec<(&str, &std::path::Path)> = args
        .compare_dem
        .iter()
        .map(|p| ("compare_dem", p.as_path()))
        .collect();
    let mut book =
        super::RunBook::start_with("sweep", &tc, &run, target.path(), &outputs, &compare)?;

    let opened = Opened::open(&tc)?;
    let finest_files = opened.dems.files()[0].clone();
    let coarser: Vec<std::path::PathBuf> =
        opened.dems.files()[1..].iter().flatten().cloned().collect();
    let main_crs = opened.dems.primary_crs().to_string();
    let main_label = label_of(&finest_files[0]);
    let footprint = opened.station_xy();
    let inputs = opened.read(&tc, &footprint)?;
    super::print_notes(&inputs, run.quiet);

    let plan = tc.plan(inputs.cell_m())?;
    super::warn_sector_rings(&mut book, &inputs, &tc, &plan, &run)?;
    let inner_m = inner_zone_radius_m(&plan, inputs.cell_m());
    let asked = match &args.radii {
        Some(text) => parse_radii(text, inner_m, outer)?,
        None => default_radii(inner_m, outer),
    };
    let (radii, moved) = snap_to_sector_edges(&plan, &asked);

    // The comparison runs, read (and checked) before any long computation.
    let mut labels = vec![main_label.clone()];
    let mut compare_inputs = Vec::new();
    for path in &args.compare_dem {
        let mut other = tc.clone();
        // The compared DEM in place of the finest; a coarser DEM that is the same file
        // is not given twice.
        let same = |a: &std::path::Path, b: &std::path::Path| {
            a == b
                || matches!((std::fs::canonicalize(a), std::fs::canonicalize(b)), (Ok(x), Ok(y)) if x == y)
        };
        other.dems = std::iter::once(path.clone())
            .chain(coarser.iter().filter(|c| !same(c, path)).cloned())
            .collect();
        if let Some(s) = other.stations.as_mut() {
            // The stations' coordinates are in the main finest DEM's CRS unless given.
            s.crs.get_or_insert_with(|| main_crs.clone());
        }
        let opened = Opened::open(&other)?;
        let footprint = opened.station_xy();
        let inputs = opened.read(&other, &footprint)?;
        let mut label = label_of(path);
        let base = label.clone();
        let mut k = 2;
        while labels.contains(&label) {
            label = format!("{base}_{k}");
            k += 1;
        }
        labels.push(label.clone());
        compare_inputs.push((label, other, inputs));
    }

    let main = sweep_run(&inputs, &tc, &radii, &run, &main_label)?;
    let mut others = Vec::new();
    for ((label, other_tc, other_inputs), path) in compare_inputs.iter().zip(&args.compare_dem) {
        let mut sweep = sweep_run(other_inputs, other_tc, &radii, &run, label)?;
        sweep.source = path.display().to_string();
        others.push(sweep);
    }

    let rho = tc.density_kg_m3;
    let stations = &inputs.table().stations;
    let at_density = |sweep: &DemSweep, i: usize, j: usize, d: f64| {
        to_mgal(G * d * sweep.rock_m[i][j]) + sweep.water_mgal[i][j]
    };
    // The density and DEM columns, after the fixed ones of each table.
    let extra_columns = |fixed: &[&str]| -> Vec<String> {
        let mut headers: Vec<String> = fixed.iter().map(|s| s.to_string()).collect();
        headers.extend(
            densities
                .iter()
                .map(|&d| format!("tc_rho{}_mgal", number(d))),
        );
        for o in &others {
            headers.push(format!("tc_dem_{}_mgal", o.label));
            headers.push(format!("diff_dem_{}_mgal", o.label));
        }
        headers
    };
    let mut table = Table::new(&extra_columns(&[
        "station",
        "radius_m",
        "tc_mgal",
        "remaining_mgal",
        "coverage",
    ]));
    table.check_unique_headers("give --densities each value once")?;
    let stations_columns = crate::output::station_table::StationColumns::of(&inputs, false);
    table.points = Some(stations_columns.points(&inputs, radii.len()));
    let round4 = |v: f64| (v * 1e4).round() / 1e4;
    for (i, s) in stations.iter().enumerate() {
        let tc_i = &main.tc_mgal[i];
        let last = main.last(i);
        for (j, &r) in radii.iter().enumerate() {
            let mut row = vec![
                Cell::text(&s.id),
                Cell::num(r, 1),
                Cell::num(tc_i[j], 4),
                Cell::num(last - tc_i[j], 4),
                Cell::num(main.coverage[i][j], 4),
            ];
            for &d in &densities {
                row.push(Cell::num(at_density(&main, i, j, d), 4));
            }
            for o in &others {
                if o.reports(r) {
                    let v = o.tc_mgal[i][j];
                    row.push(Cell::num(v, 4));
                    row.push(Cell::num(round4(v) - round4(tc_i[j]), 4));
                } else {
                    row.extend([Cell::Empty, Cell::Empty]);
                }
            }
            table.push(format!("station {} at {}", s.id, format_length(r)), row);
        }
    }

    // Per-station convergence and the station summary.
    let conv: Vec<(f64, f64)> = (0..stations.len())
        .map(|i| {
            (
                convergence_radius(&radii, &main.tc_mgal[i], 0.05),
                convergence_radius(&radii, &main.tc_mgal[i], 0.01),
            )
        })
        .collect();
    let summary_table = {
        let mut t = Table::new(&extra_columns(&[
            "station", "tc_mgal", "r95_m", "r99_m", "coverage",
        ]));
        t.points = Some(stations_columns.points(&inputs, 1));
        let last_j = radii.len() - 1;
        for (i, s) in stations.iter().enumerate() {
            let last = main.last(i);
            let mut row = vec![
                Cell::text(&s.id),
                Cell::num(last, 4),
                Cell::num(conv[i].0, 1),
                Cell::num(conv[i].1, 1),
                Cell::num(main.coverage[i][last_j], 4),
            ];
            for &d in &densities {
                row.push(Cell::num(at_density(&main, i, last_j, d), 4));
            }
            for o in &others {
                let v = o.last(i);
                row.push(Cell::num(v, 4));
                row.push(Cell::num(round4(v) - round4(last), 4));
            }
            t.push(format!("station {}", s.id), row);
        }
        t
    };

    // Plot.
    let curves = |sweep: &DemSweep| -> Vec<SweepCurve> {
        let shown: Vec<usize> = (0..radii.len())
            .filter(|&j| sweep.reports(radii[j]))
            .collect();
        let r: Vec<f64> = shown.iter().map(|&j| radii[j]).collect();
        (0..stations.len())
            .map(|i| {
                let tc: Vec<f64> = shown.iter().map(|&j| sweep.tc_mgal[i][j]).collect();
                SweepCurve {
                    label: stations[i].id.clone(),
                    radii_m: r.clone(),
                    r95_m: convergence_radius(&r, &tc, 0.05),
                    r99_m: convergence_radius(&r, &tc, 0.01),
                    tc_mgal: tc,
                }
            })
            .collect()
    };
    let convention = match tc.engine.convention {
        Convention::Spherical => "spherical",
        Convention::Planar => "planar",
    };
    let figure = SweepFigure {
        title: format!(
            "Terrain correction against outer radius ({}, {}, {convention})",
            main_label,
            tc.density_text()
        ),
        main: curves(&main),
        main_label: main_label.clone(),
        compare: others
            .iter()
            .map(|o| (o.label.clone(), curves(o)))
            .collect(),
        max_lines: args.max_lines.max(1),
    };

    table.write(&target)?;
    if let Some(t) = &summary_target {
        summary_table.write(t)?;
    }
    for p in &plots {
        write_figure(p, plot_size, &figure)
            .with_context(|| format!("{}: the plot could not be drawn", p.path.display()))?;
    }
    book.finish(
        Some(SettingsRecord::new(&tc, &plan, None)),
        &inputs,
        super::correct::threads(&run),
    )?;

    let text = summary_text(
        &main,
        &others,
        stations.iter().map(|s| s.id.as_str()).collect(),
        &radii,
        &moved,
        &densities,
        rho,
        &conv,
        &tc,
        &target,
    );
    // Standard output holds a table when one goes there: the summary then goes to
    // standard error.
    if target == TableTarget::Stdout || summary_target == Some(TableTarget::Stdout) {
        if !run.quiet {
            eprint!("{text}");
        }
    } else {
        print!("{text}");
    }
    Ok(())
}

/// The human summary: how far, what density, which DEM.
#[allow(clippy::too_many_arguments)]
fn summary_text(
    main: &DemSweep,
    others: &[DemSweep],
    ids: Vec<&str>,
    radii: &[f64],
    moved: &[(f64, f64)],
    densities: &[f64],
    rho: f64,
    conv: &[(f64, f64)],
    tc: &TcSettings,
    target: &TableTarget,
) -> String {
    let n = ids.len();
    let mut s = String::new();
    s.push_str(&format!(
        "ringsum sweep: {n} station(s) on {}, {} radii from {} to {}; table written to {}\n",
        main.source,
        radii.len(),
        format_length(radii[0]),
        format_length(*radii.last().unwrap_or(&0.0)),
        target.describe()
    ));
    for (a, b) in moved {
        s.push_str(&format!(
            "  radius {} lies inside a sector ring and was moved to its edge at {}\n",
            format_length(*a),
            format_length(*b)
        ));
    }
    let sorted = |mut v: Vec<f64>| {
        v.sort_by(f64::total_cmp);
        v
    };
    let finals: Vec<f64> = (0..n).map(|i| main.last(i)).collect();
    let fs = sorted(finals.clone());
    s.push_str(&format!(
        "  TC at the outer radius ({}): median {:.4} mGal, range {:.4} to {:.4}\n",
        tc.density_text(),
        quantile(&fs, 0.5),
        fs[0],
        fs[fs.len() - 1]
    ));
    let worst = |f: &dyn Fn(&(f64, f64)) -> f64| {
        let (mut wi, mut wr) = (0, f64::NEG_INFINITY);
        for (i, c) in conv.iter().enumerate() {
            if f(c) > wr {
                wr = f(c);
                wi = i;
            }
        }
        (ids[wi], wr)
    };
    let r95 = sorted(conv.iter().map(|c| c.0).collect());
    let r99 = sorted(conv.iter().map(|c| c.1).collect());
    let (w95, wr95) = worst(&|c| c.0);
    let (w99, wr99) = worst(&|c| c.1);
    s.push_str(&format!(
        "  how far: 95% of the final TC is reached by {} at the median station (slowest: {w95}, {}), 99% by {} (slowest: {w99}, {})\n",
        format_length(quantile(&r95, 0.5)),
        format_length(wr95),
        format_length(quantile(&r99, 0.5)),
        format_length(wr99),
    ));
    if tc.engine.convention == Convention::Spherical {
        s.push_str("    (spherical convention: the radius from which on the TC stays within 5% or 1% of its final value)\n");
    }
    s.push_str("    intermediate radii are exact to the block sizes there (elements count by their centroid); the outer radius is exact\n");
    if !densities.is_empty() {
        let parts: Vec<String> = densities
            .iter()
            .map(|&d| format!("{}: {:.4}", number(d), quantile(&fs, 0.5) * d / rho))
            .collect();
        s.push_str(&format!(
            "  what density: median TC at {} (kg/m3: mGal); the TC is proportional to the density, {:.4} mGal per 100 kg/m3 at the median station\n",
            parts.join(", "),
            quantile(&fs, 0.5) * 100.0 / rho
        ));
    }
    for o in others {
        let diffs: Vec<f64> = (0..n).map(|i| o.last(i) - finals[i]).collect();
        let (mut wi, mut wd) = (0, 0.0f64);
        for (i, d) in diffs.iter().enumerate() {
            if d.abs() > wd.abs() {
                wd = *d;
                wi = i;
            }
        }
        let ds = sorted(diffs.clone());
        s.push_str(&format!(
            "  which DEM: {} in place of {}, minus the main run, at the outer radius: median {:+.4} mGal, largest {:+.4} at {}; column diff_dem_{}_mgal has every radius\n",
            o.source,
            main.source,
            quantile(&ds, 0.5),
            wd,
            ids[wi],
            o.label
        ));
    }
    s
}
