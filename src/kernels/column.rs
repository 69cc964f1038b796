//! Vertical line mass (column) per unit area, and the derivatives that the block
//! statistics of the middle and far zones need.
//!
//! # Formula
//! The upward attraction per unit `G rho` and per unit horizontal area of a column
//! filling heights `[u1, u2]` at horizontal distance `r` is
//!
//! ```text
//! c(r, u1, u2) = 1/sqrt(r^2 + u1^2) - 1/sqrt(r^2 + u2^2)
//!              = (u2 - u1)(u2 + u1) / (s1 s2 (s1 + s2)),   s_i = sqrt(r^2 + u_i^2)
//! ```
//!
//! The second form is algebraically equal and free of the cancellation the first suffers
//! when `|u| << r` (DESIGN.md, numerics). Sign as in [`crate::kernels`].
//!
//! # References
//! Derived again here: the upward pull per unit `G rho` and area of a mass element at
//! height `u` is `u / (r^2 + u^2)^(3/2)`, whose integral over `u` from `u1` to `u2` is the
//! first form. The vertical line mass is the classical far-zone element of prism methods;
//! the test `far_field_tends_to_column` in [`crate::kernels::prism`] checks that the
//! exact prism of Nagy et al. (2000) tends to it.

/// Column kernel `c(r, u1, u2)` (1/m), see the module docs. `r > 0`.
///
/// # Examples
/// ```
/// use ringsum::kernels::column_kernel;
/// let c = column_kernel(1000.0, 0.0, 100.0);
/// assert!((c - (1.0 / 1000.0 - 1.0 / 1000.0f64.hypot(100.0))).abs() < 1e-15);
/// ```
#[inline]
pub fn column_kernel(r: f64, u1: f64, u2: f64) -> f64 {
    let r2 = r * r;
    let s1 = (r2 + u1 * u1).sqrt();
    let s2 = (r2 + u2 * u2).sqrt();
    (u2 - u1) * (u2 + u1) / (s1 * s2 * (s1 + s2))
}

/// `psi(r, u) = 1/sqrt(r^2 + u^2)` and its partial derivatives up to second order.
#[derive(Debug, Clone, Copy)]
struct PsiDerivatives {
    r: f64,
    u: f64,
    rr: f64,
    ru: f64,
    uu: f64,
}

#[inline]
fn psi_derivatives(r: f64, u: f64) -> PsiDerivatives {
    let s2 = r * r + u * u;
    let s = s2.sqrt();
    let s3 = s2 * s;
    let s5 = s3 * s2;
    PsiDerivatives {
        r: -r / s3,
        u: -u / s3,
        rr: -1.0 / s3 + 3.0 * r * r / s5,
        ru: 3.0 * r * u / s5,
        uu: -1.0 / s3 + 3.0 * u * u / s5,
    }
}

/// Value and second derivatives of the column kernel of terrain at horizontal distance
/// `r` with relative height `h` (terrain height minus station height), including the
/// curvature drop `d(r) = curvature * r^2 / 2` of both the reference level and the
/// terrain (`curvature = 1/R` in the spherical convention, 0 in the planar one):
///
/// ```text
/// f(r, h) = psi(r, -d(r)) - psi(r, h - d(r))
/// ```
///
/// The returned derivatives are with respect to `r` and `h`; the chain rule through
/// `d(r)` is included. `f_r` is needed because the horizontal second derivatives of a
/// function of `r = sqrt(e^2 + n^2)` contain it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ColumnTaylor {
    /// f (1/m)
    pub f: f64,
    /// df/dr
    pub f_r: f64,
    /// d2f/dr2
    pub f_rr: f64,
    /// d2f/dr dh
    pub f_rh: f64,
    /// d2f/dh2
    pub f_hh: f64,
    /// d3f/dh2 dr
    pub f_hhr: f64,
    /// d4f/dh2 dr2
    pub f_hhrr: f64,
}

/// See [`ColumnTaylor`]. `r > 0`.
pub fn column_taylor(r: f64, h: f64, curvature: f64) -> ColumnTaylor {
    let d = 0.5 * curvature * r * r;
    let d_r = curvature * r;
    let d_rr = curvature;
    let u_ref = -d;
    let u_top = h - d;
    let a = psi_derivatives(r, u_ref);
    let b = psi_derivatives(r, u_top);
    // Total r-derivatives of psi(r, u(r)) with u_r = -d_r, u_rr = -d_rr.
    let total_r = |p: &PsiDerivatives| p.r - p.u * d_r;
    let total_rr = |p: &PsiDerivatives| p.rr - 2.0 * p.ru * d_r + p.uu * d_r * d_r - p.u * d_rr;
    // f_hh(r) = -psi_uu(r, u(r)) and its total r-derivatives.
    let c = psi_uu_derivatives(r, u_top);
    let (u_r, u_rr) = (-d_r, -d_rr);
    ColumnTaylor {
        f: column_kernel(r, u_ref, u_top),
        f_r: total_r(&a) - total_r(&b),
        f_rr: total_rr(&a) - total_rr(&b),
        f_rh: -(b.ru - b.uu * d_r),
        f_hh: -b.uu,
        f_hhr: -(c.r + c.u * u_r),
        f_hhrr: -(c.rr + 2.0 * c.ru * u_r + c.uu * u_r * u_r + c.u * u_rr),
    }
}

