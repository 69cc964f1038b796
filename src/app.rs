//! What each command does: check the settings, load the inputs, run the engine, write.
//!
//! Reads like a table of contents; the work is in the modules it calls.

use crate::anomaly::ReductionSettings;
use crate::cli::{
    Cli, Command, ConventionArg, CorrectArgs, DemoArgs, InnerModelArg, InputArgs, MethodArg,
    PhysicsArgs, PlanArgs, ReductionArgs, RunArgs,
};
use crate::dem::read::read_dem;
use crate::dem::Dem;
use crate::engine::{Convention, Engine, EngineConfig, InnerModel, Method, Point, StationResult};
use crate::output::{check_target, fixed, write_table, Table, Target};
use crate::stations::StationTable;
use crate::units::{format_length, parse_length_m, to_mgal};
use crate::zones::{AutoSettings, RingMethod, ZoneGroup, ZonePlan};
use anyhow::{bail, Context};
use rayon::prelude::*;
use std::path::{Path, PathBuf};
use std::time::Instant;

/// Runs one command line.
pub fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Command::Correct(args) => correct(&args),
        Command::Plan(args) => plan(&args),
        Command::Demo(args) => demo(&args),
        Command::Sweep(args) => crate::sweep::sweep(&args),
        Command::Audit(args) => crate::audit::audit(&args),
        Command::Map(args) => crate::map::map(&args),
    }
}

/// Which zone plan to use.
#[derive(Debug, Clone, PartialEq)]
pub enum ZonesChoice {
    Auto,
    Hammer,
    File(PathBuf),
}

/// Checked physical and numerical settings.
#[derive(Debug, Clone)]
pub struct Settings {
    pub engine: EngineConfig,
    pub density_kg_m3: f64,
    pub allow_gaps: bool,
    pub zones: ZonesChoice,
}

/// Checks the density: positive, finite, and not a value in g/cm3 by mistake.
pub fn check_density(value: f64, option: &str) -> anyhow::Result<f64> {
    if !value.is_finite() || value <= 0.0 {
        bail!("{option} {value}: a density must be a positive number; give kg/m3, e.g. 2670");
    }
    if value < 100.0 {
        bail!("{option} {value}: this looks like g/cm3; give kg/m3, e.g. 2670");
    }
    if value > 25_000.0 {
        bail!("{option} {value}: no rock is this dense; give kg/m3, e.g. 2670");
    }
    Ok(value)
}

/// Checks the outer radius: a positive length.
pub fn check_radius(text: &str, option: &str) -> anyhow::Result<f64> {
    let r = parse_length_m(text).map_err(|e| anyhow::anyhow!("{option}: {e}"))?;
    if r <= 0.0 {
        bail!("{option} {text}: the radius must be positive, e.g. 166.7km");
    }
    Ok(r)
}

impl Settings {
    pub fn from_args(physics: &PhysicsArgs) -> anyhow::Result<Settings> {
        let outer_radius_m = check_radius(&physics.outer_radius, "--outer-radius")?;
        let density_kg_m3 = check_density(physics.density, "--density")?;
        let convention = match physics.convention {
            ConventionArg::Spherical => Convention::Spherical,
            ConventionArg::Planar => Convention::Planar,
        };
        let method = match physics.method {
            MethodArg::Zoned => Method::Zoned,
            MethodArg::Exact => Method::Exact,
        };
        let inner_model = match physics.inner_model {
            InnerModelArg::Surface => InnerModel::Surface,
            InnerModelArg::Prisms => InnerModel::Prisms,
        };
        let zones = match physics.zones.as_str() {
            "auto" => ZonesChoice::Auto,
            "hammer" => ZonesChoice::Hammer,
            path => {
                let path = PathBuf::from(path);
                if !path.is_file() {
                    bail!(
                        "--zones {}: not auto, hammer, or an existing plan file; give one of these",
                        path.display()
                    );
                }
                ZonesChoice::File(path)
            }
        };
        Ok(Settings {
            engine: EngineConfig {
                outer_radius_m,
                convention,
                method,
                inner_model,
            },
            density_kg_m3,
            allow_gaps: physics.allow_gaps,
            zones,
        })
    }

