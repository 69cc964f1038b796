//! The run record: a JSON file beside each output (`tc.csv` gets `tc.csv.run.json`) that
//! says how the output was made: the program and its version, the command line, every
//! setting after defaults, the zone plan, every input file with its size, SHA-256 and
//! CRS (DEMs with their extent, cell size, nodata and vertical unit), the number of
//! stations, the times, the threads, and every note and warning. With it a table handed
//! on can be reproduced and checked.
//!
//! The format is documented by the field names and this module; numbers are SI (m,
//! kg/m3), times RFC 3339 in UTC.

use crate::config::{DensityModel, ReductionSettings, TcSettings, WaterSurface};
use crate::engine::{Convention, InnerModel, Method};
use crate::inputs::dems::DemSet;
use crate::zones::{InnerZone, RingMethod, ZonePlan};
use serde::Serialize;
use sha2::{Digest, Sha256};
use std::io::Read;
use std::path::{Path, PathBuf};
use std::time::{Instant, SystemTime};

/// The suffix of a record beside its output.
pub const RECORD_SUFFIX: &str = ".run.json";

/// One input file.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct InputFile {
    /// What the file is (dem, stations, density_raster, water_surface, zone_plan,
    /// compare_dem).
    pub role: String,
    /// The path as given.
    pub path: String,
    /// The absolute path.
    pub absolute_path: String,
    pub size_bytes: u64,
    pub sha256: String,
}

/// One DEM as read (tiles of one grid are one DEM).
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct DemRecord {
    pub source: String,
    /// CRS as WKT.
    pub crs: String,
    pub geographic: bool,
    /// Extent of the part read: west, east, south, north (in the CRS's units).
    pub extent_read: [f64; 4],
    pub cell_size_m: f64,
    pub cells_read: usize,
    pub cells_in_file: usize,
}

/// One ring of the zone plan.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct RingRecord {
    pub name: String,
    pub inner_m: f64,
    pub outer_m: f64,
    pub method: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub block_ratio: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub compartments: Option<usize>,
}

/// The settings of the terrain correction, after defaults.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct SettingsRecord {
    pub outer_radius_m: f64,
    pub convention: String,
    pub method: String,
    pub inner_model: String,
    pub zones: String,
    pub inner_zone: String,
    pub rings: Vec<RingRecord>,
    pub density_model: String,
    pub density_kg_m3: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub density_column: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub density_raster: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub water_density_kg_m3: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub water_surface: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub field_inner_column: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub field_inner_radius_m: Option<f64>,
    pub allow_gaps: bool,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub reduction: Option<ReductionRecord>,
}

/// The settings of the reduction chain.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ReductionRecord {
    pub ellipsoid: String,
    pub free_air: String,
    pub bouguer: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gravity_column: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub undulation_column: Option<String>,
}

/// The whole record.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct RunRecord {
    pub program: String,
    pub version: String,
    pub command: String,
    pub command_line: Vec<String>,
    pub working_directory: String,
    pub settings: Option<SettingsRecord>,
    pub inputs: Vec<InputFile>,
    pub dems: Vec<DemRecord>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub stations: Option<usize>,
    pub outputs: Vec<String>,
    pub started_utc: String,
    pub finished_utc: String,
    pub elapsed_s: f64,
    pub threads: usize,
    pub notes: Vec<String>,
    pub warnings: Vec<String>,
}

/// The name of a method, convention or model as the command line spells it.
fn names(tc: &TcSettings) -> (String, String, String) {
    (
        match tc.engine.convention {
            Convention::Spherical => "spherical",
            Convention::Planar => "planar",
        }
        .into(),
        match tc.engine.method {
            Method::Zoned => "zoned",
            Method::Exact => "exact",
        }
        .into(),
        match tc.engine.inner_model {
            InnerModel::Surface => "surface",
            InnerModel::Prisms => "prisms",
        }
        .into(),
    )
}

