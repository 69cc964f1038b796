//! Field-estimated inner-zone corrections: for stations whose file gives one (a value
//! from Hammer's chart or from a surveyed ring of heights, say), it replaces the DEM's
//! part within the radius it covers. The DEM's own value there is kept in a column
//! beside it, so the two can be compared.

use crate::app::Settings;
use crate::engine::StationResult;
use crate::output::{fixed, Table};
use crate::stations::StationTable;
use crate::units::{format_length, G, MGAL};
use crate::zones::InnerZone;
use anyhow::bail;

/// The field values of a run.
pub struct FieldInner {
    /// Radius the values cover, m.
    pub radius_m: f64,
    /// Each station's value, mGal (`None` where the field is empty).
    pub values: Vec<Option<f64>>,
}

impl FieldInner {
    /// Reads the column named by `--field-inner-col` (checked: numbers, not negative) and
    /// the radius of `--field-inner-radius` (positive, within the outer radius).
    pub fn prepare(
        table: &StationTable,
        settings: &Settings,
        column: Option<&str>,
        radius: Option<&str>,
    ) -> anyhow::Result<Option<FieldInner>> {
        let (Some(column), Some(radius)) = (column, radius) else {
            return Ok(None);
        };
        let radius_m = crate::app::check_radius(radius, "--field-inner-radius")?;
        if radius_m >= settings.engine.outer_radius_m {
            bail!(
                "--field-inner-radius {}: the field inner zone must lie inside the outer radius {}",
                format_length(radius_m),
                format_length(settings.engine.outer_radius_m)
            );
        }
        let col = table.named_column(column, "--field-inner-col")?;
        let mut values = Vec::with_capacity(table.stations.len());
        for (i, s) in table.stations.iter().enumerate() {
            let v = table.optional_number(i, col)?;
            if let Some(v) = v {
                if v < 0.0 {
                    bail!(
                        "{} line {}: station {}: the field inner-zone correction {v} is negative; a terrain correction of the zones next to a station is not, so check the value",
                        table.path.display(),
                        s.line,
                        s.id
                    );
                }
            }
            values.push(v);
        }
        Ok(Some(FieldInner { radius_m, values }))
    }

    /// The inner zone of each station: the field value's disc where there is a value.
    pub fn zones(&self) -> Vec<Option<InnerZone>> {
        self.values
            .iter()
            .map(|v| {
                v.map(|_| InnerZone::Disc {
                    radius_m: self.radius_m,
                })
            })
            .collect()
    }

    /// Puts the field values in place of the DEM's inner parts (at each station's density)
    /// and returns the DEM's values, mGal.
    pub fn apply(&self, results: &mut [StationResult], densities: &[f64]) -> Vec<Option<f64>> {
        results
            .iter_mut()
            .zip(&self.values)
            .zip(densities)
            .map(|((r, v), &rho)| {
                v.map(|field| {
                    let dem = G * rho * r.inner_m / MGAL;
                    r.inner_m = field * MGAL / (G * rho);
                    dem
                })
            })
            .collect()
    }

    /// Adds `tc_inner_field_mgal` and `tc_inner_dem_mgal` (empty where there is no field
    /// value).
    pub fn add_columns(&self, table: &mut Table, dem_values: &[Option<f64>]) -> anyhow::Result<()> {
        table.headers.push("tc_inner_field_mgal".into());
        table.headers.push("tc_inner_dem_mgal".into());
        for ((row, v), d) in table.rows.iter_mut().zip(&self.values).zip(dem_values) {
            match (v, d) {
                (Some(v), Some(d)) => {
                    row.push(fixed(*v, 4, "a field inner-zone value")?);
                    row.push(fixed(*d, 4, "a DEM inner-zone value")?);
                }
                _ => {
                    row.push(String::new());
                    row.push(String::new());
                }
            }
        }
        Ok(())
    }
}
