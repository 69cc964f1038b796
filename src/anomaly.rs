//! The reduction chain in the `correct` table: from observed gravity to the complete
//! Bouguer anomaly, each step its own column, and the density of each station.
//!
//! The formulas are in [`crate::reduce`]; this module reads what they need from the
//! station file (observed gravity, density, geoid undulation), derives the geodetic
//! latitude of every station through PROJ, checks it all before the long run, and adds
//! the columns to the table.
//!
//! # Columns
//!
//! After the zone columns (`tc_far_mgal`, and `tc_water_mgal` when water is on):
//!
//! | column | meaning | sign in the anomaly |
//! |---|---|---|
//! | `density_kg_m3` | the station's density (only with `--density-col`) | |
//! | `latitude_deg` | geodetic latitude (WGS 84 / GRS80), 8 decimals | |
//! | `ellipsoidal_height_m` | h = H + N (only with `--undulation-col`) | |
//! | `observed_gravity_mgal` | g_obs as read, rounded | + |
//! | `normal_gravity_mgal` | gamma0(phi) on the ellipsoid, Somigliana | - |
//! | `free_air_corr_mgal` | FAC(phi, h) | + |
//! | `atmos_corr_mgal` | dg_atm(h) | + |
//! | `bouguer_corr_mgal` | BC(rho, h): cap (spherical) or slab (planar) | - |
//! | `free_air_anomaly_mgal` | FAA = g_obs - gamma0 + FAC + dg_atm | |
//! | `simple_bouguer_anomaly_mgal` | SBA = FAA - BC | |
//! | `complete_bouguer_anomaly_mgal` | CBA = SBA + tc_mgal | |
//!
//! Every number has 4 decimals, and each anomaly is the sum of the printed columns
//! (computed in units of 0.0001 mGal), so the table adds up by hand exactly; against
//! the unrounded sums the anomalies differ by at most 0.0003 mGal. A station with an
//! empty gravity field gets its corrections but empty `observed_gravity_mgal` and
//! anomaly fields (never a NaN).
//!
//! # Heights
//!
//! The free-air, atmospheric and Bouguer corrections want the ellipsoidal height h
//! (Hinze et al. 2005). The terrain correction wants the station and DEM heights on one
//! datum, which for most DEMs is orthometric (H). With `--undulation-col` the station
//! heights are taken as orthometric and h = H + N is used for the reduction; without it
//! the heights are used as given for both (then an orthometric height in the reduction
//! shifts the CBA by about 0.1966 N mGal, SCIENCE.md 5.7).
//!
//! # Density models
//!
//! [`DensityModel::Constant`] (`--density`, 2670 by default) and
//! [`DensityModel::Column`] (`--density-col`): the terrain correction is `G rho K` with the
//! engine's kernel sum `K` computed once at unit density, so it is exactly linear in the
//! station's density, and the Bouguer correction uses the same density. A density raster
//! (a density per DEM cell) cannot be written that way: the engine has to weight each
//! element by its own density, and it would come in as a third variant whose terrain
//! correction is taken from the engine's result instead of `G rho K`.

use crate::app::{check_density, Inputs, Settings};
use crate::cli::{EllipsoidArg, FreeAirArg, ReductionArgs, RunArgs};
use crate::engine::Convention;
use crate::output::{fixed, Table};
use crate::reduce::{reduce, BouguerModel, Ellipsoid, FreeAirModel, ReductionInput};
use crate::stations::{geodetic_latitudes, StationTable};
use crate::water::{WaterGrids, WaterSettings};
use crate::zones::ZonePlan;
use anyhow::{bail, Context};

/// Names tried, in order, for the observed-gravity column (case-insensitive).
pub const GRAVITY_NAMES: &[&str] = &[
    "gravity",
    "g_obs",
    "gobs",
    "g",
    "grav",
    "observed_gravity",
    "obs_gravity",
    "gravity_mgal",
    "g_mgal",
];

/// Observed gravity outside this range (mGal) is no absolute value on the Earth's surface:
/// normal gravity runs from 978 033 (equator) to 983 219 (poles), and anomalies, heights
/// up to 9 km and depths add less than about 5 000 mGal either way. Our bounds.
pub const PLAUSIBLE_GRAVITY_MGAL: (f64, f64) = (970_000.0, 985_000.0);

