//! The per-station table of `correct`, in one documented column order.
//!
//! A fixed set first, then optional groups, each only when it applies, always in this
//! order, so a column never moves relative to another between runs:
//!
//! | group | columns | when |
//! |---|---|---|
//! | fixed | `station`, `x`, `y`, `lon`, `lat`, `elev_m`, `dem_elev_m`, `elev_minus_dem_m`, `tc_mgal`, `tc_inner_mgal`, `tc_near_mgal`, `tc_mid_mgal`, `tc_far_mgal`, `coverage` | always |
//! | converted coordinates | `x_dem`, `y_dem` | `--stations-crs` (or lon/lat columns) |
//! | water | `tc_water_mgal` | `--water-density` |
//! | field inner zone | `tc_inner_field_mgal`, `tc_inner_dem_mgal` | `--field-inner-col` |
//! | zones | `tc_zone_<name>_mgal` per zone | `--zones hammer` or a plan file |
//! | several DEMs | `dems_inner`, `dems_near`, `dems_mid`, `dems_far`, `coverage_dem1`, ... | more than one DEM read |
//! | density | `density_kg_m3` | `--density-col` or `--density-raster` |
//! | reduction | `latitude_deg`, `ellipsoidal_height_m` (with `--undulation-col`), `observed_gravity_mgal`, `normal_gravity_mgal`, `free_air_corr_mgal`, `atmos_corr_mgal`, `bouguer_corr_mgal`, `free_air_anomaly_mgal`, `simple_bouguer_anomaly_mgal`, `complete_bouguer_anomaly_mgal` | a gravity column |
//! | the station file's own | every column ringsum did not read, unchanged (`input_NAME` where NAME is one of ringsum's) | unless `--drop-station-columns` |
//!
//! Corrections have 4 decimals (mGal). The zone-group parts (and the water's) are rounded
//! so that they add up to `tc_mgal` exactly, the zone columns so that they add up to
//! `tc_mgal` less the inner zone and the water; each anomaly is the sum of the printed
//! columns (computed in units of 0.0001 mGal), so the table adds up by hand exactly.

use super::table::{from_units, parts_adding_up, to_units, Cell, Table};
use crate::inputs::Inputs;
use crate::results::{PointTc, ReductionTerms, GROUPS};
use crate::units::{to_mgal, MGAL};
use crate::zones::ZonePlan;
use std::f64::consts::PI;

/// Decimals of the corrections (mGal).
pub const MGAL_DECIMALS: i32 = 4;

/// The zone columns of a plan: each name with the rings it sums (see
/// [`ZonePlan::zone_columns`]); empty unless the plan has per-zone columns.
pub fn zone_columns(plan: &ZonePlan) -> Vec<(String, Vec<usize>)> {
    plan.zone_columns()
        .into_iter()
        .map(|z| (z.name, z.rings.collect()))
        .collect()
}

/// The columns every per-station table starts with.
pub const LEADING_COLUMNS: [&str; 8] = [
    "station",
    "x",
    "y",
    "lon",
    "lat",
    "elev_m",
    "dem_elev_m",
    "elev_minus_dem_m",
];

/// The station columns every station table starts with, the converted coordinates, and
/// the station file's own other columns, carried to the end.
pub struct StationColumns {
    /// Whether the file's coordinates were converted (x_dem, y_dem are written).
    pub converted: bool,
    /// Decimals of the converted coordinates (more for degrees).
    pub dem_decimals: u8,
    /// The station file's other columns carried to the output (indices in the file).
    pub carried: Vec<usize>,
}

impl StationColumns {
    /// The columns of `inputs`' stations; the file's other columns are carried unless
    /// `carry` is false.
    pub fn of(inputs: &Inputs, carry: bool) -> StationColumns {
        StationColumns {
            converted: inputs.table().input_crs.is_some(),
            dem_decimals: if inputs.dems.base_kind == crate::dem::GridKind::Projected {
                3
            } else {
                // 1e-8 degree is about a millimetre.
                8
            },
            carried: if carry {
                inputs.table().other_columns()
            } else {
                Vec::new()
            },
        }
    }

    /// `station`, `x`, `y` of station `i` as in the file, and its longitude and latitude
    /// on the finest DEM's datum.
    pub fn leading(&self, inputs: &Inputs, i: usize) -> Vec<Cell> {
        let s = &inputs.table().stations[i];
        let (lon, lat) = inputs.station_lon_lat[i];
        vec![
            Cell::text(&s.id),
            Cell::trimmed(s.input_xy.0, 8),
            Cell::trimmed(s.input_xy.1, 8),
            Cell::num(lon, 8),
            Cell::num(lat, 8),
        ]
    }

