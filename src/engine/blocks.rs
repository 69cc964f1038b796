//! Prism and block rings: a quadtree walk over the block pyramid.
//!
//! Starting from the coarsest block, a block is split into its four children until it
//! is small enough for the ring it lies in: cells (full-resolution prisms) in `Prisms`
//! rings, blocks of side at most `ratio` times their distance in `Blocks` rings. Each
//! cell of the DEM therefore belongs to exactly one element, so no area is counted twice
//! or missed. Blocks that the boundary of the quadtree's zone (the outer radius, or the
//! start of the sector rings) cuts are reduced to the cells whose centres lie inside,
//! with the heights of those cells estimated from the block's height trend.
//!
//! # Block evaluation
//! The column kernel `f(e, n, h)` (SCIENCE.md section 2, with the curvature drop) summed
//! over a block's cells is expanded to second order about the block's centroid in
//! (height, easting, northing):
//!
//! ```text
//! sum_i A f(e_i, n_i, h_i) ~ N A [ f + 1/2 (f_hh C_hh + 2 f_he C_he + 2 f_hn C_hn
//!                                   + f_ee (C_ee + dx^2/12) + 2 f_en C_en + f_nn (C_nn + dy^2/12)) ]
//! ```
//!
//! with `N` cells of area `A` and the central moments `C` of the pyramid
//! ([`crate::dem::pyramid`]); the `dx^2/12` terms spread each cell's column over its
//! footprint. The height terms carry the block's roughness, which a mean height alone
//! loses (the kernel is convex in height). (Evaluating the nearer full blocks as one
//! prism at the mean height plus the height terms instead was measured no more accurate
//! on the test terrains, and slower.)

use super::{CellBox, Parts, Point};
use crate::dem::pyramid::{block_from_dem, BlockStats, Pyramid};
use crate::dem::Dem;
use crate::kernels::column::column_taylor;
use crate::kernels::prism_kernel;
use crate::zones::{RingMethod, ZonePlan};

/// Blocks whose height standard deviation exceeds this fraction of their distance are
/// split (measured on the cliff and gorge test terrains; see the README).
pub const ROUGHNESS_MAX_RATIO: f64 = 0.1;

/// Central second moments and counts of a set of cells.
#[derive(Debug, Clone, Copy)]
struct Moments {
    n: f64,
    /// Centroid relative to the station, m.
    e: f64,
    nn_: f64,
    /// Mean height relative to the station, m.
    h: f64,
    hh: f64,
    he: f64,
    hn: f64,
    ee: f64,
    en: f64,
    nn: f64,
    hhe: f64,
    hhn: f64,
}

/// Terms of the expansion of the column kernel about the centroid (see the module docs):
/// the value, the height terms, the spatial terms, and the size of the third- and
/// fourth-order terms among the height terms (an error indicator).
fn taylor_terms(m: &Moments, vx: f64, vy: f64, curvature: f64) -> (f64, f64, f64, f64) {
    let r = m.e.hypot(m.nn_);
    let t = column_taylor(r, m.h, curvature);
    let (ue, un) = (m.e / r, m.nn_ / r);
    // Horizontal second derivatives of a function of r = sqrt(e^2 + n^2).
    let horizontal = |d_rr: f64, d_r: f64| {
        let d_r_over_r = d_r / r;
        (
            ue * ue * d_rr + un * un * d_r_over_r,
            ue * un * (d_rr - d_r_over_r),
            un * un * d_rr + ue * ue * d_r_over_r,
        )
    };
    let (ee, en, nn) = (m.ee + vx, m.en, m.nn + vy);
    let (f_ee, f_en, f_nn) = horizontal(t.f_rr, t.f_r);
    // The height variance weighted by the kernel's mean curvature over the block rather
    // than at its centroid: the fourth-order mixed term 1/4 f_hh,xx C_hh C_xx, with height
    // spread and position taken as independent. It matters where the heights of a block
    // jump (a cliff, a valley wall) while their mean is small against the spread.
    let (g_ee, g_en, g_nn) = horizontal(t.f_hhrr, t.f_hhr);
    // The third-order term 1/2 f_hh,x E[dh^2 dx]: where in the block the spread lies.
    let third = 0.5 * t.f_hhr * (ue * m.hhe + un * m.hhn);
    let fourth = 0.25 * m.hh * (g_ee * ee + 2.0 * g_en * en + g_nn * nn);
    let height_terms =
        0.5 * t.f_hh * m.hh + ue * t.f_rh * m.he + un * t.f_rh * m.hn + third + fourth;
    let spatial_terms = 0.5 * (f_ee * ee + 2.0 * f_en * en + f_nn * nn);
    (t.f, height_terms, spatial_terms, third.abs() + fourth.abs())
}

