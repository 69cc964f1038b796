//! Reading the inputs of a run: the DEMs (any number, any CRS, tiles), the stations, a
//! density raster, water bodies and field inner-zone values. Everything here is checked
//! against the settings before the engine starts; problems end in one sentence naming
//! the file, line or station.

pub mod dems;
pub mod density;
pub mod field_inner;
pub mod gravity;
pub mod records;
pub mod stations;
pub mod water;

use crate::config::{DensityModel, TcSettings};
use crate::engine::Point;
use dems::{DemSet, OpenedDems};
use density::DensityRaster;
use field_inner::FieldInner;
use stations::{read_stations, StationTable};
use water::WaterSet;

/// The DEM files opened and the station file read, before the DEMs' heights are read.
pub struct Opened {
    pub dems: OpenedDems,
    pub stations: Option<StationTable>,
}

/// The densities of the stations.
#[derive(Debug, Clone, PartialEq)]
pub struct StationDensities {
    /// Each station's density for its Bouguer correction, kg/m3.
    pub bouguer_kg_m3: Vec<f64>,
    /// The density that turns each station's kernel sums into its TC, kg/m3: its own, or
    /// with a raster (whose densities are in the DEMs' weights) `--density`.
    pub tc_kg_m3: Vec<f64>,
    /// Whether they vary by station (a column or a raster): then they are written.
    pub varying: bool,
}

/// Everything a run reads, checked.
pub struct Inputs {
    pub dems: DemSet,
    pub stations: Option<StationTable>,
    /// The stations in every DEM's CRS, at their heights: `[dem][station]`.
    pub station_points: Vec<Vec<Point>>,
    /// Each station's longitude and latitude, degrees, on the finest DEM's datum.
    pub station_lon_lat: Vec<(f64, f64)>,
    /// The stations' densities (with a station file).
    pub densities: Option<StationDensities>,
    pub water: Option<WaterSet>,
    pub field_inner: Option<FieldInner>,
    /// Things the user should know about how the inputs were taken.
    pub notes: Vec<String>,
}

/// How a station is called in a list: `station V07 (line 8)`.
pub fn station_name(table: &StationTable, i: usize) -> String {
    let s = &table.stations[i];
    format!("station {} (line {})", s.id, s.line)
}

/// Where a station is, to begin a sentence: `stations.csv line 8: station V07`.
pub fn station_place(table: &StationTable, i: usize) -> String {
    let s = &table.stations[i];
    format!("{} line {}: station {}", table.path.display(), s.line, s.id)
}

impl Opened {
    /// Opens the DEMs (headers only) and reads the station file, if any, in the finest
    /// DEM's CRS.
    pub fn open(tc: &TcSettings) -> anyhow::Result<Opened> {
        let dems = OpenedDems::open(&tc.dems, tc.dem_nodata)?;
        let stations = match &tc.stations {
            None => None,
            Some(src) => Some(read_stations(
                &src.path,
                &src.columns,
                src.crs.as_deref(),
                dems.primary_crs(),
                &src.text,
            )?),
        };
        Ok(Opened { dems, stations })
    }

    /// The stations' positions in the finest DEM's CRS (empty without a station file).
    pub fn station_xy(&self) -> Vec<(f64, f64)> {
        self.stations
            .as_ref()
            .map(|t| t.stations.iter().map(|s| (s.x, s.y)).collect())
            .unwrap_or_default()
    }