    /// The names of the carried columns, given `taken` (the table's own columns): a name
    /// that is one of them gets the prefix `input_`.
    pub fn carried_headers(&self, inputs: &Inputs, taken: &[String]) -> Vec<String> {
        let table = inputs.table();
        self.carried
            .iter()
            .map(|&c| {
                let h = &table.headers[c];
                if taken.iter().any(|t| t.eq_ignore_ascii_case(h)) {
                    format!("input_{h}")
                } else {
                    h.clone()
                }
            })
            .collect()
    }

    /// The carried fields of station `i`, unchanged.
    pub fn carried_cells(&self, inputs: &Inputs, i: usize) -> Vec<Cell> {
        let record = &inputs.table().records[i];
        self.carried
            .iter()
            .map(|&c| Cell::text(record.get(c).cloned().unwrap_or_default()))
            .collect()
    }

    /// Where each station is, for the GIS formats: as in the file (in its CRS) and in
    /// longitude and latitude; `repeat` rows per station.
    pub fn points(&self, inputs: &Inputs, repeat: usize) -> super::table::RowPoints {
        let table = inputs.table();
        let crs = table
            .input_crs
            .clone()
            .unwrap_or_else(|| inputs.dems.base_crs.clone());
        let mut points = super::table::RowPoints {
            crs,
            ..Default::default()
        };
        for (s, &ll) in table.stations.iter().zip(&inputs.station_lon_lat) {
            for _ in 0..repeat {
                points.xy.push(s.input_xy);
                points.lon_lat.push(ll);
            }
        }
        points
    }

    /// `x_dem`, `y_dem` of station `i` when converted.
    pub fn converted(&self, inputs: &Inputs, i: usize) -> Vec<Cell> {
        if !self.converted {
            return Vec::new();
        }
        let s = &inputs.table().stations[i];
        vec![
            Cell::num(s.x, self.dem_decimals),
            Cell::num(s.y, self.dem_decimals),
        ]
    }
}

/// The table of `correct`: one row per station (`results[i]` for station `i`), with the
/// reduction's columns when `reduction` holds each station's terms (and whether the
/// heights came from an undulation column).
pub fn correct_table(
    inputs: &Inputs,
    plan: &ZonePlan,
    results: &[PointTc],
    reduction: Option<(&[ReductionTerms], bool)>,
    carry: bool,
) -> anyhow::Result<Table> {
    let stations = StationColumns::of(inputs, carry);
    let zones = zone_columns(plan);
    let water = inputs.water.is_some();
    let field = inputs.field_inner.is_some();
    let several = inputs.dems.dems.len() > 1;
    let densities = inputs.densities.as_ref().filter(|d| d.varying);
    let mut headers: Vec<String> = LEADING_COLUMNS
        .iter()
        .chain(&[
            "tc_mgal",
            "tc_inner_mgal",
            "tc_near_mgal",
            "tc_mid_mgal",
            "tc_far_mgal",
            "coverage",
        ])
        .map(|s| s.to_string())
        .collect();
    if stations.converted {
        headers.extend(["x_dem".into(), "y_dem".into()]);
    }
    if water {
        headers.push("tc_water_mgal".into());
    }
    if field {
        headers.extend(["tc_inner_field_mgal".into(), "tc_inner_dem_mgal".into()]);
    }
    headers.extend(zones.iter().map(|(name, _)| format!("tc_zone_{name}_mgal")));
    if several {
        for g in ["inner", "near", "mid", "far"] {
            headers.push(format!("dems_{g}"));
        }
        for k in 1..=inputs.dems.dems.len() {
            headers.push(format!("coverage_dem{k}"));
        }
    }
    if densities.is_some() {
        headers.push("density_kg_m3".into());
    }
    if let Some((_, undulation)) = reduction {
        headers.push("latitude_deg".into());
        if undulation {
            headers.push("ellipsoidal_height_m".into());
        }
        headers.extend(
            [
                "observed_gravity_mgal",
                "normal_gravity_mgal",
                "free_air_corr_mgal",
                "atmos_corr_mgal",
                "bouguer_corr_mgal",
                "free_air_anomaly_mgal",
                "simple_bouguer_anomaly_mgal",
                "complete_bouguer_anomaly_mgal",
            ]
            .iter()
            .map(|s| s.to_string()),
        );
    }
    let carried = stations.carried_headers(inputs, &headers);
    headers.extend(carried);
    let mut table = Table::new(&headers);
    table.check_unique_headers("rename the plan's ring so that its column differs")?;
    table.points = Some(stations.points(inputs, 1));
    let disc = PI * plan_outer(plan).powi(2);
    for (i, r) in results.iter().enumerate() {
        let s = &inputs.table().stations[i];
        let mgal = to_mgal;
        let tc = mgal(r.tc_m_s2());
        let mut parts: Vec<f64> = GROUPS
            .iter()
            .map(|&g| mgal(r.group_m_s2(plan, g)))
            .collect();
        if water {
            parts.push(mgal(r.water_m_s2()));
        }
        let (tc_rounded, parts) = parts_adding_up(tc, &parts, MGAL_DECIMALS);
        let water_rounded = if water { parts[4] } else { 0.0 };
        let mut row = stations.leading(inputs, i);
        row.push(Cell::num(s.elev, 3));
        row.push(Cell::num(r.dem_elev_m, 3));
        row.push(Cell::num(s.elev - r.dem_elev_m, 3));
        row.push(Cell::num(tc_rounded, 4));
        row.extend(parts[..4].iter().map(|&v| Cell::num(v, 4)));
        row.push(Cell::num(r.coverage, 4));
        row.extend(stations.converted(inputs, i));
        if water {
            row.push(Cell::num(water_rounded, 4));
        }
        if field {
            match r.field_inner {
                Some(f) => {
                    row.push(Cell::num(mgal(f.field_m_s2), 4));
                    row.push(Cell::num(mgal(f.dem_m_s2), 4));
                }
                None => row.extend([Cell::Empty, Cell::Empty]),
            }
        }
        if !zones.is_empty() {
            let values: Vec<f64> = zones
                .iter()
                .map(|(_, rings)| {
                    mgal(r.rock_m_s2(rings.iter().map(|&k| r.rings_m[k]).sum::<f64>()))
                })
                .collect();
            let (_, values) = parts_adding_up(
                tc_rounded - parts[0] - water_rounded,
                &values,
                MGAL_DECIMALS,
            );
            row.extend(values.into_iter().map(|v| Cell::num(v, 4)));
        }
        if several {
            row.extend(provenance(r));
            for d in &r.per_dem {
                row.push(Cell::num((d.area_m2() / disc).min(1.0), 4));
            }
        }
        if let Some(d) = densities {
            row.push(Cell::trimmed(d.bouguer_kg_m3[i], 3));
        }
        if let Some((terms, undulation)) = reduction {
            row.extend(reduction_cells(&terms[i], undulation, tc_rounded));
        }
        row.extend(stations.carried_cells(inputs, i));
        table.push(&s.id, row);
    }
    Ok(table)
}

