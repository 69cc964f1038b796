//! Coordinate reference systems: the only place that calls PROJ (and GDAL's CRS
//! comparison). Every other module moves points between CRS through [`Transform`].

use gdal::spatial_ref::SpatialRef;
use std::sync::Once;

/// Keeps PROJ from printing its own error lines on stderr: its errors reach the user
/// folded into ringsum's one sentence instead. New PROJ contexts copy the default
/// context's log level, so this is set once, before the first transformation.
pub fn quiet_proj() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| unsafe {
        proj_sys::proj_log_level(std::ptr::null_mut(), proj_sys::PJ_LOG_LEVEL_PJ_LOG_NONE);
    });
}

/// A transformation from one CRS into another; the identity when both are the same.
pub struct Transform {
    proj: Option<proj::Proj>,
}

/// Why points could not be moved between two CRS.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CrsError {
    #[error("{name} is not a coordinate reference system PROJ knows")]
    Unknown { name: String },
    #[error("PROJ cannot build a transformation from {from} to {to} ({detail})")]
    Build {
        from: String,
        to: String,
        detail: String,
    },
    #[error("({x}, {y}) has no position in the target CRS ({detail})")]
    Point { x: f64, y: f64, detail: String },
}

impl Transform {
    /// The identity.
    pub fn identity() -> Transform {
        Transform { proj: None }
    }

    /// The transformation from `from` to `to` (EPSG codes, PROJ strings or WKT); the
    /// identity when GDAL finds them to be the same CRS. `from_name` and `to_name` are
    /// what a message calls them.
    pub fn between(
        from: &str,
        to: &str,
        from_name: &str,
        to_name: &str,
    ) -> Result<Transform, CrsError> {
        if from == to || same_crs(from, to) {
            return Ok(Transform::identity());
        }
        quiet_proj();
        for (definition, name) in [(from, from_name), (to, to_name)] {
            if SpatialRef::from_definition(definition).is_err() {
                return Err(CrsError::Unknown {
                    name: name.to_string(),
                });
            }
        }
        proj::Proj::new_known_crs(from, to, None)
            .map(|p| Transform { proj: Some(p) })
            .map_err(|_| CrsError::Build {
                from: from_name.to_string(),
                to: to_name.to_string(),
                detail: "PROJ has no transformation between them".to_string(),
            })
    }

    /// Whether this is the identity.
    pub fn is_identity(&self) -> bool {
        self.proj.is_none()
    }

    /// Moves one point; a point with no finite image is an error.
    pub fn convert(&self, x: f64, y: f64) -> Result<(f64, f64), CrsError> {
        let Some(p) = &self.proj else {
            return Ok((x, y));
        };
        let (u, v) = p.convert((x, y)).map_err(|_| CrsError::Point {
            x,
            y,
            detail: "PROJ cannot transform it".to_string(),
        })?;
        if u.is_finite() && v.is_finite() {
            Ok((u, v))
        } else {
            Err(CrsError::Point {
                x,
                y,
                detail: "PROJ gives no finite position".into(),
            })
        }
    }

    /// Moves many points in place (faster than one at a time).
    pub fn convert_all(&self, points: &mut [(f64, f64)]) -> Result<(), CrsError> {
        let Some(p) = &self.proj else {
            return Ok(());
        };
        if p.convert_array(points).is_err() {
            // Find the point at fault for the message.
            for q in points.iter_mut() {
                *q = self.convert(q.0, q.1)?;
            }
        }
        if let Some(&(x, y)) = points.iter().find(|q| !q.0.is_finite() || !q.1.is_finite()) {
            return Err(CrsError::Point {
                x,
                y,
                detail: "PROJ gives no finite position".into(),
            });
        }
        Ok(())
    }
}

/// Whether two CRS definitions (WKT, EPSG code or PROJ string) describe the same CRS
/// (GDAL's `OSRIsSame`); `false` when either cannot be parsed.
pub fn same_crs(a: &str, b: &str) -> bool {
    match (
        SpatialRef::from_definition(a),
        SpatialRef::from_definition(b),
    ) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    }
}

/// Whether a CRS definition names a geographic (longitude/latitude) CRS.
pub fn is_geographic(definition: &str) -> bool {
    SpatialRef::from_definition(definition)
        .map(|s| s.is_geographic())
        .unwrap_or(false)
}

/// The geographic (longitude, latitude) CRS of the datum of `definition`, as WKT.
pub fn geographic_of(definition: &str) -> Option<String> {
    SpatialRef::from_definition(definition)
        .ok()?
        .geog_cs()
        .ok()?
        .to_wkt()
        .ok()
}

/// Longitude and latitude (degrees, east and north positive) of points given in the CRS
/// `from`, on that CRS's own datum (its geographic CRS): for a DEM's CRS, the DEM's datum.
pub fn lon_lat_on_datum(from: &str, points: &[(f64, f64)]) -> Result<Vec<(f64, f64)>, CrsError> {
    let geographic = geographic_of(from).ok_or_else(|| CrsError::Unknown {
        name: "the DEM's CRS".into(),
    })?;
    let t = Transform::between(from, &geographic, "the DEM's CRS", "its geographic CRS")?;
    let mut out = points.to_vec();
    t.convert_all(&mut out)?;
    Ok(out)
}

/// Geodetic longitude and latitude (degrees, WGS 84, east and north positive) of points
/// given in the CRS `from` (EPSG code, PROJ string or WKT), through PROJ with its
/// normalised axis order (longitude first). Latitudes on WGS 84 and on GRS80 differ by
/// less than 1e-8 degrees, so they serve normal gravity on either ellipsoid.
pub fn geodetic_lon_lat(from: &str, points: &[(f64, f64)]) -> Result<Vec<(f64, f64)>, CrsError> {
    let t = Transform::between(from, "EPSG:4326", "the DEM's CRS", "EPSG:4326")?;
    points
        .iter()
        .map(|&(x, y)| {
            let (lon, lat) = t.convert(x, y)?;
            if lat.abs() > 90.0 {
                return Err(CrsError::Point {
                    x,
                    y,
                    detail: format!("PROJ gives latitude {lat}"),
                });
            }
            Ok((lon, lat))
        })
        .collect()
}
