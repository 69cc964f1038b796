//! `ringsum sweep`: the terrain correction as a function of the outer radius, the density
//! and the DEM.
//!
//! # How the radius sweep is computed
//! The zone plan is cut at the sweep radii ([`ZonePlan::split_at`]) and every station is
//! computed once: the engine walks exactly the elements of the uncut plan (the cut only
//! decides which ring an element's part is added to, by the ring holding its centroid),
//! so the running sum of the ring parts at radius `r` is the TC of everything whose
//! centroid lies within `r`, and the sum at the outer radius is the `correct` value.
//! An intermediate value is therefore exact to the size of the elements there: full
//! cells in the near zone, blocks up to `ratio` times their distance further out (a block
//! straddling `r` counts wholly on the side of its centroid). Sector rings are
//! integrated a compartment at a time and are never cut: a radius inside one moves to the
//! ring's nearest edge.
//!
//! # Density and DEM
//! For a constant density the TC is `G rho` times the station's kernel sum, so the TC at
//! another density is the same sum times another `G rho`: exact, with no second run.
//! Each `--compare-dem` is swept with its own zone plan (cut at the same radii), and the
//! table gives its TC and its difference from the main DEM's at every radius.
//!
//! # Convergence radii
//! `r95` (`r99`) is the first sweep radius from which on the TC stays within 5% (1%) of
//! its final value. Where the TC only grows (the planar convention) this is where 95%
//! (99%) of it is reached; in the spherical convention, where the far zone can lower it,
//! it is where it has settled.

use crate::app::{
    check_coverage, check_density, load_inputs, preflight_positions, with_threads, Inputs, Settings,
};
use crate::cli::{InputArgs, RunArgs};
use crate::engine::{coverage_with_pyramid, Engine};
use crate::output::{check_target, fixed, write_table, Table, Target};
use crate::plot::{
    check_plot_target, parse_plot_size, quantile, write_figure, PlotTarget, SweepCurve, SweepFigure,
};
use crate::sens_cli::SweepArgs;
use crate::units::{format_length, parse_length_m, to_mgal, G};
use crate::zones::{InnerZone, RingMethod, ZonePlan};
use anyhow::{bail, Context};
use std::path::Path;

/// Mantissas of the E12 series of preferred numbers (IEC 60063), times ten: twelve
/// steps per decade, each about 21% larger than the one before.
pub const E12_TENTHS: [u32; 12] = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82];

/// Relative tolerance for comparing radii.
const SAME: f64 = 1e-9;

/// Radius of the inner zone, m: the half-width of its cell square, `(m + 1/2)` cells, or
/// the disc's radius.
pub fn inner_zone_radius_m(plan: &ZonePlan, cell_m: f64) -> f64 {
    match plan.inner {
        InnerZone::Cells { half_width } => (half_width as f64 + 0.5) * cell_m,
        InnerZone::Disc { radius_m } => radius_m,
    }
}

/// The default sweep: `first_m`, the E12 values between it and `outer_m`, and `outer_m`.
pub fn default_radii(first_m: f64, outer_m: f64) -> Vec<f64> {
    let first = first_m.min(outer_m);
    let mut radii = vec![first];
    let mut k = first.max(1e-3).log10().floor() as i32;
    loop {
        let decade = 10f64.powi(k - 1);
        if 10.0 * decade > outer_m {
            break;
        }
        for m in E12_TENTHS {
            let r = m as f64 * decade;
            if r > first * (1.0 + SAME) && r < outer_m * (1.0 - SAME) {
                radii.push(r);
            }
        }
        k += 1;
    }
    if outer_m > first * (1.0 + SAME) {
        radii.push(outer_m);
    }
    radii
}