    /// The zone plan for a DEM of cell size `cell_m`.
    pub fn plan(&self, cell_m: f64) -> anyhow::Result<ZonePlan> {
        let outer = self.engine.outer_radius_m;
        Ok(match &self.zones {
            ZonesChoice::Auto => ZonePlan::auto(cell_m, outer, &AutoSettings::default()),
            ZonesChoice::Hammer => ZonePlan::hammer(cell_m, outer),
            ZonesChoice::File(path) => ZonePlan::from_file(path)?.fitted_to(outer)?,
        })
    }
}

/// The loaded inputs of a run.
pub struct Inputs {
    /// The finest DEM (the only one unless several were given); the stations' x, y are
    /// in its CRS.
    pub dem: Dem,
    pub stations: StationTable,
    /// The coarser DEMs, finest first, with the stations' positions in their CRS.
    pub layers: Vec<crate::nested::Layer>,
    /// Things the user should know about how the inputs were taken (printed unless quiet).
    pub notes: Vec<String>,
    /// How much of each DEM file was read.
    pub reads: Vec<crate::nested::ReadReport>,
}

impl Inputs {
    /// The stations as points in the primary DEM's CRS.
    pub fn points(&self) -> Vec<Point> {
        self.stations
            .stations
            .iter()
            .map(|s| Point {
                x: s.x,
                y: s.y,
                elev: s.elev,
            })
            .collect()
    }
}

/// Reads the DEM (one, whole) and the station file, for the commands that take one DEM.
pub fn load_inputs(input: &InputArgs) -> anyhow::Result<Inputs> {
    if input.dem.len() > 1 {
        bail!(
            "{} DEMs were given; this command takes one --dem (several DEMs work with correct and plan)",
            input.dem.len()
        );
    }
    crate::nested::load(input, None)
}

/// Lists up to eight items and how many more there are.
pub fn list_some(items: &[String]) -> String {
    let shown: Vec<&str> = items.iter().take(8).map(String::as_str).collect();
    let mut s = shown.join("; ");
    if items.len() > 8 {
        s.push_str(&format!("; and {} more", items.len() - 8));
    }
    s
}

/// Refuses stations off the DEM (or on its nodata), and stations whose disc reaches past
/// the DEM or into nodata unless gaps are allowed.
pub fn preflight(inputs: &Inputs, settings: &Settings, engine: &Engine) -> anyhow::Result<()> {
    preflight_positions(inputs)?;
    check_coverage(inputs, settings, engine)
}

/// Refuses stations off the DEM or on its nodata.
pub fn preflight_positions(inputs: &Inputs) -> anyhow::Result<()> {
    let dem = &inputs.dem;
    let table = &inputs.stations;
    let mut outside = Vec::new();
    for s in &table.stations {
        if !dem.contains(s.x, s.y) {
            outside.push(format!(
                "{} (line {}) is {} outside",
                s.id,
                s.line,
                format_length(-dem.distance_inside(s.x, s.y))
            ));
        } else if dem.bilinear(s.x, s.y).is_none() {
            outside.push(format!("{} (line {}) is on nodata", s.id, s.line));
        }
    }
    if !outside.is_empty() {
        bail!(
            "{}: {} station(s) lie outside the data of {}: {}; check the coordinates and --stations-crs, or use a DEM that covers them",
            table.path.display(),
            outside.len(),
            dem.source,
            list_some(&outside)
        );
    }
    Ok(())
}

/// Refuses stations whose disc reaches past the DEM or into nodata, unless gaps are allowed.
pub fn check_coverage(inputs: &Inputs, settings: &Settings, engine: &Engine) -> anyhow::Result<()> {
    if settings.allow_gaps {
        return Ok(());
    }
    let coverage: Vec<f64> = inputs
        .points()
        .par_iter()
        .map(|&p| engine.coverage(p))
        .collect();
    refuse_gaps(
        &inputs.stations,
        &coverage,
        settings.engine.outer_radius_m,
        &format!("past {}", inputs.dem.source),
    )
}