impl SettingsRecord {
    /// The settings of `tc` with the plan `plan` (and the reduction's, for `correct`).
    pub fn new(
        tc: &TcSettings,
        plan: &ZonePlan,
        reduction: Option<&ReductionSettings>,
    ) -> SettingsRecord {
        let (convention, method, inner_model) = names(tc);
        let rings = plan
            .rings
            .iter()
            .map(|r| RingRecord {
                name: r.name.clone(),
                inner_m: r.inner_m,
                outer_m: r.outer_m,
                method: r.method.name().to_string(),
                block_ratio: match r.method {
                    RingMethod::Blocks { ratio } => Some(ratio),
                    _ => None,
                },
                compartments: match r.method {
                    RingMethod::Sectors { compartments } => Some(compartments),
                    _ => None,
                },
            })
            .collect();
        let (density_model, density_column, density_raster) = match &tc.density {
            DensityModel::Constant(_) => ("constant", None, None),
            DensityModel::Column { name, .. } => ("column", Some(name.clone()), None),
            DensityModel::Raster { path, .. } => ("raster", None, Some(path.display().to_string())),
        };
        SettingsRecord {
            outer_radius_m: tc.engine.outer_radius_m,
            convention,
            method,
            inner_model,
            zones: tc.zones.name(),
            inner_zone: match plan.inner {
                InnerZone::Cells { half_width } => {
                    format!("{0}x{0} cells", 2 * half_width + 1)
                }
                InnerZone::Disc { radius_m } => format!("disc of {radius_m} m"),
            },
            rings,
            density_model: density_model.into(),
            density_kg_m3: tc.density_kg_m3,
            density_column,
            density_raster,
            water_density_kg_m3: tc.water.as_ref().map(|w| w.density_kg_m3),
            water_surface: tc.water.as_ref().map(|w| match &w.surface {
                WaterSurface::Level(l) => format!("level {l} m"),
                WaterSurface::Raster(p) => p.display().to_string(),
            }),
            field_inner_column: tc.field_inner.as_ref().map(|f| f.column.clone()),
            field_inner_radius_m: tc.field_inner.as_ref().map(|f| f.radius_m),
            allow_gaps: tc.allow_gaps,
            reduction: reduction.map(|r| ReductionRecord {
                ellipsoid: r.ellipsoid.name().to_string(),
                free_air: match r.free_air {
                    crate::reduce::FreeAirModel::SecondOrder => "second-order",
                    crate::reduce::FreeAirModel::FirstOrder => "first-order",
                }
                .into(),
                bouguer: match tc.engine.convention {
                    Convention::Spherical => "spherical cap (slab + Bullard B)",
                    Convention::Planar => "infinite slab",
                }
                .into(),
                gravity_column: r.gravity_col.clone(),
                undulation_column: r.undulation_col.clone(),
            }),
        }
    }
}

/// Size and SHA-256 of a file, read in 1 MB pieces.
pub fn hash_file(path: &Path) -> std::io::Result<(u64, String)> {
    let mut file = std::fs::File::open(path)?;
    let mut hasher = Sha256::new();
    let mut buffer = vec![0u8; 1 << 20];
    let mut size = 0u64;
    loop {
        let n = file.read(&mut buffer)?;
        if n == 0 {
            break;
        }
        size += n as u64;
        hasher.update(&buffer[..n]);
    }
    let digest = hasher.finalize();
    Ok((size, digest.iter().map(|b| format!("{b:02x}")).collect()))
}

/// A file's size and SHA-256, being computed on a thread of its own.
type HashJob = std::thread::JoinHandle<std::io::Result<(u64, String)>>;

/// Input files being hashed on threads of their own while the run goes on.
pub struct Hashing {
    jobs: Vec<(String, PathBuf, HashJob)>,
}

impl Hashing {
    /// Starts hashing each `(role, path)`.
    pub fn start(files: &[(String, PathBuf)]) -> Hashing {
        let jobs = files
            .iter()
            .map(|(role, path)| {
                let p = path.clone();
                (
                    role.clone(),
                    path.clone(),
                    std::thread::spawn(move || hash_file(&p)),
                )
            })
            .collect();
        Hashing { jobs }
    }

    /// The input files with their sizes and checksums.
    pub fn finish(self) -> anyhow::Result<Vec<InputFile>> {
        let mut out = Vec::new();
        for (role, path, job) in self.jobs {
            let (size_bytes, sha256) = job
                .join()
                .map_err(|_| anyhow::anyhow!("internal error: hashing {} failed", path.display()))?
                .map_err(|e| {
                    anyhow::anyhow!("{}: cannot read it for its checksum ({e})", path.display())
                })?;
            out.push(InputFile {
                role,
                path: path.display().to_string(),
                absolute_path: std::fs::canonicalize(&path)
                    .unwrap_or(path.clone())
                    .display()
                    .to_string(),
                size_bytes,
                sha256,
            });
        }
        Ok(out)
    }
}