/// Parses `--radii`: increasing lengths, none inside the inner zone or beyond the outer
/// radius; the outer radius is added when the list stops short of it.
pub fn parse_radii(text: &str, inner_m: f64, outer_m: f64) -> anyhow::Result<Vec<f64>> {
    let mut radii: Vec<f64> = Vec::new();
    for item in text.split(',') {
        let item = item.trim();
        if item.is_empty() {
            bail!("--radii {text}: an item is empty; give lengths separated by commas, e.g. 1km,2km,5km");
        }
        let r = parse_length_m(item).map_err(|e| anyhow::anyhow!("--radii {text}: {e}"))?;
        if r <= 0.0 {
            bail!(
                "--radii {text}: {item} is not a positive radius; give lengths such as 500m or 2km"
            );
        }
        if let Some(&prev) = radii.last() {
            if r <= prev * (1.0 + SAME) {
                bail!(
                    "--radii {text}: the radii must increase, but {} is followed by {}; list them from the station outward",
                    format_length(prev),
                    format_length(r)
                );
            }
        }
        if r > outer_m * (1.0 + SAME) {
            bail!(
                "--radii {text}: {} is beyond the outer radius {}; drop it or give a larger --outer-radius",
                format_length(r),
                format_length(outer_m)
            );
        }
        if r < inner_m * (1.0 - SAME) {
            bail!(
                "--radii {text}: {} lies inside the inner zone ({} from the station), which is integrated whole; give radii from {} on",
                format_length(r),
                format_length(inner_m),
                format_length(inner_m)
            );
        }
        radii.push(r);
    }
    match radii.last_mut() {
        Some(last) if *last >= outer_m * (1.0 - SAME) => *last = outer_m,
        _ => radii.push(outer_m),
    }
    Ok(radii)
}

/// Parses `--densities`: positive densities in kg/m3 (checked as `--density` is).
pub fn parse_densities(text: &str) -> anyhow::Result<Vec<f64>> {
    let mut out = Vec::new();
    for item in text.split(',') {
        let item = item.trim();
        let value: f64 = item.parse().map_err(|_| {
            anyhow::anyhow!(
                "--densities {text}: '{item}' is not a number; give densities in kg/m3 separated by commas, e.g. 2000,2300,2670"
            )
        })?;
        out.push(check_density(value, "--densities")?);
    }
    Ok(out)
}

/// Moves radii that fall inside a sector ring of `plan` to that ring's nearest edge and
/// drops the repeats; returns the radii and the (asked, used) pairs that moved.
pub fn snap_to_sector_edges(plan: &ZonePlan, radii: &[f64]) -> (Vec<f64>, Vec<(f64, f64)>) {
    let mut out: Vec<f64> = Vec::new();
    let mut moved = Vec::new();
    for &r in radii {
        let mut used = r;
        for ring in &plan.rings {
            if matches!(ring.method, RingMethod::Sectors { .. })
                && r > ring.inner_m * (1.0 + SAME)
                && r < ring.outer_m * (1.0 - SAME)
            {
                used = if r - ring.inner_m <= ring.outer_m - r {
                    ring.inner_m
                } else {
                    ring.outer_m
                };
                moved.push((r, used));
            }
        }
        let new = match out.last() {
            Some(&last) => used > last * (1.0 + SAME),
            None => true,
        };
        if new {
            out.push(used);
        }
    }
    (out, moved)
}

/// Kernel sums (m) from the inner zone out to each radius, from a result computed with
/// `split` (a plan cut at `radii`).
pub fn cumulative_m(split: &ZonePlan, inner_m: f64, rings_m: &[f64], radii: &[f64]) -> Vec<f64> {
    let mut out = Vec::with_capacity(radii.len());
    let mut sum = inner_m;
    let mut k = 0;
    for &r in radii {
        while k < split.rings.len() && split.rings[k].outer_m <= r * (1.0 + SAME) {
            sum += rings_m[k];
            k += 1;
        }
        out.push(sum);
    }
    // The last radius is the outer radius: every ring is in.
    if let Some(last) = out.last_mut() {
        while k < rings_m.len() {
            *last += rings_m[k];
            k += 1;
        }
    }
    out
}

