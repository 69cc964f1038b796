//! Tables as GIS point layers through GDAL/OGR: a GeoPackage in the stations' own CRS, or
//! GeoJSON (RFC 7946) in longitude and latitude. Fields are typed: a column of numbers
//! is Real, any other String; an empty field is null. Written through a temporary file
//! renamed at the end, like every output.

use super::files::Partial;
use super::table::{Cell, Table};
use anyhow::bail;
use gdal::spatial_ref::{AxisMappingStrategy, SpatialRef};
use gdal::vector::{Feature, FieldDefn, Geometry, LayerAccess, LayerOptions, OGRFieldType};
use gdal::DriverManager;
use std::path::Path;

/// The OGR type of each column: Real when every non-empty cell is a number.
fn field_types(table: &Table) -> Vec<OGRFieldType::Type> {
    (0..table.headers.len())
        .map(|c| {
            let numeric = table
                .rows
                .iter()
                .all(|r| matches!(r[c], Cell::Num { .. } | Cell::Empty));
            if numeric {
                OGRFieldType::OFTReal
            } else {
                OGRFieldType::OFTString
            }
        })
        .collect()
}

/// Writes `table` as a point layer with the driver `driver`; `lon_lat` takes the
/// longitudes and latitudes (EPSG:4326) instead of the positions in their own CRS.
fn write_layer(
    path: &Path,
    table: &Table,
    driver: &str,
    suffix: &str,
    lon_lat: bool,
    layer_options: &[&str],
) -> anyhow::Result<()> {
    let Some(points) = &table.points else {
        bail!(
            "{}: this table has no positions to make a point layer of; give a .csv path",
            path.display()
        );
    };
    table.check_finite()?;
    let partial = Partial::start(path, suffix)?;
    // The temporary file is created empty; OGR wants to create it itself.
    let _ = std::fs::remove_file(partial.temp_path());
    crate::dem::read::catch_gdal_messages();
    let written = (|| -> gdal::errors::Result<()> {
        let driver = DriverManager::get_driver_by_name(driver)?;
        let mut ds = driver.create_vector_only(partial.temp_path())?;
        let mut srs = if lon_lat {
            SpatialRef::from_epsg(4326)?
        } else {
            SpatialRef::from_definition(&points.crs)?
        };
        srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
        let name = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "stations".into());
        let layer = ds.create_layer(LayerOptions {
            name: &name,
            srs: Some(&srs),
            ty: gdal::vector::OGRwkbGeometryType::wkbPoint,
            options: Some(layer_options),
        })?;
        let types = field_types(table);
        for (h, &t) in table.headers.iter().zip(&types) {
            FieldDefn::new(h, t)?.add_to_layer(&layer)?;
        }
        for (r, row) in table.rows.iter().enumerate() {
            let (x, y) = if lon_lat {
                points.lon_lat[r]
            } else {
                points.xy[r]
            };
            let mut geometry = Geometry::empty(gdal::vector::OGRwkbGeometryType::wkbPoint)?;
            geometry.set_point_2d(0, (x, y));
            let mut feature = Feature::new(layer.defn())?;
            feature.set_geometry(geometry)?;
            for (c, cell) in row.iter().enumerate() {
                match cell {
                    Cell::Empty => feature.set_field_null(c)?,
                    // The value as the CSV shows it, so both formats hold the same numbers.
                    Cell::Num { .. } if types[c] == OGRFieldType::OFTReal => {
                        let shown = cell.format().expect("checked finite above");
                        feature.set_field_double(c, shown.parse().unwrap_or(f64::NAN))?
                    }
                    other => feature
                        .set_field_string(c, &other.format().expect("checked finite above"))?,
                }
            }
            feature.create(&layer)?;
        }
        ds.flush_cache()?;
        Ok(())
    })();
    if written.is_err() {
        bail!(
            "{}: the file cannot be written ({}); check the disk space and the folder",
            path.display(),
            crate::dem::read::gdal_says("GDAL gives no reason")
        );
    }
    partial.commit()
}

/// Writes a GeoPackage point layer in the stations' CRS.
pub fn write_geopackage(path: &Path, table: &Table) -> anyhow::Result<()> {
    write_layer(path, table, "GPKG", ".gpkg", false, &[])
}

/// Writes GeoJSON points in longitude and latitude (RFC 7946).
pub fn write_geojson(path: &Path, table: &Table) -> anyhow::Result<()> {
    write_layer(
        path,
        table,
        "GeoJSON",
        ".geojson",
        true,
        &["RFC7946=YES", "COORDINATE_PRECISION=9"],
    )
}