/// Largest geoid undulation accepted, m. The geoid departs from the ellipsoid by about
/// -106 to +85 m (from memory); this leaves room and catches wrong units.
pub const UNDULATION_LIMIT_M: f64 = 150.0;

/// Where each station's density comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum DensityModel {
    /// One density for every station, kg/m3.
    Constant(f64),
    /// A column of the station file; an empty field takes `default_kg_m3`.
    Column { name: String, default_kg_m3: f64 },
    /// A raster: the terrain correction's elements each take their own density (see
    /// [`crate::density`]); each station's Bouguer correction takes the density under it.
    /// `reference_kg_m3` is `--density`, the unit of the engine's weighted kernel sums.
    Raster {
        path: std::path::PathBuf,
        reference_kg_m3: f64,
    },
}

impl DensityModel {
    /// The density of every station, kg/m3, each checked like `--density`.
    pub fn densities(&self, table: &StationTable, crs_wkt: &str) -> anyhow::Result<Vec<f64>> {
        match self {
            DensityModel::Constant(rho) => Ok(vec![*rho; table.stations.len()]),
            DensityModel::Raster { path, .. } => crate::density::at_stations(path, table, crs_wkt),
            DensityModel::Column {
                name,
                default_kg_m3,
            } => {
                let col = table.named_column(name, "--density-col")?;
                let mut out = Vec::with_capacity(table.stations.len());
                for (i, s) in table.stations.iter().enumerate() {
                    let value = match table.optional_number(i, col)? {
                        None => *default_kg_m3,
                        Some(v) => {
                            let place = format!(
                                "{} line {}: station {}: density (column '{}')",
                                table.path.display(),
                                s.line,
                                s.id,
                                table.headers[col]
                            );
                            check_density(v, &place)?
                        }
                    };
                    out.push(value);
                }
                Ok(out)
            }
        }
    }
}

/// Checked settings of the reduction chain.
#[derive(Debug, Clone, PartialEq)]
pub struct ReductionSettings {
    /// Observed-gravity column named by the user (`None`: found by [`GRAVITY_NAMES`]).
    pub gravity_col: Option<String>,
    /// Geoid-undulation column, when the station heights are orthometric.
    pub undulation_col: Option<String>,
    pub density: DensityModel,
    pub ellipsoid: Ellipsoid,
    pub free_air: FreeAirModel,
    pub water: Option<WaterSettings>,
}

impl ReductionSettings {
    /// Checks the reduction options; `density_kg_m3` is the checked `--density`.
    pub fn from_args(args: &ReductionArgs, density_kg_m3: f64) -> anyhow::Result<Self> {
        let density = match (&args.density_col, &args.density_raster) {
            (_, Some(path)) => DensityModel::Raster {
                path: path.clone(),
                reference_kg_m3: density_kg_m3,
            },
            (None, None) => DensityModel::Constant(density_kg_m3),
            (Some(name), None) => DensityModel::Column {
                name: name.clone(),
                default_kg_m3: density_kg_m3,
            },
        };
        Ok(ReductionSettings {
            gravity_col: args.gravity_col.clone(),
            undulation_col: args.undulation_col.clone(),
            density,
            ellipsoid: match args.ellipsoid {
                EllipsoidArg::Grs80 => Ellipsoid::Grs80,
                EllipsoidArg::Wgs84 => Ellipsoid::Wgs84,
            },
            free_air: match args.free_air {
                FreeAirArg::SecondOrder => FreeAirModel::SecondOrder,
                FreeAirArg::FirstOrder => FreeAirModel::FirstOrder,
            },
            water: WaterSettings::from_args(args.water_density, args.water_surface.as_deref())?,
        })
    }
}

/// What the reduction needs of each station with gravity.
#[derive(Debug, Clone, PartialEq)]
pub struct GravityData {
    /// Observed gravity, mGal (`None`: empty field).
    pub observed_mgal: Vec<Option<f64>>,
    /// Geodetic latitude, degrees.
    pub latitude_deg: Vec<f64>,
    /// Ellipsoidal height h used by the reduction, m.
    pub height_m: Vec<f64>,
    /// Whether the heights came from orthometric heights plus an undulation column.
    pub from_undulation: bool,
}