/// The first radius from which on `values` stays within `fraction` of the last value.
pub fn convergence_radius(radii: &[f64], values: &[f64], fraction: f64) -> f64 {
    let last = values[values.len() - 1];
    let tol = fraction * last.abs();
    let mut j = values.len() - 1;
    while j > 0 && (values[j - 1] - last).abs() <= tol {
        j -= 1;
    }
    radii[j]
}

/// One DEM swept over the radii.
#[derive(Debug, Clone)]
pub struct DemSweep {
    /// Short name for column names (the file name without extension).
    pub label: String,
    /// The DEM's path as given.
    pub source: String,
    /// Per station, kernel sums to each radius, m.
    pub cumulative_m: Vec<Vec<f64>>,
    /// Per station, the fraction of each radius's disc with DEM data.
    pub coverage: Vec<Vec<f64>>,
    /// Radius of this DEM's inner zone, m: below it the sums hold the whole inner zone,
    /// so they are not reported.
    pub inner_radius_m: f64,
}

impl DemSweep {
    /// Whether the value at radius `r` is reported (outside this DEM's inner zone).
    pub fn reports(&self, r: f64) -> bool {
        r >= self.inner_radius_m * (1.0 - SAME)
    }
}

/// Sweeps every station of `inputs` over `radii` (the last one the outer radius).
pub fn sweep_dem(
    inputs: &Inputs,
    settings: &Settings,
    radii: &[f64],
    run: &RunArgs,
    label: &str,
) -> anyhow::Result<DemSweep> {
    let dem = &inputs.dem;
    let plan = settings.plan(dem.cell_size_m())?;
    let (snapped, moved) = snap_to_sector_edges(&plan, radii);
    if !moved.is_empty() || snapped.len() != radii.len() {
        bail!(
            "the zone plan of {} has sector rings where the main DEM's has none; sweep the DEMs one at a time",
            dem.source
        );
    }
    let split = plan.split_at(radii);
    let engine = Engine::new(dem, settings.engine, split.clone());
    check_coverage(inputs, settings, &engine)?;
    let points = inputs.points();
    let bar = crate::progress::station_bar(
        points.len() as u64,
        run.quiet,
        &format!("stations on {label}"),
    );
    let results = with_threads(run.threads, || engine.compute_all(&points, &|| bar.inc(1)))?;
    bar.finish_and_clear();
    let mut cumulative = Vec::with_capacity(results.len());
    let mut coverage = Vec::with_capacity(results.len());
    for (p, r) in points.iter().zip(&results) {
        cumulative.push(cumulative_m(&split, r.inner_m, &r.rings_m, radii));
        let mut c: Vec<f64> = radii[..radii.len() - 1]
            .iter()
            .map(|&radius| coverage_with_pyramid(dem, &engine.pyramid, p.x, p.y, radius))
            .collect();
        c.push(r.coverage);
        coverage.push(c);
    }
    Ok(DemSweep {
        label: label.to_string(),
        source: dem.source.clone(),
        cumulative_m: cumulative,
        coverage,
        inner_radius_m: inner_zone_radius_m(&plan, dem.cell_size_m()),
    })
}

/// A column-name-safe label from a file name (letters, digits and `_`).
pub fn label_of(path: &Path) -> String {
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    let label: String = stem
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect();
    if label.is_empty() {
        "dem".into()
    } else {
        label
    }
}

