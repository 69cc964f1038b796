//! Writing grids as GeoTIFF with GDAL (tests, maps and the demo use it).

use super::Dem;
use gdal::raster::{Buffer, RasterCreationOptions};
use gdal::spatial_ref::SpatialRef;
use gdal::DriverManager;
use std::path::Path;

/// Nodata value written to GeoTIFFs.
pub const NODATA: f64 = -9999.0;

/// Writes `dem` as a single-band float32 GeoTIFF with its CRS (EPSG code or WKT in
/// `crs`, or the DEM's own WKT when `crs` is `None`), DEFLATE-compressed. NaN cells are
/// written as [`NODATA`].
pub fn write_geotiff(dem: &Dem, path: &Path, crs: Option<&str>) -> anyhow::Result<()> {
    let driver = DriverManager::get_driver_by_name("GTiff")?;
    let options =
        RasterCreationOptions::from_iter(["COMPRESS=DEFLATE", "PREDICTOR=3", "TILED=YES"]);
    let mut ds = driver
        .create_with_band_type_with_options::<f32, _>(path, dem.cols, dem.rows, 1, &options)?;
    ds.set_geo_transform(&[dem.x_left, dem.dx, 0.0, dem.y_top, 0.0, -dem.dy])?;
    let srs = match crs {
        Some(def) => SpatialRef::from_definition(def)?,
        None => SpatialRef::from_wkt(&dem.crs_wkt)?,
    };
    ds.set_spatial_ref(&srs)?;
    let mut band = ds.rasterband(1)?;
    band.set_no_data_value(Some(NODATA))?;
    let data: Vec<f32> = dem
        .heights
        .iter()
        .map(|&h| if h.is_nan() { NODATA as f32 } else { h })
        .collect();
    let mut buffer = Buffer::new((dem.cols, dem.rows), data);
    band.write((0, 0), (dem.cols, dem.rows), &mut buffer)?;
    ds.flush_cache()?;
    Ok(())
}