/// Statistics of block `(bcol, brow)` at `level` (>= 1).
#[inline]
fn block_stats(dem: &Dem, pyramid: &Pyramid, level: u32, bcol: usize, brow: usize) -> BlockStats {
    match pyramid.level(level) {
        Some(l) => l.blocks[brow * l.cols + bcol],
        None => block_from_dem(dem, level, bcol, brow),
    }
}

/// Moments of the cell centres of `cols c0..c1, rows r0..r1` whose distance from the
/// station is below `radius`; offsets relative to `(ce, cn)` (the station-relative block
/// centre) are returned as station-relative values.
fn inside_geometry(
    dem: &Dem,
    p: Point,
    c0: usize,
    c1: usize,
    r0: usize,
    r1: usize,
    radius: f64,
) -> Option<(f64, f64, f64, f64, f64, f64)> {
    let (mut k, mut se, mut sn, mut see, mut sen, mut snn) =
        (0.0f64, 0.0f64, 0.0f64, 0.0f64, 0.0f64, 0.0f64);
    // Tall blocks are scanned in at most MAX_BANDS bands of rows, each taken at its middle
    // row and weighted by its row count: the moments are smooth in the row, and cut
    // blocks lie at the edge of the zone, where their part is small.
    let band = (r1 - r0).div_ceil(MAX_BANDS);
    for band_start in (r0..r1).step_by(band) {
        let band_rows = band.min(r1 - band_start);
        let weight = band_rows as f64;
        let n = dem.y_top - (band_start as f64 + 0.5 * weight) * dem.dy - p.y;
        if n.abs() >= radius {
            continue;
        }
        let half = (radius * radius - n * n).sqrt();
        let (lo, hi) = super::index_range(dem.x_left, dem.dx, p.x, half);
        let lo = lo.max(c0 as i64);
        let hi = hi.min(c1 as i64 - 1);
        if hi < lo {
            continue;
        }
        let count = (hi - lo + 1) as f64;
        // Eastings of centres lo..=hi form an arithmetic series.
        let e_lo = dem.col_center_x(lo as usize) - p.x;
        let e_hi = dem.col_center_x(hi as usize) - p.x;
        let mean_e = 0.5 * (e_lo + e_hi);
        let var_e = (count * count - 1.0) / 12.0 * dem.dx * dem.dx;
        let w = weight * count;
        let var_n = (weight * weight - 1.0) / 12.0 * dem.dy * dem.dy;
        k += w;
        se += w * mean_e;
        sn += w * n;
        see += w * (var_e + mean_e * mean_e);
        sen += w * mean_e * n;
        snn += w * (var_n + n * n);
    }
    if k == 0.0 {
        return None;
    }
    let (e, n) = (se / k, sn / k);
    Some((k, e, n, see / k - e * e, sen / k - e * n, snn / k - n * n))
}

/// Blocks whose third- and fourth-order height terms exceed this fraction of their value
/// are split (measured on a ring of sharp-edged relief; see the README).
pub const HIGH_ORDER_MAX_FRACTION: f64 = 0.05;

