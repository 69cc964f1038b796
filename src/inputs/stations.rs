//! Station list: reading (a text table or a point layer, see [`super::records`]), column
//! detection and coordinate transformation (PROJ).
//!
//! A text file needs a header. Columns are found by common names (case-insensitive) or
//! named with options; the header `station,x,y,elev` works as is. Coordinates are taken
//! to be in the DEM's CRS unless a station CRS is given; longitude/latitude columns
//! (`lon`, `lat`) imply EPSG:4326. A point layer gives the positions and their CRS
//! itself, and the height from a column (or the points' own z). Heights are used as
//! given: they must be on the DEM's vertical datum, and lie within
//! [`HEIGHT_RANGE_M`].

use super::records::{self, TextOptions, ECHO_MAX};
use crate::config::{check_density, ColumnChoice};
use crate::dem::crs::Transform;
use crate::text::cut;
use std::collections::HashMap;
use std::path::{Path, PathBuf};

/// Names tried, in order, for each needed column.
pub const STATION_NAMES: &[&str] = &["station", "id", "name", "station_id", "stn"];
/// Names tried for the easting.
pub const X_NAMES: &[&str] = &["x", "east", "easting", "e"];
/// Names tried for the northing.
pub const Y_NAMES: &[&str] = &["y", "north", "northing", "n"];
/// Names tried for the longitude (implies EPSG:4326 unless a CRS is given).
pub const LON_NAMES: &[&str] = &["lon", "long", "longitude"];
/// Names tried for the latitude.
pub const LAT_NAMES: &[&str] = &["lat", "latitude"];
/// Names tried for the station height.
pub const ELEV_NAMES: &[&str] = &["elev", "elevation", "z", "h", "height", "elev_m"];

/// Station heights accepted, m: the deepest ocean trench (about -11 km) to the highest
/// summit (about 8.85 km), each with a margin (from memory; our bounds). A height outside
/// is a wrong value or unit, not a place on the Earth.
pub const HEIGHT_RANGE_M: (f64, f64) = (-12_000.0, 9_500.0);

/// Why the station file could not be used; one sentence each.
#[derive(Debug, thiserror::Error)]
pub enum StationError {
    #[error("{path}: file not found; check the path given with --stations")]
    NotFound { path: String },
    #[error("{path}: {detail}")]
    Unreadable { path: String, detail: String },
    #[error("{path}: no column for {what} (looked for {tried}); columns found: {found}; name it with {option}")]
    MissingColumn {
        path: String,
        what: &'static str,
        tried: String,
        found: String,
        option: &'static str,
    },
    #[error("{path}: the column '{name}' given with {option} is not in the header; columns found: {found}")]
    NamedColumnMissing {
        path: String,
        name: String,
        option: &'static str,
        found: String,
    },
    #[error("{path} line {line}: {detail}")]
    Value {
        path: String,
        line: u64,
        detail: String,
    },
    #[error("{path} line {line}: station {id} is listed twice (first on line {first}); give each station a unique id")]
    Duplicate {
        path: String,
        line: u64,
        id: String,
        first: u64,
    },
    #[error("{path}: the file has a header but no stations")]
    Empty { path: String },
    #[error("{path}: {detail}")]
    Crs { path: String, detail: String },
}

/// One station, with coordinates in the DEM's CRS.
#[derive(Debug, Clone, PartialEq)]
pub struct Station {
    /// Station id as written in the file.
    pub id: String,
    /// Easting in the DEM's CRS, m.
    pub x: f64,
    /// Northing in the DEM's CRS, m.
    pub y: f64,
    /// Station height as given (same vertical datum as the DEM), m.
    pub elev: f64,
    /// Line of the file the station came from (1 = header).
    pub line: u64,
    /// Coordinates as written in the file (before any transformation).
    pub input_xy: (f64, f64),
}

/// The station file: stations plus every column, so other parts can read optional
/// columns (observed gravity, density, legacy corrections) with the same error style.
#[derive(Debug, Clone)]
pub struct StationTable {
    pub path: PathBuf,
    pub headers: Vec<String>,
    pub stations: Vec<Station>,
    /// Raw fields of each station's row, in header order.
    pub records: Vec<Vec<String>>,
    /// CRS of the coordinates in the file (`None`: the DEM's).
    pub input_crs: Option<String>,
    /// The columns ringsum read (id, and the x, y and height columns of a text file).
    pub used_columns: Vec<usize>,
    /// The columns other parts looked up and read (gravity, undulation, density, field
    /// inner zone, legacy corrections), through [`StationTable::find_column`] and
    /// [`StationTable::named_column`].
    looked_up: LookedUp,
}

/// Columns looked up in a table shared by reference (the lookups take `&self`).
#[derive(Debug, Default)]
struct LookedUp(std::sync::Mutex<Vec<usize>>);