/// Refuses the stations with coverage below 1, listing them; `past` says what the discs
/// reach past ("past dem.tif").
pub fn refuse_gaps(
    table: &StationTable,
    coverage: &[f64],
    radius: f64,
    past: &str,
) -> anyhow::Result<()> {
    let gaps: Vec<String> = table
        .stations
        .iter()
        .zip(coverage)
        .filter(|(_, &c)| c < 1.0)
        .map(|(s, &c)| {
            // Just short of 1 would print as 1.0000: show the digits that matter.
            let shown = if c > 0.99995 {
                format!("{c:.6}")
            } else {
                format!("{c:.4}")
            };
            format!("{} coverage {shown}", s.id)
        })
        .collect();
    if !gaps.is_empty() {
        bail!(
            "{} station(s) have their {} outer radius reaching {past} or into nodata ({}); use a larger DEM (or add one), a smaller --outer-radius, or --allow-gaps to accept this and report the coverage",
            gaps.len(),
            format_length(radius),
            list_some(&gaps)
        );
    }
    Ok(())
}

/// Runs `f` on a pool of `threads` workers (or rayon's default pool).
pub fn with_threads<T: Send>(
    threads: Option<usize>,
    f: impl FnOnce() -> T + Send,
) -> anyhow::Result<T> {
    match threads {
        None => Ok(f()),
        Some(0) => bail!("--threads 0: give at least one thread"),
        Some(n) => {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(n)
                .build()
                .context("cannot start the worker threads")?;
            Ok(pool.install(f))
        }
    }
}

/// Computes every station of the inputs, with a progress bar.
pub fn compute_stations(
    inputs: &Inputs,
    engine: &Engine,
    run: &RunArgs,
) -> anyhow::Result<Vec<StationResult>> {
    compute_stations_inner(
        inputs,
        engine,
        &vec![None; inputs.stations.stations.len()],
        run,
    )
}

/// As [`compute_stations`], with an inner zone of its own for some stations.
pub fn compute_stations_inner(
    inputs: &Inputs,
    engine: &Engine,
    zones: &[Option<crate::zones::InnerZone>],
    run: &RunArgs,
) -> anyhow::Result<Vec<StationResult>> {
    let points = inputs.points();
    let bar = crate::progress::station_bar(points.len() as u64, run.quiet, "stations");
    let results = with_threads(run.threads, || {
        engine.compute_all_inner(&points, zones, &|| bar.inc(1))
    })?;
    bar.finish_and_clear();
    Ok(results)
}

/// Rounds `parts` to `decimals` so that the rounded parts add up to the rounded total
/// exactly: the rounding difference (at most a few units of the last decimal) goes to
/// the largest part.
pub fn parts_adding_up(total: f64, parts: &[f64], decimals: i32) -> (f64, Vec<f64>) {
    let scale = 10f64.powi(decimals);
    let round = |v: f64| (v * scale).round();
    let total_units = round(total);
    let mut units: Vec<f64> = parts.iter().map(|&v| round(v)).collect();
    let diff = total_units - units.iter().sum::<f64>();
    if let Some(largest) =
        (0..parts.len()).max_by(|&a, &b| parts[a].abs().total_cmp(&parts[b].abs()))
    {
        units[largest] += diff;
    }
    (
        total_units / scale,
        units.into_iter().map(|u| u / scale).collect(),
    )
}

/// Summary zone columns of every table.
pub const ZONE_COLUMNS: [&str; 4] = [
    "tc_inner_mgal",
    "tc_near_mgal",
    "tc_mid_mgal",
    "tc_far_mgal",
];

/// The per-station table of `correct` at the constant density of the settings, without water.
pub fn correction_table(
    inputs: &Inputs,
    settings: &Settings,
    plan: &ZonePlan,
    results: &[StationResult],
) -> anyhow::Result<Table> {
    let densities = vec![settings.density_kg_m3; results.len()];
    correction_table_with(inputs, plan, results, &densities, None)
}

