//! Tables of typed cells and their CSV writer: numbers stay numbers (with the decimals
//! they are shown with) until the writer formats them.

use super::files::{write_atomically, TableTarget};
use anyhow::bail;
use std::io::Write;

/// One field of a table.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    Text(String),
    /// A number shown with `decimals` decimals (trailing zeros cut when `trim`).
    Num {
        value: f64,
        decimals: u8,
        trim: bool,
    },
    /// No value (written as an empty field).
    Empty,
}

impl Cell {
    /// A number with a fixed number of decimals.
    pub fn num(value: f64, decimals: u8) -> Cell {
        Cell::Num {
            value,
            decimals,
            trim: false,
        }
    }

    /// A number with at most `decimals` decimals, trailing zeros cut.
    pub fn trimmed(value: f64, decimals: u8) -> Cell {
        Cell::Num {
            value,
            decimals,
            trim: true,
        }
    }

    /// A number, or an empty field.
    pub fn opt(value: Option<f64>, decimals: u8) -> Cell {
        value.map_or(Cell::Empty, |v| Cell::num(v, decimals))
    }

    /// Text.
    pub fn text(s: impl Into<String>) -> Cell {
        Cell::Text(s.into())
    }

    /// The number in the cell, if any.
    pub fn value(&self) -> Option<f64> {
        match self {
            Cell::Num { value, .. } => Some(*value),
            _ => None,
        }
    }

    /// The field as text; a number that is not finite is an error (no NaN reaches an
    /// output).
    pub fn format(&self) -> Result<String, f64> {
        match self {
            Cell::Text(s) => Ok(s.clone()),
            Cell::Empty => Ok(String::new()),
            &Cell::Num {
                value,
                decimals,
                trim,
            } => {
                if !value.is_finite() {
                    return Err(value);
                }
                let d = decimals as usize;
                Ok(if trim {
                    crate::text::trimmed(value, d)
                } else {
                    fixed(value, d)
                })
            }
        }
    }
}

/// A finite number with `decimals` decimals and no negative zero ("-0.0000").
pub fn fixed(value: f64, decimals: usize) -> String {
    let s = format!("{value:.decimals$}");
    if s.trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        return s.trim_start_matches('-').to_string();
    }
    s
}

/// A value in whole units of the last of `decimals` decimals (e.g. 0.0001 mGal): the one
/// rounding every table uses where printed columns must add up exactly.
pub fn to_units(value: f64, decimals: i32) -> i64 {
    (value * 10f64.powi(decimals)).round() as i64
}

/// The value of `units` whole units of the last of `decimals` decimals.
pub fn from_units(units: i64, decimals: i32) -> f64 {
    units as f64 / 10f64.powi(decimals)
}

/// Rounds `parts` to `decimals` so that the rounded parts add up to the rounded total
/// exactly: the rounding difference (at most a few units of the last decimal) goes to
/// the largest part. Returns the rounded total and parts.
pub fn parts_adding_up(total: f64, parts: &[f64], decimals: i32) -> (f64, Vec<f64>) {
    let total_units = to_units(total, decimals);
    let mut units: Vec<i64> = parts.iter().map(|&v| to_units(v, decimals)).collect();
    let diff = total_units - units.iter().sum::<i64>();
    if let Some(largest) =
        (0..parts.len()).max_by(|&a, &b| parts[a].abs().total_cmp(&parts[b].abs()))
    {
        units[largest] += diff;
    }
    (
        from_units(total_units, decimals),
        units.into_iter().map(|u| from_units(u, decimals)).collect(),
    )
}

/// Where each row of a table is (its station), for the GIS formats.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RowPoints {
    /// Position of each row in `crs`.
    pub xy: Vec<(f64, f64)>,
    /// The CRS of `xy`, as WKT or another definition GDAL reads.
    pub crs: String,
    /// Longitude and latitude of each row, degrees.
    pub lon_lat: Vec<(f64, f64)>,
}

/// A table with a header.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Table {
    pub headers: Vec<String>,
    pub rows: Vec<Vec<Cell>>,
    /// What each row is, for messages (a station id): `row_names[i]` names row `i`.
    pub row_names: Vec<String>,
    /// Where each row is (tables of stations), for GeoPackage and GeoJSON.
    pub points: Option<RowPoints>,
}