/// A density for a column name: `2670`, `2300.5`.
pub fn density_label(d: f64) -> String {
    let s = format!("{d:.3}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// mGal with four decimals (rounded as `correct` rounds).
fn mgal4(v: f64, what: &dyn Fn() -> String) -> anyhow::Result<String> {
    fixed((v * 1e4).round() / 1e4, 4, &what())
}

/// Kernel sum (m) to mGal at density `rho`.
fn kernel_to_mgal(k: f64, rho: f64) -> f64 {
    to_mgal(G * rho * k)
}

/// `ringsum sweep`.
pub fn sweep(args: &SweepArgs) -> anyhow::Result<()> {
    let settings = Settings::from_args(&args.physics)?;
    let outer = settings.engine.outer_radius_m;
    let densities = match &args.densities {
        Some(text) => parse_densities(text)?,
        None => Vec::new(),
    };
    let target = check_target(&args.out)?;
    let summary_target = match &args.station_summary {
        Some(p) => {
            let t = check_target(p)?;
            if t == Target::Stdout && target == Target::Stdout {
                bail!("--out and --station-summary both go to standard output; give one of them a .csv path");
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
    let plot_size = parse_plot_size(&args.plot_size)?;
    if args.max_lines == 0 && !plots.is_empty() {
        bail!("--max-lines 0: give at least 1 (stations beyond it are drawn as a spread)");
    }

    let inputs = load_inputs(&args.input)?;
    let main_label = label_of(&args.input.dem[0]);
    let mut compare_inputs = Vec::new();
    let mut labels = vec![main_label.clone()];
    for path in &args.compare_dem {
        let mut input: InputArgs = args.input.clone();
        input.dem = vec![path.clone()];
        let mut other = load_inputs(&input)?;
        if input.stations_crs.is_none() && other.dem.crs_wkt != inputs.dem.crs_wkt {
            // The stations' coordinates are in the main DEM's CRS: carry them over.
            input.stations_crs = Some(inputs.dem.crs_wkt.clone());
            other = load_inputs(&input)?;
        }
        let mut label = label_of(path);
        let base = label.clone();
        let mut k = 2;
        while labels.contains(&label) {
            label = format!("{base}_{k}");
            k += 1;
        }
        labels.push(label.clone());
        compare_inputs.push((label, other));
    }

    let plan = settings.plan(inputs.dem.cell_size_m())?;
    let inner_m = inner_zone_radius_m(&plan, inputs.dem.cell_size_m());
    let asked = match &args.radii {
        Some(text) => parse_radii(text, inner_m, outer)?,
        None => default_radii(inner_m, outer),
    };
    let (radii, moved) = snap_to_sector_edges(&plan, &asked);
    preflight_positions(&inputs)?;
    for (_, other) in &compare_inputs {
        preflight_positions(other)?;
    }

    let main = sweep_dem(&inputs, &settings, &radii, &args.run, &main_label)?;
    let mut others = Vec::new();
    for (label, other) in &compare_inputs {
        others.push(sweep_dem(other, &settings, &radii, &args.run, label)?);
    }

    let rho = settings.density_kg_m3;
    let stations = &inputs.stations.stations;
    let mut headers: Vec<String> = [
        "station",
        "radius_m",
        "tc_mgal",
        "remaining_mgal",
        "coverage",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    for &d in &densities {
        headers.push(format!("tc_rho{}_mgal", density_label(d)));
    }
    for o in &others {
        headers.push(format!("tc_dem_{}_mgal", o.label));
        headers.push(format!("diff_dem_{}_mgal", o.label));
    }
    let mut table = Table {
        headers,
        rows: Vec::new(),
    };
    for (i, s) in stations.iter().enumerate() {
        let k = &main.cumulative_m[i];
        let last = k[k.len() - 1];
        for (j, &r) in radii.iter().enumerate() {
            let what = |col: &str| {
                let col = col.to_string();
                let id = s.id.clone();
                move || format!("{col} of station {id} at {}", format_length(r))
            };
            let mut row = vec![
                s.id.clone(),
                fixed(r, 1, "radius")?,
                mgal4(kernel_to_mgal(k[j], rho), &what("tc_mgal"))?,
                mgal4(kernel_to_mgal(last - k[j], rho), &what("remaining_mgal"))?,
                fixed(main.coverage[i][j], 4, "coverage")?,
            ];
            for &d in &densities {
                row.push(mgal4(kernel_to_mgal(k[j], d), &what("tc_rho"))?);
            }
            for o in &others {
                if o.reports(r) {
                    let v = kernel_to_mgal(o.cumulative_m[i][j], rho);
                    row.push(mgal4(v, &what("tc_dem"))?);
                    row.push(mgal4(v - kernel_to_mgal(k[j], rho), &what("diff_dem"))?);
                } else {
                    row.extend([String::new(), String::new()]);
                }
            }
            table.rows.push(row);
        }
    }

    // Per-station convergence and the station summary.
    let tc_of = |sweep: &DemSweep, i: usize| -> Vec<f64> {
        sweep.cumulative_m[i]
            .iter()
            .map(|&k| kernel_to_mgal(k, rho))
            .collect()
    };
    let conv: Vec<(f64, f64)> = (0..stations.len())
        .map(|i| {
            let tc = tc_of(&main, i);
            (
                convergence_radius(&radii, &tc, 0.05),
                convergence_radius(&radii, &tc, 0.01),
            )
        })
        .collect();
    let summary_table = {
        let mut headers: Vec<String> = ["station", "tc_mgal", "r95_m", "r99_m", "coverage"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        for &d in &densities {
            headers.push(format!("tc_rho{}_mgal", density_label(d)));
        }
        for o in &others {
            headers.push(format!("tc_dem_{}_mgal", o.label));
            headers.push(format!("diff_dem_{}_mgal", o.label));
        }
        let mut t = Table {
            headers,
            rows: Vec::new(),
        };
        for (i, s) in stations.iter().enumerate() {
            let last = *main.cumulative_m[i].last().expect("at least one radius");
            let what = |col: &'static str| {
                let id = s.id.clone();
                move || format!("{col} of station {id}")
            };
            let mut row = vec![
                s.id.clone(),
                mgal4(kernel_to_mgal(last, rho), &what("tc_mgal"))?,
                fixed(conv[i].0, 1, "r95_m")?,
                fixed(conv[i].1, 1, "r99_m")?,
                fixed(*main.coverage[i].last().unwrap_or(&0.0), 4, "coverage")?,
            ];
            for &d in &densities {
                row.push(mgal4(kernel_to_mgal(last, d), &what("tc_rho"))?);
            }
            for o in &others {
                let v = kernel_to_mgal(*o.cumulative_m[i].last().unwrap_or(&0.0), rho);
                row.push(mgal4(v, &what("tc_dem"))?);
                row.push(mgal4(v - kernel_to_mgal(last, rho), &what("diff_dem"))?);
            }
            t.rows.push(row);
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
                let all = tc_of(sweep, i);
                let tc: Vec<f64> = shown.iter().map(|&j| all[j]).collect();
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
    let convention = match settings.engine.convention {
        crate::engine::Convention::Spherical => "spherical",
        crate::engine::Convention::Planar => "planar",
    };
    let figure = SweepFigure {
        title: format!(
            "Terrain correction against outer radius ({}, {} kg/m3, {convention})",
            main_label,
            density_label(rho)
        ),
        main: curves(&main),
        main_label: main_label.clone(),
        compare: others
            .iter()
            .map(|o| (o.label.clone(), curves(o)))
            .collect(),
        max_lines: args.max_lines.max(1),
    };

    write_table(&target, &table)?;
    if let Some(t) = &summary_target {
        write_table(t, &summary_table)?;
    }
    for p in &plots {
        write_figure(p, plot_size, &figure)
            .with_context(|| format!("{}: the plot could not be drawn", p.path.display()))?;
    }

    let text = summary_text(
        &main,
        &others,
        stations.iter().map(|s| s.id.as_str()).collect(),
        &radii,
        &moved,
        &densities,
        rho,
        &conv,
        &settings,
        &target,
    );
    match target {
        Target::Stdout => {
            if !args.run.quiet {
                eprint!("{text}");
            }
        }
        Target::Csv(_) => print!("{text}"),
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
    settings: &Settings,
    target: &Target,
) -> String {
    let n = ids.len();
    let mut s = String::new();
    let where_to = match target {
        Target::Stdout => "standard output".to_string(),
        Target::Csv(p) => p.display().to_string(),
    };
    s.push_str(&format!(
        "ringsum sweep: {n} station(s) on {}, {} radii from {} to {}; table written to {where_to}\n",
        main.source,
        radii.len(),
        format_length(radii[0]),
        format_length(*radii.last().unwrap_or(&0.0)),
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
    let finals: Vec<f64> = main
        .cumulative_m
        .iter()
        .map(|k| kernel_to_mgal(*k.last().unwrap_or(&0.0), rho))
        .collect();
    let fs = sorted(finals.clone());
    s.push_str(&format!(
        "  TC at the outer radius ({} kg/m3): median {:.4} mGal, range {:.4} to {:.4}\n",
        density_label(rho),
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
    if settings.engine.convention == crate::engine::Convention::Spherical {
        s.push_str("    (spherical convention: the radius from which on the TC stays within 5% or 1% of its final value)\n");
    }
    s.push_str("    intermediate radii are exact to the block sizes there (elements count by their centroid); the outer radius is exact\n");
    if !densities.is_empty() {
        let parts: Vec<String> = densities
            .iter()
            .map(|&d| format!("{}: {:.4}", density_label(d), quantile(&fs, 0.5) * d / rho))
            .collect();
        s.push_str(&format!(
            "  what density: median TC at {} (kg/m3: mGal); the TC is proportional to the density, {:.4} mGal per 100 kg/m3 at the median station\n",
            parts.join(", "),
            quantile(&fs, 0.5) * 100.0 / rho
        ));
    }
    for o in others {
        let diffs: Vec<f64> = (0..n)
            .map(|i| kernel_to_mgal(*o.cumulative_m[i].last().unwrap_or(&0.0), rho) - finals[i])
            .collect();
        let (mut wi, mut wd) = (0, 0.0f64);
        for (i, d) in diffs.iter().enumerate() {
            if d.abs() > wd.abs() {
                wd = *d;
                wi = i;
            }
        }
        let ds = sorted(diffs.clone());
        s.push_str(&format!(
            "  which DEM: {} minus {} at the outer radius: median {:+.4} mGal, largest {:+.4} at {}; column diff_dem_{}_mgal has every radius\n",
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dem::Dem;
    use crate::engine::{Convention, EngineConfig, InnerModel, Method, Point};
    use crate::zones::AutoSettings;

    #[test]
    fn default_radii_follow_e12() {
        let r = default_radii(45.0, 10_000.0);
        assert_eq!(r[0], 45.0);
        assert_eq!(&r[1..6], [47.0, 56.0, 68.0, 82.0, 100.0]);
        assert_eq!(*r.last().unwrap(), 10_000.0);
        assert!(r.windows(2).all(|w| w[1] > w[0]));
        // 12 per decade: 100 m to 1 km holds 12 values.
        assert_eq!(
            r.iter().filter(|&&x| (100.0..1000.0).contains(&x)).count(),
            12
        );
        assert!(r.contains(&8200.0));
    }

    #[test]
    fn radii_lists_are_checked() {
        let e = |t: &str| parse_radii(t, 45.0, 10_000.0).unwrap_err().to_string();
        assert!(e("1km,5km,2km").contains("must increase, but 5km is followed by 2km"));
        assert!(e("1km,1km").contains("must increase"));
        assert!(e("1km,20km").contains("beyond the outer radius 10km"));
        assert!(e("10m,1km").contains("inside the inner zone"));
        assert!(e("1km,,2km").contains("empty"));
        assert!(e("-1km").contains("not a positive radius"));
        assert!(e("1 mile").contains("not a length"));
        assert_eq!(
            parse_radii("1km,2km", 45.0, 10_000.0).unwrap(),
            [1000.0, 2000.0, 10_000.0]
        );
        assert_eq!(
            parse_radii("1km,10km", 45.0, 10_000.0).unwrap(),
            [1000.0, 10_000.0]
        );
    }

    #[test]
    fn densities_are_checked_like_density() {
        assert_eq!(parse_densities("2000, 2670").unwrap(), [2000.0, 2670.0]);
        let e = |t: &str| parse_densities(t).unwrap_err().to_string();
        assert!(e("2000,-5").contains("must be a positive number"));
        assert!(e("0").contains("must be a positive number"));
        assert!(e("2.67").contains("looks like g/cm3"));
        assert!(e("2000,x").contains("'x' is not a number"));
    }

    #[test]
    fn convergence_radius_is_where_the_value_settles() {
        let r = [1.0, 2.0, 3.0, 4.0, 5.0];
        let v = [0.5, 0.9, 0.96, 0.995, 1.0];
        assert_eq!(convergence_radius(&r, &v, 0.05), 3.0);
        assert_eq!(convergence_radius(&r, &v, 0.01), 4.0);
        // Overshoot and return: settled only where it stays within the band.
        let v = [0.5, 1.2, 0.9, 1.0, 1.0];
        assert_eq!(convergence_radius(&r, &v, 0.05), 4.0);
    }

    #[test]
    fn sector_radii_move_to_ring_edges() {
        // A plan file of sector rings (the chart-era way): 2-16.6 m, 16.6-53.3 m.
        let text = "inner_radius = \"2m\"\n[[ring]]\nname = \"B\"\nouter = 16.6\nmethod = \"sectors\"\n[[ring]]\nname = \"C\"\nouter = 53.3\nmethod = \"sectors\"\n";
        let plan = ZonePlan::from_toml(text, "chart.toml").unwrap();
        let (r, moved) = snap_to_sector_edges(&plan, &[10.0, 16.0, 40.0, 53.3]);
        // 10 m moves to 16.6 m, 16 m to the same edge, 40 m to 53.3 m.
        assert_eq!(r, [16.6, 53.3]);
        assert_eq!(moved.len(), 3);
        // The Hammer plan integrates its zones as prisms and blocks: nothing moves.
        let hammer = ZonePlan::hammer(30.0, 21_944.0);
        let radii = [10.0, 16.0, 100.0, 21_944.0];
        assert_eq!(
            snap_to_sector_edges(&hammer, &radii),
            (radii.to_vec(), vec![])
        );
    }

    /// Cutting the plan does not change the elements: the sum over the cut plan equals
    /// the sum over the plan, to rounding, for both methods and conventions.
    #[test]
    fn cut_plan_gives_the_same_total() {
        let terrain = crate::synthetic::Fractal {
            seed: 7,
            amplitude: 300.0,
            longest: 4000.0,
            shortest: 60.0,
            hurst: 0.8,
        };
        let dem = Dem::from_fn("rough", 160, 160, 0.0, 4800.0, 30.0, |x, y| {
            1000.0 + terrain.height(x, y)
        });
        let outer = 2000.0;
        let radii = default_radii(45.0, outer);
        for method in [Method::Zoned, Method::Exact] {
            for convention in [Convention::Planar, Convention::Spherical] {
                let config = EngineConfig {
                    outer_radius_m: outer,
                    convention,
                    method,
                    inner_model: InnerModel::Surface,
                };
                let plan = ZonePlan::auto(30.0, outer, &AutoSettings::default());
                let split = plan.split_at(&radii);
                let whole = Engine::new(&dem, config, plan);
                let cut = Engine::new(&dem, config, split.clone());
                for (x, y) in [(2400.0, 2400.0), (2013.0, 2702.0)] {
                    let elev = dem.bilinear(x, y).unwrap() + 3.0;
                    let p = Point { x, y, elev };
                    let a = whole.compute(p);
                    let b = cut.compute(p);
                    let k = cumulative_m(&split, b.inner_m, &b.rings_m, &radii);
                    let total = a.kernel_sum_m();
                    let last = *k.last().unwrap();
                    assert!(
                        (last - total).abs() <= 1e-12 * total.abs(),
                        "{method:?} {convention:?}: {last} vs {total}"
                    );
                    if convention == Convention::Planar {
                        assert!(k.windows(2).all(|w| w[1] >= w[0]), "{k:?}");
                    }
                }
            }
        }
    }
}
