//! The terrain-correction engine: integrates the topography around each station, zone by
//! zone, and runs the stations in parallel.
//!
//! Everything here works in SI units and station-centred coordinates (easting, northing,
//! upward; the station at the origin). A station's result is a sum of kernels (m, see
//! [`crate::kernels`]) that [`StationResult::tc_m_s2`] turns into an acceleration with
//! `G rho`: for a constant density the correction is exactly linear in it.
//!
//! Two methods share the zone plan's bookkeeping:
//! - [`Method::Exact`]: every DEM cell within the outer radius is a full-resolution prism
//!   (Nagy et al. 2000), each cell's part added to the ring holding its centre; the
//!   reference for tests and benchmarks.
//! - [`Method::Zoned`]: the plan's inner zone, prism and block rings (a quadtree over the
//!   block pyramid, [`blocks`]) and sector rings ([`sectors`]).
//!
//! With a plan's inner column radius ([`ZonePlan::inner_column_radius_m`]) both methods
//! share the inner cell square out alike: what lies within the radius (each cell by its
//! centre, or the surface quadrature by radius) is the inner column, the rest goes to
//! the rings at its radii; any cell outside the square whose centre lies within the
//! radius (cells smaller than the radius) is in the inner column too.

pub mod blocks;
pub mod exact;
pub mod frame;
pub mod inner;
pub mod pyramid;
pub mod region;
pub mod run;
pub mod sectors;
pub mod set;

use crate::dem::{Dem, GridKind};
use crate::engine::pyramid::Pyramid;
use crate::units::{EARTH_RADIUS_M, G};
use crate::zones::{InnerZone, ZoneGroup, ZonePlan};
use frame::{Frame, GeographicFrame, ProjectedFrame};
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
    /// Inner zone, prisms near, pyramid blocks in the middle, sectors far.
    Zoned,
    /// Every DEM cell within the outer radius is a full-resolution prism (reference).
    Exact,
}

/// What the cells right around the station are.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InnerModel {
    /// A continuous surface through the station: the bilinear DEM surface shifted by
    /// station minus DEM height, the shift tapered to zero at the inner zone's edge,
    /// integrated by polar quadrature of the column kernel.
    Surface,
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
    /// Kernel sum of the inner zone, m.
    pub inner_m: f64,
    /// Kernel sum of each ring of the plan, m.
    pub rings_m: Vec<f64>,
    /// Fraction of the disc of the outer radius that has valid DEM data, 0..1.
    pub coverage: f64,
    /// Kernel evaluations in the inner zone (prisms, or quadrature points).
    pub inner_elements: u64,
    /// Elements evaluated in each ring (prisms, blocks, compartments).
    pub ring_elements: Vec<u64>,
    /// Horizontal area the elements covered, m^2: a check that the zones tile the disc
    /// (no area counted twice or missed).
    pub area_m2: f64,
    /// The same for each ring of the plan, m^2 (the inner zone's is `area_m2` less these).
    pub ring_area_m2: Vec<f64>,
}

impl StationResult {
    /// Sum of all kernels, m: the correction is `G rho kernel_sum_m()`.
    pub fn kernel_sum_m(&self) -> f64 {
        self.inner_m + self.rings_m.iter().sum::<f64>()
    }

    /// The terrain correction for a constant density, m/s^2 (downward positive).
    pub fn tc_m_s2(&self, density_kg_m3: f64) -> f64 {
        G * density_kg_m3 * self.kernel_sum_m()
    }

