//! Checked settings: every flag parsed into a typed value and every cross-check done,
//! before any input file is read. Each command turns its arguments into these first.

use crate::cli::{
    ConventionArg, EllipsoidArg, FreeAirArg, InnerModelArg, InputArgs, MethodArg, PhysicsArgs,
    ReductionArgs, RunArgs, TcArgs, ZoneArgs,
};
use crate::engine::{Convention, EngineConfig, InnerModel, Method};
use crate::reduce::{Ellipsoid, FreeAirModel};
use crate::units::{format_length, parse_length_m};
use crate::zones::{AutoSettings, ZonePlan};
use anyhow::bail;
use std::path::{Path, PathBuf};

/// Largest outer radius accepted, m. Beyond it the terrain model (flat columns lowered by
/// the curvature drop s^2/2R, station frames on the tangent plane and geodesics) no longer
/// holds; the standard correction ends at 166.7 km.
pub const MAX_OUTER_RADIUS_M: f64 = 500_000.0;

/// A mistake on the command line itself (a missing option a command needs, a pair of
/// options that cannot go together): exit status 2, like clap's own.
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct UsageError(pub String);

/// Refuses with a [`UsageError`].
pub fn usage<T>(message: impl Into<String>) -> anyhow::Result<T> {
    Err(UsageError(message.into()).into())
}

/// Which zone plan to use.
#[derive(Debug, Clone, PartialEq)]
pub enum ZonesChoice {
    Auto,
    Hammer,
    /// A plan file, read and checked.
    File {
        path: PathBuf,
        plan: ZonePlan,
    },
}

impl ZonesChoice {
    /// The name the plan goes by (auto, hammer, or the file).
    pub fn name(&self) -> String {
        match self {
            ZonesChoice::Auto => "auto".into(),
            ZonesChoice::Hammer => "hammer".into(),
            ZonesChoice::File { path, .. } => path.display().to_string(),
        }
    }

    /// The plan file, if the plan is one.
    pub fn file(&self) -> Option<&Path> {
        match self {
            ZonesChoice::File { path, .. } => Some(path),
            _ => None,
        }
    }
}

/// Column names given on the command line; `None` means "find it by its common names".
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ColumnChoice {
    pub station: Option<String>,
    pub x: Option<String>,
    pub y: Option<String>,
    pub elev: Option<String>,
}

/// How a text file's fields are separated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Delimiter {
    Comma,
    Semicolon,
    Tab,
    /// Runs of spaces (or tabs).
    Spaces,
}

impl Delimiter {
    /// Parses `--delimiter`: `,` `;` `tab` `space` (or their names).
    pub fn parse(text: &str) -> Result<Delimiter, String> {
        Ok(match text.trim().to_ascii_lowercase().as_str() {
            "," | "comma" => Delimiter::Comma,
            ";" | "semicolon" => Delimiter::Semicolon,
            "tab" | "\\t" | "\t" => Delimiter::Tab,
            "space" | "spaces" | " " | "whitespace" => Delimiter::Spaces,
            _ => {
                return Err(format!(
                    "--delimiter {text}: give comma, semicolon, tab or space"
                ))
            }
        })
    }

    pub fn name(self) -> &'static str {
        match self {
            Delimiter::Comma => "comma",
            Delimiter::Semicolon => "semicolon",
            Delimiter::Tab => "tab",
            Delimiter::Spaces => "spaces",
        }
    }
}

/// How a text file's bytes are characters.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub enum Encoding {
    #[default]
    Utf8,
    /// ISO 8859-1: every byte is the character of the same number.
    Latin1,
}

/// How to read a text file of records.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct TextOptions {
    /// `None`: found from the header line.
    pub delimiter: Option<Delimiter>,
    pub encoding: Encoding,
}

