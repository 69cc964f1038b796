//! The terrain-correction engine: integrates the topography around each station and runs
//! the stations in parallel.
//!
//! Everything here works in SI units and station-centred coordinates; a station's result
//! is a sum of kernels (m) that [`StationResult::tc_m_s2`] turns into an acceleration with
//! `G rho` (the correction is linear in a constant density).

use crate::dem::Dem;
use crate::kernels::prism::{nagy_corner, CLOSED_FORM_MAX_RATIO};
use crate::kernels::{prism_kernel, prism_kernel_closed_form};
use crate::units::{EARTH_RADIUS_M, G};
use rayon::prelude::*;

/// How the Earth's shape enters the correction.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Convention {
    /// Bouguer cap to 166.7 km; every column lowered by the curvature drop `s^2 / 2R`.
    Spherical,
    /// Infinite slab; flat Earth (classical, for comparison with old surveys).
    Planar,
}

impl Convention {
    /// `1/R` for the curvature drop `d = s^2 / (2R)`, or 0 for the planar convention.
    pub fn curvature(self) -> f64 {
        match self {
            Convention::Spherical => 1.0 / EARTH_RADIUS_M,
            Convention::Planar => 0.0,
        }
    }
}

/// How the topography is integrated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Every DEM cell within the outer radius is a full-resolution prism (reference).
    Exact,
}

/// What the cells right around the station are.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InnerModel {
    /// Every cell, the station's own included, is a flat-topped prism.
    Prisms,
}

/// Settings of one run that the engine needs.
#[derive(Debug, Clone, Copy)]
pub struct EngineConfig {
    /// Outer radius of the correction, m.
    pub outer_radius_m: f64,
    pub convention: Convention,
    pub method: Method,
    pub inner_model: InnerModel,
}

/// What the engine found for one station.
#[derive(Debug, Clone, PartialEq)]
pub struct StationResult {
    /// Bilinear DEM height at the station, m (`None` on nodata).
    pub dem_elev_m: Option<f64>,
    /// Sum of the terrain kernels, m: the correction is `G rho kernel_sum_m`.
    pub kernel_sum_m: f64,
    /// Fraction of the disc of the outer radius that has valid DEM data, 0..1.
    pub coverage: f64,
    /// DEM cells with data inside the disc.
    pub cells_used: u64,
}

impl StationResult {
    /// The terrain correction for a constant density, m/s^2 (downward positive).
    pub fn tc_m_s2(&self, density_kg_m3: f64) -> f64 {
        G * density_kg_m3 * self.kernel_sum_m
    }
}

/// A point where the correction is wanted, in the DEM's CRS.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Point {
    pub x: f64,
    pub y: f64,
    /// Height of the point (the station's own height), m.
    pub elev: f64,
}

/// Counts of the cells whose centres fall inside a disc, for coverage.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct DiscCount {
    /// Cells on the grid with data.
    pub valid: u64,
    /// Cells on the grid without data.
    pub nodata: u64,
    /// Cell positions off the grid (the grid extended with its own spacing).
    pub outside: u64,
}

impl DiscCount {
    /// Fraction of the disc's cells with data.
    pub fn coverage(&self) -> f64 {
        let total = self.valid + self.nodata + self.outside;
        if total == 0 {
            0.0
        } else {
            self.valid as f64 / total as f64
        }
    }
}

/// Range of indices `i` with `|origin + (i + 0.5) step - centre| < half_width`.
fn index_range(origin: f64, step: f64, centre: f64, half_width: f64) -> (i64, i64) {
    let lo = ((centre - half_width - origin) / step - 0.5).floor() as i64;
    let hi = ((centre + half_width - origin) / step - 0.5).ceil() as i64;
    let inside = |i: i64| ((origin + (i as f64 + 0.5) * step) - centre).abs() < half_width;
    let mut a = lo;
    while a <= hi && !inside(a) {
        a += 1;
    }
    let mut b = hi;
    while b >= a && !inside(b) {
        b -= 1;
    }
    (a, b)
}

/// Counts the cells of `dem` (extended beyond its edges with its own spacing) whose
/// centres lie strictly inside the disc of radius `radius` around `(x, y)`.
pub fn count_disc(dem: &Dem, x: f64, y: f64, radius: f64) -> DiscCount {
    let mut count = DiscCount::default();
    // Virtual rows: row index r has centre northing y_top - (r + 0.5) dy.
    let (r_lo, r_hi) = index_range(-dem.y_top, dem.dy, -y, radius);
    for r in r_lo..=r_hi {
        let cy = dem.y_top - (r as f64 + 0.5) * dem.dy;
        let dy = cy - y;
        let half = (radius * radius - dy * dy).max(0.0).sqrt();
        let (c_lo, c_hi) = index_range(dem.x_left, dem.dx, x, half);
        if c_hi < c_lo {
            continue;
        }
        let total = (c_hi - c_lo + 1) as u64;
        if r < 0 || r >= dem.rows as i64 {
            count.outside += total;
            continue;
        }
        let on_lo = c_lo.max(0);
        let on_hi = c_hi.min(dem.cols as i64 - 1);
        let on = if on_hi >= on_lo {
            (on_hi - on_lo + 1) as u64
        } else {
            0
        };
        count.outside += total - on;
        let row = r as usize;
        for c in on_lo..=on_hi {
            if dem.height(c as usize, row).is_some() {
                count.valid += 1;
            } else {
                count.nodata += 1;
            }
        }
    }
    count
}

