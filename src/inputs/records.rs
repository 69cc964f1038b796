//! Reading a table of records: a delimited text file (CSV and its kin) or a point layer
//! of any vector format GDAL/OGR reads (GeoPackage, Shapefile, GeoJSON, FlatGeobuf, ...).
//!
//! Text files: the delimiter is found from the header line (comma, semicolon, tab, or
//! runs of spaces) unless given; lines starting with `#` are comments; an empty file is
//! called empty; a file that is not UTF-8 is named as such (Latin-1 can be read with an
//! option; UTF-16 is recognised by its byte-order mark); a header naming one column twice
//! is refused; echoed values are cut to a readable length.

pub use crate::config::{Delimiter, Encoding, TextOptions};
use crate::text::cut;
use gdal::vector::LayerAccess;
use std::path::Path;

/// Longest value echoed in a message, characters.
pub const ECHO_MAX: usize = 40;

/// Records as read: the header, each row with its line (or feature number), and for a
/// vector layer each feature's point and the layer's CRS.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Records {
    pub headers: Vec<String>,
    pub rows: Vec<(u64, Vec<String>)>,
    /// Point geometry of each row (x, y, and z when the layer has heights).
    pub points: Option<Vec<(f64, f64, Option<f64>)>>,
    /// CRS of the layer's geometry, as WKT.
    pub crs: Option<String>,
    /// How each row is called in messages: `line` for text, `feature` for layers.
    pub row_word: &'static str,
}

/// File name endings read as vector layers through OGR.
pub const VECTOR_EXTENSIONS: &[&str] = &[
    "gpkg", "shp", "geojson", "json", "fgb", "gml", "kml", "sqlite", "tab", "mif",
];

