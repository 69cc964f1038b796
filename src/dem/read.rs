//! Reading a DEM with GDAL: the only place that opens rasters.

use super::{Dem, Ellipsoid, GridKind};
use gdal::Dataset;
use std::path::Path;
use std::sync::{Mutex, Once};

/// GDAL's messages since they were last taken (see [`catch_gdal_messages`]).
static GDAL_MESSAGES: Mutex<Vec<String>> = Mutex::new(Vec::new());

/// Routes GDAL's error and warning messages into a list instead of stderr, so that they
/// reach the user folded into ringsum's one sentence. Set once.
pub fn catch_gdal_messages() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        gdal::config::set_error_handler(|class, _number, message| {
            if matches!(
                class,
                gdal::errors::CplErrType::Failure | gdal::errors::CplErrType::Fatal
            ) {
                if let Ok(mut m) = GDAL_MESSAGES.lock() {
                    m.push(message.trim().to_string());
                }
            }
        });
    });
}

/// GDAL's messages since the last call, as one clause (`it says: ...`), or `otherwise`
/// when GDAL said nothing (the library's own error text is not for users).
pub fn gdal_says(otherwise: &str) -> String {
    let messages = GDAL_MESSAGES
        .lock()
        .map(|mut m| std::mem::take(&mut *m))
        .unwrap_or_default();
    if messages.is_empty() {
        otherwise.to_string()
    } else {
        format!("it says: {}", crate::text::cut(&messages.join("; "), 160))
    }
}

/// Why GDAL may find no raster in a file it said nothing about.
fn unreadable_why(path: &Path) -> String {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase)
        .unwrap_or_default();
    match ext.as_str() {
        "csv" | "txt" | "tsv" | "xyz" => {
            "it looks like a table, not a raster; stations go with --stations".into()
        }
        "gpkg" | "shp" | "geojson" | "json" | "fgb" | "kml" => {
            "it holds vector data, not a raster".into()
        }
        _ => "no raster format GDAL knows matches it".into(),
    }
}

/// Forgets GDAL's earlier messages (before a call whose messages are wanted).
fn clear_gdal_messages() {
    if let Ok(mut m) = GDAL_MESSAGES.lock() {
        m.clear();
    }
}

/// Why a DEM could not be used; each message is one sentence naming the file and what to do.
#[derive(Debug, thiserror::Error)]
pub enum DemError {
    #[error("{path}: file not found; check the path given with --dem")]
    NotFound { path: String },
    #[error("{path}: this is not a raster GDAL can read ({detail}); give a GeoTIFF, ASCII grid or another raster GDAL reads")]
    Unreadable { path: String, detail: String },
    #[error("{path}: the raster has {bands} bands; give a single-band elevation raster (e.g. extract one with gdal_translate -b 1)")]
    Bands { path: String, bands: usize },
    #[error(
        "{path}: the raster has no georeferencing (no geotransform); give a georeferenced DEM"
    )]
    NoGeotransform { path: String },
    #[error("{path}: the raster is rotated or sheared (geotransform terms {rot1}, {rot2}); rotated DEMs are not supported yet: warp it north-up with gdalwarp")]
    Rotated { path: String, rot1: f64, rot2: f64 },
    #[error(
        "{path}: the raster is stored south-up or east-to-west; warp it north-up with gdalwarp"
    )]
    Flipped { path: String },
    #[error("{path}: the geographic CRS's angular unit is {unit}, not degrees; warp it to a CRS in degrees or metres")]
    NotDegrees { path: String, unit: String },
    #[error("{path}: the geographic grid reaches past latitude 90 or longitude +-360; give a grid within -180..180 (or 0..360) and -90..90")]
    GeographicRange { path: String },
    #[error("{path}: the DEM has no coordinate reference system; assign one with gdal_edit.py -a_srs EPSG:xxxx")]
    NoCrs { path: String },
    #[error("{path}: the CRS's horizontal unit is {unit} ({factor} m), not metres; warp it to a CRS in metres")]
    NotMetres {
        path: String,
        unit: String,
        factor: f64,
    },
    #[error("{path}: heights are in unit '{unit}', which ringsum does not know; give heights in metres or feet")]
    VerticalUnit { path: String, unit: String },
    #[error("{path}: every cell is nodata; give a DEM with elevation values")]
    AllNodata { path: String },
    #[error("{path}: {count} cell(s) hold {value}, which is {what}, and the file declares no nodata value; give --dem-nodata {value} if these cells have no data, or fix the file")]
    Void {
        path: String,
        /// The raw value as the file holds it (powers of ten when large).
        value: String,
        count: usize,
        /// `no height on the Earth but the usual mark of missing data`, or why else.
        what: String,
    },
    #[error("{path}: reading the raster failed ({detail})")]
    Read { path: String, detail: String },
}

