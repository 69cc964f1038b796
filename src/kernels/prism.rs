//! Right rectangular prism (Nagy et al. 2000), the near-zone element.
//!
//! # Formula
//! With the station at the origin and the prism's corners at `e_i`, `n_j`, `u_k`
//! (i, j, k in {1, 2}), Nagy, Papp & Benedek (2000, eq. 11 with the 2002 corrigendum)
//! give the downward attraction (u upward)
//!
//! ```text
//! g_down = G rho |||F|||,   F(e, n, u) = e ln(n + r) + n ln(e + r) - u atan(e n / (u r)),
//! r = sqrt(e^2 + n^2 + u^2),  |||F||| = sum_ijk (-1)^(i+j+k) F(e_i, n_j, u_k).
//! ```
//!
//! Writing `phi(u) = sum_ij (-1)^(i+j) F(e_i, n_j, u)` for the four corners at one height,
//! `g_down = G rho [phi(u_2) - phi(u_1)]`, and the terrain kernel of the module docs is
//! `k(u_ref, u_top) = phi(u_ref) - phi(u_top)`.
//!
//! # Singularities
//! The terms have removable singularities (derived again here: each limit follows from
//! its multiplier): `ln(n + r)` tends to `-inf` on the line through an edge where
//! `e = u = 0`, but its multiplier `e` is then 0;
//! `atan(e n / (u r))` is undefined at `u = 0` (the station's own level, the normal case in
//! terrain work), where its multiplier `u` is 0. A term whose multiplier is exactly zero
//! is skipped (its limit is 0); this also covers a station on a vertex (`r = 0`).
//! `ln(n + r)` for `n < 0` cancels badly and is evaluated as `ln((e^2 + u^2) / (r - n))`
//! (the form choclo 0.3 uses after Fukushima 2020).
//!
//! # Far field
//! The eight corner terms are O(r ln r) while their sum is O(a^3 / r^2): the closed form
//! loses about `eps (r/a)^3` relative. Beyond [`CLOSED_FORM_MAX_RATIO`] prism sizes,
//! [`prism_kernel`] integrates the exact vertical column kernel over the prism's footprint
//! by Gauss-Legendre quadrature instead, whose error falls like `(a / 2r)^(2m)` for `m`
//! points per axis: below 1e-13 relative at every distance with the orders chosen here
//! (measured in the tests against the closed form at the switch-over distance).
//!
//! # References
//! - Nagy, D., Papp, G. & Benedek, J. (2000), The gravitational potential and its
//!   derivatives for the prism, J. Geodesy 74(7-8):552-560; corrigendum (2002) 76:475.
//! - Fukushima, T. (2020), Speed and accuracy improvements in standard algorithm for
//!   prismatic gravitational field, Geophys. J. Int. 222(3):1898-1908.

use super::column::column_kernel;

/// Distance, in units of the prism's largest horizontal side, beyond which
/// [`prism_kernel`] uses quadrature instead of the closed form.
pub const CLOSED_FORM_MAX_RATIO: f64 = 30.0;

/// `ln(a + r)` with `r = sqrt(a^2 + b2)`, `b2 = b^2 + c^2 > 0`, free of cancellation for `a < 0`.
#[inline]
fn ln_a_plus_r(a: f64, r: f64, b2: f64) -> f64 {
    if a >= 0.0 {
        (a + r).ln()
    } else {
        (b2 / (r - a)).ln()
    }
}

/// Nagy's corner function `F(e, n, u)` (see the module docs), with its removable
/// singularities taken as their limits.
#[inline]
pub fn nagy_corner(e: f64, n: f64, u: f64) -> f64 {
    let e2 = e * e;
    let n2 = n * n;
    let u2 = u * u;
    let r = (e2 + n2 + u2).sqrt();
    let mut f = 0.0;
    if e != 0.0 {
        f += e * ln_a_plus_r(n, r, e2 + u2);
    }
    if n != 0.0 {
        f += n * ln_a_plus_r(e, r, n2 + u2);
    }
    if u != 0.0 {
        f -= u * (e * n / (u * r)).atan();
    }
    f
}

