//! The inner zone: the few cells around the station.
//!
//! Flat-topped cells put a step of (cell height - station height) right under the
//! station; on steep ground with the station off a DEM node that alone is worth up to
//! about 1 mGal of spurious correction (the cone test below). The surface
//! inner model replaces them with a continuous surface through the station:
//!
//! ```text
//! z(e, n) = B(e, n) + (h_s - B(0, 0)) w - h_s,     w = 1 - rho / rho_max(theta)
//! ```
//!
//! where `B` is the bilinear DEM surface through the cell centres, `h_s` the station
//! height and `rho_max(theta)` the distance to the zone's edge along azimuth `theta`: the
//! shift is tapered to zero at the edge, where the surface meets the DEM. The surface is
//! integrated by polar quadrature of the column kernel (the vertical line mass, [`crate::kernels::column`]):
//!
//! ```text
//! k = int_0^{2 pi} dtheta int_0^{rho_max(theta)} rho c(rho, -d(rho), z - d(rho)) drho,
//! rho c(rho, 0, z) = 1 - rho / sqrt(rho^2 + z^2)
//! ```
//!
//! which is exact for any surface (no column approximation: the vertical integral is
//! closed-form, the horizontal one numerical). Angles are split into panels at the
//! directions of the zone's corners and of the bilinear surface's nodes, rays into
//! segments where they cross the surface's kink lines, and each piece is integrated by
//! Gauss-Legendre quadrature; next to the station, where the integrand changes over a
//! length of the order of the station's offset from the DEM, the first segment is graded
//! geometrically.
//!
//! The rays also break at the plan's hard edges (and the inner column's radius), and the
//! angular panels at the directions where those circles cross the square's sides, so
//! that when the inner zone is shared out among the plan's zones (the Hammer plan's inner
//! column is zone A, 2 m, of a cell square tens of metres wide) each piece of a ray goes
//! whole to the zone holding its midpoint ([`surface_square_parts`]): no Gauss segment
//! straddles a zone edge, and the pieces add up to the whole. For zone `k` between radii
//! `a_k` and `b_k` the piece is
//!
//! ```text
//! k_k = int_0^{2 pi} dtheta int_{min(a_k, rho_max)}^{min(b_k, rho_max)} rho c(rho, -d, z - d) drho.
//! ```

use super::frame::Frame;
use super::{CellBox, Point};
use crate::dem::Dem;
use crate::kernels::column_kernel;
use crate::kernels::prism_kernel;
use std::f64::consts::PI;

/// Gauss-Legendre nodes and weights on [-1, 1], 4 points.
const GAUSS_4: [(f64, f64); 4] = [
    (-0.861_136_311_594_052_6, 0.347_854_845_137_453_9),
    (-0.339_981_043_584_856_3, 0.652_145_154_862_546_1),
    (0.339_981_043_584_856_3, 0.652_145_154_862_546_1),
    (0.861_136_311_594_052_6, 0.347_854_845_137_453_9),
];

/// Gauss-Legendre nodes and weights on [-1, 1], 6 points.
const GAUSS_6: [(f64, f64); 6] = [
    (-0.932_469_514_203_152, 0.171_324_492_379_170_3),
    (-0.661_209_386_466_264_5, 0.360_761_573_048_138_6),
    (-0.238_619_186_083_196_9, 0.467_913_934_572_691),
    (0.238_619_186_083_196_9, 0.467_913_934_572_691),
    (0.661_209_386_466_264_5, 0.360_761_573_048_138_6),
    (0.932_469_514_203_152, 0.171_324_492_379_170_3),
];

/// Rule per angular panel (panels end at the zone's corners and the surface's nodes).
const ANGULAR: [(f64, f64); 6] = GAUSS_6;
/// Rule per ray segment (segments end where the ray crosses a kink line).
const RADIAL: [(f64, f64); 6] = GAUSS_6;
/// Most break points along one ray.
const MAX_BREAKS: usize = 96;
/// Ratio of the geometric grading of the ray's start, from half the station's offset.
const GRADING: f64 = 8.0;