/// Metres per unit for the vertical units GDAL metadata may name.
fn vertical_unit_factor(unit: &str) -> Option<f64> {
    match unit.trim().to_ascii_lowercase().as_str() {
        "" | "m" | "metre" | "meter" | "metres" | "meters" => Some(1.0),
        "ft" | "foot" | "feet" | "international foot" => Some(0.3048),
        "us-ft" | "ftus" | "us survey foot" | "foot_us" => Some(1200.0 / 3937.0),
        _ => None,
    }
}

/// Where a header's heights come from.
enum Source {
    /// One file.
    File(Dataset),
    /// Tiles of one grid, each with its cell offset `(col, row)` in the mosaic.
    Tiles(Vec<(DemHeader, usize, usize)>),
}

/// A DEM file opened and checked, before its heights are read.
pub struct DemHeader {
    path: String,
    source: Source,
    /// Columns and rows of the whole file.
    pub cols: usize,
    pub rows: usize,
    /// GDAL geotransform of the whole file (north-up, unrotated).
    pub geotransform: [f64; 6],
    pub kind: GridKind,
    pub crs_wkt: String,
    /// Name of the vertical CRS when the file declares one (a compound CRS).
    pub vertical_crs: Option<String>,
    unit_factor: f64,
    /// Declared nodata value of band 1.
    nodata: Option<f64>,
    /// Band scale and offset (raw value times scale plus offset).
    scale: f64,
    offset: f64,
    /// Band 1's unit as declared ("" when none).
    unit: String,
    /// Whether the band holds heights (checked against the Earth's relief).
    heights: bool,
}

impl DemHeader {
    /// Opens `path` and checks everything but the heights: one band, a north-up
    /// geotransform, a projected CRS in metres or a geographic one in degrees, a known
    /// vertical unit.
    pub fn open(path: &Path) -> Result<DemHeader, DemError> {
        DemHeader::open_with(path, true)
    }

    /// Opens a raster of other values than heights (a density raster, say): the same
    /// checks, but its unit is not read as a vertical unit and nothing is converted.
    pub fn open_values(path: &Path) -> Result<DemHeader, DemError> {
        DemHeader::open_with(path, false)
    }

    fn open_with(path: &Path, heights: bool) -> Result<DemHeader, DemError> {
        let p = path.display().to_string();
        if !path.exists() {
            return Err(DemError::NotFound { path: p });
        }
        // The grid is read once; GDAL's block cache would only hold a second copy.
        let _ = gdal::config::set_config_option("GDAL_CACHEMAX", "64");
        catch_gdal_messages();
        clear_gdal_messages();
        let ds = Dataset::open_ex(
            path,
            gdal::DatasetOptions {
                open_flags: gdal::GdalOpenFlags::GDAL_OF_RASTER
                    | gdal::GdalOpenFlags::GDAL_OF_READONLY,
                ..Default::default()
            },
        )
        .map_err(|_| DemError::Unreadable {
            path: p.clone(),
            detail: gdal_says(&unreadable_why(path)),
        })?;
        DemHeader::from_dataset(p, ds, heights)
    }