/// Where the stations come from.
#[derive(Debug, Clone, PartialEq)]
pub struct StationSource {
    pub path: PathBuf,
    /// How a text station file is read.
    pub text: TextOptions,
    /// CRS of the file's coordinates (`None`: the finest DEM's, or EPSG:4326 for lon/lat).
    pub crs: Option<String>,
    pub columns: ColumnChoice,
}

/// Where each station's density comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum DensityModel {
    /// One density for every station, kg/m3.
    Constant(f64),
    /// A column of the station file; an empty field takes `default_kg_m3`.
    Column { name: String, default_kg_m3: f64 },
    /// A raster: the terrain correction's elements each take their own density; each
    /// station's Bouguer correction takes the density under it. `reference_kg_m3` is
    /// `--density`, the unit of the engine's weighted kernel sums.
    Raster { path: PathBuf, reference_kg_m3: f64 },
}

/// Where the water surface is.
#[derive(Debug, Clone, PartialEq)]
pub enum WaterSurface {
    /// One level everywhere, m on the DEMs' vertical datum (0: sea level).
    Level(f64),
    /// A raster of the water surface (any CRS); nodata means no water.
    Raster(PathBuf),
}

/// Checked water settings.
#[derive(Debug, Clone, PartialEq)]
pub struct WaterSettings {
    /// Density of the water, kg/m3 (0 allowed: the cells are then air).
    pub density_kg_m3: f64,
    pub surface: WaterSurface,
}

/// Field-estimated inner-zone values: a station column and the radius they cover.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldInnerSettings {
    pub column: String,
    pub radius_m: f64,
}

/// Everything a terrain correction needs, checked.
#[derive(Debug, Clone)]
pub struct TcSettings {
    pub dems: Vec<PathBuf>,
    /// `--dem-nodata`: the nodata value of DEMs that declare none.
    pub dem_nodata: Option<f64>,
    pub stations: Option<StationSource>,
    pub engine: EngineConfig,
    pub zones: ZonesChoice,
    /// `--density`, kg/m3: the density of every station unless a column or raster gives
    /// another, and the unit of a density raster's weights.
    pub density_kg_m3: f64,
    pub density: DensityModel,
    pub water: Option<WaterSettings>,
    pub field_inner: Option<FieldInnerSettings>,
    pub allow_gaps: bool,
    /// Whether the station file's own other columns are carried to the tables.
    pub carry_station_columns: bool,
}

/// Parallelism, progress and the run record.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RunSettings {
    pub threads: Option<usize>,
    pub quiet: bool,
    /// `--record PATH`: where the run record goes (else beside the output).
    pub record: Option<PathBuf>,
}

/// Checked settings of the reduction chain (`correct` with observed gravity).
#[derive(Debug, Clone, PartialEq)]
pub struct ReductionSettings {
    /// Observed-gravity column named by the user (`None`: found by its common names).
    pub gravity_col: Option<String>,
    /// Geoid-undulation column, when the station heights are orthometric.
    pub undulation_col: Option<String>,
    pub ellipsoid: Ellipsoid,
    pub free_air: FreeAirModel,
}

/// Checks a density: positive, finite, and not a value in g/cm3 by mistake.
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

/// Checks a radius: a positive length.
pub fn check_radius(text: &str, option: &str) -> anyhow::Result<f64> {
    let r = parse_length_m(text).map_err(|e| anyhow::anyhow!("{option}: {e}"))?;
    if r <= 0.0 {
        bail!("{option} {text}: the radius must be positive, e.g. 166.7km");
    }
    Ok(r)
}

/// Checks a water density: 0 (air) or a plausible water density in kg/m3.
pub fn check_water_density(value: f64) -> anyhow::Result<f64> {
    let option = "--water-density";
    if !value.is_finite() || value < 0.0 {
        bail!("{option} {value}: a density must be zero or positive; give kg/m3, e.g. 1027 for sea water or 1000 for fresh water");
    }
    if value > 0.0 && value < 100.0 {
        bail!("{option} {value}: this looks like g/cm3; give kg/m3, e.g. 1027 for sea water or 1000 for fresh water");
    }
    if value > 1500.0 {
        bail!("{option} {value}: no natural water is this dense; give kg/m3, e.g. 1027 for sea water or 1000 for fresh water");
    }
    Ok(value)
}