/// Weight of the station's own cell (1 off the grid): the inner surface's share of the
/// DEM, times its density over the reference density when a density raster is given.
fn station_weight(dem: &Dem, p: Point) -> f64 {
    let col = ((p.x - dem.x_left) / dem.dx).floor();
    let row = ((dem.y_top - p.y) / dem.dy).floor();
    if col < 0.0 || row < 0.0 || col as usize >= dem.cols || row as usize >= dem.rows {
        return 1.0;
    }
    dem.weight(col as usize, row as usize)
}

/// Calls `each(distance, area)` (m, m^2) for every cell of the inner box with data whose
/// centre lies within the outer radius: the distance of its centre from the station and
/// its area times its weight.
pub fn box_cell_areas<F: Frame>(
    dem: &Dem,
    frame: &F,
    p: Point,
    cells: &CellBox,
    outer_m: f64,
    each: &mut dyn FnMut(f64, f64),
) {
    for row in cells.row_lo.max(0)..=cells.row_hi.min(dem.rows as i64 - 1) {
        for col in cells.col_lo.max(0)..=cells.col_hi.min(dem.cols as i64 - 1) {
            let (c, r) = (col as usize, row as usize);
            let (x, y) = (dem.col_center_x(c), dem.row_center_y(r));
            let (e, n) = frame.local(x, y);
            if dem.height(c, r).is_some() && e * e + n * n < outer_m * outer_m {
                let (cw, ch) = frame.cell_size(x, y, dem.dx, dem.dy);
                each((e * e + n * n).sqrt(), cw * ch * dem.weight(c, r));
            }
        }
    }
    let _ = p;
}

/// Flat-topped prisms for the cells of the inner box (the `prisms` inner model), each
/// added to `out` at the slot of its centre's distance from the station (`slot_of`).
#[allow(clippy::too_many_arguments)]
pub fn prisms_in_box_parts<F: Frame>(
    dem: &Dem,
    frame: &F,
    p: Point,
    cells: &CellBox,
    curvature: f64,
    outer_m: f64,
    slot_of: &dyn Fn(f64) -> usize,
    out: &mut [f64],
    elements: &mut u64,
) {
    for row in cells.row_lo.max(0)..=cells.row_hi.min(dem.rows as i64 - 1) {
        for col in cells.col_lo.max(0)..=cells.col_hi.min(dem.cols as i64 - 1) {
            let (c, r) = (col as usize, row as usize);
            let Some(h) = dem.height(c, r) else { continue };
            let (x, y) = (dem.col_center_x(c), dem.row_center_y(r));
            let (e_c, n_c) = frame.local(x, y);
            let s2 = e_c * e_c + n_c * n_c;
            if s2 >= outer_m * outer_m {
                continue;
            }
            let (cw, ch) = frame.cell_size(x, y, dem.dx, dem.dy);
            let d = 0.5 * curvature * s2;
            out[slot_of(s2.sqrt())] += dem.weight(c, r)
                * prism_kernel(
                    e_c - 0.5 * cw,
                    e_c + 0.5 * cw,
                    n_c - 0.5 * ch,
                    n_c + 0.5 * ch,
                    -d,
                    h - p.elev - d,
                );
            *elements += 1;
        }
    }
}

/// Flat-topped prisms for the cells whose centres lie within `radius_m` of the station
/// (the `prisms` inner model with a disc inner zone): kernel sum and area.
pub fn prisms_in_disc<F: Frame>(
    dem: &Dem,
    frame: &F,
    p: Point,
    radius_m: f64,
    curvature: f64,
    elements: &mut u64,
) -> (f64, f64) {
    let col = ((p.x - dem.x_left) / dem.dx).floor() as i64;
    let row = ((dem.y_top - p.y) / dem.dy).floor() as i64;
    let (cw, ch) = frame.cell_size(p.x, p.y, dem.dx, dem.dy);
    let reach_c = (radius_m / cw).ceil() as i64 + 1;
    let reach_r = (radius_m / ch).ceil() as i64 + 1;
    let (mut total, mut area) = (0.0, 0.0);
    for r in (row - reach_r).max(0)..=(row + reach_r).min(dem.rows as i64 - 1) {
        for c in (col - reach_c).max(0)..=(col + reach_c).min(dem.cols as i64 - 1) {
            let (cu, ru) = (c as usize, r as usize);
            let Some(h) = dem.height(cu, ru) else {
                continue;
            };
            let (x, y) = (dem.col_center_x(cu), dem.row_center_y(ru));
            let (e, n) = frame.local(x, y);
            let s2 = e * e + n * n;
            if s2 >= radius_m * radius_m {
                continue;
            }
            let (w_e, w_n) = frame.cell_size(x, y, dem.dx, dem.dy);
            let d = 0.5 * curvature * s2;
            let w = dem.weight(cu, ru);
            total += w * prism_kernel(
                e - 0.5 * w_e,
                e + 0.5 * w_e,
                n - 0.5 * w_n,
                n + 0.5 * w_n,
                -d,
                h - p.elev - d,
            );
            area += w * w_e * w_n;
            *elements += 1;
        }
    }
    (total, area)
}