/// Whether `path` is read as a vector layer (by its ending).
pub fn is_vector(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .map(|e| VECTOR_EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
        .unwrap_or(false)
}

/// Reads the records of `path` (a text table, or a vector layer by its ending).
pub fn read(path: &Path, options: &TextOptions) -> Result<Records, String> {
    if is_vector(path) {
        read_layer(path)
    } else {
        read_text(path, options)
    }
}

/// Decodes the bytes of a text file.
fn decode(bytes: Vec<u8>, encoding: Encoding) -> Result<String, String> {
    if bytes.starts_with(&[0xFF, 0xFE]) || bytes.starts_with(&[0xFE, 0xFF]) {
        return Err("the file is UTF-16 text; save it as UTF-8".into());
    }
    match encoding {
        Encoding::Latin1 => Ok(bytes.iter().map(|&b| b as char).collect()),
        Encoding::Utf8 => String::from_utf8(bytes).map_err(|e| {
            let at = e.utf8_error().valid_up_to();
            let line = e.as_bytes()[..at].iter().filter(|&&b| b == b'\n').count() + 1;
            format!(
                "the file is not UTF-8 text (byte 0x{:02X} on line {line}); save it as UTF-8, or give --encoding latin-1 if it is Latin-1",
                e.as_bytes()[at]
            )
        }),
    }
}

/// The delimiter of a header line: the most frequent of comma, semicolon and tab, else
/// runs of spaces.
fn detect(header: &str) -> Delimiter {
    let count = |c: char| header.matches(c).count();
    let candidates = [
        (count(','), Delimiter::Comma),
        (count(';'), Delimiter::Semicolon),
        (count('\t'), Delimiter::Tab),
    ];
    let best = candidates.iter().max_by_key(|(n, _)| *n).expect("three");
    if best.0 > 0 {
        best.1
    } else {
        Delimiter::Spaces
    }
}

/// What a file holding NUL bytes is, as a sentence's end: no text table has them.
fn not_text(path: &Path, bytes: &[u8]) -> String {
    crate::dem::read::catch_gdal_messages();
    let raster = gdal::Dataset::open_ex(
        path,
        gdal::DatasetOptions {
            open_flags: gdal::GdalOpenFlags::GDAL_OF_RASTER | gdal::GdalOpenFlags::GDAL_OF_READONLY,
            ..Default::default()
        },
    );
    // Forget whatever GDAL said while trying.
    let _ = crate::dem::read::gdal_says("");
    if raster.is_ok() {
        return "this is a raster, not a station table; DEMs go with --dem, and stations as a text table or a point layer".into();
    }
    // ASCII text in UTF-16 has every other byte zero.
    let head = &bytes[..bytes.len().min(200)];
    let zeros = |parity: usize| {
        head.iter()
            .enumerate()
            .filter(|(i, &b)| i % 2 == parity && b == 0)
            .count()
    };
    if head.len() >= 4 && (zeros(0) * 2 >= head.len() - 1 || zeros(1) * 2 >= head.len() - 1) {
        return "the file is UTF-16 text (without a byte-order mark); save it as UTF-8".into();
    }
    "the file is not text (it holds NUL bytes); give the stations as a text table (CSV) or a point layer".into()
}

fn read_text(path: &Path, options: &TextOptions) -> Result<Records, String> {
    let bytes = std::fs::read(path).map_err(|e| format!("cannot read it ({})", e.kind()))?;
    let bom16 = bytes.starts_with(&[0xFF, 0xFE]) || bytes.starts_with(&[0xFE, 0xFF]);
    if !bom16 && bytes.contains(&0) {
        return Err(not_text(path, &bytes));
    }
    let text = decode(bytes, options.encoding)?;
    let text = text.trim_start_matches('\u{feff}');
    let is_content = |l: &str| !l.trim().is_empty() && !l.trim_start().starts_with('#');
    let Some(header_line) = text.lines().find(|l| is_content(l)) else {
        return Err(
            "the file is empty; give a station file with a header and one row per station".into(),
        );
    };
    let delimiter = options.delimiter.unwrap_or_else(|| detect(header_line));
    // Comment lines become empty lines, which the CSV reader skips, and runs of spaces
    // single tabs, line by line, so that the lines stay those of the file. The reader's
    // own line count leaves out the lines it skips: a row's line is found from its byte
    // position instead.
    let prepared: String = text
        .lines()
        .map(|l| if !is_content(l) { "" } else { l })
        .map(|l| {
            if delimiter == Delimiter::Spaces {
                l.split_whitespace().collect::<Vec<_>>().join("\t")
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    let line_of = LineIndex::new(&prepared);
    let byte = match delimiter {
        Delimiter::Comma => b',',
        Delimiter::Semicolon => b';',
        Delimiter::Tab | Delimiter::Spaces => b'\t',
    };
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(byte)
        .flexible(false)
        .trim(csv::Trim::All)
        .from_reader(prepared.as_bytes());
    let headers: Vec<String> = reader
        .headers()
        .map_err(|e| format!("the header cannot be read ({e})"))?
        .iter()
        .map(|h| h.trim().to_string())
        .collect();
    check_headers(&headers, delimiter)?;
    let mut rows = Vec::new();
    for result in reader.records() {
        let record = result.map_err(|e| {
            let line = e.position().map(|pos| line_of.line(pos.byte())).unwrap_or(0);
            match e.kind() {
                csv::ErrorKind::UnequalLengths { len, expected_len, .. } => format!(
                    "line {line}: the row has {len} fields where the header has {expected_len} ({} separated); give every row as many fields as the header",
                    delimiter.name()
                ),
                _ => format!("line {line}: the row cannot be read ({e})"),
            }
        })?;
        let line = record
            .position()
            .map(|pos| line_of.line(pos.byte()))
            .unwrap_or(0);
        if record.iter().all(|f| f.trim().is_empty()) {
            continue;
        }
        rows.push((line, record.iter().map(str::to_string).collect()));
    }
    let (headers, rows) = drop_unnamed_columns(headers, rows)?;
    Ok(Records {
        headers,
        rows,
        points: None,
        crs: None,
        row_word: "line",
    })
}

/// Leaves out the columns without a name whose every field is empty (the separators a
/// spreadsheet puts at the ends of lines); refuses one that holds a value.
#[allow(clippy::type_complexity)]
fn drop_unnamed_columns(
    headers: Vec<String>,
    rows: Vec<(u64, Vec<String>)>,
) -> Result<(Vec<String>, Vec<(u64, Vec<String>)>), String> {
    let unnamed: Vec<usize> = (0..headers.len())
        .filter(|&c| headers[c].is_empty())
        .collect();
    if unnamed.is_empty() {
        return Ok((headers, rows));
    }
    for (line, fields) in &rows {
        if let Some(&c) = unnamed.iter().find(|&&c| !fields[c].trim().is_empty()) {
            return Err(format!(
                "line {line}: column {} has no name in the header but holds '{}'; name it in the header",
                c + 1,
                cut(fields[c].trim(), ECHO_MAX)
            ));
        }
    }
    let keep = |c: &usize| !unnamed.contains(c);
    let headers = (0..headers.len())
        .filter(keep)
        .map(|c| headers[c].clone())
        .collect();
    let rows = rows
        .into_iter()
        .map(|(line, fields)| {
            (
                line,
                (0..fields.len())
                    .filter(keep)
                    .map(|c| fields[c].clone())
                    .collect(),
            )
        })
        .collect();
    Ok((headers, rows))
}

/// The line numbers of a text: where each line starts.
struct LineIndex<'a> {
    text: &'a [u8],
    starts: Vec<usize>,
}

impl<'a> LineIndex<'a> {
    fn new(text: &'a str) -> LineIndex<'a> {
        let text = text.as_bytes();
        let starts = std::iter::once(0)
            .chain(
                text.iter()
                    .enumerate()
                    .filter(|(_, &b)| b == b'\n')
                    .map(|(i, _)| i + 1),
            )
            .collect();
        LineIndex { text, starts }
    }

    /// The line (1 = the first) of the first character at or after `byte` that does not
    /// end a line: the reader reports where it started looking, before the empty lines
    /// it skips.
    fn line(&self, byte: u64) -> u64 {
        let mut at = (byte as usize).min(self.text.len());
        while at < self.text.len() && matches!(self.text[at], b'\n' | b'\r') {
            at += 1;
        }
        self.starts.partition_point(|&s| s <= at) as u64
    }
}

/// Refuses a header of one column and a name given twice.
fn check_headers(headers: &[String], delimiter: Delimiter) -> Result<(), String> {
    if headers.len() < 2 {
        return Err(format!(
            "the header has one column ('{}') when read as {} separated; give --delimiter if the file uses another separator",
            cut(headers.first().map(String::as_str).unwrap_or(""), ECHO_MAX),
            delimiter.name()
        ));
    }
    for (i, h) in headers.iter().enumerate() {
        // Unnamed columns are left out when empty (see `drop_unnamed_columns`).
        if h.is_empty() {
            continue;
        }
        if let Some(j) = headers[..i].iter().position(|g| g.eq_ignore_ascii_case(h)) {
            return Err(format!(
                "the header names the column '{}' twice (columns {} and {}); rename one",
                cut(h, ECHO_MAX),
                j + 1,
                i + 1
            ));
        }
    }
    Ok(())
}

fn read_layer(path: &Path) -> Result<Records, String> {
    crate::dem::read::catch_gdal_messages();
    let ds = gdal::Dataset::open_ex(
        path,
        gdal::DatasetOptions {
            open_flags: gdal::GdalOpenFlags::GDAL_OF_VECTOR
                | gdal::GdalOpenFlags::GDAL_OF_READONLY,
            ..Default::default()
        },
    )
    .map_err(|_| "this is not a vector layer GDAL can read; give a CSV, GeoPackage, Shapefile, GeoJSON or FlatGeobuf file".to_string())?;
    if ds.layer_count() == 0 {
        return Err("the file holds no layer".into());
    }
    let mut layer = ds
        .layer(0)
        .map_err(|_| "its first layer cannot be read".to_string())?;
    let crs = layer.spatial_ref().and_then(|s| s.to_wkt().ok());
    let defn = layer.defn();
    let headers: Vec<String> = defn.fields().map(|f| f.name()).collect();
    let mut rows = Vec::new();
    let mut points = Vec::new();
    for (k, feature) in layer.features().enumerate() {
        let number = k as u64 + 1;
        let geometry = feature
            .geometry()
            .ok_or_else(|| format!("feature {number} has no geometry; give a layer of points"))?;
        if geometry.geometry_type() != gdal::vector::OGRwkbGeometryType::wkbPoint
            && geometry.geometry_type() != gdal::vector::OGRwkbGeometryType::wkbPoint25D
        {
            return Err(format!(
                "feature {number} is a {}, not a point; give a layer of points",
                geometry.geometry_name()
            ));
        }
        let (x, y, z) = geometry.get_point(0);
        let has_z = geometry.geometry_type() == gdal::vector::OGRwkbGeometryType::wkbPoint25D;
        points.push((x, y, has_z.then_some(z)));
        let fields: Vec<String> = (0..headers.len())
            .map(|i| match feature.field_as_string(i) {
                Ok(Some(v)) => v,
                _ => String::new(),
            })
            .collect();
        rows.push((number, fields));
    }
    Ok(Records {
        headers,
        rows,
        points: Some(points),
        crs,
        row_word: "feature",
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn text(content: &[u8], options: TextOptions) -> Result<Records, String> {
        let f = tempfile::Builder::new().suffix(".csv").tempfile().unwrap();
        std::fs::write(f.path(), content).unwrap();
        read(f.path(), &options)
    }

    #[test]
    fn delimiters_are_found() {
        for content in [
            "station,x,y,elev\nA,1,2,3\n",
            "station;x;y;elev\nA;1;2;3\n",
            "station\tx\ty\telev\nA\t1\t2\t3\n",
            "station   x  y elev\n  A 1   2 3\n",
            "# a comment\nstation,x,y,elev\n# another\nA,1,2,3\n\n",
        ] {
            let r = text(content.as_bytes(), TextOptions::default()).unwrap();
            assert_eq!(r.headers, ["station", "x", "y", "elev"], "{content}");
            assert_eq!(r.rows.len(), 1);
            assert_eq!(r.rows[0].1, ["A", "1", "2", "3"]);
        }
        let r = text(
            b"# c\nstation,x,y,elev\n# c\nA,1,2,3\n",
            TextOptions::default(),
        )
        .unwrap();
        assert_eq!(r.rows[0].0, 4, "line numbers are the file's");
        let r = text(
            b"\n# c\nstation,x,y,elev\n\n   \nA,1,2,3\n# c\n\nB,1,2,3\n",
            TextOptions::default(),
        )
        .unwrap();
        let lines: Vec<u64> = r.rows.iter().map(|(l, _)| *l).collect();
        assert_eq!(lines, [6, 9], "empty and comment lines are counted");
        let e = text(
            b"station,x,y,elev\n# c\n\nA,1,2,3\n\n# c\nB,1,2\n",
            TextOptions::default(),
        )
        .unwrap_err();
        assert!(e.starts_with("line 7:"), "{e}");
    }

    #[test]
    fn bad_files_are_named_for_what_they_are() {
        let e = |content: &[u8]| text(content, TextOptions::default()).unwrap_err();
        assert!(e(b"").contains("empty"));
        assert!(e(b"# only a comment\n\n").contains("empty"));
        assert!(e(b"station,x,y,elev,elev\nA,1,2,3,4\n").contains("'elev' twice"));
        assert!(e(b"\xff\xfes\x00t\x00").contains("UTF-16"));
        let utf16: Vec<u8> = "station,x,y,elev\nA,1,2,3\n"
            .encode_utf16()
            .flat_map(|u| u.to_le_bytes())
            .collect();
        assert!(e(&utf16).contains("UTF-16 text (without a byte-order mark)"));
        assert!(e(b"\x00\x01\x02\x03station").contains("not text"));
        assert!(e(b"station,x,y,elev\nM\xfcller,1,2,3\n").contains("not UTF-8"));
        let latin = TextOptions {
            encoding: Encoding::Latin1,
            ..TextOptions::default()
        };
        let r = text(b"station,x,y,elev\nM\xfcller,1,2,3\n", latin).unwrap();
        assert_eq!(r.rows[0].1[0], "M\u{fc}ller");
        assert!(e(b"station,x,y,elev\nA,1,2\n").contains("3 fields where the header has 4"));
        // A spreadsheet's separators at the ends of lines.
        let r = text(
            b"station,x,y,elev,,\nA,1,2,3,,\nB,4,5,6,, \n",
            TextOptions::default(),
        )
        .unwrap();
        assert_eq!(r.headers, ["station", "x", "y", "elev"]);
        assert_eq!(r.rows[1].1, ["B", "4", "5", "6"]);
        let e = e(b"station,x,y,elev,\nA,1,2,3,\nB,4,5,6,oops\n");
        assert!(e.starts_with("line 3: column 5 has no name"), "{e}");
    }
}