/// The per-station table of `correct`: the TC of each station at its density
/// (`densities`, kg/m3), plus the water's part (`water_mgal`, its own column
/// `tc_water_mgal`, included in `tc_mgal`) when water is on.
pub fn correction_table_with(
    inputs: &Inputs,
    plan: &ZonePlan,
    results: &[StationResult],
    densities: &[f64],
    water_mgal: Option<&[f64]>,
) -> anyhow::Result<Table> {
    let transformed = inputs.stations.input_crs.is_some();
    let mut headers: Vec<String> = vec!["station".into(), "x".into(), "y".into()];
    if transformed {
        headers.extend(["x_dem".to_string(), "y_dem".to_string()]);
    }
    for h in ["elev_m", "dem_elev_m", "elev_minus_dem_m", "tc_mgal"]
        .iter()
        .chain(&ZONE_COLUMNS)
    {
        headers.push(h.to_string());
    }
    if water_mgal.is_some() {
        headers.push("tc_water_mgal".to_string());
    }
    let zone_columns = plan.zone_columns();
    headers.extend(zone_columns.iter().map(|z| format!("tc_{}_mgal", z.name)));
    headers.push("coverage".to_string());
    let mut table = Table {
        headers,
        rows: Vec::new(),
    };
    for (i, (s, r)) in inputs.stations.stations.iter().zip(results).enumerate() {
        let rho = densities[i];
        let scale = |k: f64| to_mgal(crate::units::G * rho * k);
        let water = water_mgal.map(|w| w[i]);
        let what = |col: &str| format!("{col} of station {}", s.id);
        let dem_elev = r
            .dem_elev_m
            .with_context(|| format!("station {} is on nodata of the DEM", s.id))?;
        let tc = to_mgal(r.tc_m_s2(rho)) + water.unwrap_or(0.0);
        let mut groups: Vec<f64> = [
            ZoneGroup::Inner,
            ZoneGroup::Near,
            ZoneGroup::Middle,
            ZoneGroup::Far,
        ]
        .iter()
        .map(|&g| scale(r.group_m(plan, g)))
        .collect();
        groups.extend(water);
        let (tc_rounded, groups) = parts_adding_up(tc, &groups, 4);
        let water_rounded = if water.is_some() { groups[4] } else { 0.0 };
        let mut row = vec![
            s.id.clone(),
            format_coord(s.input_xy.0),
            format_coord(s.input_xy.1),
        ];
        if transformed {
            // Degrees want more decimals than metres (1e-8 degree is about a millimetre).
            let decimals = if inputs.dem.is_geographic() { 8 } else { 3 };
            row.push(fixed(s.x, decimals, &what("x_dem"))?);
            row.push(fixed(s.y, decimals, &what("y_dem"))?);
        }
        row.push(fixed(s.elev, 3, &what("elev_m"))?);
        row.push(fixed(dem_elev, 3, &what("dem_elev_m"))?);
        row.push(fixed(s.elev - dem_elev, 3, &what("elev_minus_dem_m"))?);
        row.push(fixed(tc_rounded, 4, &what("tc_mgal"))?);
        for (name, v) in ZONE_COLUMNS.iter().zip(&groups) {
            row.push(fixed(*v, 4, &what(name))?);
        }
        if water.is_some() {
            row.push(fixed(water_rounded, 4, &what("tc_water_mgal"))?);
        }
        if !zone_columns.is_empty() {
            let zones: Vec<f64> = zone_columns
                .iter()
                .map(|z| scale(r.rings_m[z.rings.clone()].iter().sum()))
                .collect();
            let (_, zones) = parts_adding_up(tc_rounded - groups[0] - water_rounded, &zones, 4);
            for (zone, v) in zone_columns.iter().zip(zones) {
                row.push(fixed(v, 4, &what(&format!("tc_{}_mgal", zone.name)))?);
            }
        }
        row.push(fixed(r.coverage, 4, &what("coverage"))?);
        table.rows.push(row);
    }
    Ok(table)
}

/// Coordinates as given: enough decimals for degrees and for metres.
fn format_coord(v: f64) -> String {
    let s = format!("{v:.8}");
    let s = s.trim_end_matches('0');
    s.trim_end_matches('.').to_string()
}