/// The station's frame linearised at the station: over the inner zone's few tens of
/// metres it is exact to well below a millimetre, and cheap to invert.
#[derive(Debug, Clone, Copy)]
struct LinearFrame {
    x0: f64,
    y0: f64,
    j: [[f64; 2]; 2],
    inv: [[f64; 2]; 2],
}

impl LinearFrame {
    fn at<F: Frame>(frame: &F, p: Point) -> LinearFrame {
        let j = frame.jacobian(p.x, p.y);
        let det = j[0][0] * j[1][1] - j[0][1] * j[1][0];
        let inv = [
            [j[1][1] / det, -j[0][1] / det],
            [-j[1][0] / det, j[0][0] / det],
        ];
        LinearFrame {
            x0: p.x,
            y0: p.y,
            j,
            inv,
        }
    }

    #[inline]
    fn local(&self, x: f64, y: f64) -> (f64, f64) {
        let (dx, dy) = (x - self.x0, y - self.y0);
        (
            self.j[0][0] * dx + self.j[0][1] * dy,
            self.j[1][0] * dx + self.j[1][1] * dy,
        )
    }

    #[inline]
    fn grid(&self, e: f64, n: f64) -> (f64, f64) {
        (
            self.x0 + self.inv[0][0] * e + self.inv[0][1] * n,
            self.y0 + self.inv[1][0] * e + self.inv[1][1] * n,
        )
    }
}

/// The cell-centre heights around a region, copied out of the DEM so that the bilinear
/// surface can be evaluated without the edge and nodata checks of [`Dem::bilinear`]
/// (which the caller falls back to where the patch cannot answer).
struct Patch {
    col0: i64,
    row0: i64,
    cols: usize,
    rows: usize,
    x_left: f64,
    y_top: f64,
    dx: f64,
    dy: f64,
    heights: Vec<f64>,
}

impl Patch {
    /// The cells whose centres surround every point of `[x0, x1] x [y0, y1]`.
    fn covering(dem: &Dem, x0: f64, x1: f64, y0: f64, y1: f64) -> Patch {
        let col0 = ((x0 - dem.x_left) / dem.dx - 0.5).floor() as i64;
        let col1 = ((x1 - dem.x_left) / dem.dx - 0.5).floor() as i64 + 1;
        let row0 = ((dem.y_top - y1) / dem.dy - 0.5).floor() as i64;
        let row1 = ((dem.y_top - y0) / dem.dy - 0.5).floor() as i64 + 1;
        let (cols, rows) = ((col1 - col0 + 1) as usize, (row1 - row0 + 1) as usize);
        let mut heights = Vec::with_capacity(cols * rows);
        for r in row0..=row1 {
            for c in col0..=col1 {
                let on = c >= 0 && r >= 0 && (c as usize) < dem.cols && (r as usize) < dem.rows;
                heights.push(if on {
                    dem.height(c as usize, r as usize).unwrap_or(f64::NAN)
                } else {
                    f64::NAN
                });
            }
        }
        Patch {
            col0,
            row0,
            cols,
            rows,
            x_left: dem.x_left,
            y_top: dem.y_top,
            dx: dem.dx,
            dy: dem.dy,
            heights,
        }
    }

