//! The elevation grid: a north-up raster of f32 heights in a projected CRS in metres.
//!
//! `Dem` is plain data (no GDAL handle): it is read once by [`read`] and shared read-only
//! by every thread. Nodata cells hold `NaN`. Cell `(col, row)` covers
//! `[x_left + col*dx, x_left + (col+1)*dx] x [y_top - (row+1)*dy, y_top - row*dy]`, and
//! its height is the DEM value at its centre; row 0 is the northern edge.

#[cfg(feature = "io")]
pub mod crs;
#[cfg(feature = "io")]
pub mod read;

/// A north-up elevation grid with square or rectangular cells.
#[derive(Debug, Clone)]
pub struct Dem {
    /// Where the grid came from (a file path, or a description for synthetic grids).
    pub source: String,
    /// Number of columns (west to east).
    pub cols: usize,
    /// Number of rows (north to south).
    pub rows: usize,
    /// Easting of the western edge, m.
    pub x_left: f64,
    /// Northing of the northern edge, m.
    pub y_top: f64,
    /// Cell width, m (> 0).
    pub dx: f64,
    /// Cell height, m (> 0; rows run southward).
    pub dy: f64,
    /// Heights, row-major from the north-west corner, m; `NaN` where there is no data.
    pub heights: Vec<f32>,
    /// Coordinate reference system as WKT ("" when unknown).
    pub crs_wkt: String,
    /// Projected (metres) or geographic (degrees of longitude and latitude) grid.
    pub kind: GridKind,
    /// Share of each cell this DEM contributes, 0..1 (`None`: all of every cell). A finer
    /// DEM given before this one takes the rest (see [`crate::engine::set`]).
    pub weights: Option<Vec<f32>>,
}

/// How grid coordinates relate to the ground.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum GridKind {
    /// Eastings and northings in metres of a projected CRS.
    Projected,
    /// Longitudes (x) and latitudes (y) in degrees on this ellipsoid.
    Geographic(Ellipsoid),
}

/// An ellipsoid: semi-major axis (m) and flattening.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ellipsoid {
    pub a: f64,
    pub f: f64,
}

impl Ellipsoid {
    /// WGS84 (NIMA TR8350.2).
    pub const WGS84: Ellipsoid = Ellipsoid {
        a: 6_378_137.0,
        f: 1.0 / 298.257_223_563,
    };

    pub(crate) fn e2(&self) -> f64 {
        self.f * (2.0 - self.f)
    }

    /// Prime-vertical (N) and meridian (M) radii of curvature at latitude `phi` (rad), m.
    pub fn radii(&self, phi: f64) -> (f64, f64) {
        let e2 = self.e2();
        let w2 = 1.0 - e2 * phi.sin().powi(2);
        let n = self.a / w2.sqrt();
        (n, n * (1.0 - e2) / w2)
    }

    /// Geocentric position of (lat, lon) (rad) on the ellipsoid, m.
    pub(crate) fn ecef(&self, phi: f64, lambda: f64) -> [f64; 3] {
        let (n, _) = self.radii(phi);
        let (sp, cp) = phi.sin_cos();
        let (sl, cl) = lambda.sin_cos();
        [n * cp * cl, n * cp * sl, n * (1.0 - self.e2()) * sp]
    }
}

impl Dem {
    /// Builds a grid by evaluating `height(easting, northing)` at every cell centre.
    pub fn from_fn(
        source: &str,
        cols: usize,
        rows: usize,
        x_left: f64,
        y_top: f64,
        cell: f64,
        height: impl Fn(f64, f64) -> f64,
    ) -> Dem {
        let mut heights = Vec::with_capacity(cols * rows);
        for row in 0..rows {
            let y = y_top - (row as f64 + 0.5) * cell;
            for col in 0..cols {
                let x = x_left + (col as f64 + 0.5) * cell;
                heights.push(height(x, y) as f32);
            }
        }
        Dem {
            source: source.to_string(),
            cols,
            rows,
            x_left,
            y_top,
            dx: cell,
            dy: cell,
            heights,
            crs_wkt: String::new(),
            kind: GridKind::Projected,
            weights: None,
        }
    }

    /// Whether the grid is in longitude and latitude.
    pub fn is_geographic(&self) -> bool {
        matches!(self.kind, GridKind::Geographic(_))
    }

    /// Share of cell `(col, row)` this DEM contributes (1 without weights).
    #[inline]
    pub fn weight(&self, col: usize, row: usize) -> f64 {
        match &self.weights {
            Some(w) => w[row * self.cols + col] as f64,
            None => 1.0,
        }
    }