impl Table {
    /// An empty table with these column names.
    pub fn new<S: AsRef<str>>(headers: &[S]) -> Table {
        Table {
            headers: headers.iter().map(|h| h.as_ref().to_string()).collect(),
            rows: Vec::new(),
            row_names: Vec::new(),
            points: None,
        }
    }

    /// Adds a row named `name` (for messages).
    pub fn push(&mut self, name: impl Into<String>, row: Vec<Cell>) {
        debug_assert_eq!(row.len(), self.headers.len(), "a row per header");
        self.row_names.push(name.into());
        self.rows.push(row);
    }

    /// Index of a column by name.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.headers.iter().position(|h| h == name)
    }

    /// Refuses a header that names one column twice, naming the column and what to do.
    pub fn check_unique_headers(&self, fix: &str) -> anyhow::Result<()> {
        for (i, h) in self.headers.iter().enumerate() {
            if self.headers[..i].contains(h) {
                bail!("the table would have two columns named {h}; {fix}");
            }
        }
        Ok(())
    }

    /// Refuses a number that is not finite (no NaN reaches an output), naming where.
    pub fn check_finite(&self) -> anyhow::Result<()> {
        for (r, row) in self.rows.iter().enumerate() {
            for (c, cell) in row.iter().enumerate() {
                if let Err(v) = cell.format() {
                    anyhow::bail!(
                        "internal error: {} of {} is not finite ({v}); please report this with the input that caused it",
                        self.headers[c],
                        self.row_names.get(r).map(String::as_str).unwrap_or("a row")
                    );
                }
            }
        }
        Ok(())
    }

    /// The table as CSV.
    pub fn to_csv(&self) -> anyhow::Result<Vec<u8>> {
        self.check_finite()?;
        let mut writer = csv::Writer::from_writer(Vec::new());
        writer.write_record(&self.headers)?;
        for row in &self.rows {
            let fields: Vec<String> = row
                .iter()
                .map(|cell| cell.format().unwrap_or_default())
                .collect();
            writer.write_record(&fields)?;
        }
        writer.into_inner().map_err(|e| anyhow::anyhow!("{e}"))
    }

    /// Writes the table to its target.
    pub fn write(&self, target: &TableTarget) -> anyhow::Result<()> {
        match target {
            TableTarget::Stdout => {
                let bytes = self.to_csv()?;
                let mut out = std::io::stdout().lock();
                out.write_all(&bytes)?;
                out.flush()?;
                Ok(())
            }
            TableTarget::Csv(path) => write_atomically(path, &self.to_csv()?),
            TableTarget::GeoPackage(path) => super::vector::write_geopackage(path, self),
            TableTarget::GeoJson(path) => super::vector::write_geojson(path, self),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cells_refuse_nan_and_have_no_negative_zero() {
        assert!(Cell::num(f64::NAN, 3).format().is_err());
        assert_eq!(Cell::num(-0.00001, 4).format().unwrap(), "0.0000");
        assert_eq!(Cell::num(1.23456, 2).format().unwrap(), "1.23");
        assert_eq!(Cell::trimmed(494324.080, 8).format().unwrap(), "494324.08");
        assert_eq!(Cell::Empty.format().unwrap(), "");
    }

    #[test]
    fn parts_add_up_to_the_rounded_total() {
        let (t, p) = parts_adding_up(1.00005, &[0.33335, 0.33335, 0.33335], 4);
        assert_eq!(t, 1.0001);
        assert_eq!(
            p.iter().map(|&v| to_units(v, 4)).sum::<i64>(),
            to_units(t, 4)
        );
        assert_eq!(to_units(-0.00006, 4), -1);
        assert_eq!(fixed(from_units(9_806_651_234, 4), 4), "980665.1234");
    }

    #[test]
    fn a_repeated_header_is_refused() {
        let t = Table::new(&["a", "b", "a"]);
        let e = t.check_unique_headers("rename it").unwrap_err().to_string();
        assert!(e.contains("two columns named a; rename it"), "{e}");
    }
}