/// `ringsum correct`.
fn correct(args: &CorrectArgs) -> anyhow::Result<()> {
    let settings = Settings::from_args(&args.physics)?;
    let reduction = ReductionSettings::from_args(&args.reduction, settings.density_kg_m3)?;
    let target = check_target(&args.out)?;
    let mut inputs = crate::nested::load(&args.input, Some(settings.engine.outer_radius_m))?;
    if let crate::anomaly::DensityModel::Raster {
        path,
        reference_kg_m3,
    } = &reduction.density
    {
        crate::density::apply(
            &mut inputs,
            path,
            *reference_kg_m3,
            settings.engine.outer_radius_m,
            settings.allow_gaps,
        )?;
    }
    let inputs = inputs;
    if !args.run.quiet {
        for note in &inputs.notes {
            eprintln!("ringsum: note: {note}");
        }
    }
    let plan = settings.plan(inputs.dem.cell_size_m())?;
    let field = crate::field_inner::FieldInner::prepare(
        &inputs.stations,
        &settings,
        args.physics.field_inner_col.as_deref(),
        args.physics.field_inner_radius.as_deref(),
    )?;
    let zones = match &field {
        Some(f) => f.zones(),
        None => vec![None; inputs.stations.stations.len()],
    };
    let started;
    let table = if inputs.layers.is_empty() {
        let engine = Engine::new(&inputs.dem, settings.engine, plan.clone());
        preflight(&inputs, &settings, &engine)?;
        let chain = crate::anomaly::prepare(&inputs, &settings, &reduction)?;
        started = Instant::now();
        let mut results = compute_stations_inner(&inputs, &engine, &zones, &args.run)?;
        let dem_inner = field
            .as_ref()
            .map(|f| f.apply(&mut results, &chain.tc_densities));
        let water = chain.water_mgal(&inputs, &settings, &plan, &args.run)?;
        let mut table = correction_table_with(
            &inputs,
            &plan,
            &results,
            &chain.tc_densities,
            water.as_deref(),
        )?;
        if let (Some(f), Some(d)) = (&field, &dem_inner) {
            f.add_columns(&mut table, d)?;
        }
        chain.add_columns(&mut table, &inputs.stations)?;
        table
    } else {
        if reduction.water.is_some() {
            bail!("--water-density works with one DEM for now; give the DEM that holds the water bodies alone");
        }
        let engine = crate::nested::engines(&inputs, &settings, &plan);
        crate::nested::preflight(&inputs, &settings, &engine)?;
        let chain = crate::anomaly::prepare(&inputs, &settings, &reduction)?;
        started = Instant::now();
        let layered =
            crate::nested::compute(&inputs, &engine, &zones, args.run.quiet, args.run.threads)?;
        let mut results: Vec<StationResult> = layered.iter().map(|r| r.combined.clone()).collect();
        let dem_inner = field
            .as_ref()
            .map(|f| f.apply(&mut results, &chain.tc_densities));
        let mut table = correction_table_with(&inputs, &plan, &results, &chain.tc_densities, None)?;
        if let (Some(f), Some(d)) = (&field, &dem_inner) {
            f.add_columns(&mut table, d)?;
        }
        crate::nested::add_columns(&mut table, &plan, &layered, settings.engine.outer_radius_m)?;
        chain.add_columns(&mut table, &inputs.stations)?;
        table
    };
    write_table(&target, &table)?;
    if !args.run.quiet {
        summarise(&table, started.elapsed().as_secs_f64(), &target);
    }
    Ok(())
}

/// A few lines on stderr about a finished run.
fn summarise(table: &Table, seconds: f64, target: &Target) {
    let Some(col) = table.column("tc_mgal") else {
        return;
    };
    let mut tcs: Vec<f64> = table
        .rows
        .iter()
        .filter_map(|r| r[col].parse().ok())
        .collect();
    if tcs.is_empty() {
        return;
    }
    tcs.sort_by(f64::total_cmp);
    let where_to = match target {
        Target::Stdout => "standard output".to_string(),
        Target::Csv(p) => p.display().to_string(),
    };
    eprintln!(
        "ringsum: {} stations in {:.2} s; tc_mgal min {:.4}, median {:.4}, max {:.4}; written to {}",
        tcs.len(),
        seconds,
        tcs[0],
        tcs[tcs.len() / 2],
        tcs[tcs.len() - 1],
        where_to
    );
}