    fn from_dataset(p: String, ds: Dataset, heights: bool) -> Result<DemHeader, DemError> {
        let bands = ds.raster_count();
        if bands != 1 {
            return Err(DemError::Bands { path: p, bands });
        }
        let gt = ds
            .geo_transform()
            .map_err(|_| DemError::NoGeotransform { path: p.clone() })?;
        if gt == [0.0, 1.0, 0.0, 0.0, 0.0, 1.0] {
            return Err(DemError::NoGeotransform { path: p });
        }
        if gt[2] != 0.0 || gt[4] != 0.0 {
            return Err(DemError::Rotated {
                path: p,
                rot1: gt[2],
                rot2: gt[4],
            });
        }
        if gt[1] <= 0.0 || gt[5] >= 0.0 {
            return Err(DemError::Flipped { path: p });
        }
        let (cols, rows) = ds.raster_size();
        let srs = ds
            .spatial_ref()
            .map_err(|_| DemError::NoCrs { path: p.clone() })?;
        let kind = if srs.is_geographic() {
            let degree = std::f64::consts::PI / 180.0;
            if (srs.angular_units() - degree).abs() > 1e-12 {
                return Err(DemError::NotDegrees {
                    path: p,
                    unit: srs.angular_units_name().unwrap_or_else(|| "unknown".into()),
                });
            }
            let a = srs
                .semi_major()
                .map_err(|_| DemError::NoCrs { path: p.clone() })?;
            let b = srs
                .semi_minor()
                .map_err(|_| DemError::NoCrs { path: p.clone() })?;
            if gt[0] < -360.0 || gt[0] + gt[1] * cols as f64 > 360.0 || gt[3] > 90.0 + 1e-9 {
                return Err(DemError::GeographicRange { path: p });
            }
            GridKind::Geographic(Ellipsoid { a, f: (a - b) / a })
        } else if srs.is_projected() {
            let factor = srs.linear_units();
            if (factor - 1.0).abs() > 1e-9 {
                return Err(DemError::NotMetres {
                    path: p,
                    unit: srs.linear_units_name().unwrap_or_else(|| "unknown".into()),
                    factor,
                });
            }
            GridKind::Projected
        } else {
            return Err(DemError::NoCrs { path: p });
        };
        let vertical_crs = if srs.is_compound() {
            srs.get_attr_value("COMPD_CS|VERT_CS", 0).ok().flatten()
        } else {
            None
        };
        let crs_wkt = srs.to_wkt().unwrap_or_default();
        let band = ds.rasterband(1).map_err(|e| DemError::Read {
            path: p.clone(),
            detail: gdal_says(&e.to_string()),
        })?;
        let unit = band.unit();
        let nodata = band.no_data_value();
        let scale = band.scale().unwrap_or(1.0);
        let offset = band.offset().unwrap_or(0.0);
        let unit_factor = if !heights {
            Some(1.0)
        } else {
            vertical_unit_factor(&unit)
        };
        let unit_factor = unit_factor.ok_or_else(|| DemError::VerticalUnit {
            path: p.clone(),
            unit: unit.clone(),
        })?;
        Ok(DemHeader {
            path: p,
            source: Source::File(ds),
            cols,
            rows,
            geotransform: gt,
            kind,
            crs_wkt,
            vertical_crs,
            unit_factor,
            nodata,
            scale,
            offset,
            unit,
            heights,
        })
    }

    /// Declared nodata value, if any.
    pub fn nodata(&self) -> Option<f64> {
        self.nodata
    }

    /// Takes `value` as the nodata value when the file declares none (`--dem-nodata`).
    pub fn assume_nodata(&mut self, value: Option<f64>) {
        if self.nodata.is_none() {
            self.nodata = value;
        }
        if let Source::Tiles(tiles) = &mut self.source {
            for (t, _, _) in tiles {
                t.assume_nodata(value);
            }
        }
    }

