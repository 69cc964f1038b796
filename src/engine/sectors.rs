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
    let mut total = 0.0;
    let mut covered = 0.0;
    for j in 0..n {
        let (mut w, mut sh, mut shh, mut sr, mut srh) = (0.0, 0.0, 0.0, 0.0, 0.0);
        for kt in 0..m_t {
            let phi = (j as f64 + (kt as f64 + 0.5) / m_t as f64) * theta;
            let (sin, cos) = phi.sin_cos();
            for &r in &rho {
                let (x, y) = frame.grid(r * cos, r * sin);
                let (h, var, weight) = if level == 0 {
                    match dem.bilinear(x, y) {
                        Some(h) => (h, 0.0, 1.0),
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
            continue;
        }
        let coverage = w / (m_r * m_t) as f64;
        covered += coverage * area;
        let h = sh / w;
        let var = (shh / w - h * h).max(0.0);
        let cov_rh = srh / w - (sr / w) * h;
        let rel = h - p.elev;
        let t = column_taylor(rho_c, rel, curvature);
        let closed = ring_sector_kernel(theta, r1, r2, -drop, rel - drop);
        total += coverage * (closed + area * (0.5 * t.f_hh * var + t.f_rh * cov_rh));
    }
    (total, covered)
}