impl WaterSettings {
    /// The water settings of the command line, `None` when water is off.
    pub fn from_args(
        density: Option<f64>,
        surface: Option<&str>,
    ) -> anyhow::Result<Option<WaterSettings>> {
        let Some(density) = density else {
            if let Some(s) = surface {
                bail!("--water-surface {s} needs --water-density (1027 for sea water, 1000 for fresh water)");
            }
            return Ok(None);
        };
        let density_kg_m3 = check_water_density(density)?;
        let surface = match surface {
            None => WaterSurface::Level(0.0),
            Some(text) => match parse_length_m(text) {
                Ok(level) => WaterSurface::Level(level),
                Err(_) => {
                    let path = PathBuf::from(text);
                    if !path.is_file() {
                        bail!("--water-surface {text}: neither a level (e.g. 0 or 412.5m) nor an existing raster file; give one of these");
                    }
                    WaterSurface::Raster(path)
                }
            },
        };
        Ok(Some(WaterSettings {
            density_kg_m3,
            surface,
        }))
    }
}

impl StationSource {
    fn from_args(input: &InputArgs) -> anyhow::Result<Option<StationSource>> {
        let delimiter = match &input.delimiter {
            Some(text) => Some(Delimiter::parse(text).map_err(UsageError)?),
            None => None,
        };
        let encoding = match input.encoding.as_deref() {
            None => Encoding::Utf8,
            Some(e) => match e.to_ascii_lowercase().replace('_', "-").as_str() {
                "utf-8" | "utf8" => Encoding::Utf8,
                "latin-1" | "latin1" | "iso-8859-1" => Encoding::Latin1,
                _ => return usage(format!("--encoding {e}: give utf-8 or latin-1")),
            },
        };
        Ok(input.stations.as_ref().map(|path| StationSource {
            path: path.clone(),
            text: TextOptions {
                delimiter,
                encoding,
            },
            crs: input.stations_crs.clone(),
            columns: ColumnChoice {
                station: input.station_col.clone(),
                x: input.x_col.clone(),
                y: input.y_col.clone(),
                elev: input.elev_col.clone(),
            },
        }))
    }
}

fn engine_config(zones: &ZoneArgs, physics: &PhysicsArgs) -> anyhow::Result<EngineConfig> {
    let outer_radius_m = check_radius(&zones.outer_radius, "--outer-radius")?;
    if outer_radius_m > MAX_OUTER_RADIUS_M {
        bail!(
            "--outer-radius {}: at most {} is accepted (beyond it the flat-column model with the curvature drop no longer holds; the standard correction ends at 166.7km)",
            zones.outer_radius,
            format_length(MAX_OUTER_RADIUS_M)
        );
    }
    Ok(EngineConfig {
        outer_radius_m,
        convention: match physics.convention {
            ConventionArg::Spherical => Convention::Spherical,
            ConventionArg::Planar => Convention::Planar,
        },
        method: match zones.method {
            MethodArg::Zoned => Method::Zoned,
            MethodArg::Exact => Method::Exact,
        },
        inner_model: match zones.inner_model {
            InnerModelArg::Surface => InnerModel::Surface,
            InnerModelArg::Prisms => InnerModel::Prisms,
        },
    })
}

fn zones_choice(text: &str) -> anyhow::Result<ZonesChoice> {
    Ok(match text {
        "auto" => ZonesChoice::Auto,
        "hammer" => ZonesChoice::Hammer,
        path => {
            let path = Path::new(path);
            if !path.is_file() {
                bail!(
                    "--zones {}: not auto, hammer, or an existing plan file; give one of these",
                    path.display()
                );
            }
            ZonesChoice::File {
                path: path.to_path_buf(),
                plan: ZonePlan::from_file(path)?,
            }
        }
    })
}