    /// The vertical unit as declared ("" when none; metres then).
    pub fn vertical_unit(&self) -> &str {
        &self.unit
    }

    /// The path (or the list of tiles) this header reads.
    pub fn path(&self) -> &str {
        &self.path
    }

    /// Whether `other` is a tile of the same grid: the same CRS, cell size, cell
    /// alignment, nodata, unit, scale and offset, so that the two can be read as one
    /// mosaic.
    pub fn same_grid(&self, other: &DemHeader) -> bool {
        let (a, b) = (self.geotransform, other.geotransform);
        let close = |u: f64, v: f64| (u - v).abs() <= 1e-9 * u.abs().max(v.abs());
        let aligned = |o1: f64, o2: f64, step: f64| {
            let k = (o2 - o1) / step;
            (k - k.round()).abs() < 1e-6
        };
        close(a[1], b[1])
            && close(a[5], b[5])
            && aligned(a[0], b[0], a[1])
            && aligned(a[3], b[3], a[5])
            && self.kind == other.kind
            && self.nodata == other.nodata
            && self.scale == other.scale
            && self.offset == other.offset
            && self.unit == other.unit
            && self.vertical_crs == other.vertical_crs
            && super::crs::same_crs(&self.crs_wkt, &other.crs_wkt)
    }

    /// One header over several tiles of the same grid (see [`DemHeader::same_grid`]):
    /// a mosaic whose extent is the tiles' union, nodata where no tile is; where tiles
    /// overlap, the later one's values are used.
    pub fn mosaic(tiles: Vec<DemHeader>) -> DemHeader {
        if tiles.len() == 1 {
            return tiles.into_iter().next().expect("one tile");
        }
        let name = tiles
            .iter()
            .map(|t| t.path.as_str())
            .collect::<Vec<_>>()
            .join(" + ");
        let g = tiles[0].geotransform;
        let x0 = tiles
            .iter()
            .map(|t| t.geotransform[0])
            .fold(f64::INFINITY, f64::min);
        let y0 = tiles
            .iter()
            .map(|t| t.geotransform[3])
            .fold(f64::NEG_INFINITY, f64::max);
        let offset = |t: &DemHeader| {
            (
                ((t.geotransform[0] - x0) / g[1]).round() as usize,
                ((t.geotransform[3] - y0) / g[5]).round() as usize,
            )
        };
        let cols = tiles
            .iter()
            .map(|t| offset(t).0 + t.cols)
            .max()
            .unwrap_or(0);
        let rows = tiles
            .iter()
            .map(|t| offset(t).1 + t.rows)
            .max()
            .unwrap_or(0);
        let first = &tiles[0];
        let (kind, crs_wkt, vertical_crs) = (
            first.kind,
            first.crs_wkt.clone(),
            first.vertical_crs.clone(),
        );
        let (unit_factor, nodata, scale, offset_v, unit) = (
            first.unit_factor,
            first.nodata,
            first.scale,
            first.offset,
            first.unit.clone(),
        );
        let placed = tiles
            .into_iter()
            .map(|t| {
                let (c, r) = offset(&t);
                (t, c, r)
            })
            .collect();
        DemHeader {
            path: name,
            source: Source::Tiles(placed),
            cols,
            rows,
            geotransform: [x0, g[1], 0.0, y0, 0.0, g[5]],
            kind,
            crs_wkt,
            vertical_crs,
            unit_factor,
            nodata,
            scale,
            offset: offset_v,
            unit,
            heights: true,
        }
    }

    /// Number of files behind this header (tiles of a mosaic, or 1).
    pub fn files(&self) -> usize {
        match &self.source {
            Source::File(_) => 1,
            Source::Tiles(t) => t.len(),
        }
    }