    /// Bilinear height through the four surrounding centres, `None` if any is missing or
    /// the point is off the patch.
    #[inline]
    fn bilinear(&self, x: f64, y: f64) -> Option<f64> {
        let fx = (x - self.x_left) / self.dx - 0.5 - self.col0 as f64;
        let fy = (self.y_top - y) / self.dy - 0.5 - self.row0 as f64;
        let (c, r) = (fx.floor(), fy.floor());
        if c < 0.0 || r < 0.0 || c as usize + 1 >= self.cols || r as usize + 1 >= self.rows {
            return None;
        }
        let (tx, ty) = (fx - c, fy - r);
        let i = r as usize * self.cols + c as usize;
        let (a, b) = (self.heights[i], self.heights[i + 1]);
        let (cc, d) = (self.heights[i + self.cols], self.heights[i + self.cols + 1]);
        let h = (a * (1.0 - tx) + b * tx) * (1.0 - ty) + (cc * (1.0 - tx) + d * tx) * ty;
        h.is_finite().then_some(h)
    }
}

/// Geometry of a star-shaped inner region around the station.
struct Region<'a> {
    dem: &'a Dem,
    frame: LinearFrame,
    /// The DEM's cells around the region, for fast interpolation.
    patch: Patch,
    p: Point,
    /// Station height minus the DEM surface at the station, m.
    shift: f64,
    curvature: f64,
    /// Relative eastings of the kink lines (cell-centre columns) crossing the region.
    lines_e: Vec<f64>,
    /// Relative northings of the kink lines (cell-centre rows).
    lines_n: Vec<f64>,
}

impl Region<'_> {
    /// Integrand `rho c(rho, u_ref, u_top)` at distance `rho` along unit direction `(ce, cn)`.
    #[inline]
    fn integrand(&self, rho: f64, ce: f64, cn: f64, rho_max: f64) -> f64 {
        let (x, y) = self.frame.grid(rho * ce, rho * cn);
        let Some(b) = self
            .patch
            .bilinear(x, y)
            .or_else(|| self.dem.bilinear(x, y))
        else {
            return 0.0;
        };
        let z = b + self.shift * (1.0 - rho / rho_max) - self.p.elev;
        let drop = 0.5 * self.curvature * rho * rho;
        rho * column_kernel(rho, -drop, z - drop)
    }

    /// Integral along one ray from 0 to `rho_max`, each segment added to `out` at the
    /// slot of its midpoint radius (`split.slot_of`); the ray also breaks at
    /// `split.breaks`.
    fn ray(
        &self,
        ce: f64,
        cn: f64,
        rho_max: f64,
        split: &Split,
        out: &mut [f64],
        evaluations: &mut u64,
    ) {
        let mut breaks = [0.0f64; MAX_BREAKS];
        let mut count = 0;
        let mut push = |t: f64| {
            if t > 0.0 && t < rho_max && count < MAX_BREAKS {
                breaks[count] = t;
                count += 1;
            }
        };
        push(f64::MIN_POSITIVE);
        if ce.abs() > 1e-15 {
            self.lines_e.iter().for_each(|&e| push(e / ce));
        }
        if cn.abs() > 1e-15 {
            self.lines_n.iter().for_each(|&n| push(n / cn));
        }
        split.breaks.iter().for_each(|&r| push(r));
        // Grade the start: the integrand varies over a length of the order of the shift.
        if self.shift.abs() > 1e-9 * rho_max {
            let mut g = 0.5 * self.shift.abs();
            while g < rho_max {
                push(g);
                g *= GRADING;
            }
        }
        let breaks = &mut breaks[..count];
        breaks.sort_unstable_by(f64::total_cmp);
        // The running sum of the current slot, added to `out` when the slot changes.
        let (mut slot, mut sum) = (0, 0.0);
        let mut a = 0.0;
        for &b in breaks.iter().skip(1).chain(std::iter::once(&rho_max)) {
            if b - a > 1e-12 * rho_max {
                let half = 0.5 * (b - a);
                let mid = 0.5 * (a + b);
                let here = (split.slot_of)(mid);
                if here != slot {
                    out[slot] += sum;
                    (slot, sum) = (here, 0.0);
                }
                // Away from the station, where the integrand is smooth on each segment, four
                // points do; next to it, inside the graded layer, six.
                let rule: &[(f64, f64)] = if a >= 4.0 * self.shift.abs() {
                    &GAUSS_4
                } else {
                    &RADIAL
                };
                for &(x, wt) in rule {
                    sum += wt * half * self.integrand(mid + half * x, ce, cn, rho_max);
                }
                *evaluations += rule.len() as u64;
                a = b;
            }
        }
        out[slot] += sum;
    }

    /// Integral over all azimuths, panels split at `critical` angles, added to `out` by
    /// the slots of `split`.
    fn integrate(
        &self,
        rho_max: &dyn Fn(f64, f64) -> f64,
        mut critical: Vec<f64>,
        split: &Split,
        out: &mut [f64],
        evaluations: &mut u64,
    ) {
        critical
            .iter_mut()
            .for_each(|a| *a = a.rem_euclid(2.0 * PI));
        // At least 8 panels so that smooth regions are also well resolved.
        for k in 0..8 {
            critical.push(k as f64 * PI / 4.0);
        }
        critical.sort_by(f64::total_cmp);
        critical.dedup_by(|a, b| (*a - *b).abs() < 1e-12);
        critical.push(critical[0] + 2.0 * PI);
        let mut ray_parts = vec![0.0; out.len()];
        for w in critical.windows(2) {
            let (a, b) = (w[0], w[1]);
            let half = 0.5 * (b - a);
            let mid = 0.5 * (a + b);
            for &(x, wt) in &ANGULAR {
                let theta = mid + half * x;
                let (cn, ce) = theta.sin_cos();
                ray_parts.iter_mut().for_each(|v| *v = 0.0);
                self.ray(ce, cn, rho_max(ce, cn), split, &mut ray_parts, evaluations);
                for (total, part) in out.iter_mut().zip(&ray_parts) {
                    *total += wt * half * part;
                }
            }
        }
    }
}

