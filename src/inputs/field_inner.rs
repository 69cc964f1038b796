//! Field-estimated inner-zone corrections: for stations whose file gives one (a value
//! from Hammer's chart or from a surveyed ring of heights, say), it replaces the DEMs'
//! part within the radius it covers. The DEMs' own value there is kept beside it, so the
//! two can be compared.

use super::stations::StationTable;
use crate::config::FieldInnerSettings;
use crate::zones::InnerZone;
use anyhow::bail;

/// The field values of a run.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldInner {
    /// Radius the values cover, m.
    pub radius_m: f64,
    /// Each station's value, mGal (`None` where the field is empty).
    pub values_mgal: Vec<Option<f64>>,
}

impl FieldInner {
    /// Reads the column (checked: numbers, not negative).
    pub fn read(table: &StationTable, settings: &FieldInnerSettings) -> anyhow::Result<FieldInner> {
        let col = table.named_column(&settings.column, "--field-inner-col")?;
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
        Ok(FieldInner {
            radius_m: settings.radius_m,
            values_mgal: values,
        })
    }

    /// The inner zone of each station: the field value's disc where there is a value.
    pub fn zones(&self) -> Vec<Option<InnerZone>> {
        self.values_mgal
            .iter()
            .map(|v| {
                v.map(|_| InnerZone::Disc {
                    radius_m: self.radius_m,
                })
            })
            .collect()
    }
}