/// Finds the demo folder: the one given, ./demo-dem, or the source tree's.
fn demo_folder(given: &Option<PathBuf>) -> anyhow::Result<PathBuf> {
    if let Some(dir) = given {
        if dir.is_dir() {
            return Ok(dir.clone());
        }
        bail!(
            "{}: no such folder; give the folder holding the demo scenario",
            dir.display()
        );
    }
    let here = PathBuf::from("demo-dem");
    if here.is_dir() {
        return Ok(here);
    }
    let shipped = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-dem");
    if shipped.is_dir() {
        return Ok(shipped);
    }
    bail!(
        "the demo scenario (demo-dem/) was not found; run from the source tree or give --data DIR"
    )
}

/// The demo's DEMs, finest first: the 30 m valley grid, the 3 arc-second lon/lat grid
/// about 100 km across, and the 500 m regional grid, which holds the 166.7 km disc of
/// every station.
pub const DEMO_DEMS: [&str; 3] = [
    "valley_30m.tif",
    "middle_3s_geographic.tif",
    "regional_500m.tif",
];

/// Outer radius of the demo: the standard 166.7 km (the default of `correct`).
pub const DEMO_OUTER_RADIUS: &str = "166.7km";

/// `ringsum demo`: the full standard correction of the bundled scenario.
fn demo(args: &DemoArgs) -> anyhow::Result<()> {
    let folder = demo_folder(&args.data)?;
    if let Some(parent) = args.out.parent() {
        if !parent.as_os_str().is_empty() {
            std::fs::create_dir_all(parent)
                .with_context(|| format!("{}: cannot create the folder", parent.display()))?;
        }
    }
    let correct_args = CorrectArgs {
        input: InputArgs {
            dem: DEMO_DEMS.iter().map(|name| folder.join(name)).collect(),
            stations: folder.join("stations.csv"),
            stations_crs: None,
            station_col: None,
            x_col: None,
            y_col: None,
            elev_col: None,
        },
        physics: PhysicsArgs {
            outer_radius: DEMO_OUTER_RADIUS.to_string(),
            method: MethodArg::Zoned,
            inner_model: InnerModelArg::Surface,
            zones: "auto".to_string(),
            density: crate::units::STANDARD_DENSITY_KG_M3,
            convention: ConventionArg::Spherical,
            allow_gaps: false,
            field_inner_col: None,
            field_inner_radius: None,
        },
        reduction: ReductionArgs::default(),
        run: args.run.clone(),
        out: args.out.clone(),
    };
    if !args.run.quiet {
        eprintln!(
            "ringsum demo: {} with the DEMs {} (finest first), outer radius {}, zoned engine",
            folder.join("stations.csv").display(),
            DEMO_DEMS
                .iter()
                .map(|name| folder.join(name).display().to_string())
                .collect::<Vec<_>>()
                .join(", "),
            DEMO_OUTER_RADIUS
        );
    }
    correct(&correct_args)
}