impl LookedUp {
    fn add(&self, col: usize) {
        let mut cols = self.0.lock().unwrap_or_else(|p| p.into_inner());
        if !cols.contains(&col) {
            cols.push(col);
        }
    }

    fn get(&self) -> Vec<usize> {
        self.0.lock().unwrap_or_else(|p| p.into_inner()).clone()
    }
}

impl Clone for LookedUp {
    fn clone(&self) -> LookedUp {
        LookedUp(std::sync::Mutex::new(self.get()))
    }
}

impl StationTable {
    /// The file's other columns (those ringsum did not read: neither the station's id,
    /// position and height nor a column looked up for its values), in file order.
    pub fn other_columns(&self) -> Vec<usize> {
        let looked_up = self.looked_up.get();
        (0..self.headers.len())
            .filter(|c| !self.used_columns.contains(c) && !looked_up.contains(c))
            .collect()
    }

    /// Index of a column found by the given names (case-insensitive), or by the name the
    /// user gave; a column found is one ringsum reads (not carried to the tables).
    pub fn find_column(&self, names: &[&str]) -> Option<usize> {
        let col = find_column(&self.headers, names);
        if let Some(c) = col {
            self.looked_up.add(c);
        }
        col
    }

    /// Index of a column named explicitly, with an error listing the columns if absent;
    /// a column found is one ringsum reads (not carried to the tables).
    pub fn named_column(&self, name: &str, option: &'static str) -> Result<usize, StationError> {
        let col = find_column(&self.headers, &[name]).ok_or_else(|| {
            StationError::NamedColumnMissing {
                path: self.path.display().to_string(),
                name: cut(name, ECHO_MAX),
                option,
                found: columns_found(&self.headers),
            }
        })?;
        self.looked_up.add(col);
        Ok(col)
    }

    /// The density of every station from the column `name` (kg/m3, each checked like
    /// `--density`); an empty field takes `default_kg_m3`.
    pub fn density_column(&self, name: &str, default_kg_m3: f64) -> anyhow::Result<Vec<f64>> {
        let col = self.named_column(name, "--density-col")?;
        let mut out = Vec::with_capacity(self.stations.len());
        for (i, s) in self.stations.iter().enumerate() {
            let value = match self.optional_number(i, col)? {
                None => default_kg_m3,
                Some(v) => {
                    let place = format!(
                        "{} line {}: station {}: density (column '{}')",
                        self.path.display(),
                        s.line,
                        s.id,
                        self.headers[col]
                    );
                    check_density(v, &place)?
                }
            };
            out.push(value);
        }
        Ok(out)
    }

    /// Parses column `col` of station `i` as a finite number; empty fields give `None`.
    pub fn optional_number(&self, i: usize, col: usize) -> Result<Option<f64>, StationError> {
        let text = self.records[i][col].trim();
        if text.is_empty() {
            return Ok(None);
        }
        parse_number(
            &self.path,
            self.stations[i].line,
            &self.stations[i].id,
            &self.headers[col],
            text,
        )
        .map(Some)
    }
}

/// The header's columns as a message lists them: each name cut to [`ECHO_MAX`], the
/// list to 200 characters.
fn columns_found(headers: &[String]) -> String {
    let names: Vec<String> = headers.iter().map(|h| cut(h, ECHO_MAX)).collect();
    cut(&names.join(", "), 200)
}

fn find_column(headers: &[String], names: &[&str]) -> Option<usize> {
    names.iter().find_map(|name| {
        headers
            .iter()
            .position(|h| h.trim().eq_ignore_ascii_case(name.trim()))
    })
}

/// Parses a finite number, or says on which line, for which station and column it fails.
pub fn parse_number(
    path: &Path,
    line: u64,
    id: &str,
    column: &str,
    text: &str,
) -> Result<f64, StationError> {
    let err = |what: String| StationError::Value {
        path: path.display().to_string(),
        line,
        detail: format!("station {id}: {what}; fix the value or remove the station"),
    };
    let t = text.trim();
    if t.is_empty() {
        return Err(err(format!("column '{column}' is empty")));
    }
    let t = &cut(t, ECHO_MAX);
    match t.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(_) => Err(err(format!(
            "column '{column}' is '{t}', not a finite number"
        ))),
        Err(_) => Err(err(format!("column '{column}' is '{t}', not a number"))),
    }
}