/// How the inner zone's quadrature is shared out: the radii where rays break, and the
/// slot (an index into the caller's sums) of a piece by its midpoint radius.
pub struct Split<'a> {
    /// Radii (m) where every ray breaks.
    pub breaks: &'a [f64],
    /// Slot of a piece of ray whose midpoint lies at this radius (m).
    pub slot_of: &'a dyn Fn(f64) -> usize,
}

impl Split<'_> {
    /// Everything in slot 0, no extra breaks.
    pub const WHOLE: Split<'static> = Split {
        breaks: &[],
        slot_of: &|_| 0,
    };
}

/// Directions (radians) where the circles of radius `radii` around the station cross
/// the sides of the box `[e_min, e_max] x [n_min, n_max]` (local metres, the station
/// inside).
fn circle_crossings(radii: &[f64], e_min: f64, e_max: f64, n_min: f64, n_max: f64) -> Vec<f64> {
    let mut out = Vec::new();
    for &r in radii {
        for side_e in [e_min, e_max] {
            if r > side_e.abs() {
                let n = (r * r - side_e * side_e).sqrt();
                for n in [n, -n] {
                    if n > n_min && n < n_max {
                        out.push(n.atan2(side_e));
                    }
                }
            }
        }
        for side_n in [n_min, n_max] {
            if r > side_n.abs() {
                let e = (r * r - side_n * side_n).sqrt();
                for e in [e, -e] {
                    if e > e_min && e < e_max {
                        out.push(side_n.atan2(e));
                    }
                }
            }
        }
    }
    out
}

/// Kink lines of the bilinear surface (the grid lines through cell centres) within
/// `[lo, hi]` of local easting (or northing when `northing` is set), as local offsets.
fn centre_lines(dem: &Dem, frame: &LinearFrame, lo: f64, hi: f64, northing: bool) -> Vec<f64> {
    let mut out = Vec::new();
    let (xa, ya) = frame.grid(
        if northing { 0.0 } else { lo },
        if northing { lo } else { 0.0 },
    );
    let (xb, yb) = frame.grid(
        if northing { 0.0 } else { hi },
        if northing { hi } else { 0.0 },
    );
    if northing {
        let first = ((dem.y_top - ya.max(yb)) / dem.dy - 0.5).floor() as i64;
        let last = ((dem.y_top - ya.min(yb)) / dem.dy - 0.5).ceil() as i64;
        for r in first..=last {
            let (_, n) = frame.local(frame.x0, dem.y_top - (r as f64 + 0.5) * dem.dy);
            if n > lo && n < hi {
                out.push(n);
            }
        }
    } else {
        let first = ((xa.min(xb) - dem.x_left) / dem.dx - 0.5).floor() as i64;
        let last = ((xa.max(xb) - dem.x_left) / dem.dx - 0.5).ceil() as i64;
        for c in first..=last {
            let (e, _) = frame.local(dem.x_left + (c as f64 + 0.5) * dem.dx, frame.y0);
            if e > lo && e < hi {
                out.push(e);
            }
        }
    }
    out
}