/// Everything the chain adds to a run, read and checked before the engine starts.
#[derive(Debug, Clone)]
pub struct Chain {
    /// Density of each station, kg/m3 (its Bouguer correction; printed with a column or a
    /// raster).
    pub densities: Vec<f64>,
    /// The density that turns each station's kernel sum into its TC, kg/m3: the station's
    /// own, or with a raster (whose densities are in the engine's weights) `--density`.
    pub tc_densities: Vec<f64>,
    /// Whether the densities came from a column (then they are printed).
    pub density_column: bool,
    /// `None` when the station file has no observed gravity.
    pub gravity: Option<GravityData>,
    /// The water bodies, when water is on.
    pub water: Option<WaterGrids>,
    pub ellipsoid: Ellipsoid,
    pub free_air: FreeAirModel,
    pub bouguer: BouguerModel,
}

/// Reads and checks the chain's inputs: densities, observed gravity, undulations,
/// latitudes, and the water grids. Fails with one sentence naming the line and station.
pub fn prepare(
    inputs: &Inputs,
    settings: &Settings,
    reduction: &ReductionSettings,
) -> anyhow::Result<Chain> {
    let table = &inputs.stations;
    let densities = reduction.density.densities(table, &inputs.dem.crs_wkt)?;
    let tc_densities = match &reduction.density {
        DensityModel::Raster {
            reference_kg_m3, ..
        } => vec![*reference_kg_m3; densities.len()],
        _ => densities.clone(),
    };
    let gravity_col = match &reduction.gravity_col {
        Some(name) => Some(table.named_column(name, "--gravity-col")?),
        None => table.find_column(GRAVITY_NAMES),
    };
    let gravity = match gravity_col {
        None => {
            if reduction.undulation_col.is_some() {
                bail!(
                    "{}: --undulation-col is given but the file has no observed gravity column (looked for {}); name it with --gravity-col, or leave out --undulation-col",
                    table.path.display(),
                    GRAVITY_NAMES.join(", ")
                );
            }
            None
        }
        Some(col) => Some(read_gravity(inputs, col, reduction)?),
    };
    let water = match &reduction.water {
        None => None,
        Some(w) => {
            let grids = WaterGrids::build(&inputs.dem, w)?;
            grids.check_stations(&inputs.dem, table, settings.engine.inner_model)?;
            Some(grids)
        }
    };
    Ok(Chain {
        densities,
        tc_densities,
        density_column: !matches!(reduction.density, DensityModel::Constant(_)),
        gravity,
        water,
        ellipsoid: reduction.ellipsoid,
        free_air: reduction.free_air,
        bouguer: match settings.engine.convention {
            Convention::Spherical => BouguerModel::SphericalCap,
            Convention::Planar => BouguerModel::Slab,
        },
    })
}

/// Checks one observed gravity value: absolute, in mGal.
pub fn check_gravity(value: f64, place: &str) -> anyhow::Result<f64> {
    let (lo, hi) = PLAUSIBLE_GRAVITY_MGAL;
    if (lo..=hi).contains(&value) {
        return Ok(value);
    }
    let hint = if (lo * 1e-5..=hi * 1e-5).contains(&value) {
        "this looks like m/s2; give mGal (multiply by 100000)"
    } else if (lo * 1e-3..=hi * 1e-3).contains(&value) {
        "this looks like Gal; give mGal (multiply by 1000)"
    } else if (lo * 1e3..=hi * 1e3).contains(&value) {
        "this looks like microGal; give mGal (divide by 1000)"
    } else {
        "these look like relative meter readings or another unit; tie them to an absolute base and give absolute gravity in mGal"
    };
    bail!(
        "{place}: observed gravity {value} mGal is far from any value on the Earth ({lo} to {hi} mGal); {hint}"
    )
}