/// Reads the station file.
///
/// `dem_crs_wkt` is the CRS the stations are converted to. `stations_crs` (EPSG code, PROJ
/// string or WKT) names the CRS of the file's coordinates; without it, x/y columns are
/// taken to be in the DEM's CRS, lon/lat columns in EPSG:4326, and a point layer's in
/// its own CRS.
pub fn read_stations(
    path: &Path,
    columns: &ColumnChoice,
    stations_crs: Option<&str>,
    dem_crs_wkt: &str,
    text: &TextOptions,
) -> Result<StationTable, StationError> {
    let p = path.display().to_string();
    if !path.exists() {
        return Err(StationError::NotFound { path: p });
    }
    let raw = records::read(path, text).map_err(|detail| StationError::Unreadable {
        path: p.clone(),
        detail,
    })?;
    let headers = raw.headers.clone();
    let found = columns_found(&headers);
    let locate = |given: &Option<String>,
                  names: &[&str],
                  option: &'static str|
     -> Result<Option<usize>, StationError> {
        match given {
            Some(name) => find_column(&headers, &[name.as_str()])
                .map(Some)
                .ok_or_else(|| StationError::NamedColumnMissing {
                    path: p.clone(),
                    name: cut(name, ECHO_MAX),
                    option,
                    found: found.clone(),
                }),
            None => Ok(find_column(&headers, names)),
        }
    };
    let missing =
        |what: &'static str, names: &[&str], option: &'static str| StationError::MissingColumn {
            path: p.clone(),
            what,
            tried: names.join(", "),
            found: found.clone(),
            option,
        };
    let id_col = locate(&columns.station, STATION_NAMES, "--station-col")?
        .ok_or_else(|| missing("the station id", STATION_NAMES, "--station-col"))?;
    let elev_col = locate(&columns.elev, ELEV_NAMES, "--elev-col")?;
    // A layer's points without a height column give their own z.
    let layer_z = raw
        .points
        .as_ref()
        .filter(|pts| elev_col.is_none() && pts.iter().all(|q| q.2.is_some()));
    if elev_col.is_none() && layer_z.is_none() {
        return Err(missing("the station height", ELEV_NAMES, "--elev-col"));
    }
    let (x_col, y_col, input_crs) = match &raw.points {
        // A layer in the DEM's own CRS needs no conversion (and gets no x_dem, y_dem),
        // as a text file without --stations-crs.
        Some(_) => (
            None,
            None,
            stations_crs.map(str::to_string).or(raw
                .crs
                .clone()
                .filter(|crs| !crate::dem::crs::same_crs(crs, dem_crs_wkt))),
        ),
        None => {
            let mut x_col = locate(&columns.x, X_NAMES, "--x-col")?;
            let mut y_col = locate(&columns.y, Y_NAMES, "--y-col")?;
            let mut implied_crs = None;
            if x_col.is_none() && y_col.is_none() {
                let lon = find_column(&headers, LON_NAMES);
                let lat = find_column(&headers, LAT_NAMES);
                if let (Some(lon), Some(lat)) = (lon, lat) {
                    x_col = Some(lon);
                    y_col = Some(lat);
                    implied_crs = Some("EPSG:4326");
                }
            }
            let x =
                x_col.ok_or_else(|| missing("the easting (or longitude)", X_NAMES, "--x-col"))?;
            let y =
                y_col.ok_or_else(|| missing("the northing (or latitude)", Y_NAMES, "--y-col"))?;
            (
                Some(x),
                Some(y),
                stations_crs.or(implied_crs).map(str::to_string),
            )
        }
    };

    let mut stations = Vec::new();
    let mut records = Vec::new();
    let mut first_line: HashMap<String, u64> = HashMap::new();
    for (k, (line, record)) in raw.rows.iter().enumerate() {
        let line = *line;
        let id = record
            .get(id_col)
            .map(|s| s.trim())
            .unwrap_or("")
            .to_string();
        if id.is_empty() {
            return Err(StationError::Value {
                path: p.clone(),
                line,
                detail: format!(
                    "the station id (column '{}') is empty; give every station an id",
                    headers[id_col]
                ),
            });
        }
        if let Some(&first) = first_line.get(&id) {
            return Err(StationError::Duplicate {
                path: p.clone(),
                line,
                id: cut(&id, ECHO_MAX),
                first,
            });
        }
        first_line.insert(id.clone(), line);
        let field = |col: usize| record.get(col).map(String::as_str).unwrap_or("");
        let (x, y) = match (&raw.points, x_col, y_col) {
            (Some(pts), _, _) => (pts[k].0, pts[k].1),
            (None, Some(xc), Some(yc)) => (
                parse_number(path, line, &id, &headers[xc], field(xc))?,
                parse_number(path, line, &id, &headers[yc], field(yc))?,
            ),
            _ => unreachable!("text tables have x and y columns"),
        };
        let elev = match (elev_col, layer_z) {
            (Some(ec), _) => parse_number(path, line, &id, &headers[ec], field(ec))?,
            (None, Some(pts)) => pts[k].2.expect("checked: every point has z"),
            (None, None) => unreachable!("a height is found above"),
        };
        if !(HEIGHT_RANGE_M.0..=HEIGHT_RANGE_M.1).contains(&elev) {
            return Err(StationError::Value {
                path: p.clone(),
                line,
                detail: format!(
                    "station {}: the height {} m is outside the Earth's relief ({} to {} m); check the value and its unit (metres)",
                    cut(&id, ECHO_MAX),
                    match elev_col {
                        Some(ec) => cut(field(ec).trim(), ECHO_MAX),
                        None => format!("{elev:e}"),
                    },
                    HEIGHT_RANGE_M.0,
                    HEIGHT_RANGE_M.1
                ),
            });
        }
        stations.push(Station {
            id,
            x,
            y,
            elev,
            line,
            input_xy: (x, y),
        });
        records.push(record.clone());
    }
    if stations.is_empty() {
        return Err(StationError::Empty { path: p });
    }
    if let Some(crs) = &input_crs {
        transform_stations(&mut stations, crs, dem_crs_wkt).map_err(|detail| {
            StationError::Crs {
                path: p.clone(),
                detail,
            }
        })?;
    }
    let used_columns = [Some(id_col), x_col, y_col, elev_col]
        .into_iter()
        .flatten()
        .collect();
    Ok(StationTable {
        path: path.to_path_buf(),
        headers,
        stations,
        records,
        input_crs,
        used_columns,
        looked_up: LookedUp::default(),
    })
}