/// Derivatives of `psi_uu(r, u) = -1/s^3 + 3 u^2/s^5` (`s^2 = r^2 + u^2`): by `r`, `u`,
/// `rr`, `ru`, `uu`.
fn psi_uu_derivatives(r: f64, u: f64) -> PsiDerivatives {
    let s2 = r * r + u * u;
    let s = s2.sqrt();
    let s5 = s2 * s2 * s;
    let s7 = s5 * s2;
    let s9 = s7 * s2;
    let (u2, r2) = (u * u, r * r);
    PsiDerivatives {
        r: 3.0 * r / s5 - 15.0 * u2 * r / s7,
        u: 9.0 * u / s5 - 15.0 * u2 * u / s7,
        rr: 3.0 / s5 - 15.0 * (r2 + u2) / s7 + 105.0 * u2 * r2 / s9,
        ru: -45.0 * u * r / s7 + 105.0 * u2 * u * r / s9,
        uu: 9.0 / s5 - 90.0 * u2 / s7 + 105.0 * u2 * u2 / s9,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stable_form_equals_naive_form() {
        for (r, u1, u2) in [(10.0, 0.0, 5.0), (1000.0, -3.0, 400.0), (5.0e4, 0.0, -0.01)] {
            let naive = 1.0 / f64::hypot(r, u1) - 1.0 / f64::hypot(r, u2);
            let stable = column_kernel(r, u1, u2);
            assert!((naive - stable).abs() <= 1e-12 * stable.abs().max(1e-300) + 1e-19);
        }
        // Where the naive form has lost every digit the stable one keeps them:
        // h << r gives c = h^2 / (2 r^3) to leading order.
        let (r, h) = (1.0e5, 0.01);
        let c = column_kernel(r, 0.0, h);
        assert!(((c - h * h / (2.0 * r * r * r)) / c).abs() < 1e-9);
    }

    #[test]
    fn taylor_derivatives_match_finite_differences() {
        for (r, h, k) in [
            (500.0, 120.0, 0.0),
            (2.0e4, -300.0, 1.0 / 6.371e6),
            (8.0e4, 900.0, 1.0 / 6.371e6),
        ] {
            let t = column_taylor(r, h, k);
            let f = |r: f64, h: f64| column_taylor(r, h, k).f;
            let dr = r * 1e-4;
            let dh = 1e-3 * r;
            let f_r = (f(r + dr, h) - f(r - dr, h)) / (2.0 * dr);
            let f_rr = (f(r + dr, h) - 2.0 * f(r, h) + f(r - dr, h)) / (dr * dr);
            let f_hh = (f(r, h + dh) - 2.0 * f(r, h) + f(r, h - dh)) / (dh * dh);
            let f_rh = (f(r + dr, h + dh) - f(r + dr, h - dh) - f(r - dr, h + dh)
                + f(r - dr, h - dh))
                / (4.0 * dr * dh);
            let close = |a: f64, b: f64| (a - b).abs() <= 1e-4 * a.abs().max(b.abs()) + 1e-25;
            assert!(close(t.f_r, f_r), "f_r {} vs {}", t.f_r, f_r);
            assert!(close(t.f_rr, f_rr), "f_rr {} vs {}", t.f_rr, f_rr);
            assert!(close(t.f_hh, f_hh), "f_hh {} vs {}", t.f_hh, f_hh);
            assert!(close(t.f_rh, f_rh), "f_rh {} vs {}", t.f_rh, f_rh);
            // The fourth-order mixed terms, from finite differences of f_hh.
            let g = |r: f64| column_taylor(r, h, k).f_hh;
            let g_r = (g(r + dr) - g(r - dr)) / (2.0 * dr);
            let g_rr = (g(r + dr) - 2.0 * g(r) + g(r - dr)) / (dr * dr);
            assert!(close(t.f_hhr, g_r), "f_hhr {} vs {}", t.f_hhr, g_r);
            assert!(close(t.f_hhrr, g_rr), "f_hhrr {} vs {}", t.f_hhrr, g_rr);
        }
    }
}
