//! What the reduction chain reads from the station file: observed gravity, the geoid
//! undulation, and each station's geodetic latitude (through PROJ), checked before the
//! long run.

use super::stations::{parse_number, StationTable};
use crate::config::ReductionSettings;
use crate::dem::crs::{geodetic_lon_lat, CrsError};
use anyhow::bail;

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

/// What the reduction needs of each station.
#[derive(Debug, Clone, PartialEq)]
pub struct GravityData {
    /// Observed gravity, mGal as read (`None`: empty field).
    pub observed_mgal: Vec<Option<f64>>,
    /// Geodetic latitude, degrees.
    pub latitude_deg: Vec<f64>,
    /// Ellipsoidal height h used by the reduction, m.
    pub height_m: Vec<f64>,
    /// Whether the heights came from orthometric heights plus an undulation column.
    pub from_undulation: bool,
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

/// Reads the observed gravity and what goes with it; `None` when the file has no
/// gravity column. `crs_wkt` is the CRS of the stations' positions (`x`, `y`).
pub fn read(
    table: &StationTable,
    settings: &ReductionSettings,
    crs_wkt: &str,
) -> anyhow::Result<Option<GravityData>> {
    let col = match &settings.gravity_col {
        Some(name) => Some(table.named_column(name, "--gravity-col")?),
        None => table.find_column(GRAVITY_NAMES),
    };
    let Some(col) = col else {
        if settings.undulation_col.is_some() {
            bail!(
                "{}: --undulation-col is given but the file has no observed gravity column (looked for {}); name it with --gravity-col, or leave out --undulation-col",
                table.path.display(),
                GRAVITY_NAMES.join(", ")
            );
        }
        return Ok(None);
    };
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
    let undulation_col = match &settings.undulation_col {
        Some(name) => Some(table.named_column(name, "--undulation-col")?),
        None => None,
    };
    let mut height_m = Vec::with_capacity(table.stations.len());
    for (i, s) in table.stations.iter().enumerate() {
        height_m.push(match undulation_col {
            None => s.elev,
            Some(c) => {
                let n = parse_number(
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
    let points: Vec<(f64, f64)> = table.stations.iter().map(|s| (s.x, s.y)).collect();
    let latitude_deg = geodetic_lon_lat(crs_wkt, &points)
        .map_err(|e| {
            let detail = match &e {
                CrsError::Build { .. } | CrsError::Unknown { .. } => format!(
                    "the stations' latitudes, which normal gravity needs, cannot be derived from the DEM's CRS ({e}); give the DEM a CRS that PROJ knows"
                ),
                CrsError::Point { x, y, .. } => {
                    let s = table
                        .stations
                        .iter()
                        .find(|s| s.x == *x && s.y == *y)
                        .map(|s| format!("line {}: station {}: ", s.line, s.id))
                        .unwrap_or_default();
                    format!(
                        "{s}its position ({x}, {y}) in the DEM's CRS has no geodetic latitude ({e}), which normal gravity needs; check the coordinates and the station CRS"
                    )
                }
            };
            anyhow::anyhow!("{}: {detail}", table.path.display())
        })?
        .into_iter()
        .map(|(_, lat)| lat)
        .collect();
    Ok(Some(GravityData {
        observed_mgal,
        latitude_deg,
        height_m,
        from_undulation: undulation_col.is_some(),
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

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
}