/// Converts station coordinates from `from` (EPSG code, PROJ string or WKT) to the DEM's CRS.
fn transform_stations(stations: &mut [Station], from: &str, to_wkt: &str) -> Result<(), String> {
    // The CRS as messages name it (a WKT definition can be long).
    let name = cut(from, ECHO_MAX);
    let (from, definition) = (name.as_str(), from);
    if to_wkt.is_empty() {
        return Err(format!(
            "the stations are in {from} but the DEM has no CRS to convert them to; give the DEM a CRS"
        ));
    }
    let transform = Transform::between(definition, to_wkt, from, "the DEM's CRS").map_err(|e| {
        format!(
            "{e}; give an EPSG code such as EPSG:32633 or a valid PROJ string with --stations-crs"
        )
    })?;
    for s in stations.iter_mut() {
        let (x, y) = transform.convert(s.input_xy.0, s.input_xy.1).map_err(|e| {
            format!(
                "line {}: station {}: coordinates ({}, {}) cannot be converted from {from} ({e}); check the coordinates and the station CRS",
                s.line, s.id, s.input_xy.0, s.input_xy.1
            )
        })?;
        s.x = x;
        s.y = y;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Write;

    /// Reads a station file of this text with the default options.
    fn read_text(text: &str) -> Result<StationTable, StationError> {
        let f = write(text);
        read_stations(
            f.path(),
            &ColumnChoice::default(),
            None,
            "",
            &TextOptions::default(),
        )
    }

    fn write(text: &str) -> tempfile::NamedTempFile {
        let mut f = tempfile::NamedTempFile::new().unwrap();
        f.write_all(text.as_bytes()).unwrap();
        f
    }

    #[test]
    fn plain_header_works() {
        let t = read_text("station,x,y,elev\nA1,100,200,300.5\nA2,110,210,301\n").unwrap();
        assert_eq!(t.stations.len(), 2);
        assert_eq!(t.stations[0].id, "A1");
        assert_eq!(t.stations[0].elev, 300.5);
        assert_eq!(t.stations[1].line, 3);
    }

    #[test]
    fn common_names_are_found_case_insensitively() {
        let t = read_text("Name,Easting,Northing,Elevation,gravity\nB,1,2,3,978000\n").unwrap();
        assert_eq!(t.stations[0].x, 1.0);
        assert_eq!(t.stations[0].elev, 3.0);
    }

    #[test]
    fn bad_values_name_the_line() {
        let e = read_text("station,x,y,elev\nA,1,2,3\nB,1,2,abc\n")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("line 3") && e.contains("station B") && e.contains("abc"),
            "{e}"
        );
        let e = read_text("station,x,y,elev\nA,1,2,NaN\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("not a finite number"), "{e}");
        let e = read_text("station,x,y,elev\nA,1,,3\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("'y' is empty"), "{e}");
    }

    #[test]
    fn missing_column_lists_what_was_found() {
        let e = read_text("station,x,y,height_above\nA,1,2,3\n")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("columns found: station, x, y, height_above") && e.contains("--elev-col"),
            "{e}"
        );
    }

    #[test]
    fn duplicates_are_refused() {
        let e = read_text("station,x,y,elev\nA,1,2,3\nB,1,2,3\nA,5,5,5\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 4") && e.contains("first on line 2"), "{e}");
    }
}
