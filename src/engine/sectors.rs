//! Sector rings: annular sectors in the manner of Hammer's zones, with heights sampled
//! from the block pyramid.
//!
//! Each compartment (angle `theta`, radii `r1 < r2`) is sampled on an equal-area polar
//! grid; each sample takes the mean height and height variance of the pyramid block under
//! it, at the level whose blocks are about a quarter of the compartment's width (or the
//! bilinear DEM surface when cells are coarser than that). From the samples come the
//! compartment's mean height `h`, height variance `V` (between and within blocks), the
//! covariance `K` of height with radius, and the fraction `c` of it with data. Then
//!
//! ```text
//! k = c [ S(theta, r1, r2, -d, h - d) + A (1/2 f_hh V + f_rh K) ]
//! ```
//!
//! with `S` the ring-sector closed form ([`crate::kernels::ring_sector`], Hammer 1939),
//! `d` the curvature drop at the area-centroid radius, `A` the compartment's area and
//! `f_hh`, `f_rh` the column kernel's derivatives there: the second-order correction for
//! the roughness that a mean height loses (Hammer's mean-height compartments are biased
//! low in rough ground for this reason) and for a height trend along the radius.
//!
//! Each sample counts with the DEM's share of the ground under it ([`Dem::weight`]: in
//! a run with several DEMs, the part no finer DEM covers), so that the DEMs' sector
//! rings add up to the ground counted once: a compartment's mean height, spread and trend
//! are weighted means, and its coverage `c` the mean weight.
//!
//! Sector rings are the chart-era way, kept for plan files; the quadtree's blocks are
//! the more accurate (see [`crate::zones::RingMethod::Sectors`] for the measured error).

use super::frame::Frame;
use super::{Parts, Point};
use crate::dem::Dem;
use crate::engine::pyramid::{block_from_dem, Pyramid};
use crate::kernels::column::column_taylor;
use crate::kernels::ring_sector_kernel;
use crate::zones::{RingMethod, ZonePlan};
use std::f64::consts::PI;

/// Samples per compartment width: the sampling level's blocks are at most this fraction
/// of the compartment's width and arc.
pub const SAMPLES_PER_WIDTH: f64 = 4.0;

/// Adds every sector ring of the plan.
pub fn sector_rings<F: Frame>(
    dem: &Dem,
    pyramid: &Pyramid,
    plan: &ZonePlan,
    frame: &F,
    p: Point,
    curvature: f64,
    parts: &mut Parts,
) {
    for (i, ring) in plan.rings.iter().enumerate() {
        if let RingMethod::Sectors { compartments } = ring.method {
            let (kernel, area) = ring_of_sectors(
                dem,
                pyramid,
                frame,
                p,
                curvature,
                ring.inner_m,
                ring.outer_m,
                compartments,
            );
            parts.rings[i] += kernel;
            parts.ring_elements[i] += compartments as u64;
            parts.area_m2 += area;
            parts.ring_area_m2[i] += area;
        }
    }
}

/// Weight of the cell holding `(x, y)` (a point on the grid): the share of it this DEM
/// contributes ([`Dem::weight`]).
fn cell_weight(dem: &Dem, x: f64, y: f64) -> f64 {
    let col = (((x - dem.x_left) / dem.dx).max(0.0) as usize).min(dem.cols - 1);
    let row = (((dem.y_top - y) / dem.dy).max(0.0) as usize).min(dem.rows - 1);
    dem.weight(col, row)
}

/// Kernel sum (m) of one ring of `n` compartments from `r1` to `r2`, and the area with
/// data it covered (m^2).
#[allow(clippy::too_many_arguments)]
pub fn ring_of_sectors<F: Frame>(
    dem: &Dem,
    pyramid: &Pyramid,
    frame: &F,
    p: Point,
    curvature: f64,
    r1: f64,
    r2: f64,
    n: usize,
) -> (f64, f64) {
    compartments(dem, pyramid, frame, p, curvature, r1, r2, n)
        .iter()
        .fold((0.0, 0.0), |(k, a), c| (k + c.0, a + c.1))
}