fn read_gravity(
    inputs: &Inputs,
    col: usize,
    reduction: &ReductionSettings,
) -> anyhow::Result<GravityData> {
    let table = &inputs.stations;
    let place = |i: usize, col: usize| {
        let s = &table.stations[i];
        format!(
            "{} line {}: station {} (column '{}')",
            table.path.display(),
            s.line,
            s.id,
            table.headers[col]
        )
    };
    let mut observed_mgal = Vec::with_capacity(table.stations.len());
    for i in 0..table.stations.len() {
        observed_mgal.push(match table.optional_number(i, col)? {
            None => None,
            Some(v) => Some(check_gravity(v, &place(i, col))?),
        });
    }
    let undulation_col = match &reduction.undulation_col {
        Some(name) => Some(table.named_column(name, "--undulation-col")?),
        None => None,
    };
    let mut height_m = Vec::with_capacity(table.stations.len());
    for (i, s) in table.stations.iter().enumerate() {
        height_m.push(match undulation_col {
            None => s.elev,
            Some(c) => {
                let n = crate::stations::parse_number(
                    &table.path,
                    s.line,
                    &s.id,
                    &table.headers[c],
                    &table.records[i][c],
                )?;
                if n.abs() > UNDULATION_LIMIT_M {
                    bail!(
                        "{}: geoid undulation {n} m is no undulation on the Earth (they lie within about +-110 m); check the column and its unit (metres)",
                        place(i, c)
                    );
                }
                crate::reduce::geoid_to_ellipsoidal(s.elev, n)
            }
        });
    }
    let latitude_deg = geodetic_latitudes(table, &inputs.dem.crs_wkt)?;
    Ok(GravityData {
        observed_mgal,
        latitude_deg,
        height_m,
        from_undulation: undulation_col.is_some(),
    })
}

/// A value in units of 0.0001 mGal (the table's last decimal).
fn units(value: f64, what: &str) -> anyhow::Result<i64> {
    if !value.is_finite() {
        bail!("internal error: {what} is not finite ({value}); please report this with the input that caused it");
    }
    Ok((value * 1e4).round() as i64)
}

/// Text of a value in units of 0.0001, with 4 decimals.
fn units_text(u: i64) -> String {
    let sign = if u < 0 { "-" } else { "" };
    let a = u.unsigned_abs();
    format!("{sign}{}.{:04}", a / 10_000, a % 10_000)
}

impl Chain {
    /// The water's part of each station's TC, mGal (`None` when water is off): two more
    /// engine runs, on the water bottom and the water surface.
    pub fn water_mgal(
        &self,
        inputs: &Inputs,
        settings: &Settings,
        plan: &ZonePlan,
        run: &RunArgs,
    ) -> anyhow::Result<Option<Vec<f64>>> {
        let Some(grids) = &self.water else {
            return Ok(None);
        };
        let points = inputs.points();
        let k =
            grids.kernel_difference_m(settings.engine, plan, &points, run.threads, run.quiet)?;
        Ok(Some(k.into_iter().map(|k| grids.effect_mgal(k)).collect()))
    }

