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
//! An element goes to the ring holding its centroid, except at the plan's hard edges
//! ([`crate::zones::ZonePlan::hard_edges_m`]): a block straddling one is split until its
//! side is at most [`CUT_BLOCK_MAX_RATIO`] times the edge's radius and it straddles no
//! other hard edge, then evaluated as two parts, the cells whose centres lie inside the
//! edge and those outside (and inside the outer radius, when that cuts the block too),
//! each with its own footprint moments and its heights from the block's height trend,
//! each part in its own ring. A ring then holds exactly the cells whose centres lie in
//! it, as in the exact method. (Splitting the blocks that straddle both a hard edge and
//! the outer radius until they straddle only one was measured on the demo's 30 m DEM at
//! 10 km, 40 stations: no more accurate, the worst zone 0.0039 mGal off the exact one
//! either way, and zones K and L, next to the outer radius, took 2311 elements per
//! station instead of 413.)
//!
//! # Block evaluation
//! The column kernel `f(e, n, h)` (the vertical line mass of a cell, with the curvature drop; see [`crate::kernels::column`]) summed
//! over a block's cells is expanded to second order about the block's centroid in
//! (height, easting, northing):
//!
//! ```text
//! sum_i A f(e_i, n_i, h_i) ~ N A [ f + 1/2 (f_hh C_hh + 2 f_he C_he + 2 f_hn C_hn
//!                                   + f_ee (C_ee + dx^2/12) + 2 f_en C_en + f_nn (C_nn + dy^2/12)) ]
//! ```
//!
//! with `N` cells of area `A` and the central moments `C` of the pyramid
//! ([`crate::engine::pyramid`]); the `dx^2/12` terms spread each cell's column over its
//! footprint. The height terms carry the block's roughness, which a mean height alone
//! loses (the kernel is convex in height). (Evaluating the nearer full blocks as one
//! prism at the mean height plus the height terms instead was measured no more accurate
//! on the test terrains, and slower.)

use super::frame::Frame;
use super::{region, CellBox, Parts, Point};
use crate::dem::Dem;
use crate::engine::pyramid::{block_from_dem, BlockStats, Pyramid};
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
    let r = (m.e * m.e + m.nn_ * m.nn_).sqrt();
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

/// Count, centroid and central second moments, in the station's frame, of a set of cell
/// centres (m, m^2).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Footprint {
    count: f64,
    e: f64,
    n: f64,
    ee: f64,
    en: f64,
    nn: f64,
}

impl Footprint {
    /// The cells of `self` less those of `part` (a subset): counts subtract, and the raw
    /// moments (taken about `self`'s centroid) with them. `None` when nothing is left.
    fn without(&self, part: &Footprint) -> Option<Footprint> {
        let count = self.count - part.count;
        if count < 0.5 {
            return None;
        }
        let (de, dn) = (part.e - self.e, part.n - self.n);
        let e = -part.count * de / count;
        let n = -part.count * dn / count;
        let raw = |whole: f64, piece: f64, a: f64, b: f64| {
            (self.count * whole - part.count * (piece + a * b)) / count
        };
        Some(Footprint {
            count,
            e: self.e + e,
            n: self.n + n,
            ee: (raw(self.ee, part.ee, de, de) - e * e).max(0.0),
            en: raw(self.en, part.en, de, dn) - e * n,
            nn: (raw(self.nn, part.nn, dn, dn) - n * n).max(0.0),
        })
    }
}