impl TcSettings {
    /// Checks the inputs, zones and physics of a terrain correction.
    pub fn from_args(args: &TcArgs) -> anyhow::Result<TcSettings> {
        let engine = engine_config(&args.zones, &args.physics)?;
        let zones = zones_choice(&args.zones.zones)?;
        if let ZonesChoice::File { plan, .. } = &zones {
            plan.clone().fitted_to(engine.outer_radius_m)?;
        }
        let density_kg_m3 = check_density(args.physics.density, "--density")?;
        let physics = &args.physics;
        let density =
            match (&physics.density_col, &physics.density_raster) {
                (Some(_), Some(_)) => return usage(
                    "--density-col and --density-raster both give the densities; give one of them",
                ),
                (_, Some(path)) => {
                    if !path.is_file() {
                        bail!(
                            "--density-raster {}: file not found; check the path",
                            path.display()
                        );
                    }
                    DensityModel::Raster {
                        path: path.clone(),
                        reference_kg_m3: density_kg_m3,
                    }
                }
                (Some(name), None) => DensityModel::Column {
                    name: name.clone(),
                    default_kg_m3: density_kg_m3,
                },
                (None, None) => DensityModel::Constant(density_kg_m3),
            };
        let water =
            WaterSettings::from_args(physics.water_density, physics.water_surface.as_deref())?;
        let field_inner = match (&args.zones.field_inner_col, &args.zones.field_inner_radius) {
            (Some(column), Some(radius)) => {
                let radius_m = check_radius(radius, "--field-inner-radius")?;
                if radius_m >= engine.outer_radius_m {
                    bail!(
                        "--field-inner-radius {}: the field inner zone must lie inside the outer radius {}",
                        format_length(radius_m),
                        format_length(engine.outer_radius_m)
                    );
                }
                Some(FieldInnerSettings {
                    column: column.clone(),
                    radius_m,
                })
            }
            (None, None) => None,
            _ => return usage("--field-inner-col and --field-inner-radius go together; give both"),
        };
        for path in &args.input.dem {
            if path.as_os_str().is_empty() {
                return usage("--dem needs a path");
            }
        }
        if let Some(v) = args.input.dem_nodata {
            if !v.is_finite() {
                return usage(format!(
                    "--dem-nodata {v}: give a finite value, e.g. -32768"
                ));
            }
        }
        Ok(TcSettings {
            dems: args.input.dem.clone(),
            dem_nodata: args.input.dem_nodata,
            stations: StationSource::from_args(&args.input)?,
            engine,
            zones,
            density_kg_m3,
            density,
            water,
            field_inner,
            allow_gaps: args.input.allow_gaps,
            carry_station_columns: !args.input.drop_station_columns,
        })
    }

    /// The station file, which `command` needs.
    pub fn require_stations(&self, command: &str) -> anyhow::Result<&StationSource> {
        match &self.stations {
            Some(s) => Ok(s),
            None => usage(format!(
                "{command} needs the station file: give --stations PATH"
            )),
        }
    }

    /// The zone plan for a finest DEM of cell size `cell_m` (m); refuses an outer radius
    /// inside the plan's inner zone.
    pub fn plan(&self, cell_m: f64) -> anyhow::Result<ZonePlan> {
        let outer = self.engine.outer_radius_m;
        let plan = match &self.zones {
            ZonesChoice::Auto => ZonePlan::auto(cell_m, outer, &AutoSettings::default()),
            ZonesChoice::Hammer => ZonePlan::hammer(cell_m, outer),
            ZonesChoice::File { plan, .. } => plan.clone().fitted_to(outer)?,
        };
        let inner = match plan.inner {
            crate::zones::InnerZone::Cells { half_width } => (half_width as f64 + 0.5) * cell_m,
            crate::zones::InnerZone::Disc { radius_m } => radius_m,
        };
        if outer < inner {
            bail!(
                "--outer-radius {}: the radius lies inside the inner zone ({} from the station on this DEM), which is integrated whole; give at least {}",
                format_length(outer),
                format_length(inner),
                format_length(inner)
            );
        }
        Ok(plan)
    }