/// Directions to the surface's nodes (crossings of kink lines) other than the station.
fn node_angles(lines_e: &[f64], lines_n: &[f64]) -> Vec<f64> {
    let mut out = Vec::new();
    for &e in lines_e {
        for &n in lines_n {
            if e.hypot(n) > 1e-9 {
                out.push(n.atan2(e));
            }
        }
    }
    out
}

/// The surface inner model over the cell box around the station.
pub fn surface_square<F: Frame>(
    dem: &Dem,
    frame: &F,
    p: Point,
    cells: &CellBox,
    curvature: f64,
    evaluations: &mut u64,
) -> f64 {
    let mut total = [0.0];
    surface_square_parts(
        dem,
        frame,
        p,
        cells,
        curvature,
        &Split::WHOLE,
        &mut total,
        evaluations,
    );
    total[0]
}

/// The surface inner model over the cell box around the station, shared out by `split`:
/// each piece of a ray (broken at `split.breaks`, and the angular panels at the
/// directions where those circles cross the box's sides) is added to `out` at the slot
/// of its midpoint radius.
#[allow(clippy::too_many_arguments)]
pub fn surface_square_parts<F: Frame>(
    dem: &Dem,
    frame: &F,
    p: Point,
    cells: &CellBox,
    curvature: f64,
    split: &Split,
    out: &mut [f64],
    evaluations: &mut u64,
) {
    let Some(b0) = dem.bilinear(p.x, p.y) else {
        return;
    };
    let lin = LinearFrame::at(frame, p);
    let (x_lo, x_hi) = (
        dem.x_left + cells.col_lo as f64 * dem.dx,
        dem.x_left + (cells.col_hi + 1) as f64 * dem.dx,
    );
    let (y_hi, y_lo) = (
        dem.y_top - cells.row_lo as f64 * dem.dy,
        dem.y_top - (cells.row_hi + 1) as f64 * dem.dy,
    );
    let (e_min, _) = lin.local(x_lo, p.y);
    let (e_max, _) = lin.local(x_hi, p.y);
    let (_, n_min) = lin.local(p.x, y_lo);
    let (_, n_max) = lin.local(p.x, y_hi);
    let lines_e = centre_lines(dem, &lin, e_min, e_max, false);
    let lines_n = centre_lines(dem, &lin, n_min, n_max, true);
    let mut critical = node_angles(&lines_e, &lines_n);
    for (e, n) in [
        (e_min, n_min),
        (e_max, n_min),
        (e_max, n_max),
        (e_min, n_max),
    ] {
        critical.push(n.atan2(e));
    }
    critical.extend(circle_crossings(split.breaks, e_min, e_max, n_min, n_max));
    let region = Region {
        dem,
        frame: lin,
        patch: Patch::covering(dem, x_lo, x_hi, y_lo, y_hi),
        p,
        shift: p.elev - b0,
        curvature,
        lines_e,
        lines_n,
    };
    let rho_max = |ce: f64, cn: f64| {
        let te = if ce > 0.0 {
            e_max / ce
        } else if ce < 0.0 {
            e_min / ce
        } else {
            f64::INFINITY
        };
        let tn = if cn > 0.0 {
            n_max / cn
        } else if cn < 0.0 {
            n_min / cn
        } else {
            f64::INFINITY
        };
        te.min(tn)
    };
    let mut parts = vec![0.0; out.len()];
    region.integrate(&rho_max, critical, split, &mut parts, evaluations);
    let weight = station_weight(dem, p);
    for (total, part) in out.iter_mut().zip(parts) {
        *total += part * weight;
    }
}