/// Moments, in the station's frame, of the cell centres of `cols c0..c1, rows r0..r1`
/// that lie within `radius` of the station (all of them for an infinite radius), rows
/// taken in at most `max_bands` bands. The frame is linearised about the block's centre
/// (`centre` grid, `local` its local position, `j` the Jacobian there), exact on a
/// projected grid and close on a geographic one for the blocks this is used for (small
/// against their distance).
#[allow(clippy::too_many_arguments)]
fn inside_geometry(
    dem: &Dem,
    centre: (f64, f64),
    local: (f64, f64),
    j: [[f64; 2]; 2],
    c0: usize,
    c1: usize,
    r0: usize,
    r1: usize,
    radius: f64,
    max_bands: usize,
) -> Option<Footprint> {
    let (mut k, mut se, mut sn, mut see, mut sen, mut snn) =
        (0.0f64, 0.0f64, 0.0f64, 0.0f64, 0.0f64, 0.0f64);
    // Tall blocks are scanned in at most `max_bands` bands of rows, each taken at its
    // middle row and weighted by its row count: the moments are smooth in the row, and
    // blocks cut by the outer radius lie at the edge of the zone, where their part is
    // small.
    let band = (r1 - r0).div_ceil(max_bands);
    let (de_col, dn_col) = (j[0][0] * dem.dx, j[1][0] * dem.dx);
    let (de_row, dn_row) = (-j[0][1] * dem.dy, -j[1][1] * dem.dy);
    let x_first = dem.col_center_x(c0);
    for band_start in (r0..r1).step_by(band) {
        let rows = band.min(r1 - band_start);
        let weight = rows as f64;
        let y = dem.y_top - (band_start as f64 + 0.5 * weight) * dem.dy;
        // Local position of the band's first cell, then a straight line along the row.
        let (dxg, dyg) = (x_first - centre.0, y - centre.1);
        let e0 = local.0 + j[0][0] * dxg + j[0][1] * dyg;
        let n0 = local.1 + j[1][0] * dxg + j[1][1] * dyg;
        let (lo, hi) = if radius.is_finite() {
            // Columns i >= 0 with |(e0, n0) + i (de, dn)|^2 < radius^2.
            let qa = de_col * de_col + dn_col * dn_col;
            let qb = 2.0 * (e0 * de_col + n0 * dn_col);
            let qc = e0 * e0 + n0 * n0 - radius * radius;
            let disc = qb * qb - 4.0 * qa * qc;
            if disc <= 0.0 {
                continue;
            }
            let sq = disc.sqrt();
            let (t_lo, t_hi) = ((-qb - sq) / (2.0 * qa), (-qb + sq) / (2.0 * qa));
            (
                (t_lo.floor() as i64 + 1).max(0),
                (t_hi.ceil() as i64 - 1).min((c1 - c0) as i64 - 1),
            )
        } else {
            (0, (c1 - c0) as i64 - 1)
        };
        if hi < lo {
            continue;
        }
        let count = (hi - lo + 1) as f64;
        let mid = 0.5 * (lo + hi) as f64;
        let (mean_e, mean_n) = (e0 + mid * de_col, n0 + mid * dn_col);
        let v_cols = (count * count - 1.0) / 12.0;
        let v_rows = (weight * weight - 1.0) / 12.0;
        let w = weight * count;
        k += w;
        se += w * mean_e;
        sn += w * mean_n;
        see += w * (mean_e * mean_e + v_cols * de_col * de_col + v_rows * de_row * de_row);
        sen += w * (mean_e * mean_n + v_cols * de_col * dn_col + v_rows * de_row * dn_row);
        snn += w * (mean_n * mean_n + v_cols * dn_col * dn_col + v_rows * dn_row * dn_row);
    }
    if k == 0.0 {
        return None;
    }
    let (e, n) = (se / k, sn / k);
    Some(Footprint {
        count: k,
        e,
        n,
        ee: see / k - e * e,
        en: sen / k - e * n,
        nn: snn / k - n * n,
    })
}

/// The moments of a part of a block (footprint `part`, its cells at the block's mean
/// weight per cell `mean_weight`), heights from the block's height trend: the trend
/// `beta` solves `C_xy beta = C_hxy` over the whole block, the part's mean height is the
/// trend's value at its centroid and its height-position covariances the trend's over
/// its footprint; the height spread and third moments are the block's.
fn part_moments(block: &Moments, part: &Footprint, mean_weight: f64) -> Moments {
    let m = block;
    let det = m.ee * m.nn - m.en * m.en;
    let (be, bn) = if det > 1e-9 * (m.ee * m.nn).max(1e-30) {
        (
            (m.he * m.nn - m.hn * m.en) / det,
            (m.hn * m.ee - m.he * m.en) / det,
        )
    } else {
        (0.0, 0.0)
    };
    Moments {
        n: part.count * mean_weight,
        e: part.e,
        nn_: part.n,
        h: m.h + be * (part.e - m.e) + bn * (part.n - m.nn_),
        hh: m.hh,
        he: be * part.ee + bn * part.en,
        hn: be * part.en + bn * part.nn,
        ee: part.ee,
        en: part.en,
        nn: part.nn,
        hhe: m.hhe,
        hhn: m.hhn,
    }
}