/// `ringsum plan`: the rings, and their cost measured on sample points of this DEM.
fn plan(args: &PlanArgs) -> anyhow::Result<()> {
    let settings = Settings::from_args(&args.physics)?;
    let radius = settings.engine.outer_radius_m;
    let (inputs, points_per_dem) = match &args.stations {
        Some(stations) => {
            let input = InputArgs {
                dem: args.dem.clone(),
                stations: stations.clone(),
                stations_crs: args.stations_crs.clone(),
                station_col: None,
                x_col: None,
                y_col: None,
                elev_col: None,
            };
            let inputs = crate::nested::load(&input, Some(radius))?;
            let mut points = crate::nested::points_per_dem(&inputs);
            for p in points.iter_mut() {
                p.truncate(25);
            }
            (inputs, points)
        }
        None if args.dem.len() > 1 => {
            bail!(
                "{} DEMs were given; plan needs --stations to place them against each other",
                args.dem.len()
            )
        }
        None => {
            let dem = read_dem(&args.dem[0])?;
            let points = sample_points(&dem, radius);
            let reads = vec![crate::nested::ReadReport {
                path: dem.source.clone(),
                cells_read: dem.len(),
                cells_in_file: dem.len(),
                cell_size_m: dem.cell_size_m(),
            }];
            let stations = StationTable {
                path: PathBuf::from("(sample points)"),
                headers: Vec::new(),
                stations: Vec::new(),
                records: Vec::new(),
                input_crs: None,
            };
            (
                Inputs {
                    dem,
                    stations,
                    layers: Vec::new(),
                    notes: Vec::new(),
                    reads,
                },
                vec![points],
            )
        }
    };
    let dem = &inputs.dem;
    let cell = dem.cell_size_m();
    let zone_plan = settings.plan(cell)?;
    let build_started = Instant::now();
    let engine = crate::nested::engines(&inputs, &settings, &zone_plan);
    let build_s = build_started.elapsed().as_secs_f64();
    let count = points_per_dem[0].len();
    let started = Instant::now();
    let results: Vec<StationResult> = with_threads(Some(1), || {
        (0..count)
            .filter_map(|i| {
                let ps: Vec<Point> = points_per_dem.iter().map(|p| p[i]).collect();
                engine.compute(&ps, None).map(|r| r.combined)
            })
            .collect()
    })?;
    let per_station_s = started.elapsed().as_secs_f64() / results.len().max(1) as f64;
    let points = &points_per_dem[0];
    let n = results.len().max(1) as f64;
    let mean =
        |f: &dyn Fn(&StationResult) -> u64| results.iter().map(|r| f(r) as f64).sum::<f64>() / n;
    let method = match settings.engine.method {
        Method::Zoned => "zoned",
        Method::Exact => "exact",
    };
    println!(
        "ringsum plan: {} ({} x {} cells of {} m), outer radius {}, method {}, zones {}",
        dem.source,
        dem.cols,
        dem.rows,
        crate::units::format_length(cell).trim_end_matches('m'),
        format_length(settings.engine.outer_radius_m),
        method,
        zone_plan.source
    );
    println!(
        "{:<10} {:>10} {:>10}  {:<8} {:<28} {:>12}",
        "ring", "inner", "outer", "method", "detail", "elements"
    );
    let inner_detail = match zone_plan.inner {
        crate::zones::InnerZone::Cells { half_width } => {
            format!("{0}x{0} cells", 2 * half_width + 1)
        }
        crate::zones::InnerZone::Disc { radius_m } => {
            format!("disc of {}", format_length(radius_m))
        }
    };
    let inner_method = match settings.engine.inner_model {
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
    for (i, ring) in zone_plan.rings.iter().enumerate() {
        let detail = match ring.method {
            RingMethod::Prisms => format!("{} cells", crate::units::format_length(cell)),
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
        "per station: {total:.0} elements, {:.3} ms measured on {} sample points (one thread); setting up the engine took {:.2} s",
        per_station_s * 1e3,
        points.len(),
        build_s
    );
    for (report, e) in inputs.reads.iter().zip(&engine.engines) {
        println!(
            "read: {}; block pyramid {:.1} MB",
            report.describe(),
            e.pyramid.bytes() as f64 / 1e6
        );
    }
    for note in &inputs.notes {
        println!("note: {note}");
    }
    Ok(())
}

/// Up to 25 points on a grid over the part of the DEM where the outer radius fits (or
/// over the whole DEM when it fits nowhere), at the DEM's height.
fn sample_points(dem: &Dem, radius: f64) -> Vec<Point> {
    let (w, h) = (dem.x_right() - dem.x_left, dem.y_top - dem.y_bottom());
    let margin_x = radius.min(0.45 * w);
    let margin_y = radius.min(0.45 * h);
    let mut out = Vec::new();
    for i in 0..5 {
        for j in 0..5 {
            let x = dem.x_left + margin_x + (w - 2.0 * margin_x) * (i as f64 + 0.5) / 5.0;
            let y = dem.y_bottom() + margin_y + (h - 2.0 * margin_y) * (j as f64 + 0.5) / 5.0;
            if let Some(elev) = dem.bilinear(x, y) {
                out.push(Point { x, y, elev });
            }
        }
    }
    out
}