/// Kernel (m) and area with data (m^2) of each of the `n` compartments of the ring from
/// `r1` to `r2`, counterclockwise from east.
#[allow(clippy::too_many_arguments)]
pub fn compartments<F: Frame>(
    dem: &Dem,
    pyramid: &Pyramid,
    frame: &F,
    p: Point,
    curvature: f64,
    r1: f64,
    r2: f64,
    n: usize,
) -> Vec<(f64, f64)> {
    let theta = 2.0 * PI / n as f64;
    let width = r2 - r1;
    let arc = theta * 0.5 * (r1 + r2);
    let (cell_e, cell_n) = frame.cell_size(p.x, p.y, dem.dx, dem.dy);
    let cell = cell_e.max(cell_n);
    let target = width.min(arc) / SAMPLES_PER_WIDTH;
    let mut level = 0u32;
    while level < pyramid.top_level() && cell * (1u64 << (level + 1)) as f64 <= target {
        level += 1;
    }
    let spacing = cell * (1u64 << level) as f64;
    let m_r = ((width / spacing).ceil() as usize).clamp(4, 64);
    let m_t = ((arc / spacing).ceil() as usize).clamp(4, 64);
    let rho: Vec<f64> = (0..m_r)
        .map(|k| (r1 * r1 + (k as f64 + 0.5) / m_r as f64 * (r2 * r2 - r1 * r1)).sqrt())
        .collect();
    let area = 0.5 * theta * (r2 * r2 - r1 * r1);
    let rho_c = 2.0 / 3.0 * (r2 * r2 * r2 - r1 * r1 * r1) / (r2 * r2 - r1 * r1);
    let drop = 0.5 * curvature * rho_c * rho_c;
    let size = 1usize << level;
    let block_e = size as f64 * dem.dx;
    let block_n = size as f64 * dem.dy;
    let level_store = if level >= 2 {
        pyramid.level(level)
    } else {
        None
    };
    let mut out = Vec::with_capacity(n);
    for j in 0..n {
        let (mut w, mut sh, mut shh, mut sr, mut srh) = (0.0, 0.0, 0.0, 0.0, 0.0);
        for kt in 0..m_t {
            let phi = (j as f64 + (kt as f64 + 0.5) / m_t as f64) * theta;
            let (sin, cos) = phi.sin_cos();
            for &r in &rho {
                let (x, y) = frame.grid(r * cos, r * sin);
                let (h, var, weight) = if level == 0 {
                    // The DEM's share of the cell under the sample (several DEMs, or a
                    // density raster), as the blocks of the levels above carry it.
                    match dem.bilinear(x, y) {
                        Some(h) => (h, 0.0, cell_weight(dem, x, y)),
                        None => continue,
                    }
                } else {
                    let fc = (x - dem.x_left) / block_e;
                    let fr = (dem.y_top - y) / block_n;
                    if fc < 0.0 || fr < 0.0 {
                        continue;
                    }
                    let (bc, br) = (fc as usize, fr as usize);
                    if bc * size >= dem.cols || br * size >= dem.rows {
                        continue;
                    }
                    let b = match level_store {
                        Some(l) => l.blocks[br * l.cols + bc],
                        None => block_from_dem(dem, level, bc, br),
                    };
                    if b.n == 0.0 {
                        continue;
                    }
                    let full = (size * size) as f64 * dem.area_factor_y(y);
                    (b.h as f64, b.hh as f64, b.n as f64 / full)
                };
                w += weight;
                sh += weight * h;
                shh += weight * (h * h + var);
                sr += weight * r;
                srh += weight * r * h;
            }
        }
        if w == 0.0 {
            out.push((0.0, 0.0));
            continue;
        }
        let coverage = w / (m_r * m_t) as f64;
        let h = sh / w;
        let var = (shh / w - h * h).max(0.0);
        let cov_rh = srh / w - (sr / w) * h;
        let rel = h - p.elev;
        let t = column_taylor(rho_c, rel, curvature);
        let closed = ring_sector_kernel(theta, r1, r2, -drop, rel - drop);
        out.push((
            coverage * (closed + area * (0.5 * t.f_hh * var + t.f_rh * cov_rh)),
            coverage * area,
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::frame::ProjectedFrame;

    /// A DEM of `cells` x `cells` cells of `cell` m centred on the origin, whose cell
    /// edges (and pyramid blocks up to half the grid) meet at the origin.
    fn rough(cells: usize, cell: f64) -> Dem {
        let half = 0.5 * cells as f64 * cell;
        Dem::from_fn("rough", cells, cells, -half, half, cell, |x, y| {
            900.0 + 250.0 * (x / 700.0).sin() * (y / 900.0).cos() + 0.08 * x - 0.05 * y
        })
    }

    /// `dem` with the weight `weight(x, y)` (of the cell centre) on every cell.
    fn weighted(dem: &Dem, weight: &dyn Fn(f64, f64) -> f32) -> Dem {
        let mut out = dem.clone();
        let mut w = Vec::with_capacity(dem.cols * dem.rows);
        for row in 0..dem.rows {
            for col in 0..dem.cols {
                w.push(weight(dem.col_center_x(col), dem.row_center_y(row)));
            }
        }
        out.weights = Some(w);
        out
    }

    #[test]
    fn samples_count_with_the_dems_share_of_the_ground() {
        // A station at the origin, on a cell corner; eight compartments, so that each
        // lies wholly east or wholly west of it. With no weight west of the station the
        // ring is the east compartments of the unweighted DEM alone, and the two halves'
        // rings add up to the unweighted ring. On 100 m cells the samples are read from
        // the cells (level 0), on 10 m cells from pyramid blocks (level 2).
        let p = Point {
            x: 0.0,
            y: 0.0,
            elev: 1000.0,
        };
        let frame = ProjectedFrame { x0: 0.0, y0: 0.0 };
        let curvature = 1.0 / crate::units::EARTH_RADIUS_M;
        for (cells, cell, r1, r2) in [(40, 100.0, 200.0, 1500.0), (256, 10.0, 200.0, 1200.0)] {
            let dem = rough(cells, cell);
            let east = weighted(&dem, &|x, _| if x > 0.0 { 1.0 } else { 0.0 });
            let west = weighted(&dem, &|x, _| if x > 0.0 { 0.0 } else { 1.0 });
            let ring =
                |d: &Dem| compartments(d, &Pyramid::build(d), &frame, p, curvature, r1, r2, 8);
            let (all, east_only, west_only) = (ring(&dem), ring(&east), ring(&west));
            // East of the station: compartments 0, 1 (0-90 degrees) and 6, 7 (270-360).
            let is_east = |j: usize| !(2..6).contains(&j);
            let sum = |c: &[(f64, f64)]| c.iter().map(|x| x.0).sum::<f64>();
            let expected: f64 = (0..8).filter(|&j| is_east(j)).map(|j| all[j].0).sum();
            let scale = sum(&all).abs();
            assert!(expected.abs() > 0.1 * scale, "{expected} of {scale}");
            assert!(
                (sum(&east_only) - expected).abs() < 1e-12 * scale,
                "{cell} m: east {} vs {expected}",
                sum(&east_only)
            );
            for j in 0..8 {
                let (e, w) = (east_only[j], west_only[j]);
                let zero = if is_east(j) { w } else { e };
                assert_eq!(zero, (0.0, 0.0), "{cell} m compartment {j}");
                assert!(((e.0 + w.0) - all[j].0).abs() < 1e-12 * scale);
                assert!(((e.1 + w.1) - all[j].1).abs() < 1e-9 * all[j].1);
            }
            // A share of 0.25 everywhere and its complement 0.75: a quarter and three
            // quarters of the unweighted ring (weights of f32 cells, so to 1e-6).
            let quarter = weighted(&dem, &|_, _| 0.25);
            let rest = weighted(&dem, &|_, _| 0.75);
            let (q, r) = (sum(&ring(&quarter)), sum(&ring(&rest)));
            assert!((q - 0.25 * sum(&all)).abs() < 1e-6 * scale, "{q}");
            assert!((q + r - sum(&all)).abs() < 1e-6 * scale, "{q} + {r}");
        }
    }
}
