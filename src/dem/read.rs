//! Reading a DEM with GDAL: the only place that opens rasters.

use super::{Dem, GridKind};
use crate::engine::frame::Ellipsoid;
use gdal::Dataset;
use std::path::Path;

/// Why a DEM could not be used; each message is one sentence naming the file and what to do.
#[derive(Debug, thiserror::Error)]
pub enum DemError {
    #[error("{path}: file not found; check the path given with --dem")]
    NotFound { path: String },
    #[error("{path}: GDAL cannot open it as a raster ({detail}); give a GeoTIFF, ASCII grid or another raster GDAL reads")]
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

/// Reads band 1 of a raster GDAL can open into a [`Dem`].
///
/// Nodata values (and NaN) become `NaN`; band scale and offset are applied, and heights
/// in feet are converted to metres. The DEM must be north-up, unrotated and in a
/// projected CRS whose unit is the metre.
pub fn read_dem(path: &Path) -> Result<Dem, DemError> {
    let p = path.display().to_string();
    if !path.exists() {
        return Err(DemError::NotFound { path: p });
    }
    // The whole grid is read once; GDAL's block cache would only hold a second copy.
    let _ = gdal::config::set_config_option("GDAL_CACHEMAX", "64");
    let ds = Dataset::open(path).map_err(|e| DemError::Unreadable {
        path: p.clone(),
        detail: e.to_string(),
    })?;
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
        if gt[0] < -360.0
            || gt[0] + gt[1] * ds.raster_size().0 as f64 > 360.0
            || gt[3] > 90.0 + 1e-9
        {
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
    let crs_wkt = srs.to_wkt().unwrap_or_default();
    let band = ds.rasterband(1).map_err(|e| DemError::Read {
        path: p.clone(),
        detail: e.to_string(),
    })?;
    let unit = band.unit();
    let unit_factor = vertical_unit_factor(&unit).ok_or_else(|| DemError::VerticalUnit {
        path: p.clone(),
        unit,
    })?;
    let (cols, rows) = ds.raster_size();
    // Read straight into f32 (the DEM's own precision for almost every DEM) so that no
    // second, wider copy of the grid is ever held.
    let buffer = band
        .read_as::<f32>((0, 0), (cols, rows), (cols, rows), None)
        .map_err(|e| DemError::Read {
            path: p.clone(),
            detail: e.to_string(),
        })?;
    let nodata = band.no_data_value();
    let scale = band.scale().unwrap_or(1.0);
    let offset = band.offset().unwrap_or(0.0);
    let (_, mut heights) = buffer.into_shape_and_vec();
    let nodata_f32 = nodata.map(|nd| nd as f32);
    let identity = scale == 1.0 && offset == 0.0 && unit_factor == 1.0;
    for h in heights.iter_mut() {
        let is_nodata = match nodata_f32 {
            Some(nd) => *h == nd || (nd.is_nan() && h.is_nan()),
            None => false,
        };
        if is_nodata || !h.is_finite() {
            *h = f32::NAN;
        } else if !identity {
            *h = ((*h as f64 * scale + offset) * unit_factor) as f32;
        }
    }
    if heights.iter().all(|h| h.is_nan()) {
        return Err(DemError::AllNodata { path: p });
    }
    Ok(Dem {
        source: p,
        cols,
        rows,
        x_left: gt[0],
        y_top: gt[3],
        dx: gt[1],
        dy: -gt[5],
        heights,
        crs_wkt,
        kind,
        weights: None,
    })
}

/// Whether two CRS definitions (WKT, EPSG code or PROJ string) describe the same CRS
/// (GDAL's `OSRIsSame`); `false` when either cannot be parsed.
pub fn same_crs(a: &str, b: &str) -> bool {
    use gdal::spatial_ref::SpatialRef;
    match (
        SpatialRef::from_definition(a),
        SpatialRef::from_definition(b),
    ) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    }
}
