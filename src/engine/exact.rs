//! The exact method: every cell whose centre lies within the outer radius is a prism over
//! its footprint between the station's level and the cell's height, both lowered by the
//! curvature drop at the cell centre's distance in the spherical convention (the drop s^2/2R,
//! [`crate::units::EARTH_RADIUS_M`]). Each cell's part goes to the plan ring holding its centre; the inner
//! zone's cells (the cell square around the station) form the inner part, as prisms or,
//! with the surface inner model, as the continuous surface of [`super::inner`]. With an
//! inner column radius (the Hammer plan's zone A) the square is shared out as the zoned
//! method shares it (the same code): prisms by their centres, the surface by radius, and
//! any other cell whose centre lies within the radius is in the inner column too.
//!
//! In the planar convention the prism corner terms at the station's own level (`u = 0`)
//! are shared by the cells of a row: each node's term is computed once per row instead
//! of once per cell corner (DESIGN.md, numerics).

use super::frame::Frame;
use super::{index_range, inner, region, CellBox, Engine, InnerModel, Parts, Point};
use crate::kernels::prism::{footprint_phi, nagy_corner, CLOSED_FORM_MAX_RATIO};
use crate::kernels::{prism_kernel, prism_kernel_closed_form};
use crate::zones::InnerZone;