/// The surface inner model over a disc of radius `radius_m` around the station.
pub fn surface_disc<F: Frame>(
    dem: &Dem,
    frame: &F,
    p: Point,
    radius_m: f64,
    curvature: f64,
    evaluations: &mut u64,
) -> f64 {
    let Some(b0) = dem.bilinear(p.x, p.y) else {
        return 0.0;
    };
    let lin = LinearFrame::at(frame, p);
    let lines_e = centre_lines(dem, &lin, -radius_m, radius_m, false);
    let lines_n = centre_lines(dem, &lin, -radius_m, radius_m, true);
    let (xa, ya) = lin.grid(-radius_m, -radius_m);
    let (xb, yb) = lin.grid(radius_m, radius_m);
    let critical = node_angles(&lines_e, &lines_n)
        .into_iter()
        .collect::<Vec<_>>();
    let region = Region {
        dem,
        frame: lin,
        patch: Patch::covering(dem, xa.min(xb), xa.max(xb), ya.min(yb), ya.max(yb)),
        p,
        shift: p.elev - b0,
        curvature,
        lines_e,
        lines_n,
    };
    let mut total = [0.0];
    region.integrate(
        &|_, _| radius_m,
        critical,
        &Split::WHOLE,
        &mut total,
        evaluations,
    );
    total[0] * station_weight(dem, p)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::frame::ProjectedFrame;

    /// Exact kernel of an inclined plane through the station over a star-shaped region:
    /// on azimuth phi the profile is a straight line of slope tan(a) cos(phi - phi0), so
    /// the ray integral is rho_max (1 - 1/sqrt(1 + t^2)) (the vertical integral of the column kernel along the
    /// ray, derived here).
    fn plane_region_kernel(slope: f64, azimuth: f64, rho_max: &dyn Fn(f64) -> f64) -> f64 {
        let n = 200_000;
        let mut sum = 0.0;
        for k in 0..n {
            let theta = (k as f64 + 0.5) * 2.0 * PI / n as f64;
            let t = slope * (theta - azimuth).cos();
            sum += rho_max(theta) * (1.0 - 1.0 / (1.0 + t * t).sqrt());
        }
        sum * 2.0 * PI / n as f64
    }

    #[test]
    fn surface_meets_the_inclined_plane_exactly() {
        // A plane of slope 30 degrees dipping to azimuth 20 degrees, sampled as a DEM; the
        // station on the plane, off the nodes. The surface model is exact for a plane (the
        // plane passes near 0 so that the DEM's f32 heights keep 1e-7 m).
        let (tan_a, az) = (30f64.to_radians().tan(), 20f64.to_radians());
        let (ge, gn) = (tan_a * az.cos(), tan_a * az.sin());
        let dem = Dem::from_fn("plane", 40, 40, 0.0, 1200.0, 30.0, |x, y| {
            ge * (x - 600.0) + gn * (y - 600.0)
        });
        let p = Point {
            x: 611.3,
            y: 587.9,
            elev: ge * 11.3 + gn * -12.1,
        };
        let cells = CellBox::around(&dem, p.x, p.y, 1);
        let mut evals = 0;
        let frame = ProjectedFrame { x0: p.x, y0: p.y };
        let k = surface_square(&dem, &frame, p, &cells, 0.0, &mut evals);
        let e_min = dem.x_left + cells.col_lo as f64 * dem.dx - p.x;
        let e_max = dem.x_left + (cells.col_hi + 1) as f64 * dem.dx - p.x;
        let n_max = dem.y_top - cells.row_lo as f64 * dem.dy - p.y;
        let n_min = dem.y_top - (cells.row_hi + 1) as f64 * dem.dy - p.y;
        let rho_max = |t: f64| {
            let (s, c) = t.sin_cos();
            let te = if c > 0.0 { e_max / c } else { e_min / c };
            let tn = if s > 0.0 { n_max / s } else { n_min / s };
            te.min(tn)
        };
        let exact = plane_region_kernel(tan_a, az, &rho_max);
        assert!(((k - exact) / exact).abs() < 1e-6, "{k} vs {exact}");
        // The disc form against the closed form G rho R [2 pi - 4 cos a K(sin^2 a)]
        // (our own derivation), here as the direct integral.
        let k = surface_disc(&dem, &frame, p, 25.0, 0.0, &mut evals);
        let exact = plane_region_kernel(tan_a, az, &|_| 25.0);
        assert!(((k - exact) / exact).abs() < 1e-6, "{k} vs {exact}");
    }

    #[test]
    fn surface_pieces_meet_the_inclined_plane_annulus_by_annulus() {
        // The plane of the test above, the square shared out at 2, 16.6 and 45 m (which crosses its sides): on azimuth
        // phi the ray integral from a to b is (b - a) (1 - 1/sqrt(1 + t^2)), so each
        // annulus of the square has the closed form of its chords.
        let (tan_a, az) = (30f64.to_radians().tan(), 20f64.to_radians());
        let (ge, gn) = (tan_a * az.cos(), tan_a * az.sin());
        let dem = Dem::from_fn("plane", 40, 40, 0.0, 1200.0, 30.0, |x, y| {
            ge * (x - 600.0) + gn * (y - 600.0)
        });
        let p = Point {
            x: 611.3,
            y: 587.9,
            elev: ge * 11.3 + gn * -12.1,
        };
        let cells = CellBox::around(&dem, p.x, p.y, 1);
        let frame = ProjectedFrame { x0: p.x, y0: p.y };
        let edges = [2.0, 16.6, 45.0];
        let slot_of = |rho: f64| edges.partition_point(|&e| e <= rho);
        let split = Split {
            breaks: &edges,
            slot_of: &slot_of,
        };
        let mut parts = [0.0; 4];
        let mut evals = 0;
        surface_square_parts(&dem, &frame, p, &cells, 0.0, &split, &mut parts, &mut evals);
        let e_min = dem.x_left + cells.col_lo as f64 * dem.dx - p.x;
        let e_max = dem.x_left + (cells.col_hi + 1) as f64 * dem.dx - p.x;
        let n_max = dem.y_top - cells.row_lo as f64 * dem.dy - p.y;
        let n_min = dem.y_top - (cells.row_hi + 1) as f64 * dem.dy - p.y;
        let rho_max = |t: f64| {
            let (s, c) = t.sin_cos();
            let te = if c > 0.0 { e_max / c } else { e_min / c };
            let tn = if s > 0.0 { n_max / s } else { n_min / s };
            te.min(tn)
        };
        let radii = [0.0, 2.0, 16.6, 45.0, f64::INFINITY];
        for (k, part) in parts.iter().enumerate() {
            let chord = |t: f64| rho_max(t).min(radii[k + 1]) - rho_max(t).min(radii[k]);
            let exact = plane_region_kernel(tan_a, az, &chord);
            assert!(
                ((part - exact) / exact).abs() < 1e-6,
                "annulus {k}: {part} vs {exact}"
            );
        }
        let whole = surface_square(&dem, &frame, p, &cells, 0.0, &mut evals);
        let sum: f64 = parts.iter().sum();
        assert!(((sum - whole) / whole).abs() < 1e-6, "{sum} vs {whole}");
    }

    #[test]
    fn station_above_a_flat_surface_sees_the_missing_disc() {
        // Station 2 m above a flat DEM: the tapered surface is a cone from the station down
        // to the DEM at the edge of a disc of radius R. For a cone of slope t = 2/R the
        // exact kernel is 2 pi R (1 - 1/sqrt(1 + t^2)) (derived from the ray integral above).
        let dem = Dem::from_fn("flat", 20, 20, 0.0, 200.0, 10.0, |_, _| 100.0);
        let p = Point {
            x: 101.0,
            y: 97.0,
            elev: 102.0,
        };
        let mut evals = 0;
        let r = 25.0;
        let frame = ProjectedFrame { x0: p.x, y0: p.y };
        let k = surface_disc(&dem, &frame, p, r, 0.0, &mut evals);
        let t: f64 = 2.0 / r;
        let exact = 2.0 * PI * r * (1.0 - 1.0 / (1.0 + t * t).sqrt());
        assert!(((k - exact) / exact).abs() < 1e-6, "{k} vs {exact}");
    }
}