/// `phi(u)`: the signed sum of Nagy's corner function over the four corners of the
/// footprint `[e1, e2] x [n1, n2]` at height `u` (m).
#[inline]
pub fn footprint_phi(e1: f64, e2: f64, n1: f64, n2: f64, u: f64) -> f64 {
    nagy_corner(e2, n2, u) - nagy_corner(e1, n2, u) - nagy_corner(e2, n1, u)
        + nagy_corner(e1, n1, u)
}

/// Terrain kernel of a prism by Nagy's closed form, at any distance.
///
/// # Arguments
/// - `e1 < e2`, `n1 < n2`: the prism's footprint relative to the station, m.
/// - `u_ref`, `u_top`: the two heights relative to the station, m, in either order.
///
/// # Returns
/// `k = phi(u_ref) - phi(u_top)`, m: multiplied by `G rho` it is the prism's
/// terrain-correction contribution in m/s^2, positive for a hill above the station
/// (`u_top > u_ref >= 0`) and for a valley below it (see [`crate::kernels`]).
///
/// # Examples
/// A wide thin prism right under the station gives the Bouguer slab `2 pi h`:
/// ```
/// use ringsum::kernels::prism_kernel_closed_form;
/// let half = 1.0e6;
/// let k = prism_kernel_closed_form(-half, half, -half, half, 0.0, -1.0);
/// assert!((k - 2.0 * std::f64::consts::PI).abs() < 1e-5);
/// ```
pub fn prism_kernel_closed_form(e1: f64, e2: f64, n1: f64, n2: f64, u_ref: f64, u_top: f64) -> f64 {
    if u_ref == u_top {
        return 0.0;
    }
    footprint_phi(e1, e2, n1, n2, u_ref) - footprint_phi(e1, e2, n1, n2, u_top)
}

/// Rounding bound of [`prism_kernel_closed_form`]: a few machine epsilons times the
/// largest corner term. The closed form cannot be better than this, whatever the body.
pub fn closed_form_rounding_bound(
    e1: f64,
    e2: f64,
    n1: f64,
    n2: f64,
    u_ref: f64,
    u_top: f64,
) -> f64 {
    let mut largest: f64 = 0.0;
    for e in [e1, e2] {
        for n in [n1, n2] {
            for u in [u_ref, u_top] {
                largest = largest.max(nagy_corner(e, n, u).abs());
            }
        }
    }
    8.0 * f64::EPSILON * largest
}

/// Gauss-Legendre nodes and weights on [-1, 1] for 2, 3 and 4 points.
const GAUSS_2: [(f64, f64); 2] = [
    (-0.577_350_269_189_625_8, 1.0),
    (0.577_350_269_189_625_8, 1.0),
];
const GAUSS_3: [(f64, f64); 3] = [
    (-0.774_596_669_241_483_4, 0.555_555_555_555_555_6),
    (0.0, 0.888_888_888_888_888_8),
    (0.774_596_669_241_483_4, 0.555_555_555_555_555_6),
];
const GAUSS_4: [(f64, f64); 4] = [
    (-0.861_136_311_594_052_6, 0.347_854_845_137_453_9),
    (-0.339_981_043_584_856_3, 0.652_145_154_862_546_1),
    (0.339_981_043_584_856_3, 0.652_145_154_862_546_1),
    (0.861_136_311_594_052_6, 0.347_854_845_137_453_9),
];