    /// Cell size in metres (the larger side; at the middle latitude of a geographic grid).
    pub fn cell_size_m(&self) -> f64 {
        self.empty_dem(0, 0, 1, 1).cell_size_m()
    }

    fn empty_dem(&self, c0: usize, r0: usize, cols: usize, rows: usize) -> Dem {
        let gt = self.geotransform;
        Dem {
            source: self.path.clone(),
            cols,
            rows,
            x_left: gt[0] + c0 as f64 * gt[1],
            y_top: gt[3] + r0 as f64 * gt[5],
            dx: gt[1],
            dy: -gt[5],
            heights: Vec::new(),
            crs_wkt: self.crs_wkt.clone(),
            kind: self.kind,
            weights: None,
        }
    }

    /// The cell window `(c0, r0, cols, rows)` covering grid coordinates
    /// `[x_lo, x_hi] x [y_lo, y_hi]` (clamped to the file; `None` if they miss it).
    pub fn window(
        &self,
        x_lo: f64,
        x_hi: f64,
        y_lo: f64,
        y_hi: f64,
    ) -> Option<(usize, usize, usize, usize)> {
        let gt = self.geotransform;
        let c0 = ((x_lo - gt[0]) / gt[1]).floor().max(0.0) as usize;
        let c1 = (((x_hi - gt[0]) / gt[1]).ceil().max(0.0) as usize).min(self.cols);
        let r0 = ((y_hi - gt[3]) / gt[5]).floor().max(0.0) as usize;
        let r1 = (((y_lo - gt[3]) / gt[5]).ceil().max(0.0) as usize).min(self.rows);
        // `then`, not `then_some`: the differences must not be taken when the box misses.
        (c1 > c0 && r1 > r0).then(|| (c0, r0, c1 - c0, r1 - r0))
    }

    /// Reads the heights of the whole file, or of a cell window `(c0, r0, cols, rows)`.
    ///
    /// Nodata values (and NaN) become `NaN`; band scale and offset are applied, and
    /// heights in feet are converted to metres. A mosaic reads each tile's part of the
    /// window.
    pub fn read(&self, window: Option<(usize, usize, usize, usize)>) -> Result<Dem, DemError> {
        let (c0, r0, cols, rows) = window.unwrap_or((0, 0, self.cols, self.rows));
        let heights = self.read_heights(c0, r0, cols, rows)?;
        if heights.iter().all(|h| h.is_nan()) {
            return Err(DemError::AllNodata {
                path: self.path.clone(),
            });
        }
        let mut dem = self.empty_dem(c0, r0, cols, rows);
        dem.heights = heights;
        Ok(dem)
    }