    /// Area of a cell of row `row` relative to [`Dem::reference_area`] (1 for a
    /// projected grid; the cosine of the latitude ratio for a geographic one).
    #[inline]
    pub fn area_factor(&self, row: usize) -> f64 {
        match self.kind {
            GridKind::Projected => 1.0,
            GridKind::Geographic(_) => self.row_center_y(row).to_radians().cos(),
        }
    }

    /// The larger side of a cell in metres (at the grid's middle latitude for a
    /// geographic grid): the cell size the zone plan is built for.
    pub fn cell_size_m(&self) -> f64 {
        match self.kind {
            GridKind::Projected => self.dx.max(self.dy),
            GridKind::Geographic(ell) => {
                let mid = 0.5 * (self.y_top + self.y_bottom());
                let (n, m) = ell.radii(mid.to_radians());
                (n * mid.to_radians().cos() * self.dx.to_radians()).max(m * self.dy.to_radians())
            }
        }
    }

    /// [`Dem::area_factor`] at grid northing (or latitude) `y`.
    #[inline]
    pub fn area_factor_y(&self, y: f64) -> f64 {
        match self.kind {
            GridKind::Projected => 1.0,
            GridKind::Geographic(_) => y.to_radians().cos(),
        }
    }

    /// Area of a cell whose [`Dem::area_factor`] is 1, m^2: `dx dy` for a projected
    /// grid, `M N dphi dlambda` (radians) at the grid's middle latitude for a geographic
    /// one (cells at latitude phi have `cos(phi)` of it, to the variation of M N).
    pub fn reference_area(&self) -> f64 {
        match self.kind {
            GridKind::Projected => self.dx * self.dy,
            GridKind::Geographic(ell) => {
                let mid = 0.5 * (self.y_top + self.y_bottom());
                let (n, m) = ell.radii(mid.to_radians());
                n * m * self.dx.to_radians() * self.dy.to_radians()
            }
        }
    }

    /// Height of cell `(col, row)`, `None` for nodata.
    #[inline]
    pub fn height(&self, col: usize, row: usize) -> Option<f64> {
        let h = self.heights[row * self.cols + col];
        if h.is_nan() {
            None
        } else {
            Some(h as f64)
        }
    }

    /// Easting of the centre of column `col`, m.
    #[inline]
    pub fn col_center_x(&self, col: usize) -> f64 {
        self.x_left + (col as f64 + 0.5) * self.dx
    }

    /// Northing of the centre of row `row`, m.
    #[inline]
    pub fn row_center_y(&self, row: usize) -> f64 {
        self.y_top - (row as f64 + 0.5) * self.dy
    }

    /// Easting of the eastern edge, m.
    pub fn x_right(&self) -> f64 {
        self.x_left + self.cols as f64 * self.dx
    }

    /// Northing of the southern edge, m.
    pub fn y_bottom(&self) -> f64 {
        self.y_top - self.rows as f64 * self.dy
    }

    /// Area of one cell, m^2.
    pub fn cell_area(&self) -> f64 {
        self.dx * self.dy
    }

    /// Whether the point lies on the grid (edges included).
    pub fn contains(&self, x: f64, y: f64) -> bool {
        x >= self.x_left && x <= self.x_right() && y >= self.y_bottom() && y <= self.y_top
    }

    /// Distance from the point to the nearest edge of the grid, m (negative outside); on
    /// a geographic grid measured with the metres per degree at the point.
    pub fn distance_inside(&self, x: f64, y: f64) -> f64 {
        let (mx, my) = self.metres_per_unit(y);
        let dx = (x - self.x_left).min(self.x_right() - x) * mx;
        let dy = (y - self.y_bottom()).min(self.y_top - y) * my;
        dx.min(dy)
    }

    /// Metres per grid unit east and north at grid northing (or latitude) `y`: 1 on a
    /// projected grid; N cos(phi) and M per radian, in degrees, on a geographic one.
    pub fn metres_per_unit(&self, y: f64) -> (f64, f64) {
        match self.kind {
            GridKind::Projected => (1.0, 1.0),
            GridKind::Geographic(ell) => {
                let phi = y.clamp(-90.0, 90.0).to_radians();
                let (n, m) = ell.radii(phi);
                (n * phi.cos() * 1f64.to_radians(), m * 1f64.to_radians())
            }
        }
    }