/// The DEMs as read.
pub fn dem_records(dems: &DemSet) -> Vec<DemRecord> {
    dems.dems
        .iter()
        .zip(&dems.reads)
        .map(|(d, r)| DemRecord {
            source: d.source.clone(),
            crs: d.crs_wkt.clone(),
            geographic: d.is_geographic(),
            extent_read: [d.x_left, d.x_right(), d.y_bottom(), d.y_top],
            cell_size_m: r.cell_size_m,
            cells_read: r.cells_read,
            cells_in_file: r.cells_in_file,
        })
        .collect()
}

/// The input files of a terrain correction: DEMs (each tile), stations, rasters, plan.
pub fn input_files(tc: &TcSettings) -> Vec<(String, PathBuf)> {
    let mut files: Vec<(String, PathBuf)> = tc
        .dems
        .iter()
        .map(|p| ("dem".to_string(), p.clone()))
        .collect();
    if let Some(s) = &tc.stations {
        files.push(("stations".into(), s.path.clone()));
    }
    if let DensityModel::Raster { path, .. } = &tc.density {
        files.push(("density_raster".into(), path.clone()));
    }
    if let Some(w) = &tc.water {
        if let WaterSurface::Raster(p) = &w.surface {
            files.push(("water_surface".into(), p.clone()));
        }
    }
    if let Some(p) = tc.zones.file() {
        files.push(("zone_plan".into(), p.to_path_buf()));
    }
    files
}

/// A record in the making: started when the run starts.
pub struct RecordStart {
    command: String,
    started: SystemTime,
    clock: Instant,
    hashing: Hashing,
}

impl RecordStart {
    /// Starts the record of `command` (and starts hashing the inputs).
    pub fn start(command: &str, files: &[(String, PathBuf)]) -> RecordStart {
        RecordStart {
            command: command.to_string(),
            started: SystemTime::now(),
            clock: Instant::now(),
            hashing: Hashing::start(files),
        }
    }

    /// The finished record.
    #[allow(clippy::too_many_arguments)]
    pub fn finish(
        self,
        settings: Option<SettingsRecord>,
        dems: Vec<DemRecord>,
        stations: Option<usize>,
        outputs: &[&Path],
        threads: usize,
        notes: &[String],
        warnings: &[String],
    ) -> anyhow::Result<RunRecord> {
        Ok(RunRecord {
            program: "ringsum".into(),
            version: env!("CARGO_PKG_VERSION").into(),
            command: self.command,
            command_line: std::env::args().collect(),
            working_directory: std::env::current_dir()
                .map(|d| d.display().to_string())
                .unwrap_or_default(),
            settings,
            inputs: self.hashing.finish()?,
            dems,
            stations,
            outputs: outputs.iter().map(|p| p.display().to_string()).collect(),
            started_utc: humantime::format_rfc3339_seconds(self.started).to_string(),
            finished_utc: humantime::format_rfc3339_seconds(SystemTime::now()).to_string(),
            elapsed_s: self.clock.elapsed().as_secs_f64(),
            threads,
            notes: notes.to_vec(),
            warnings: warnings.to_vec(),
        })
    }
}

impl RunRecord {
    /// Writes the record as JSON to `path` (through a temporary file).
    pub fn write(&self, path: &Path) -> anyhow::Result<()> {
        let mut text = serde_json::to_string_pretty(self)?;
        text.push('\n');
        super::files::write_atomically(path, text.as_bytes())
    }
}

/// Where the record of an output goes: `--record PATH`, else beside the output
/// (`OUT.run.json`); `None` for standard output without `--record`.
pub fn record_path(output: Option<&Path>, record: Option<&Path>) -> Option<PathBuf> {
    if let Some(r) = record {
        return Some(r.to_path_buf());
    }
    output.map(|p| {
        let mut s = p.as_os_str().to_owned();
        s.push(RECORD_SUFFIX);
        PathBuf::from(s)
    })
}