    /// The densities in words, for summaries and plot titles.
    pub fn density_text(&self) -> String {
        match &self.density {
            DensityModel::Constant(d) => format!("{} kg/m3", crate::text::number(*d)),
            DensityModel::Column { name, .. } => format!("densities of column {name}"),
            DensityModel::Raster { path, .. } => format!("densities of {}", path.display()),
        }
    }
}

impl RunSettings {
    /// Checks the thread count and the record's path.
    pub fn from_args(args: &RunArgs) -> anyhow::Result<RunSettings> {
        crate::engine::run::check_threads(args.threads)?;
        if let Some(p) = &args.record {
            crate::paths::check_extension(
                p,
                "--record",
                &["json"],
                "the run record is JSON; give a path ending in .json",
            )?;
            crate::paths::check_writable(p, "--record")?;
        }
        Ok(RunSettings {
            threads: args.threads,
            quiet: args.quiet,
            record: args.record.clone(),
        })
    }
}

impl ReductionSettings {
    /// Checks the reduction options.
    pub fn from_args(args: &ReductionArgs) -> ReductionSettings {
        ReductionSettings {
            gravity_col: args.gravity_col.clone(),
            undulation_col: args.undulation_col.clone(),
            ellipsoid: match args.ellipsoid {
                EllipsoidArg::Grs80 => Ellipsoid::Grs80,
                EllipsoidArg::Wgs84 => Ellipsoid::Wgs84,
            },
            free_air: match args.free_air {
                FreeAirArg::SecondOrder => FreeAirModel::SecondOrder,
                FreeAirArg::FirstOrder => FreeAirModel::FirstOrder,
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn water_settings_from_the_command_line() {
        assert_eq!(WaterSettings::from_args(None, None).unwrap(), None);
        let sea = WaterSettings::from_args(Some(1027.0), None)
            .unwrap()
            .unwrap();
        assert_eq!(sea.surface, WaterSurface::Level(0.0));
        let lake = WaterSettings::from_args(Some(1000.0), Some("412.5m"))
            .unwrap()
            .unwrap();
        assert_eq!(lake.surface, WaterSurface::Level(412.5));
        let low = WaterSettings::from_args(Some(1000.0), Some("-28"))
            .unwrap()
            .unwrap();
        assert_eq!(low.surface, WaterSurface::Level(-28.0));
        assert!(WaterSettings::from_args(Some(0.0), None).unwrap().is_some());
        let e = WaterSettings::from_args(Some(1000.0), Some("no_such.tif"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("neither a level"), "{e}");
        let e = WaterSettings::from_args(None, Some("0"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("needs --water-density"), "{e}");
        for (bad, word) in [
            (-1.0, "zero or positive"),
            (1.027, "g/cm3"),
            (2670.0, "dense"),
        ] {
            let e = check_water_density(bad).unwrap_err().to_string();
            assert!(e.contains(word), "{bad}: {e}");
        }
    }

    #[test]
    fn densities_and_radii_are_checked() {
        assert_eq!(check_density(2670.0, "--density").unwrap(), 2670.0);
        assert!(check_density(2.67, "--density")
            .unwrap_err()
            .to_string()
            .contains("g/cm3"));
        assert!(check_density(-1.0, "--density").is_err());
        assert!(check_radius("-3km", "--outer-radius").is_err());
        assert_eq!(check_radius("10km", "--outer-radius").unwrap(), 10_000.0);
    }
}