    /// Names of the columns the chain adds, in order.
    pub fn column_names(&self) -> Vec<&'static str> {
        let mut names = Vec::new();
        if self.density_column {
            names.push("density_kg_m3");
        }
        if let Some(g) = &self.gravity {
            names.push("latitude_deg");
            if g.from_undulation {
                names.push("ellipsoidal_height_m");
            }
            names.extend([
                "observed_gravity_mgal",
                "normal_gravity_mgal",
                "free_air_corr_mgal",
                "atmos_corr_mgal",
                "bouguer_corr_mgal",
                "free_air_anomaly_mgal",
                "simple_bouguer_anomaly_mgal",
                "complete_bouguer_anomaly_mgal",
            ]);
        }
        names
    }

    /// Adds the chain's columns to the `correct` table, after `tc_water_mgal` (or
    /// `tc_far_mgal`), reading each station's `tc_mgal` as printed.
    pub fn add_columns(&self, table: &mut Table, stations: &StationTable) -> anyhow::Result<()> {
        let names = self.column_names();
        if names.is_empty() {
            return Ok(());
        }
        let at = table
            .column("tc_water_mgal")
            .or_else(|| table.column("tc_far_mgal"))
            .context("internal error: the table has no tc_far_mgal column")?
            + 1;
        let tc_col = table
            .column("tc_mgal")
            .context("internal error: the table has no tc_mgal column")?;
        for (i, row) in table.rows.iter_mut().enumerate() {
            let s = &stations.stations[i];
            let what = |col: &str| format!("{col} of station {}", s.id);
            let mut fields = Vec::with_capacity(names.len());
            if self.density_column {
                fields.push(format!("{}", self.densities[i]));
            }
            if let Some(g) = &self.gravity {
                fields.extend(self.reduction_fields(g, i, &row[tc_col], &what)?);
            }
            row.splice(at..at, fields);
        }
        table
            .headers
            .splice(at..at, names.into_iter().map(str::to_string));
        Ok(())
    }

    /// The gravity fields of station `i`, from `latitude_deg` on.
    fn reduction_fields(
        &self,
        g: &GravityData,
        i: usize,
        tc_text: &str,
        what: &dyn Fn(&str) -> String,
    ) -> anyhow::Result<Vec<String>> {
        let r = reduce(&ReductionInput {
            observed_mgal: 0.0,
            latitude_deg: g.latitude_deg[i],
            height_m: g.height_m[i],
            density_kg_m3: self.densities[i],
            tc_mgal: 0.0,
            ellipsoid: self.ellipsoid,
            free_air: self.free_air,
            bouguer: self.bouguer,
        });
        let mut fields = vec![fixed(g.latitude_deg[i], 8, &what("latitude_deg"))?];
        if g.from_undulation {
            fields.push(fixed(g.height_m[i], 3, &what("ellipsoidal_height_m"))?);
        }
        let normal = units(r.normal_gravity_mgal, &what("normal_gravity_mgal"))?;
        let fac = units(r.free_air_corr_mgal, &what("free_air_corr_mgal"))?;
        let atm = units(r.atmos_corr_mgal, &what("atmos_corr_mgal"))?;
        let bc = units(r.bouguer_corr_mgal, &what("bouguer_corr_mgal"))?;
        let tc_value: f64 = tc_text
            .parse()
            .with_context(|| format!("internal error: tc_mgal '{tc_text}' is not a number"))?;
        let tc = units(tc_value, &what("tc_mgal"))?;
        let observed = match g.observed_mgal[i] {
            Some(v) => Some(units(v, &what("observed_gravity_mgal"))?),
            None => None,
        };
        let text = |u: Option<i64>| u.map(units_text).unwrap_or_default();
        let faa = observed.map(|o| o - normal + fac + atm);
        let sba = faa.map(|f| f - bc);
        let cba = sba.map(|s| s + tc);
        fields.push(text(observed));
        for u in [normal, fac, atm, bc] {
            fields.push(units_text(u));
        }
        for u in [faa, sba, cba] {
            fields.push(text(u));
        }
        Ok(fields)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn help_lists_every_gravity_name() {
        use clap::CommandFactory;
        let cli = crate::cli::Cli::command();
        let correct = cli.find_subcommand("correct").unwrap();
        let arg = correct
            .get_arguments()
            .find(|a| a.get_id() == "gravity_col")
            .unwrap();
        let help = arg.get_help().unwrap().to_string();
        let listed = help.split_once("common names (").unwrap().1;
        let listed = listed.split_once(')').unwrap().0;
        let listed: Vec<&str> = listed.split(", ").collect();
        assert_eq!(listed, GRAVITY_NAMES, "{help}");
    }

    #[test]
    fn units_print_with_four_decimals_and_no_negative_zero() {
        assert_eq!(units_text(0), "0.0000");
        assert_eq!(units_text(-5), "-0.0005");
        assert_eq!(units_text(9_806_651_234), "980665.1234");
        assert_eq!(units_text(-1_234_567), "-123.4567");
        assert_eq!(units(0.00004, "x").unwrap(), 0);
        assert_eq!(units(-0.00006, "x").unwrap(), -1);
        assert!(units(f64::NAN, "x").is_err());
    }

    #[test]
    fn implausible_gravity_is_refused_with_a_hint() {
        assert_eq!(check_gravity(980_123.4, "p").unwrap(), 980_123.4);
        for (value, hint) in [
            (9.80123, "m/s2"),
            (980.123, "Gal"),
            (980_123_400.0, "microGal"),
            (1234.5, "relative meter readings"),
            (-3.2, "relative meter readings"),
            (990_000.0, "relative meter readings"),
        ] {
            let e = check_gravity(value, "f.csv line 3: station A")
                .unwrap_err()
                .to_string();
            assert!(
                e.starts_with("f.csv line 3: station A: observed gravity") && e.contains(hint),
                "{value}: {e}"
            );
        }
    }
}