/// Blocks cut by the edge of the zone are split until their side is at most this
/// fraction of the edge's radius: their inside part is estimated from the block's height
/// trend, which a large block crossing a ridge or a valley at the edge gets wrong.
pub const CUT_BLOCK_MAX_RATIO: f64 = 0.1;

/// Most row bands scanned when a block cut by the zone's edge is reduced to its inside cells.
const MAX_BANDS: usize = 64;

/// Walks the quadtree over the prism and block rings, out to `outer_m`, adding each
/// element to the ring holding its centroid.
#[allow(clippy::too_many_arguments)]
pub fn walk(
    dem: &Dem,
    pyramid: &Pyramid,
    plan: &ZonePlan,
    p: Point,
    curvature: f64,
    outer_m: f64,
    inner: Option<CellBox>,
    parts: &mut Parts,
) {
    let top = pyramid.top_level().max({
        let mut l = 0;
        while (1usize << l) < dem.cols.max(dem.rows) {
            l += 1;
        }
        l
    });
    let side = dem.dx.max(dem.dy);
    let cell_area = dem.dx * dem.dy;
    let (vx, vy) = (dem.dx * dem.dx / 12.0, dem.dy * dem.dy / 12.0);
    let quad_rings = plan
        .rings
        .iter()
        .position(|r| matches!(r.method, RingMethod::Sectors { .. }))
        .unwrap_or(plan.rings.len());
    if quad_rings == 0 {
        return;
    }
    let ring_of = |d: f64| plan.ring_at(d).min(quad_rings - 1);
    let outer2 = outer_m * outer_m;
    let mut stack: Vec<(u32, usize, usize)> = Vec::with_capacity(64);
    let size_top = 1usize << top;
    for brow in 0..dem.rows.div_ceil(size_top) {
        for bcol in 0..dem.cols.div_ceil(size_top) {
            stack.push((top, bcol, brow));
        }
    }
    while let Some((level, bcol, brow)) = stack.pop() {
        let size = 1usize << level;
        let c0 = bcol * size;
        let r0 = brow * size;
        if c0 >= dem.cols || r0 >= dem.rows {
            continue;
        }
        let c1 = (c0 + size).min(dem.cols);
        let r1 = (r0 + size).min(dem.rows);
        // Station-relative rectangle of the block's cells on the grid.
        let e_lo = dem.x_left + c0 as f64 * dem.dx - p.x;
        let e_hi = dem.x_left + c1 as f64 * dem.dx - p.x;
        let n_hi = dem.y_top - r0 as f64 * dem.dy - p.y;
        let n_lo = dem.y_top - r1 as f64 * dem.dy - p.y;
        let near_e = if e_lo > 0.0 {
            e_lo
        } else if e_hi < 0.0 {
            -e_hi
        } else {
            0.0
        };
        let near_n = if n_lo > 0.0 {
            n_lo
        } else if n_hi < 0.0 {
            -n_hi
        } else {
            0.0
        };
        let dmin2 = near_e * near_e + near_n * near_n;
        if dmin2 >= outer2 {
            continue;
        }
        let in_inner =
            inner.is_some_and(|b| b.overlaps(c0 as i64, c1 as i64, r0 as i64, r1 as i64));
        if level == 0 {
            if in_inner {
                continue;
            }
            let Some(h) = dem.height(c0, r0) else {
                continue;
            };
            let e_c = 0.5 * (e_lo + e_hi);
            let n_c = 0.5 * (n_lo + n_hi);
            let s2 = e_c * e_c + n_c * n_c;
            if s2 >= outer2 {
                continue;
            }
            let d = 0.5 * curvature * s2;
            parts.add(
                ring_of(s2.sqrt()),
                prism_kernel(e_lo, e_hi, n_lo, n_hi, -d, h - p.elev - d),
                cell_area,
            );
            continue;
        }
        let split = |stack: &mut Vec<(u32, usize, usize)>| {
            for (dc, dr) in [(0, 0), (1, 0), (0, 1), (1, 1)] {
                stack.push((level - 1, 2 * bcol + dc, 2 * brow + dr));
            }
        };
        if in_inner {
            split(&mut stack);
            continue;
        }
        let ring = ring_of(dmin2.sqrt());
        let accept = match plan.rings[ring].method {
            RingMethod::Blocks { ratio } => {
                let e_c = 0.5 * (e_lo + e_hi);
                let n_c = 0.5 * (n_lo + n_hi);
                (size as f64) * side <= ratio * e_c.hypot(n_c)
            }
            _ => false,
        };
        if !accept {
            split(&mut stack);
            continue;
        }
        let stats = block_stats(dem, pyramid, level, bcol, brow);
        if stats.n == 0.0 {
            continue;
        }
        // Rough blocks (a cliff, a gorge) split further: the second-order expansion in
        // height needs the height spread to stay small against the distance.
        let e_c = 0.5 * (e_lo + e_hi);
        let n_c = 0.5 * (n_lo + n_hi);
        if (stats.hh as f64) > ROUGHNESS_MAX_RATIO.powi(2) * (e_c * e_c + n_c * n_c) {
            split(&mut stack);
            continue;
        }
        // Geometric centre of the nominal block (the pyramid's offsets refer to it).
        let ge = dem.x_left + (bcol as f64 + 0.5) * size as f64 * dem.dx - p.x;
        let gn = dem.y_top - (brow as f64 + 0.5) * size as f64 * dem.dy - p.y;
        let mut m = Moments {
            n: stats.n as f64,
            e: ge + stats.ex as f64,
            nn_: gn + stats.ny as f64,
            h: stats.h as f64 - p.elev,
            hh: stats.hh as f64,
            he: stats.he as f64,
            hn: stats.hn as f64,
            ee: stats.ee as f64,
            en: stats.en as f64,
            nn: stats.nn as f64,
            hhe: stats.hhe as f64,
            hhn: stats.hhn as f64,
        };
        let far_corner_e = e_lo.abs().max(e_hi.abs());
        let far_corner_n = n_lo.abs().max(n_hi.abs());
        let cut = far_corner_e * far_corner_e + far_corner_n * far_corner_n >= outer2;
        if cut && (size as f64) * side > CUT_BLOCK_MAX_RATIO * outer_m {
            split(&mut stack);
            continue;
        }
        if cut {
            let Some((k, e, n, ee, en, nn)) = inside_geometry(dem, p, c0, c1, r0, r1, outer_m)
            else {
                continue;
            };
            // Height trend of the block: beta solves C_xy beta = C_hxy.
            let det = m.ee * m.nn - m.en * m.en;
            let (be, bn) = if det > 1e-9 * (m.ee * m.nn).max(1e-30) {
                (
                    (m.he * m.nn - m.hn * m.en) / det,
                    (m.hn * m.ee - m.he * m.en) / det,
                )
            } else {
                (0.0, 0.0)
            };
            let valid_fraction = m.n / ((c1 - c0) * (r1 - r0)) as f64;
            m = Moments {
                n: k * valid_fraction,
                e,
                nn_: n,
                h: m.h + be * (e - m.e) + bn * (n - m.nn_),
                hh: m.hh,
                he: be * ee + bn * en,
                hn: be * en + bn * nn,
                ee,
                en,
                nn,
                hhe: m.hhe,
                hhn: m.hhn,
            };
        }
        let r = m.e.hypot(m.nn_);
        let (f, height_terms, spatial_terms, high_order) = taylor_terms(&m, vx, vy, curvature);
        let per_cell = f + height_terms + spatial_terms;
        // Where the higher-order terms are not small the expansion is not to be trusted:
        // split (blocks cut by the zone's edge are kept; they are far and small in effect).
        if !cut && high_order > HIGH_ORDER_MAX_FRACTION * per_cell.abs() {
            split(&mut stack);
            continue;
        }
        let value = m.n * cell_area * per_cell;
        parts.add(ring_of(r), value, m.n * cell_area);
    }
}