    /// Bilinear height at `(x, y)` from the four surrounding cell centres, m.
    ///
    /// Within half a cell of the grid's edge the nearest centres are used (constant
    /// extrapolation across the half cell). Nodata neighbours are left out and the weights
    /// of the others renormalised; `None` when all four are nodata or the point is off
    /// the grid.
    pub fn bilinear(&self, x: f64, y: f64) -> Option<f64> {
        if !self.contains(x, y) {
            return None;
        }
        let fx = ((x - self.x_left) / self.dx - 0.5).clamp(0.0, (self.cols - 1) as f64);
        let fy = ((self.y_top - y) / self.dy - 0.5).clamp(0.0, (self.rows - 1) as f64);
        let c0 = (fx.floor() as usize).min(self.cols.saturating_sub(2));
        let r0 = (fy.floor() as usize).min(self.rows.saturating_sub(2));
        let c1 = (c0 + 1).min(self.cols - 1);
        let r1 = (r0 + 1).min(self.rows - 1);
        let tx = fx - c0 as f64;
        let ty = fy - r0 as f64;
        let mut sum = 0.0;
        let mut weight = 0.0;
        for (c, r, w) in [
            (c0, r0, (1.0 - tx) * (1.0 - ty)),
            (c1, r0, tx * (1.0 - ty)),
            (c0, r1, (1.0 - tx) * ty),
            (c1, r1, tx * ty),
        ] {
            if let Some(h) = self.height(c, r) {
                sum += w * h;
                weight += w;
            }
        }
        if weight > 1e-12 {
            Some(sum / weight)
        } else {
            self.nearest(x, y)
        }
    }

    /// Height of the cell holding `(x, y)`, `None` off the grid or on nodata.
    pub fn nearest(&self, x: f64, y: f64) -> Option<f64> {
        if !self.contains(x, y) {
            return None;
        }
        let col = (((x - self.x_left) / self.dx) as usize).min(self.cols - 1);
        let row = (((self.y_top - y) / self.dy) as usize).min(self.rows - 1);
        self.height(col, row)
    }

    /// Slope of the DEM at `(x, y)` from central differences of the bilinear surface,
    /// degrees; `None` where the DEM has no data around the point.
    pub fn slope_deg(&self, x: f64, y: f64) -> Option<f64> {
        let (hx, hy) = (self.dx, self.dy);
        let e = self.bilinear(x + hx, y)?;
        let w = self.bilinear(x - hx, y)?;
        let n = self.bilinear(x, y + hy)?;
        let s = self.bilinear(x, y - hy)?;
        let gx = (e - w) / (2.0 * hx);
        let gy = (n - s) / (2.0 * hy);
        Some(gx.hypot(gy).atan().to_degrees())
    }

    /// Number of cells, valid or not.
    pub fn len(&self) -> usize {
        self.heights.len()
    }

    /// Whether the grid has no cells.
    pub fn is_empty(&self) -> bool {
        self.heights.is_empty()
    }

    /// Smallest and largest valid height, `None` when every cell is nodata.
    pub fn height_range(&self) -> Option<(f64, f64)> {
        let mut lo = f32::INFINITY;
        let mut hi = f32::NEG_INFINITY;
        for &h in &self.heights {
            if !h.is_nan() {
                lo = lo.min(h);
                hi = hi.max(h);
            }
        }
        (lo <= hi).then_some((lo as f64, hi as f64))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bilinear_reproduces_a_plane() {
        let dem = Dem::from_fn("plane", 20, 10, 1000.0, 5000.0, 10.0, |x, y| {
            0.5 * x - 0.25 * y
        });
        for (x, y) in [(1050.0, 4950.0), (1123.4, 4977.7), (1005.0, 4995.0)] {
            let expect = 0.5 * x - 0.25 * y;
            let got = dem.bilinear(x, y).unwrap();
            // Inside the ring of centres it is exact; within half a cell of the edge it is
            // clamped, so only check points whose neighbours surround them.
            if x > 1005.0 && y < 4995.0 {
                assert!((got - expect).abs() < 1e-3, "{got} vs {expect}");
            }
        }
        assert!(dem.bilinear(999.0, 4950.0).is_none());
    }

    #[test]
    fn slope_of_a_plane() {
        let dem = Dem::from_fn("plane", 20, 20, 0.0, 200.0, 10.0, |x, _| {
            x * 30f64.to_radians().tan()
        });
        let s = dem.slope_deg(100.0, 100.0).unwrap();
        assert!((s - 30.0).abs() < 1e-3);
    }
}
