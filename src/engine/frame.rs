//! Station-centred local frames: from a DEM's grid coordinates to metres east and north
//! of the station.
//!
//! - [`ProjectedFrame`]: a projected CRS in metres; the frame is the map plane shifted to
//!   the station (distances as the projection gives them).
//! - [`GeographicFrame`]: longitude/latitude on an ellipsoid. Near the station the frame
//!   is the station's tangent plane (east, north, up): each point's geocentric position
//!   rotated into it, which is exact ellipsoidal geometry; beyond [`GEODESIC_FROM_M`] the
//!   horizontal position is taken from the geodesic (Karney 2013, through
//!   geographiclib-rs): distance and azimuth from the station, so that far distances are
//!   along the ellipsoid rather than along the tangent plane (which falls short by
//!   s^3 / 6R^2, 19 m at 166.7 km). Cell sizes shrink with latitude as N cos(phi) dlambda
//!   and M dphi (prime-vertical and meridian radii of curvature).

pub use crate::dem::Ellipsoid;
use geographiclib_rs::{Geodesic, InverseGeodesic};

/// Distance beyond which the geographic frame uses geodesics, m. Below it the tangent
/// plane and the geodesic agree to s^3 / 6R^2 (3 cm at 20 km).
pub const GEODESIC_FROM_M: f64 = 20_000.0;

/// A station-centred frame: grid coordinates (x, y) to local metres (east, north).
pub trait Frame: Sync {
    /// Local (east, north) of grid point (x, y), m.
    fn local(&self, x: f64, y: f64) -> (f64, f64);
    /// Jacobian of [`Frame::local`] at (x, y): `[[de/dx, de/dy], [dn/dx, dn/dy]]`.
    fn jacobian(&self, x: f64, y: f64) -> [[f64; 2]; 2];
    /// Grid point of local (east, north) (the inverse of [`Frame::local`] near the
    /// station; within metres of it at 166.7 km in the geographic frame).
    fn grid(&self, e: f64, n: f64) -> (f64, f64);
    /// Size in metres (east, north) of a cell of `dx` by `dy` grid units at (x, y).
    fn cell_size(&self, x: f64, y: f64, dx: f64, dy: f64) -> (f64, f64);
    /// Whether grid units are metres and the frame is the shifted map plane.
    fn is_plane(&self) -> bool;
}

/// The map plane of a projected CRS, shifted to the station.
#[derive(Debug, Clone, Copy)]
pub struct ProjectedFrame {
    pub x0: f64,
    pub y0: f64,
}

impl Frame for ProjectedFrame {
    #[inline]
    fn local(&self, x: f64, y: f64) -> (f64, f64) {
        (x - self.x0, y - self.y0)
    }
    #[inline]
    fn jacobian(&self, _x: f64, _y: f64) -> [[f64; 2]; 2] {
        [[1.0, 0.0], [0.0, 1.0]]
    }
    #[inline]
    fn grid(&self, e: f64, n: f64) -> (f64, f64) {
        (self.x0 + e, self.y0 + n)
    }
    #[inline]
    fn cell_size(&self, _x: f64, _y: f64, dx: f64, dy: f64) -> (f64, f64) {
        (dx, dy)
    }
    fn is_plane(&self) -> bool {
        true
    }
}

/// The frame of a station on a longitude/latitude grid.
pub struct GeographicFrame {
    lat0: f64,
    lon0: f64,
    ellipsoid: Ellipsoid,
    geodesic: Geodesic,
    origin: [f64; 3],
    east: [f64; 3],
    north: [f64; 3],
    /// Metres per degree of longitude and latitude at the station.
    scale0: (f64, f64),
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

impl GeographicFrame {
    /// The frame at (lon0, lat0) (degrees) on `ellipsoid`.
    pub fn new(lon0: f64, lat0: f64, ellipsoid: Ellipsoid) -> GeographicFrame {
        let (phi, lambda) = (lat0.to_radians(), lon0.to_radians());
        let (sp, cp) = phi.sin_cos();
        let (sl, cl) = lambda.sin_cos();
        let (n, m) = ellipsoid.radii(phi);
        GeographicFrame {
            lat0,
            lon0,
            ellipsoid,
            geodesic: Geodesic::new(ellipsoid.a, ellipsoid.f),
            origin: ellipsoid.ecef(phi, lambda),
            east: [-sl, cl, 0.0],
            north: [-sp * cl, -sp * sl, cp],
            scale0: (
                n * cp * std::f64::consts::PI / 180.0,
                m * std::f64::consts::PI / 180.0,
            ),
        }
    }