/// Blocks whose third- and fourth-order height terms exceed this fraction of their value
/// are split (measured on a ring of sharp-edged relief; see the README).
pub const HIGH_ORDER_MAX_FRACTION: f64 = 0.05;

/// Blocks cut by the edge of the zone, or straddling a hard edge, are split until their
/// side is at most this fraction of the edge's radius: their parts are estimated from
/// the block's height trend, which a large block crossing a ridge or a valley at the
/// edge gets wrong.
pub const CUT_BLOCK_MAX_RATIO: f64 = 0.1;

/// Most row bands scanned when a block cut by the zone's edge is reduced to its inside cells
/// (16 against 64 changed no result of the accuracy study beyond 1e-6 and saved a quarter
/// of the time at 166.7 km).
const MAX_BANDS: usize = 16;

/// The inner zone the quadtree leaves out: a box of cells, or the cells whose centres
/// lie within a radius (m) of the station.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Exclusion {
    Cells(CellBox),
    Disc(f64),
}

/// Walks the quadtree over the prism and block rings, out to `outer_m`, adding each
/// element to the ring holding its centroid (exactly by cell centre at the plan's hard
/// edges), or to the inner column within `column_m` of the station.
#[allow(clippy::too_many_arguments)]
pub fn walk<F: Frame>(
    dem: &Dem,
    pyramid: &Pyramid,
    plan: &ZonePlan,
    frame: &F,
    p: Point,
    curvature: f64,
    outer_m: f64,
    inner: Option<Exclusion>,
    column_m: Option<f64>,
    parts: &mut Parts,
) {
    let mut top = 0;
    while (1usize << top) < dem.cols.max(dem.rows) {
        top += 1;
    }
    let plane = frame.is_plane();
    let quad_rings = plan
        .rings
        .iter()
        .position(|r| matches!(r.method, RingMethod::Sectors { .. }))
        .unwrap_or(plan.rings.len());
    if quad_rings == 0 && column_m.is_none() {
        return;
    }
    let ring_of = |d: f64| plan.ring_at(d).min(quad_rings.max(1) - 1);
    // Adds an element whose centroid lies `d` from the station.
    let add = |parts: &mut Parts, d: f64, kernel: f64, area: f64| {
        if quad_rings == 0 || column_m.is_some_and(|c| d < c) {
            parts.add_inner(kernel, area);
        } else {
            parts.add(ring_of(d), kernel, area);
        }
    };
    let hard_edges: Vec<f64> = plan
        .hard_edges_m
        .iter()
        .copied()
        .filter(|&r| r < outer_m)
        .collect();
    let outer2 = outer_m * outer_m;
    let mut stack: Vec<(u32, usize, usize)> = Vec::with_capacity(64);
    stack.push((top, 0, 0));
    while let Some((level, bcol, brow)) = stack.pop() {
        let size = 1usize << level;
        let c0 = bcol * size;
        let r0 = brow * size;
        if c0 >= dem.cols || r0 >= dem.rows {
            continue;
        }
        let c1 = (c0 + size).min(dem.cols);
        let r1 = (r0 + size).min(dem.rows);
        let rect = region::block_rect(dem, frame, c0, c1, r0, r1);
        let dmin2 = rect.near2();
        if dmin2 >= outer2 {
            continue;
        }
        let in_inner = match inner {
            None => false,
            Some(Exclusion::Cells(b)) => b.overlaps(c0 as i64, c1 as i64, r0 as i64, r1 as i64),
            Some(Exclusion::Disc(r)) => dmin2 < r * r,
        };
        if level == 0 {
            let inside_disc =
                |e: f64, n: f64| matches!(inner, Some(Exclusion::Disc(r)) if e * e + n * n < r * r);
            if in_inner && matches!(inner, Some(Exclusion::Cells(_))) {
                continue;
            }
            let Some(h) = dem.height(c0, r0) else {
                continue;
            };
            let w = dem.weight(c0, r0);
            if w == 0.0 {
                continue;
            }
            let (x, y) = (dem.col_center_x(c0), dem.row_center_y(r0));
            let (e_c, n_c) = if plane {
                rect.centre()
            } else {
                frame.local(x, y)
            };
            let s2 = e_c * e_c + n_c * n_c;
            if s2 >= outer2 || inside_disc(e_c, n_c) {
                continue;
            }
            let (cw, ch) = frame.cell_size(x, y, dem.dx, dem.dy);
            let d = 0.5 * curvature * s2;
            let k = prism_kernel(
                e_c - 0.5 * cw,
                e_c + 0.5 * cw,
                n_c - 0.5 * ch,
                n_c + 0.5 * ch,
                -d,
                h - p.elev - d,
            );
            add(parts, s2.sqrt(), w * k, w * cw * ch);
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
        // Geometric centre of the nominal block (the pyramid's offsets refer to it).
        let gx = dem.x_left + (bcol as f64 + 0.5) * size as f64 * dem.dx;
        let gy = dem.y_top - (brow as f64 + 0.5) * size as f64 * dem.dy;
        let (cw, ch) = frame.cell_size(gx, gy, dem.dx, dem.dy);
        let (e_c, n_c) = rect.centre();
        let ring = ring_of(dmin2.sqrt());
        let side = (size as f64) * cw.max(ch);
        let accept = quad_rings > 0
            && match plan.rings[ring].method {
                RingMethod::Blocks { ratio } => side <= ratio * (e_c * e_c + n_c * n_c).sqrt(),
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
        if (stats.hh as f64) > ROUGHNESS_MAX_RATIO.powi(2) * (e_c * e_c + n_c * n_c) {
            split(&mut stack);
            continue;
        }
        let cut = rect.far_centre2(0.0, 0.0) >= outer2;
        if cut && side > CUT_BLOCK_MAX_RATIO * outer_m {
            split(&mut stack);
            continue;
        }
        // The hard edges the block's cell centres may lie on both sides of.
        let (near_centre, far_centre) = (
            rect.near_centre2(0.5 * cw, 0.5 * ch).sqrt(),
            rect.far_centre2(0.5 * cw, 0.5 * ch).sqrt(),
        );
        let mut straddled = hard_edges
            .iter()
            .copied()
            .filter(|&r| near_centre < r && far_centre >= r);
        let edge = straddled.next();
        if let Some(r) = edge {
            if straddled.next().is_some() || side > CUT_BLOCK_MAX_RATIO * r {
                split(&mut stack);
                continue;
            }
        }
        // Centroid and moments in the station's frame: m = J (grid moments) J^T.
        let (cx, cy) = (gx + stats.ex as f64, gy + stats.ny as f64);
        let (ce, cn) = if plane {
            (cx - p.x, cy - p.y)
        } else {
            frame.local(cx, cy)
        };
        let j = frame.jacobian(cx, cy);
        let lin = |a: f64, b: f64| (j[0][0] * a + j[0][1] * b, j[1][0] * a + j[1][1] * b);
        let (he, hn) = lin(stats.he as f64, stats.hn as f64);
        let (hhe, hhn) = lin(stats.hhe as f64, stats.hhn as f64);
        let (gee, gen, gnn) = (stats.ee as f64, stats.en as f64, stats.nn as f64);
        let ee = j[0][0] * j[0][0] * gee + 2.0 * j[0][0] * j[0][1] * gen + j[0][1] * j[0][1] * gnn;
        let en = j[0][0] * j[1][0] * gee
            + (j[0][0] * j[1][1] + j[0][1] * j[1][0]) * gen
            + j[0][1] * j[1][1] * gnn;
        let nn = j[1][0] * j[1][0] * gee + 2.0 * j[1][0] * j[1][1] * gen + j[1][1] * j[1][1] * gnn;
        // Area of one unit of the pyramid's weight (a cell at area factor 1) here.
        let unit_area = cw * ch / dem.area_factor_y(gy);
        let mut m = Moments {
            n: stats.n as f64,
            e: ce,
            nn_: cn,
            h: stats.h as f64 - p.elev,
            hh: stats.hh as f64,
            he,
            hn,
            ee,
            en,
            nn,
            hhe,
            hhn,
        };
        let centre_local = || {
            if plane {
                (gx - p.x, gy - p.y)
            } else {
                frame.local(gx, gy)
            }
        };
        let mean_weight = m.n / ((c1 - c0) * (r1 - r0)) as f64;
        if cut && edge.is_none() {
            let Some(inside) = inside_geometry(
                dem,
                (gx, gy),
                centre_local(),
                frame.jacobian(gx, gy),
                c0,
                c1,
                r0,
                r1,
                outer_m,
                MAX_BANDS,
            ) else {
                continue;
            };
            m = part_moments(&m, &inside, mean_weight);
        }
        let r = (m.e * m.e + m.nn_ * m.nn_).sqrt();
        let (vx, vy) = (cw * cw / 12.0, ch * ch / 12.0);
        let (f, height_terms, spatial_terms, high_order) = taylor_terms(&m, vx, vy, curvature);
        let per_cell = f + height_terms + spatial_terms;
        // Where the higher-order terms are not small the expansion is not to be trusted:
        // split (blocks cut by the zone's edge are kept; they are far and small in effect).
        if !cut && high_order > HIGH_ORDER_MAX_FRACTION * per_cell.abs() {
            split(&mut stack);
            continue;
        }
        let Some(edge) = edge else {
            add(parts, r, m.n * unit_area * per_cell, m.n * unit_area);
            continue;
        };
        // A block on a hard edge: its cells inside the edge and those outside (within the
        // outer radius, when that cuts the block too), each part in its own ring (every
        // row scanned: the attribution is to be exact).
        let (local, j) = (centre_local(), frame.jacobian(gx, gy));
        let (whole, whole_moments) = if cut {
            let Some(within) =
                inside_geometry(dem, (gx, gy), local, j, c0, c1, r0, r1, outer_m, usize::MAX)
            else {
                continue;
            };
            (within, part_moments(&m, &within, mean_weight))
        } else {
            let all = inside_geometry(dem, (gx, gy), local, j, c0, c1, r0, r1, f64::INFINITY, 1)
                .expect("a block has cells");
            (all, m)
        };
        let inside = inside_geometry(dem, (gx, gy), local, j, c0, c1, r0, r1, edge, usize::MAX);
        // Just inside the edge, for the ring lookup (the edge is the next ring's start).
        let below_edge = edge * (1.0 - 1e-12);
        let centroid = |q: &Moments| (q.e * q.e + q.nn_ * q.nn_).sqrt();
        let pieces = match inside {
            None => [
                Some((whole_moments, centroid(&whole_moments).max(edge))),
                None,
            ],
            Some(inside) => match whole.without(&inside) {
                None => [
                    Some((whole_moments, centroid(&whole_moments).min(below_edge))),
                    None,
                ],
                Some(outside) => {
                    let inner_part = part_moments(&m, &inside, mean_weight);
                    let outer_part = part_moments(&m, &outside, mean_weight);
                    [
                        Some((inner_part, centroid(&inner_part).min(below_edge))),
                        Some((outer_part, centroid(&outer_part).max(edge))),
                    ]
                }
            },
        };
        for (piece, d) in pieces.into_iter().flatten() {
            let (f, height_terms, spatial_terms, _) = taylor_terms(&piece, vx, vy, curvature);
            let per_cell = f + height_terms + spatial_terms;
            add(
                parts,
                d,
                piece.n * unit_area * per_cell,
                piece.n * unit_area,
            );
        }
    }
}