    fn read_heights(
        &self,
        c0: usize,
        r0: usize,
        cols: usize,
        rows: usize,
    ) -> Result<Vec<f32>, DemError> {
        let p = &self.path;
        let ds = match &self.source {
            Source::File(ds) => ds,
            Source::Tiles(tiles) => {
                let mut heights = vec![f32::NAN; cols * rows];
                for (tile, tc, tr) in tiles {
                    // The window in the tile's cells.
                    let a0 = c0.max(*tc);
                    let a1 = (c0 + cols).min(tc + tile.cols);
                    let b0 = r0.max(*tr);
                    let b1 = (r0 + rows).min(tr + tile.rows);
                    if a1 <= a0 || b1 <= b0 {
                        continue;
                    }
                    let part = tile.read_heights(a0 - tc, b0 - tr, a1 - a0, b1 - b0)?;
                    for (k, row) in (b0..b1).enumerate() {
                        let dst = (row - r0) * cols + (a0 - c0);
                        let src = k * (a1 - a0);
                        for (d, &v) in heights[dst..dst + (a1 - a0)]
                            .iter_mut()
                            .zip(&part[src..src + (a1 - a0)])
                        {
                            if !v.is_nan() {
                                *d = v;
                            }
                        }
                    }
                }
                return Ok(heights);
            }
        };
        let band = ds.rasterband(1).map_err(|e| DemError::Read {
            path: p.clone(),
            detail: gdal_says(&e.to_string()),
        })?;
        // Read straight into f32 (the DEM's own precision for almost every DEM) so that no
        // second, wider copy of the grid is ever held.
        let buffer = band
            .read_as::<f32>((c0 as isize, r0 as isize), (cols, rows), (cols, rows), None)
            .map_err(|e| DemError::Read {
                path: p.clone(),
                detail: gdal_says(&e.to_string()),
            })?;
        let (nodata, scale, offset) = (self.nodata, self.scale, self.offset);
        let (_, mut heights) = buffer.into_shape_and_vec();
        if self.heights && nodata.is_none() {
            self.check_voids(&heights)?;
        }
        let nodata_f32 = nodata.map(|nd| nd as f32);
        let identity = scale == 1.0 && offset == 0.0 && self.unit_factor == 1.0;
        for h in heights.iter_mut() {
            let is_nodata = match nodata_f32 {
                Some(nd) => *h == nd || (nd.is_nan() && h.is_nan()),
                None => false,
            };
            if is_nodata || !h.is_finite() {
                *h = f32::NAN;
            } else if !identity {
                *h = ((*h as f64 * scale + offset) * self.unit_factor) as f32;
            }
        }
        Ok(heights)
    }
}

/// Values DEMs commonly hold where they have no data (from memory: the ones seen in
/// national and global DEM products and GIS defaults).
pub const USUAL_VOID_MARKS: [f64; 7] = [
    -32768.0,
    -32767.0,
    -9999.0,
    -99999.0,
    32767.0,
    f32::MAX as f64,
    -(f32::MAX as f64),
];

/// Heights a DEM cell may hold, m (raw values, before scale and unit): the ocean trenches
/// to the summits with a margin; a value outside is no height on the Earth.
pub const DEM_HEIGHT_RANGE_M: (f64, f64) = (-12_000.0, 9_500.0);

impl DemHeader {
    /// Refuses raw values that mark missing data (or are no height on the Earth) in a file
    /// that declares no nodata value, naming the value and the option to declare it.
    fn check_voids(&self, raw: &[f32]) -> Result<(), DemError> {
        let height = |v: f32| (v as f64 * self.scale + self.offset) * self.unit_factor;
        let mut worst: Option<(f32, usize)> = None;
        for &v in raw {
            if v.is_nan() {
                continue;
            }
            let h = height(v);
            let void = USUAL_VOID_MARKS.contains(&(v as f64))
                || !(DEM_HEIGHT_RANGE_M.0..=DEM_HEIGHT_RANGE_M.1).contains(&h);
            if void {
                match &mut worst {
                    Some((w, n)) if *w == v => *n += 1,
                    None => worst = Some((v, 1)),
                    _ => {}
                }
            }
        }
        match worst {
            None => Ok(()),
            Some((value, count)) => Err(DemError::Void {
                path: self.path.clone(),
                // f32's shortest spelling (3.4e38 rather than 39 digits), which
                // --dem-nodata reads back to the same value.
                value: if value.abs() >= 1e7 {
                    format!("{value:e}")
                } else {
                    format!("{value}")
                },
                count,
                what: if USUAL_VOID_MARKS.contains(&(value as f64)) {
                    "no height on the Earth but the usual mark of missing data".into()
                } else {
                    format!(
                        "no height on the Earth ({} to {} m)",
                        DEM_HEIGHT_RANGE_M.0, DEM_HEIGHT_RANGE_M.1
                    )
                },
            }),
        }
    }
}

/// Reads band 1 of a raster GDAL can open into a [`Dem`] (see [`DemHeader`]).
pub fn read_dem(path: &Path) -> Result<Dem, DemError> {
    DemHeader::open(path)?.read(None)
}