/// The engine: a DEM, the settings, and what is built once per DEM.
pub struct Engine<'a> {
    pub dem: &'a Dem,
    pub config: EngineConfig,
}

impl<'a> Engine<'a> {
    pub fn new(dem: &'a Dem, config: EngineConfig) -> Engine<'a> {
        Engine { dem, config }
    }

    /// Computes the correction at one point.
    pub fn compute(&self, p: Point) -> StationResult {
        let count = count_disc(self.dem, p.x, p.y, self.config.outer_radius_m);
        let kernel_sum_m = match self.config.method {
            Method::Exact => exact_kernel_sum(self.dem, p, &self.config),
        };
        StationResult {
            dem_elev_m: self.dem.bilinear(p.x, p.y),
            kernel_sum_m,
            coverage: count.coverage(),
            cells_used: count.valid,
        }
    }

    /// Computes every point in parallel (rayon), results in input order; `tick` is
    /// called once per finished point (for a progress bar).
    pub fn compute_all(&self, points: &[Point], tick: &(dyn Fn() + Sync)) -> Vec<StationResult> {
        points
            .par_iter()
            .map(|&p| {
                let r = self.compute(p);
                tick();
                r
            })
            .collect()
    }
}

/// The exact method: every cell whose centre lies within the outer radius is a prism
/// over its footprint between the station's level and the cell's height, both lowered by
/// the curvature drop at the cell centre's distance in the spherical convention.
///
/// In the planar convention the prism corner terms at the station's own level (`u = 0`)
/// are shared by the cells of a row: each node's term is computed once per row instead
/// of once per cell corner.
pub fn exact_kernel_sum(dem: &Dem, p: Point, config: &EngineConfig) -> f64 {
    let radius = config.outer_radius_m;
    let r2max = radius * radius;
    let curvature = config.convention.curvature();
    let (r_lo, r_hi) = index_range(-dem.y_top, dem.dy, -p.y, radius);
    let r_lo = r_lo.max(0);
    let r_hi = r_hi.min(dem.rows as i64 - 1);
    let side = dem.dx.max(dem.dy);
    let mut total = 0.0;
    let mut base_top: Vec<f64> = Vec::new();
    let mut base_bottom: Vec<f64> = Vec::new();
    for r in r_lo..=r_hi {
        let row = r as usize;
        let n_c = dem.row_center_y(row) - p.y;
        let half = (r2max - n_c * n_c).max(0.0).sqrt();
        let (c_lo, c_hi) = index_range(dem.x_left, dem.dx, p.x, half);
        let c_lo = c_lo.max(0);
        let c_hi = c_hi.min(dem.cols as i64 - 1);
        if c_hi < c_lo {
            continue;
        }
        let n1 = n_c - 0.5 * dem.dy;
        let n2 = n_c + 0.5 * dem.dy;
        let e_of = |c: usize| dem.x_left + c as f64 * dem.dx - p.x;
        let shared = curvature == 0.0;
        if shared {
            // Node terms at u = 0 for the row's nodes; only those near enough for the
            // closed form are used, the rest are left at 0.
            let n_nodes = (c_hi - c_lo + 2) as usize;
            base_top.clear();
            base_bottom.clear();
            base_top.resize(n_nodes, 0.0);
            base_bottom.resize(n_nodes, 0.0);
            let near_limit = CLOSED_FORM_MAX_RATIO * side + side;
            for k in 0..n_nodes {
                let e = e_of(c_lo as usize + k);
                if e.hypot(n_c) < near_limit {
                    base_top[k] = nagy_corner(e, n2, 0.0);
                    base_bottom[k] = nagy_corner(e, n1, 0.0);
                }
            }
        }
        let mut row_sum = 0.0;
        for c in c_lo as usize..=c_hi as usize {
            let Some(h) = dem.height(c, row) else {
                continue;
            };
            let e1 = e_of(c);
            let e2 = e1 + dem.dx;
            let e_c = 0.5 * (e1 + e2);
            let s2 = e_c * e_c + n_c * n_c;
            if s2 >= r2max {
                continue;
            }
            let dh = h - p.elev;
            if dh == 0.0 {
                continue;
            }
            let drop = 0.5 * curvature * s2;
            let u_ref = -drop;
            let u_top = dh - drop;
            let ratio = s2.sqrt() / side;
            if shared && ratio < CLOSED_FORM_MAX_RATIO {
                let k = c - c_lo as usize;
                let phi_ref = base_top[k + 1] - base_top[k] - base_bottom[k + 1] + base_bottom[k];
                let phi_top = crate::kernels::prism::footprint_phi(e1, e2, n1, n2, u_top);
                row_sum += phi_ref - phi_top;
            } else if ratio < CLOSED_FORM_MAX_RATIO {
                row_sum += prism_kernel_closed_form(e1, e2, n1, n2, u_ref, u_top);
            } else {
                row_sum += prism_kernel(e1, e2, n1, n2, u_ref, u_top);
            }
        }
        total += row_sum;
    }
    total
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::to_mgal;

    fn config(radius: f64, convention: Convention) -> EngineConfig {
        EngineConfig {
            outer_radius_m: radius,
            convention,
            method: Method::Exact,
            inner_model: InnerModel::Prisms,
        }
    }

    /// The same sum without the shared corner terms, prism by prism.
    fn naive_sum(dem: &Dem, p: Point, radius: f64, curvature: f64) -> f64 {
        let mut total = 0.0;
        for row in 0..dem.rows {
            for col in 0..dem.cols {
                let Some(h) = dem.height(col, row) else {
                    continue;
                };
                let e_c = dem.col_center_x(col) - p.x;
                let n_c = dem.row_center_y(row) - p.y;
                let s2 = e_c * e_c + n_c * n_c;
                if s2 >= radius * radius {
                    continue;
                }
                let d = 0.5 * curvature * s2;
                total += prism_kernel(
                    e_c - dem.dx / 2.0,
                    e_c + dem.dx / 2.0,
                    n_c - dem.dy / 2.0,
                    n_c + dem.dy / 2.0,
                    -d,
                    h - p.elev - d,
                );
            }
        }
        total
    }

    #[test]
    fn shared_corner_terms_change_nothing() {
        let dem = Dem::from_fn("rough", 60, 50, 0.0, 1500.0, 30.0, |x, y| {
            500.0 + 80.0 * (x / 170.0).sin() * (y / 230.0).cos() + 0.05 * x
        });
        for p in [
            Point {
                x: 900.0,
                y: 750.0,
                elev: 520.0,
            },
            Point {
                x: 915.0,
                y: 735.0,
                elev: 480.0,
            },
            Point {
                x: 901.3,
                y: 748.2,
                elev: 555.5,
            },
        ] {
            let fast = exact_kernel_sum(&dem, p, &config(700.0, Convention::Planar));
            let slow = naive_sum(&dem, p, 700.0, 0.0);
            assert!(((fast - slow) / slow).abs() < 1e-12, "{fast} vs {slow}");
            let fast = exact_kernel_sum(&dem, p, &config(700.0, Convention::Spherical));
            let slow = naive_sum(&dem, p, 700.0, 1.0 / EARTH_RADIUS_M);
            assert!(((fast - slow) / slow).abs() < 1e-12, "{fast} vs {slow}");
        }
    }

    #[test]
    fn flat_plain_gives_zero() {
        let dem = Dem::from_fn("flat", 40, 40, 0.0, 400.0, 10.0, |_, _| 250.0);
        let p = Point {
            x: 200.0,
            y: 200.0,
            elev: 250.0,
        };
        let k = exact_kernel_sum(&dem, p, &config(150.0, Convention::Planar));
        assert_eq!(k, 0.0);
    }

    #[test]
    fn disc_count_is_exact_inside_and_counts_outside() {
        let dem = Dem::from_fn("flat", 100, 100, 0.0, 1000.0, 10.0, |_, _| 0.0);
        let inside = count_disc(&dem, 500.0, 500.0, 200.0);
        assert_eq!(inside.outside + inside.nodata, 0);
        assert_eq!(inside.coverage(), 1.0);
        // About pi r^2 / cell area cells.
        let expected = std::f64::consts::PI * 200.0 * 200.0 / 100.0;
        assert!((inside.valid as f64 - expected).abs() / expected < 0.01);
        // A station on the western edge sees about half of its disc.
        let edge = count_disc(&dem, 0.0, 500.0, 200.0);
        assert!((edge.coverage() - 0.5).abs() < 0.02, "{}", edge.coverage());
    }

    #[test]
    fn slab_under_a_station_in_a_pit() {
        // A station 1 m above a flat plain that extends far: the missing slab of 1 m over
        // the disc approaches 2 pi G rho h (0.1119688 mGal at 2670 kg/m3; SCIENCE.md s.1)
        // for a radius much larger than the height.
        let dem = Dem::from_fn("plain", 400, 400, -20_000.0, 20_000.0, 100.0, |_, _| 0.0);
        let p = Point {
            x: 50.0,
            y: 50.0,
            elev: 1.0,
        };
        let k = exact_kernel_sum(&dem, p, &config(19_000.0, Convention::Planar));
        let mgal = to_mgal(G * 2670.0 * k);
        // The cylinder formula for a = 19 km, L = 1 m differs from the slab by L/a.
        assert!((mgal - 0.111_968_8).abs() < 1e-4, "{mgal}");
    }
}