/// Adds the exact method's parts for point `p` (grid coordinates) in `frame`.
pub fn exact_parts<F: Frame>(
    engine: &Engine,
    frame: &F,
    p: Point,
    parts: &mut Parts,
    skip_inner: bool,
    inner_zone: InnerZone,
    column: Option<f64>,
) {
    let dem = engine.dem;
    let config = &engine.config;
    let radius = config.outer_radius_m;
    let r2max = radius * radius;
    let curvature = config.convention.curvature();
    // A disc inner zone (a field inner-zone value) takes the cells whose centres lie in
    // it; otherwise the inner zone is the cell box (also for a plan file's disc, which
    // the exact method, cell by cell, cannot resolve).
    let (half_width, disc) = match inner_zone {
        InnerZone::Cells { half_width } => (half_width, None),
        InnerZone::Disc { radius_m } if engine.plan.inner != inner_zone => (0, Some(radius_m)),
        InnerZone::Disc { .. } => (1, None),
    };
    let inner_box = if skip_inner || disc.is_some() {
        // No cell is inside an empty box.
        CellBox {
            col_lo: 0,
            col_hi: -1,
            row_lo: 0,
            row_hi: -1,
        }
    } else {
        CellBox::around(dem, p.x, p.y, half_width)
    };
    let surface = config.inner_model == InnerModel::Surface && !skip_inner;
    if let (Some(r), false) = (disc, skip_inner) {
        if surface {
            parts.inner +=
                inner::surface_disc(dem, frame, p, r, curvature, &mut parts.inner_elements);
            parts.area_m2 += std::f64::consts::PI * r * r;
        }
    } else if surface {
        engine.surface_box(frame, p, &inner_box, column, parts);
    }
    let column2 = column.map(|c| c * c);
    let ring_outer2: Vec<f64> = engine
        .plan
        .rings
        .iter()
        .map(|r| r.outer_m * r.outer_m)
        .collect();
    let last_ring = ring_outer2.len().saturating_sub(1);
    let ring_of = |s2: f64| ring_outer2.partition_point(|&o2| o2 <= s2).min(last_ring);

    let (_, _, y_lo, y_hi) = region::disc_bbox(frame, radius);
    let r_lo = (((dem.y_top - y_hi) / dem.dy - 0.5).floor() as i64).max(0);
    let r_hi = (((dem.y_top - y_lo) / dem.dy - 0.5).ceil() as i64).min(dem.rows as i64 - 1);
    let plane = frame.is_plane();
    let shared = curvature == 0.0 && plane;
    let mut base_top: Vec<f64> = Vec::new();
    let mut base_bottom: Vec<f64> = Vec::new();
    for r in r_lo..=r_hi {
        let row = r as usize;
        let y = dem.row_center_y(row);
        let Some((xa, xb)) = region::row_chord(frame, p.x, y, radius) else {
            continue;
        };
        // On a geographic grid the chord is an estimate: widen it and test each cell.
        let widen = if plane {
            0.0
        } else {
            0.02 * (xb - xa) + 2.0 * dem.dx
        };
        let (c_lo, c_hi) =
            index_range(dem.x_left, dem.dx, 0.5 * (xa + xb), 0.5 * (xb - xa) + widen);
        let c_lo = c_lo.max(0);
        let c_hi = c_hi.min(dem.cols as i64 - 1);
        if c_hi < c_lo {
            continue;
        }
        let (cw, ch) = frame.cell_size(p.x, y, dem.dx, dem.dy);
        let side = cw.max(ch);
        let cell_area = cw * ch;
        let n_row = if plane { y - p.y } else { 0.0 };
        let (n1, n2) = (n_row - 0.5 * ch, n_row + 0.5 * ch);
        let e_of = |c: usize| dem.x_left + c as f64 * dem.dx - p.x;
        if shared {
            // Node terms at u = 0 for the row's nodes near enough for the closed form.
            let n_nodes = (c_hi - c_lo + 2) as usize;
            base_top.clear();
            base_bottom.clear();
            base_top.resize(n_nodes, 0.0);
            base_bottom.resize(n_nodes, 0.0);
            let near_limit = CLOSED_FORM_MAX_RATIO * side + side;
            for k in 0..n_nodes {
                let e = e_of(c_lo as usize + k);
                if (e * e + n_row * n_row).sqrt() < near_limit {
                    base_top[k] = nagy_corner(e, n2, 0.0);
                    base_bottom[k] = nagy_corner(e, n1, 0.0);
                }
            }
        }
        for c in c_lo as usize..=c_hi as usize {
            let Some(h) = dem.height(c, row) else {
                continue;
            };
            let w = dem.weight(c, row);
            if w == 0.0 {
                continue;
            }
            let (e_c, n_c) = if plane {
                (e_of(c) + 0.5 * cw, n_row)
            } else {
                frame.local(dem.col_center_x(c), y)
            };
            let s2 = e_c * e_c + n_c * n_c;
            if s2 >= r2max {
                continue;
            }
            let in_inner = match disc {
                Some(rd) => s2 < rd * rd && !skip_inner,
                None => inner_box.contains(c as i64, r),
            };
            // The inner column: within the column radius, or (without one) the inner zone.
            let in_column = match column2 {
                Some(c2) => s2 < c2,
                None => in_inner,
            };
            let add_area = |parts: &mut Parts| {
                parts.area_m2 += cell_area * w;
                if !in_column {
                    parts.ring_area_m2[ring_of(s2)] += cell_area * w;
                }
            };
            if in_inner && surface {
                // (Its area, by its centre; its kernel is in the surface's parts.)
                add_area(parts);
                continue;
            }
            let dh = h - p.elev;
            if dh == 0.0 {
                add_area(parts);
                continue;
            }
            let drop = 0.5 * curvature * s2;
            let u_ref = -drop;
            let u_top = dh - drop;
            let (e1, e2) = (e_c - 0.5 * cw, e_c + 0.5 * cw);
            let (m1, m2) = (n_c - 0.5 * ch, n_c + 0.5 * ch);
            let ratio = s2.sqrt() / side;
            let k = if shared && ratio < CLOSED_FORM_MAX_RATIO {
                let j = c - c_lo as usize;
                let phi_ref = base_top[j + 1] - base_top[j] - base_bottom[j + 1] + base_bottom[j];
                phi_ref - footprint_phi(e1, e2, n1, n2, u_top)
            } else if ratio < CLOSED_FORM_MAX_RATIO {
                prism_kernel_closed_form(e1, e2, m1, m2, u_ref, u_top)
            } else {
                prism_kernel(e1, e2, m1, m2, u_ref, u_top)
            };
            if in_column {
                parts.add_inner(w * k, cell_area * w);
            } else {
                parts.add(ring_of(s2), w * k, cell_area * w);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dem::Dem;
    use crate::engine::{Convention, EngineConfig, Method};
    use crate::units::{to_mgal, EARTH_RADIUS_M, G};
    use crate::zones::{AutoSettings, ZonePlan};

    fn engine(dem: &Dem, radius: f64, convention: Convention) -> Engine<'_> {
        let config = EngineConfig {
            outer_radius_m: radius,
            convention,
            method: Method::Exact,
            inner_model: InnerModel::Prisms,
        };
        Engine::new(
            dem,
            config,
            ZonePlan::auto(dem.dx, radius, &AutoSettings::default()),
        )
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
            for (conv, curv) in [
                (Convention::Planar, 0.0),
                (Convention::Spherical, 1.0 / EARTH_RADIUS_M),
            ] {
                let fast = engine(&dem, 700.0, conv).compute(p).kernel_sum_m();
                let slow = naive_sum(&dem, p, 700.0, curv);
                assert!(((fast - slow) / slow).abs() < 1e-12, "{fast} vs {slow}");
            }
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
        for conv in [Convention::Planar, Convention::Spherical] {
            assert_eq!(engine(&dem, 150.0, conv).compute(p).kernel_sum_m(), 0.0);
        }
    }

    #[test]
    fn slab_under_a_station_in_a_pit() {
        // A station 1 m above a wide plain: the missing 1 m slab gives 2 pi G rho h
        // (0.1119688 mGal at 2670 kg/m3 with the CODATA 2018 G) up to the cylinder's h/a.
        let dem = Dem::from_fn("plain", 400, 400, -20_000.0, 20_000.0, 100.0, |_, _| 0.0);
        let p = Point {
            x: 50.0,
            y: 50.0,
            elev: 1.0,
        };
        let k = engine(&dem, 19_000.0, Convention::Planar)
            .compute(p)
            .kernel_sum_m();
        assert!((to_mgal(G * 2670.0 * k) - 0.111_968_8).abs() < 1e-4);
    }
}
