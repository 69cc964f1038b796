//! Where grid blocks and rows lie relative to a station's disc, in its local frame.
//!
//! On a projected grid these are exact (the map plane shifted to the station). On a
//! geographic grid a block is a curved quadrilateral; it is approximated by the
//! axis-aligned rectangle of its centre and its metric size there, enlarged by a margin
//! so that the tests "wholly outside" and "wholly inside" stay on the safe side.

use super::frame::Frame;
use crate::dem::Dem;

/// A rectangle in the station's local frame, m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rect {
    pub e_lo: f64,
    pub e_hi: f64,
    pub n_lo: f64,
    pub n_hi: f64,
}

impl Rect {
    /// Square of the distance from the station to the nearest point of the rectangle.
    #[inline]
    pub fn near2(&self) -> f64 {
        let ne = if self.e_lo > 0.0 {
            self.e_lo
        } else if self.e_hi < 0.0 {
            -self.e_hi
        } else {
            0.0
        };
        let nn = if self.n_lo > 0.0 {
            self.n_lo
        } else if self.n_hi < 0.0 {
            -self.n_hi
        } else {
            0.0
        };
        ne * ne + nn * nn
    }

    /// Square of the distance from the station to the nearest cell centre the rectangle
    /// can hold: the rectangle shrunk by half a cell (`he`, `hn`) on every side.
    #[inline]
    pub fn near_centre2(&self, he: f64, hn: f64) -> f64 {
        Rect {
            e_lo: self.e_lo + he,
            e_hi: self.e_hi - he,
            n_lo: self.n_lo + hn,
            n_hi: self.n_hi - hn,
        }
        .near2()
    }

    /// Square of the distance to the farthest corner, less half a cell (`he`, `hn`)
    /// in each direction: the farthest a cell centre of the block can be.
    #[inline]
    pub fn far_centre2(&self, he: f64, hn: f64) -> f64 {
        let fe = self.e_lo.abs().max(self.e_hi.abs()) - he;
        let fn_ = self.n_lo.abs().max(self.n_hi.abs()) - hn;
        fe * fe + fn_ * fn_
    }

    /// Centre of the rectangle.
    #[inline]
    pub fn centre(&self) -> (f64, f64) {
        (0.5 * (self.e_lo + self.e_hi), 0.5 * (self.n_lo + self.n_hi))
    }
}

/// Relative margin by which geographic block rectangles are enlarged.
const GEOGRAPHIC_MARGIN: f64 = 0.02;

/// The local rectangle of the cells `cols c0..c1, rows r0..r1` (exclusive ends).
#[inline]
pub fn block_rect<F: Frame>(
    dem: &Dem,
    frame: &F,
    c0: usize,
    c1: usize,
    r0: usize,
    r1: usize,
) -> Rect {
    let x_lo = dem.x_left + c0 as f64 * dem.dx;
    let x_hi = dem.x_left + c1 as f64 * dem.dx;
    let y_hi = dem.y_top - r0 as f64 * dem.dy;
    let y_lo = dem.y_top - r1 as f64 * dem.dy;
    if frame.is_plane() {
        let (e_lo, n_lo) = frame.local(x_lo, y_lo);
        let (e_hi, n_hi) = frame.local(x_hi, y_hi);
        return Rect {
            e_lo,
            e_hi,
            n_lo,
            n_hi,
        };
    }
    let (xc, yc) = (0.5 * (x_lo + x_hi), 0.5 * (y_lo + y_hi));
    let (ec, nc) = frame.local(xc, yc);
    // The widest row of the block sets its east-west size.
    let y_wide = if y_lo.abs() < y_hi.abs() { y_lo } else { y_hi };
    let (we, _) = frame.cell_size(xc, y_wide, x_hi - x_lo, 0.0);
    let (_, wn) = frame.cell_size(xc, yc, 0.0, y_hi - y_lo);
    let he = 0.5 * we * (1.0 + GEOGRAPHIC_MARGIN);
    let hn = 0.5 * wn * (1.0 + GEOGRAPHIC_MARGIN);
    // The skew of meridians in the station's frame grows with the distance east-west.
    let skew = (ec.abs() * (y_hi - y_lo).to_radians() * yc.to_radians().sin()).abs();
    Rect {
        e_lo: ec - he - skew,
        e_hi: ec + he + skew,
        n_lo: nc - hn - skew,
        n_hi: nc + hn + skew,
    }
}

/// The grid columns whose cell centres on row `row` may lie within `radius` of the
/// station: `(first, last)` as fractional grid x positions of the chord's ends, or
/// `None` when the row misses the disc. Exact on a projected grid; on a geographic grid
/// a close estimate that callers widen or check cell by cell.
#[inline]
pub fn row_chord<F: Frame>(frame: &F, x0: f64, row_y: f64, radius: f64) -> Option<(f64, f64)> {
    let (e_row, n_row) = frame.local(x0, row_y);
    if n_row.abs() >= radius {
        return None;
    }
    let half = (radius * radius - n_row * n_row).sqrt();
    if frame.is_plane() {
        return Some((x0 - half, x0 + half));
    }
    let (metres_per_x, _) = frame.cell_size(x0, row_y, 1.0, 0.0);
    let centre = x0 - e_row / metres_per_x;
    Some((centre - half / metres_per_x, centre + half / metres_per_x))
}

/// Grid bounding box `(x_lo, x_hi, y_lo, y_hi)` of the disc of `radius` around the station.
pub fn disc_bbox<F: Frame>(frame: &F, radius: f64) -> (f64, f64, f64, f64) {
    let mut b = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for k in 0..16 {
        let a = k as f64 * std::f64::consts::PI / 8.0;
        let (x, y) = frame.grid(radius * a.cos(), radius * a.sin());
        b = (b.0.min(x), b.1.max(x), b.2.min(y), b.3.max(y));
    }
    if frame.is_plane() {
        return b;
    }
    let (w, h) = (b.1 - b.0, b.3 - b.2);
    (
        b.0 - 0.02 * w,
        b.1 + 0.02 * w,
        b.2 - 0.02 * h,
        b.3 + 0.02 * h,
    )
}
