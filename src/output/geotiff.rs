//! The one GeoTIFF writer: float32, DEFLATE-compressed and tiled, nodata -9999, written
//! through a temporary file that is renamed at the end.

use super::files::Partial;
use crate::dem::Dem;
use gdal::raster::{Buffer, RasterCreationOptions};
use gdal::spatial_ref::SpatialRef;
use gdal::{DriverManager, Metadata};
use std::path::Path;

/// Nodata value written to GeoTIFFs.
pub const NODATA: f64 = -9999.0;

/// A north-up grid's placement: west and north edges, cell sizes, size, CRS.
#[derive(Debug, Clone, PartialEq)]
pub struct GridPlacement {
    pub x_left: f64,
    pub y_top: f64,
    pub dx: f64,
    pub dy: f64,
    pub cols: usize,
    pub rows: usize,
    /// CRS as WKT, an EPSG code or a PROJ string ("" for none).
    pub crs: String,
}

/// What a GeoTIFF says about itself: band description and unit, dataset metadata items.
#[derive(Debug, Clone, Default)]
pub struct GridLabels<'a> {
    pub description: Option<&'a str>,
    pub unit: Option<&'a str>,
    pub metadata: &'a [(&'a str, String)],
}

/// Writes `values` (row-major from the north-west, NaN as nodata) as a GeoTIFF.
pub fn write_grid(
    path: &Path,
    grid: &GridPlacement,
    values: &[f32],
    labels: &GridLabels,
) -> anyhow::Result<()> {
    assert_eq!(values.len(), grid.cols * grid.rows, "one value per cell");
    let partial = Partial::start(path, ".tif")?;
    crate::dem::read::catch_gdal_messages();
    let written = (|| -> gdal::errors::Result<()> {
        let driver = DriverManager::get_driver_by_name("GTiff")?;
        let options =
            RasterCreationOptions::from_iter(["COMPRESS=DEFLATE", "PREDICTOR=3", "TILED=YES"]);
        let mut ds = driver.create_with_band_type_with_options::<f32, _>(
            partial.temp_path(),
            grid.cols,
            grid.rows,
            1,
            &options,
        )?;
        ds.set_geo_transform(&[grid.x_left, grid.dx, 0.0, grid.y_top, 0.0, -grid.dy])?;
        if !grid.crs.is_empty() {
            ds.set_spatial_ref(&SpatialRef::from_definition(&grid.crs)?)?;
        }
        for (k, v) in labels.metadata {
            ds.set_metadata_item(k, v, "")?;
        }
        let mut band = ds.rasterband(1)?;
        band.set_no_data_value(Some(NODATA))?;
        if let Some(d) = labels.description {
            band.set_description(d)?;
        }
        if let Some(u) = labels.unit {
            band.set_metadata_item("UNITS", u, "")?;
        }
        let data: Vec<f32> = values
            .iter()
            .map(|&v| if v.is_nan() { NODATA as f32 } else { v })
            .collect();
        let mut buffer = Buffer::new((grid.cols, grid.rows), data);
        band.write((0, 0), (grid.cols, grid.rows), &mut buffer)?;
        ds.flush_cache()?;
        Ok(())
    })();
    if written.is_err() {
        anyhow::bail!(
            "{}: the GeoTIFF cannot be written ({}); check the disk space and the folder",
            path.display(),
            crate::dem::read::gdal_says("GDAL gives no reason")
        );
    }
    partial.commit()
}

/// Writes a DEM as a GeoTIFF with the CRS `crs` (EPSG code or WKT), or the DEM's own CRS.
pub fn write_dem(dem: &Dem, path: &Path, crs: Option<&str>) -> anyhow::Result<()> {
    let grid = GridPlacement {
        x_left: dem.x_left,
        y_top: dem.y_top,
        dx: dem.dx,
        dy: dem.dy,
        cols: dem.cols,
        rows: dem.rows,
        crs: crs.unwrap_or(&dem.crs_wkt).to_string(),
    };
    write_grid(path, &grid, &dem.heights, &GridLabels::default())
}