/// The outer radius of a plan, m.
fn plan_outer(plan: &ZonePlan) -> f64 {
    plan.rings.last().map(|r| r.outer_m).unwrap_or(0.0)
}

/// For each zone group, the DEMs (numbered from 1, finest first, joined by `+`) that
/// served it: those with more than a thousandth of the group's area (the inner zone:
/// the serving DEM).
fn provenance(r: &PointTc) -> Vec<Cell> {
    (0..4)
        .map(|g| {
            let total: f64 = r.per_dem.iter().map(|d| d.group_area_m2[g]).sum();
            let served: Vec<String> = r
                .per_dem
                .iter()
                .enumerate()
                .filter(|(k, d)| d.group_area_m2[g] > 1e-3 * total && (g != 0 || *k == r.serving))
                .map(|(k, _)| (k + 1).to_string())
                .collect();
            Cell::text(served.join("+"))
        })
        .collect()
}

/// The reduction's cells of one station: latitude, the ellipsoidal height (with an
/// undulation column), observed gravity, the corrections and the anomalies, each anomaly
/// the sum of the printed columns before it (`tc_mgal` as printed, `tc_rounded`).
fn reduction_cells(t: &ReductionTerms, undulation: bool, tc_rounded: f64) -> Vec<Cell> {
    let units = |m_s2: f64| to_units(m_s2 / MGAL, MGAL_DECIMALS);
    let value = |u: i64| Cell::num(from_units(u, MGAL_DECIMALS), 4);
    let mut cells = vec![Cell::num(t.latitude_deg, 8)];
    if undulation {
        cells.push(Cell::num(t.height_m, 3));
    }
    let observed = t.observed_m_s2.map(units);
    let (normal, fac, atm, bc) = (
        units(t.normal_m_s2),
        units(t.free_air_m_s2),
        units(t.atmospheric_m_s2),
        units(t.bouguer_m_s2),
    );
    let tc = to_units(tc_rounded, MGAL_DECIMALS);
    let faa = observed.map(|o| o - normal + fac + atm);
    let sba = faa.map(|f| f - bc);
    let cba = sba.map(|s| s + tc);
    let opt = |u: Option<i64>| u.map_or(Cell::Empty, value);
    cells.push(opt(observed));
    cells.extend([normal, fac, atm, bc].into_iter().map(value));
    cells.extend([faa, sba, cba].into_iter().map(opt));
    cells
}