    /// Tangent-plane (east, north) of (lon, lat) degrees.
    #[inline]
    fn tangent(&self, x: f64, y: f64) -> (f64, f64) {
        let p = self.ellipsoid.ecef(y.to_radians(), x.to_radians());
        let d = [
            p[0] - self.origin[0],
            p[1] - self.origin[1],
            p[2] - self.origin[2],
        ];
        (dot(d, self.east), dot(d, self.north))
    }
}

impl Frame for GeographicFrame {
    fn local(&self, x: f64, y: f64) -> (f64, f64) {
        let (e, n) = self.tangent(x, y);
        if e * e + n * n <= GEODESIC_FROM_M * GEODESIC_FROM_M {
            return (e, n);
        }
        let (s, azi, _, _): (f64, f64, f64, f64) =
            self.geodesic.inverse(self.lat0, self.lon0, y, x);
        let (sa, ca) = azi.to_radians().sin_cos();
        (s * sa, s * ca)
    }

    fn jacobian(&self, x: f64, y: f64) -> [[f64; 2]; 2] {
        let (phi, lambda) = (y.to_radians(), x.to_radians());
        let (sp, cp) = phi.sin_cos();
        let (sl, cl) = lambda.sin_cos();
        let (n, m) = self.ellipsoid.radii(phi);
        let k = std::f64::consts::PI / 180.0;
        // Geocentric derivatives per degree of longitude and of latitude.
        let d_lon = [-n * cp * sl * k, n * cp * cl * k, 0.0];
        let d_lat = [-m * sp * cl * k, -m * sp * sl * k, m * cp * k];
        [
            [dot(d_lon, self.east), dot(d_lat, self.east)],
            [dot(d_lon, self.north), dot(d_lat, self.north)],
        ]
    }

    fn grid(&self, e: f64, n: f64) -> (f64, f64) {
        let mut x = self.lon0 + e / self.scale0.0;
        let mut y = self.lat0 + n / self.scale0.1;
        for _ in 0..4 {
            let (ee, nn) = self.tangent(x, y);
            let j = self.jacobian(x, y);
            let det = j[0][0] * j[1][1] - j[0][1] * j[1][0];
            let (de, dn) = (e - ee, n - nn);
            x += (j[1][1] * de - j[0][1] * dn) / det;
            y += (-j[1][0] * de + j[0][0] * dn) / det;
            if de.abs() + dn.abs() < 1e-6 {
                break;
            }
        }
        (x, y)
    }

    fn cell_size(&self, _x: f64, y: f64, dx: f64, dy: f64) -> (f64, f64) {
        let phi = y.to_radians();
        let (n, m) = self.ellipsoid.radii(phi);
        let k = std::f64::consts::PI / 180.0;
        (n * phi.cos() * dx * k, m * dy * k)
    }

    fn is_plane(&self) -> bool {
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn geographic_frame_round_trips_and_measures_metres() {
        let f = GeographicFrame::new(14.2, 46.3, Ellipsoid::WGS84);
        assert_eq!(f.local(14.2, 46.3), (0.0, 0.0));
        for (x, y) in [(14.21, 46.305), (14.0, 46.5), (13.1, 47.2), (15.9, 45.4)] {
            let (e, n) = f.local(x, y);
            let (gx, gy) = f.grid(e, n);
            // The inverse follows the tangent plane; within 20 km it is the same frame.
            if e.hypot(n) < GEODESIC_FROM_M {
                assert!(
                    (gx - x).abs() < 1e-9 && (gy - y).abs() < 1e-9,
                    "{gx} {gy} vs {x} {y}"
                );
            } else {
                assert!((gx - x).abs() < 1e-3 && (gy - y).abs() < 1e-3);
            }
        }
        // A degree of latitude near 46 deg is about 111.15 km, of longitude 77.2 km.
        let (ex, ny) = f.cell_size(14.2, 46.3, 1.0, 1.0);
        assert!((ny - 111_150.0).abs() < 100.0, "{ny}");
        assert!((ex - 77_200.0).abs() < 200.0, "{ex}");
        // The Jacobian matches finite differences of the tangent plane.
        let j = f.jacobian(14.25, 46.32);
        let h = 1e-5;
        let (e1, n1) = f.local(14.25 + h, 46.32);
        let (e0, n0) = f.local(14.25 - h, 46.32);
        assert!(((e1 - e0) / (2.0 * h) - j[0][0]).abs() < 1e-3 * j[0][0].abs());
        assert!(((n1 - n0) / (2.0 * h) - j[1][0]).abs() < 1e-2 * j[0][0].abs());
    }
}