/// The footprint integral of the exact vertical column kernel by tensor Gauss-Legendre
/// quadrature: accurate far from the prism, where the closed form loses digits.
fn prism_kernel_quadrature(
    e1: f64,
    e2: f64,
    n1: f64,
    n2: f64,
    u_ref: f64,
    u_top: f64,
    ratio: f64,
) -> f64 {
    let rule: &[(f64, f64)] = if ratio < 100.0 {
        &GAUSS_4
    } else if ratio < 1000.0 {
        &GAUSS_3
    } else {
        &GAUSS_2
    };
    let (ec, eh) = (0.5 * (e1 + e2), 0.5 * (e2 - e1));
    let (nc, nh) = (0.5 * (n1 + n2), 0.5 * (n2 - n1));
    let mut sum = 0.0;
    for &(xe, we) in rule {
        let e = ec + eh * xe;
        for &(xn, wn) in rule {
            let n = nc + nh * xn;
            let r = (e * e + n * n).sqrt();
            sum += we * wn * column_kernel(r, u_ref, u_top);
        }
    }
    sum * eh * nh
}

/// Terrain kernel of a prism, choosing the closed form near the prism and quadrature of
/// the exact column kernel far from it (beyond [`CLOSED_FORM_MAX_RATIO`] sides).
///
/// Arguments and return value as [`prism_kernel_closed_form`].
pub fn prism_kernel(e1: f64, e2: f64, n1: f64, n2: f64, u_ref: f64, u_top: f64) -> f64 {
    if u_ref == u_top {
        return 0.0;
    }
    let side = (e2 - e1).max(n2 - n1);
    let ec = 0.5 * (e1 + e2);
    let nc = 0.5 * (n1 + n2);
    let dist = (ec * ec + nc * nc).sqrt();
    let ratio = dist / side;
    if ratio < CLOSED_FORM_MAX_RATIO {
        prism_kernel_closed_form(e1, e2, n1, n2, u_ref, u_top)
    } else {
        prism_kernel_quadrature(e1, e2, n1, n2, u_ref, u_top, ratio)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::{to_mgal, G};
    use std::f64::consts::PI;

    fn mgal(k: f64, rho: f64) -> f64 {
        to_mgal(G * rho * k)
    }

    #[test]
    fn prism_below_pulls_down() {
        // A prism right below the station: its downward attraction is phi(u2) - phi(u1) > 0.
        let down =
            footprint_phi(-1.0, 1.0, -1.0, 1.0, -1.0) - footprint_phi(-1.0, 1.0, -1.0, 1.0, -2.0);
        assert!(down > 0.0);
        // As terrain below the station (a valley, u_top < u_ref = 0) its kernel is positive too.
        assert!(prism_kernel(-1.0, 1.0, -1.0, 1.0, 0.0, -2.0) > 0.0);
        assert!(prism_kernel(-1.0, 1.0, -1.0, 1.0, 0.0, 2.0) > 0.0);
    }

    #[test]
    fn check_values_p1_p2() {
        // Check values P1 and P2: our own values of the closed form, reproduced at 50
        // digits with mpmath by scripts/reference/make_prism_fixture.py (rows p1_science and
        // p2_cube_top_centre of fixtures/prism_mpmath.csv), agreeing with choclo 0.3.2.
        let p1 = prism_kernel(-500.0, 500.0, 500.0, 1500.0, -500.0, -1500.0);
        assert!((mgal(p1, 1000.0) - 2.366349).abs() < 5e-7);
        let p2 = prism_kernel(-0.5, 0.5, -0.5, 0.5, 0.0, -1.0);
        assert!((mgal(p2, 2670.0) - 0.046_277_69).abs() < 5e-9);
    }

    #[test]
    fn check_values_p3_terrain_block() {
        // Check values P3: 100 m x 100 m block from station level to +500 m whose centre
        // is r metres east; our own values, reproduced at 50 digits with mpmath by
        // scripts/reference/make_prism_fixture.py (rows p3_terrain_r*).
        let cases = [
            (100.0, 1.501407),
            (200.0, 0.5699290),
            (500.0, 0.1050871),
            (1000.0, 1.886650e-2),
            (2000.0, 2.662663e-3),
            (5000.0, 1.769045e-4),
            (10000.0, 2.223463e-5),
            (20000.0, 2.783156e-6),
            (50000.0, 1.781907e-7),
        ];
        for (r, expected) in cases {
            let k = prism_kernel(r - 50.0, r + 50.0, -50.0, 50.0, 0.0, 500.0);
            let got = mgal(k, 2670.0);
            assert!(
                ((got - expected) / expected).abs() < 1e-6,
                "r = {r}: {got} vs {expected}"
            );
        }
    }

    #[test]
    fn wide_prism_is_bouguer_slab() {
        // 2 pi G rho h = 0.1119688 mGal per metre at 2670 kg/m3 (CODATA 2018 G; derived
        // again here: 2 pi x 6.67430e-11 x 2670 / 1e-5).
        let half = 1.0e7;
        let k = prism_kernel(-half, half, -half, half, 0.0, -1.0);
        assert!((mgal(k, 2670.0) - 0.111_968_8).abs() < 1e-6);
        assert!((k - 2.0 * PI).abs() < 1e-5);
    }

    #[test]
    fn antisymmetric_and_mirror_symmetric() {
        let a = prism_kernel(30.0, 60.0, -20.0, 10.0, 0.0, 40.0);
        let b = prism_kernel(30.0, 60.0, -20.0, 10.0, 40.0, 0.0);
        assert!((a + b).abs() < 1e-15);
        let m = prism_kernel(-60.0, -30.0, -10.0, 20.0, 0.0, 40.0);
        assert!((a - m).abs() < 1e-13 * a.abs());
        // Hill and valley of the same size give the same kernel.
        let v = prism_kernel(30.0, 60.0, -20.0, 10.0, 0.0, -40.0);
        assert!((a - v).abs() < 1e-13 * a.abs());
    }

    #[test]
    fn singular_positions_are_finite_and_continuous() {
        // Station on a corner, on an edge and on a face at its own level; compare with a
        // point a hair away: the removable singularities must give the limit.
        let cases = [
            (0.0, 10.0, 0.0, 10.0),
            (-5.0, 5.0, 0.0, 10.0),
            (-5.0, 5.0, -5.0, 5.0),
            (-10.0, 0.0, -10.0, 0.0),
        ];
        for (e1, e2, n1, n2) in cases {
            let k = prism_kernel(e1, e2, n1, n2, 0.0, 7.0);
            assert!(k.is_finite() && k > 0.0);
            let d = 1e-7;
            let k2 = prism_kernel(e1 + d, e2 + d, n1 + d, n2 + d, 0.0, 7.0);
            assert!((k - k2).abs() < 1e-5 * k, "{k} vs {k2}");
        }
    }

    #[test]
    fn quadrature_meets_closed_form_at_switch_over() {
        // Near the switch-over the closed form has lost about eps * (r/a)^3 (r/h) relative
        // (thin prisms lose more); the quadrature's own error there is (a/2r)^8 ~ 1e-13.
        for ratio in [20.0, 30.0, 40.0] {
            for (h, az) in [(5.0, 0.3), (300.0, 1.1), (-80.0, 2.5)] {
                let a = 30.0;
                let d = ratio * a;
                let (ec, nc) = (d * f64::cos(az), d * f64::sin(az));
                let (e1, e2, n1, n2) = (ec - a / 2.0, ec + a / 2.0, nc - a / 2.0, nc + a / 2.0);
                let closed = prism_kernel_closed_form(e1, e2, n1, n2, 0.0, h);
                let quad = prism_kernel_quadrature(e1, e2, n1, n2, 0.0, h, ratio);
                let floor = closed_form_rounding_bound(e1, e2, n1, n2, 0.0, h);
                assert!(
                    (closed - quad).abs() < 1e-11 * quad.abs() + floor,
                    "ratio {ratio}, h {h}: {closed} vs {quad}"
                );
            }
        }
    }

    #[test]
    fn far_field_tends_to_column() {
        // Far away the prism is a vertical line mass of the same volume.
        let a = 10.0;
        let r = 20_000.0;
        let k = prism_kernel(r - a / 2.0, r + a / 2.0, -a / 2.0, a / 2.0, 0.0, 300.0);
        let col = a * a * column_kernel(r, 0.0, 300.0);
        assert!(((k - col) / col).abs() < 1e-6);
    }
}