    /// Reads the DEMs where the discs around the footprint points (in the finest DEM's
    /// CRS) need them, and everything else the settings ask for.
    pub fn read(self, tc: &TcSettings, footprint: &[(f64, f64)]) -> anyhow::Result<Inputs> {
        let radius = tc.engine.outer_radius_m;
        // The plan's checks (the radius against the inner zone) before any heights are read.
        tc.plan(self.dems.primary_cell_m())?;
        let Opened { dems, stations } = self;
        let points = match &stations {
            Some(t) => t.path.display().to_string(),
            None => "the grid".to_string(),
        };
        let mut dems = dems.read(footprint, Some(radius), &points)?;
        let station_points = match &stations {
            None => Vec::new(),
            Some(table) => {
                let xy: Vec<(f64, f64)> = table.stations.iter().map(|s| (s.x, s.y)).collect();
                let located = dems.locate(&xy, &|i| {
                    format!("{}: {}", table.path.display(), station_name(table, i))
                })?;
                located
                    .iter()
                    .map(|per_dem| {
                        per_dem
                            .iter()
                            .zip(&table.stations)
                            .map(|(&(x, y), s)| Point { x, y, elev: s.elev })
                            .collect()
                    })
                    .collect()
            }
        };
        let water = match &tc.water {
            Some(w) => Some(WaterSet::build(&dems.dems, w)?),
            None => None,
        };
        let densities = match (&tc.density, &stations) {
            (
                DensityModel::Raster {
                    path,
                    reference_kg_m3,
                },
                table,
            ) => {
                let raster = DensityRaster::read(path)?;
                raster.apply(
                    &mut dems.dems,
                    *reference_kg_m3,
                    &station_points,
                    radius,
                    tc.allow_gaps,
                    &|i| match table {
                        Some(t) => t.stations[i].id.clone(),
                        None => format!("point {}", i + 1),
                    },
                )?;
                let bouguer = match table {
                    Some(t) => {
                        let xy: Vec<(f64, f64)> = t.stations.iter().map(|s| (s.x, s.y)).collect();
                        Some(raster.at_points(&dems.base_crs, &xy, &|i| station_name(t, i))?)
                    }
                    None => None,
                };
                bouguer.map(|b| StationDensities {
                    tc_kg_m3: vec![*reference_kg_m3; b.len()],
                    bouguer_kg_m3: b,
                    varying: true,
                })
            }
            (DensityModel::Constant(d), Some(t)) => Some(StationDensities {
                bouguer_kg_m3: vec![*d; t.stations.len()],
                tc_kg_m3: vec![*d; t.stations.len()],
                varying: false,
            }),
            (
                DensityModel::Column {
                    name,
                    default_kg_m3,
                },
                Some(t),
            ) => {
                let d = t.density_column(name, *default_kg_m3)?;
                Some(StationDensities {
                    bouguer_kg_m3: d.clone(),
                    tc_kg_m3: d,
                    varying: true,
                })
            }
            (_, None) => None,
        };
        dems.build_union(footprint, radius)?;
        let station_lon_lat = match &stations {
            None => Vec::new(),
            Some(t) => {
                let xy: Vec<(f64, f64)> = t.stations.iter().map(|s| (s.x, s.y)).collect();
                crate::dem::crs::lon_lat_on_datum(&dems.base_crs, &xy).map_err(|e| {
                    anyhow::anyhow!(
                        "{}: the stations' longitudes and latitudes cannot be derived from the finest DEM's CRS ({e}); give the DEM a CRS PROJ knows",
                        t.path.display()
                    )
                })?
            }
        };
        let field_inner = match (&tc.field_inner, &stations) {
            (Some(f), Some(t)) => Some(FieldInner::read(t, f)?),
            _ => None,
        };
        let notes = dems.notes.clone();
        Ok(Inputs {
            dems,
            stations,
            station_points,
            station_lon_lat,
            densities,
            water,
            field_inner,
            notes,
        })
    }
}

impl Inputs {
    /// The station table (commands that need one have checked it is there).
    pub fn table(&self) -> &StationTable {
        self.stations
            .as_ref()
            .expect("the command requires a station file")
    }

    /// Number of stations.
    pub fn station_count(&self) -> usize {
        self.stations
            .as_ref()
            .map(|t| t.stations.len())
            .unwrap_or(0)
    }

    /// Cell size of the finest DEM read, m: what the zone plan is built for.
    pub fn cell_m(&self) -> f64 {
        self.dems.finest().cell_size_m()
    }
}