    /// Kernel sum of one zone group (inner, near, middle, far), m.
    pub fn group_m(&self, plan: &ZonePlan, group: ZoneGroup) -> f64 {
        if group == ZoneGroup::Inner {
            return self.inner_m;
        }
        plan.rings
            .iter()
            .zip(&self.rings_m)
            .filter(|(ring, _)| ring.group() == group)
            .map(|(_, k)| k)
            .sum()
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

/// Range of indices `i` with `|origin + (i + 0.5) step - centre| < half_width` (empty
/// when the second is below the first): the integers strictly between
/// `(centre - half_width - origin) / step - 0.5` and `(centre + half_width - origin) / step - 0.5`.
#[inline]
pub(crate) fn index_range(origin: f64, step: f64, centre: f64, half_width: f64) -> (i64, i64) {
    let a = (centre - half_width - origin) / step - 0.5;
    let b = (centre + half_width - origin) / step - 0.5;
    (a.floor() as i64 + 1, b.ceil() as i64 - 1)
}

/// Counts the cells of `dem` (extended beyond its edges with its own spacing) whose
/// centres lie strictly inside the disc of radius `radius` around `(x, y)`.
pub fn count_disc(dem: &Dem, x: f64, y: f64, radius: f64) -> DiscCount {
    let mut count = DiscCount::default();
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

/// Cell positions inside the disc: all of them (the grid extended with its own
/// spacing) and those on the grid, counted row by row.
fn disc_positions<F: Frame>(dem: &Dem, frame: &F, x: f64, radius: f64) -> (u64, u64) {
    let mut on_grid = 0u64;
    let mut total = 0u64;
    let (_, _, y_lo, y_hi) = region::disc_bbox(frame, radius);
    let r_lo = ((dem.y_top - y_hi) / dem.dy - 0.5).floor() as i64;
    let r_hi = ((dem.y_top - y_lo) / dem.dy - 0.5).ceil() as i64;
    for r in r_lo..=r_hi {
        let cy = dem.y_top - (r as f64 + 0.5) * dem.dy;
        let Some((xa, xb)) = region::row_chord(frame, x, cy, radius) else {
            continue;
        };
        let (c_lo, c_hi) = index_range(dem.x_left, dem.dx, 0.5 * (xa + xb), 0.5 * (xb - xa));
        if c_hi < c_lo {
            continue;
        }
        total += (c_hi - c_lo + 1) as u64;
        if r >= 0 && r < dem.rows as i64 {
            let a = c_lo.max(0);
            let b = c_hi.min(dem.cols as i64 - 1);
            if b >= a {
                on_grid += (b - a + 1) as u64;
            }
        }
    }
    (total, on_grid)
}

/// The coverage of [`count_disc`], in time proportional to the disc's radius in cells
/// rather than its area. Nodata cells are counted by a walk over the pyramid: blocks
/// without nodata need no work at all, blocks wholly inside the disc give their count of
/// nodata cells, and only blocks that hold nodata and are cut by the circle are split.
/// A disc that lies on the grid and meets no nodata has coverage exactly 1 without
/// counting its cells. (On a geographic grid the counts of a disc reaching past the grid
/// follow the rows' chords, a close estimate.)
pub fn coverage_with_pyramid(dem: &Dem, pyramid: &Pyramid, x: f64, y: f64, radius: f64) -> f64 {
    match dem.kind {
        GridKind::Projected => {
            coverage_in(dem, pyramid, &ProjectedFrame { x0: x, y0: y }, x, radius)
        }
        GridKind::Geographic(ell) => {
            coverage_in(dem, pyramid, &GeographicFrame::new(x, y, ell), x, radius)
        }
    }
}

fn coverage_in<F: Frame>(dem: &Dem, pyramid: &Pyramid, frame: &F, x: f64, radius: f64) -> f64 {
    let nodata = nodata_in_disc(dem, pyramid, frame, radius);
    let (bx0, bx1, by0, by1) = region::disc_bbox(frame, radius);
    let on_grid_entirely = bx0 >= dem.x_left - 0.5 * dem.dx
        && bx1 <= dem.x_right() + 0.5 * dem.dx
        && by0 >= dem.y_bottom() - 0.5 * dem.dy
        && by1 <= dem.y_top + 0.5 * dem.dy;
    if nodata == 0 && on_grid_entirely {
        return 1.0;
    }
    let (total, on_grid) = disc_positions(dem, frame, x, radius);
    DiscCount {
        valid: on_grid.saturating_sub(nodata),
        nodata,
        outside: total.saturating_sub(on_grid),
    }
    .coverage()
}

/// Nodata cells of the grid whose centres lie inside the disc.
fn nodata_in_disc<F: Frame>(dem: &Dem, pyramid: &Pyramid, frame: &F, radius: f64) -> u64 {
    let mut top = 0u32;
    while (1usize << top) < dem.cols.max(dem.rows) {
        top += 1;
    }
    let r2 = radius * radius;
    let mut nodata = 0u64;
    let mut stack = vec![(top, 0usize, 0usize)];
    while let Some((level, bcol, brow)) = stack.pop() {
        let size = 1usize << level;
        let (c0, r0) = (bcol * size, brow * size);
        if c0 >= dem.cols || r0 >= dem.rows {
            continue;
        }
        if pyramid.missing(dem, level, bcol, brow) == 0 {
            // No nodata in this block: nothing to count, whether the circle cuts it or not.
            continue;
        }
        let (c1, r1) = ((c0 + size).min(dem.cols), (r0 + size).min(dem.rows));
        let rect = region::block_rect(dem, frame, c0, c1, r0, r1);
        if rect.near2() >= r2 {
            continue;
        }
        if level == 0 {
            let (e, n) = frame.local(dem.col_center_x(c0), dem.row_center_y(r0));
            if e * e + n * n < r2 {
                nodata += 1;
            }
            continue;
        }
        let (cw, ch) = frame.cell_size(dem.col_center_x(c0), dem.row_center_y(r0), dem.dx, dem.dy);
        if rect.far_centre2(0.5 * cw, 0.5 * ch) < r2 {
            nodata += pyramid.missing(dem, level, bcol, brow) as u64;
        } else {
            for (dc, dr) in [(0, 0), (1, 0), (0, 1), (1, 1)] {
                stack.push((level - 1, 2 * bcol + dc, 2 * brow + dr));
            }
        }
    }
    nodata
}

/// The cell index box of a cell-square inner zone: columns and rows `lo..=hi`
/// (possibly off the grid).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CellBox {
    pub col_lo: i64,
    pub col_hi: i64,
    pub row_lo: i64,
    pub row_hi: i64,
}

impl CellBox {
    /// The `(2m+1)^2` cells centred on the cell holding `(x, y)`.
    pub fn around(dem: &Dem, x: f64, y: f64, half_width: usize) -> CellBox {
        let col = ((x - dem.x_left) / dem.dx).floor() as i64;
        let row = ((dem.y_top - y) / dem.dy).floor() as i64;
        let m = half_width as i64;
        CellBox {
            col_lo: col - m,
            col_hi: col + m,
            row_lo: row - m,
            row_hi: row + m,
        }
    }

    #[inline]
    pub fn contains(&self, col: i64, row: i64) -> bool {
        col >= self.col_lo && col <= self.col_hi && row >= self.row_lo && row <= self.row_hi
    }

    /// Whether the box overlaps the cell range `cols c0..c1`, `rows r0..r1` (exclusive ends).
    #[inline]
    pub fn overlaps(&self, c0: i64, c1: i64, r0: i64, r1: i64) -> bool {
        c0 <= self.col_hi && c1 > self.col_lo && r0 <= self.row_hi && r1 > self.row_lo
    }
}

/// The engine: a DEM, the settings, the zone plan, and what is built once per DEM.
pub struct Engine<'a> {
    pub dem: &'a Dem,
    pub config: EngineConfig,
    pub plan: ZonePlan,
    /// Block statistics (the zoned method's blocks and sectors; every method's coverage).
    pub pyramid: Pyramid,
}

impl<'a> Engine<'a> {
    /// Prepares an engine; builds the block pyramid when the method needs it.
    pub fn new(dem: &'a Dem, config: EngineConfig, plan: ZonePlan) -> Engine<'a> {
        let pyramid = Pyramid::build(dem);
        Engine {
            dem,
            config,
            plan,
            pyramid,
        }
    }

    /// Fraction of the disc of the outer radius around `p` with DEM data, 0..1.
    pub fn coverage(&self, p: Point) -> f64 {
        coverage_with_pyramid(
            self.dem,
            &self.pyramid,
            p.x,
            p.y,
            self.config.outer_radius_m,
        )
    }

    /// Computes the correction at one point (grid coordinates of the DEM's CRS).
    pub fn compute(&self, p: Point) -> StationResult {
        self.compute_with(p, false)
    }

    /// Computes the correction at one point; with `skip_inner`, without the inner zone
    /// (for a DEM that does not serve the station in a layered run: its cells there are
    /// all taken by a finer DEM).
    pub fn compute_with(&self, p: Point, skip_inner: bool) -> StationResult {
        self.compute_full(p, skip_inner, None)
    }

    /// Computes the correction at one point with the inner zone `inner` instead of the
    /// plan's (a disc for a field inner-zone value, say).
    pub fn compute_with_inner(&self, p: Point, inner: InnerZone) -> StationResult {
        self.compute_full(p, false, Some(inner))
    }

    fn compute_full(&self, p: Point, skip_inner: bool, inner: Option<InnerZone>) -> StationResult {
        match self.dem.kind {
            GridKind::Projected => {
                self.compute_in(&ProjectedFrame { x0: p.x, y0: p.y }, p, skip_inner, inner)
            }
            GridKind::Geographic(ell) => {
                self.compute_in(&GeographicFrame::new(p.x, p.y, ell), p, skip_inner, inner)
            }
        }
    }

    fn compute_in<F: Frame>(
        &self,
        frame: &F,
        p: Point,
        skip_inner: bool,
        inner_zone: Option<InnerZone>,
    ) -> StationResult {
        let inner_zone = inner_zone.unwrap_or(self.plan.inner);
        let radius = self.config.outer_radius_m;
        let coverage = coverage_in(self.dem, &self.pyramid, frame, p.x, radius);
        let mut parts = Parts::new(self.plan.rings.len());
        // A disc inner zone (a field value's) is always the whole inner column.
        let column = match inner_zone {
            InnerZone::Cells { .. } => self.plan.inner_column_radius_m,
            InnerZone::Disc { .. } => None,
        };
        match self.config.method {
            Method::Exact => {
                exact::exact_parts(self, frame, p, &mut parts, skip_inner, inner_zone, column)
            }
            Method::Zoned => self.zoned_parts(frame, p, &mut parts, skip_inner, inner_zone, column),
        }
        StationResult {
            dem_elev_m: self.dem.bilinear(p.x, p.y),
            inner_m: parts.inner,
            rings_m: parts.rings,
            coverage,
            inner_elements: parts.inner_elements,
            ring_elements: parts.ring_elements,
            area_m2: parts.area_m2,
            ring_area_m2: parts.ring_area_m2,
        }
    }

    /// Radii where the inner square's surface quadrature breaks its rays: the plan's
    /// hard edges and the inner column's radius.
    fn inner_breaks(&self, column: Option<f64>) -> Vec<f64> {
        let mut breaks = self.plan.hard_edges_m.clone();
        if let Some(c) = column {
            if !breaks.contains(&c) {
                breaks.push(c);
                breaks.sort_by(f64::total_cmp);
            }
        }
        breaks
    }

    /// Slot of a part of the inner square at distance `d` (m) from the station: 0 for
    /// the inner column, `1 + i` for ring `i` (beyond the column radius, when there is
    /// one).
    fn inner_slot(&self, column: Option<f64>, d: f64) -> usize {
        match column {
            Some(c) if d >= c && !self.plan.rings.is_empty() => 1 + self.plan.ring_at(d),
            _ => 0,
        }
    }

    /// Zeroed sums for the inner square's slots: the inner column, and the rings when
    /// there is a column radius.
    fn inner_slots(column: Option<f64>, parts: &Parts) -> Vec<f64> {
        vec![
            0.0;
            if column.is_some() {
                1 + parts.rings.len()
            } else {
                1
            }
        ]
    }

    /// Adds the inner square's parts by slot (see [`Engine::inner_slot`]).
    fn add_inner_slots(parts: &mut Parts, slots: &[f64]) {
        parts.inner += slots[0];
        for (ring, k) in parts.rings.iter_mut().zip(&slots[1..]) {
            *ring += k;
        }
    }

    /// The surface inner model over the cell square `cells`: the inner column's part to
    /// `parts.inner`, with a column radius the rest to the rings at its radii.
    pub(crate) fn surface_box<F: Frame>(
        &self,
        frame: &F,
        p: Point,
        cells: &CellBox,
        column: Option<f64>,
        parts: &mut Parts,
    ) {
        let breaks = self.inner_breaks(column);
        let slot_of = |d: f64| self.inner_slot(column, d);
        let mut slots = Engine::inner_slots(column, parts);
        inner::surface_square_parts(
            self.dem,
            frame,
            p,
            cells,
            self.config.convention.curvature(),
            &inner::Split {
                breaks: &breaks,
                slot_of: &slot_of,
            },
            &mut slots,
            &mut parts.inner_elements,
        );
        Engine::add_inner_slots(parts, &slots);
    }

    /// Adds the areas of the cell square's cells, each by its centre: all to the disc's
    /// area, those beyond the column radius also to their ring's.
    pub(crate) fn add_box_area<F: Frame>(
        &self,
        frame: &F,
        p: Point,
        cells: &CellBox,
        column: Option<f64>,
        parts: &mut Parts,
    ) {
        let outer = self.config.outer_radius_m;
        inner::box_cell_areas(self.dem, frame, p, cells, outer, &mut |d, area| {
            parts.area_m2 += area;
            let slot = self.inner_slot(column, d);
            if slot > 0 {
                parts.ring_area_m2[slot - 1] += area;
            }
        });
    }

    #[allow(clippy::too_many_arguments)]
    fn zoned_parts<F: Frame>(
        &self,
        frame: &F,
        p: Point,
        parts: &mut Parts,
        skip_inner: bool,
        inner_zone: InnerZone,
        column: Option<f64>,
    ) {
        let pyramid = &self.pyramid;
        let curvature = self.config.convention.curvature();
        let outer = self.config.outer_radius_m;
        let inner_box = match inner_zone {
            _ if skip_inner => None,
            InnerZone::Cells { half_width } => {
                let cells = CellBox::around(self.dem, p.x, p.y, half_width);
                match self.config.inner_model {
                    InnerModel::Surface => self.surface_box(frame, p, &cells, column, parts),
                    InnerModel::Prisms => {
                        let slot_of = |d: f64| self.inner_slot(column, d);
                        let mut slots = Engine::inner_slots(column, parts);
                        inner::prisms_in_box_parts(
                            self.dem,
                            frame,
                            p,
                            &cells,
                            curvature,
                            outer,
                            &slot_of,
                            &mut slots,
                            &mut parts.inner_elements,
                        );
                        Engine::add_inner_slots(parts, &slots);
                    }
                }
                self.add_box_area(frame, p, &cells, column, parts);
                Some(blocks::Exclusion::Cells(cells))
            }
            InnerZone::Disc { radius_m } => {
                match self.config.inner_model {
                    InnerModel::Surface => {
                        parts.inner += inner::surface_disc(
                            self.dem,
                            frame,
                            p,
                            radius_m,
                            curvature,
                            &mut parts.inner_elements,
                        );
                        parts.area_m2 += std::f64::consts::PI * radius_m * radius_m;
                    }
                    InnerModel::Prisms => {
                        let (k, area) = inner::prisms_in_disc(
                            self.dem,
                            frame,
                            p,
                            radius_m.min(outer),
                            curvature,
                            &mut parts.inner_elements,
                        );
                        parts.inner += k;
                        parts.area_m2 += area;
                    }
                }
                Some(blocks::Exclusion::Disc(radius_m))
            }
        };
        // (The inner column's radius too: a plan whose rings start beyond the outer
        // radius still has the cells within it.)
        let quad_outer = self
            .plan
            .quadtree_outer_m()
            .max(column.unwrap_or(0.0))
            .min(outer);
        if quad_outer > 0.0 {
            blocks::walk(
                self.dem, pyramid, &self.plan, frame, p, curvature, quad_outer, inner_box, column,
                parts,
            );
        }
        sectors::sector_rings(self.dem, pyramid, &self.plan, frame, p, curvature, parts);
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

    /// As [`Engine::compute_all`], with an inner zone of its own for some points.
    pub fn compute_all_inner(
        &self,
        points: &[Point],
        inner: &[Option<InnerZone>],
        tick: &(dyn Fn() + Sync),
    ) -> Vec<StationResult> {
        points
            .par_iter()
            .zip(inner)
            .map(|(&p, &zone)| {
                let r = self.compute_full(p, false, zone);
                tick();
                r
            })
            .collect()
    }
}

/// Running sums of one station.
#[derive(Debug, Clone)]
pub struct Parts {
    pub inner: f64,
    pub rings: Vec<f64>,
    pub inner_elements: u64,
    pub ring_elements: Vec<u64>,
    pub area_m2: f64,
    pub ring_area_m2: Vec<f64>,
}

impl Parts {
    pub fn new(rings: usize) -> Parts {
        Parts {
            inner: 0.0,
            rings: vec![0.0; rings],
            inner_elements: 0,
            ring_elements: vec![0; rings],
            area_m2: 0.0,
            ring_area_m2: vec![0.0; rings],
        }
    }

    /// Adds one element's kernel to ring `ring`; `area_m2` is the element's footprint.
    #[inline]
    pub fn add(&mut self, ring: usize, kernel: f64, area_m2: f64) {
        self.rings[ring] += kernel;
        self.ring_elements[ring] += 1;
        self.area_m2 += area_m2;
        self.ring_area_m2[ring] += area_m2;
    }

    /// Adds one element's kernel to the inner column.
    #[inline]
    pub fn add_inner(&mut self, kernel: f64, area_m2: f64) {
        self.inner += kernel;
        self.inner_elements += 1;
        self.area_m2 += area_m2;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn disc_count_is_exact_inside_and_counts_outside() {
        let dem = Dem::from_fn("flat", 100, 100, 0.0, 1000.0, 10.0, |_, _| 0.0);
        let inside = count_disc(&dem, 500.0, 500.0, 200.0);
        assert_eq!(inside.outside + inside.nodata, 0);
        assert_eq!(inside.coverage(), 1.0);
        let expected = std::f64::consts::PI * 200.0 * 200.0 / 100.0;
        assert!((inside.valid as f64 - expected).abs() / expected < 0.01);
        let edge = count_disc(&dem, 0.0, 500.0, 200.0);
        assert!((edge.coverage() - 0.5).abs() < 0.02, "{}", edge.coverage());
    }

    #[test]
    fn pyramid_disc_count_equals_the_cell_by_cell_count() {
        let mut dem = Dem::from_fn("holes", 203, 171, 0.0, 1710.0, 10.0, |x, y| x + y);
        for i in (0..dem.heights.len()).step_by(97) {
            dem.heights[i] = f32::NAN;
        }
        for i in 5000..5400 {
            dem.heights[i] = f32::NAN;
        }
        let pyramid = Pyramid::build(&dem);
        let clean = Dem::from_fn("clean", 203, 171, 0.0, 1710.0, 10.0, |x, y| x - y);
        let clean_pyramid = Pyramid::build(&clean);
        assert_eq!(
            coverage_with_pyramid(&clean, &clean_pyramid, 1015.0, 855.0, 600.0),
            1.0
        );
        let edge = coverage_with_pyramid(&clean, &clean_pyramid, 1015.0, 855.0, 900.0);
        assert_eq!(edge, count_disc(&clean, 1015.0, 855.0, 900.0).coverage());
        assert!(edge < 1.0);
        for (x, y, r) in [
            (1015.0, 855.0, 600.0),
            (3.0, 7.0, 450.0),
            (1000.0, 300.0, 2000.0),
            (1234.5, 987.6, 45.0),
        ] {
            assert_eq!(
                coverage_with_pyramid(&dem, &pyramid, x, y, r),
                count_disc(&dem, x, y, r).coverage(),
                "{x} {y} {r}"
            );
        }
    }
}
