//! Annular sector of uniform height: a Hammer (1939) compartment.
//!
//! # Formula
//! Integrating the column kernel over a sector of angle `theta` between radii `r1 < r2`:
//!
//! ```text
//! k = theta [ (sqrt(r2^2 + u1^2) - sqrt(r1^2 + u1^2)) - (sqrt(r2^2 + u2^2) - sqrt(r1^2 + u2^2)) ]
//! ```
//!
//! which for `u1 = 0`, `u2 = h` is Hammer's compartment formula
//! `theta [ (r2 - r1) + sqrt(r1^2 + h^2) - sqrt(r2^2 + h^2) ]` (Hammer 1939; derived
//! again by the integration above). It is
//! evaluated in the rearranged form
//! `theta (u2^2 - u1^2) [ 1/(S11 + S12) - 1/(S21 + S22) ]`, `S_ij = sqrt(r_i^2 + u_j^2)`,
//! which keeps its digits when the heights are small against the radii.
//!
//! # References
//! Hammer, S. (1939), Terrain corrections for gravimeter stations, Geophysics 4(3):184-194.

/// Terrain kernel (m) of an annular sector of angle `theta` (rad) between horizontal
/// radii `r1 < r2` (m), filled between relative heights `u1` and `u2` (m, either order;
/// sign as in [`crate::kernels`]).
///
/// # Examples
/// A full ring of height 200 m from 100 m to 1000 m is 11.622681 mGal at 2670 kg/m3
/// (Hammer's formula with theta = 2 pi and CODATA 2018 G, derived again here):
/// ```
/// use ringsum::kernels::ring_sector_kernel;
/// let k = ring_sector_kernel(2.0 * std::f64::consts::PI, 100.0, 1000.0, 0.0, 200.0);
/// let mgal = k * 6.67430e-11 * 2670.0 / 1e-5;
/// assert!((mgal - 11.622681).abs() < 1e-6);
/// ```
pub fn ring_sector_kernel(theta: f64, r1: f64, r2: f64, u1: f64, u2: f64) -> f64 {
    let s11 = (r1 * r1 + u1 * u1).sqrt();
    let s12 = (r1 * r1 + u2 * u2).sqrt();
    let s21 = (r2 * r2 + u1 * u1).sqrt();
    let s22 = (r2 * r2 + u2 * u2).sqrt();
    if s11 + s12 == 0.0 {
        // Inner radius 0 at the station's level: sqrt(u^2) terms.
        return theta * ((s21 - u1.abs()) - (s22 - u2.abs()));
    }
    theta * (u2 - u1) * (u2 + u1) * (1.0 / (s11 + s12) - 1.0 / (s21 + s22))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::{to_mgal, G};
    use std::f64::consts::PI;

    fn mgal(k: f64) -> f64 {
        to_mgal(G * 2670.0 * k)
    }

    #[test]
    fn hammer_compartment_check_values() {
        // Our own values of Hammer's (1939) compartment formula, rho 2670, CODATA 2018 G,
        // with his zone radii in feet and compartment counts as we recall them (from
        // memory): zone B (6.56-54.6 ft, 4 compartments) h = 10 m: 0.15186, h = 100 m:
        // 0.37194; zone C (54.6-175 ft, 6) h = 100 m: 0.46162; zone D (175-558 ft, 6)
        // h = 50 m: 0.234637 mGal. (Zone B at h = 5 m gives 0.074196 from these radii.)
        let ft = 0.3048;
        let cases = [
            (4.0, 6.56, 54.6, 10.0, 0.15186, 5e-6),
            (4.0, 6.56, 54.6, 100.0, 0.37194, 5e-6),
            (6.0, 54.6, 175.0, 100.0, 0.46162, 5e-6),
            (6.0, 175.0, 558.0, 50.0, 0.234637, 1e-6),
        ];
        for (n, r1, r2, h, expected, tol) in cases {
            let k = ring_sector_kernel(2.0 * PI / n, r1 * ft, r2 * ft, 0.0, h);
            assert!(
                (mgal(k) - expected).abs() < tol,
                "{} vs {expected}",
                mgal(k)
            );
        }
    }

    #[test]
    fn full_ring_from_zero_is_cylinder_on_axis() {
        // On-axis vertical cylinder, radius a = 100, length 50, station on its top face:
        // 2 pi G rho [L + a - sqrt(a^2 + L^2)] = 4.276826 mGal (CODATA 2018 G; derived
        // again here: the full ring from radius 0 is that cylinder).
        let k = ring_sector_kernel(2.0 * PI, 0.0, 100.0, 0.0, -50.0);
        assert!((mgal(k) - 4.276826).abs() < 1e-6);
        // Station 20 m above the top face: 3.349527 mGal.
        let k = ring_sector_kernel(2.0 * PI, 0.0, 100.0, -20.0, -70.0);
        assert!((mgal(k) - 3.349527).abs() < 1e-6);
    }

    #[test]
    fn stable_form_equals_direct_form() {
        let (t, r1, r2, u1, u2) = (0.4, 300.0, 520.0, -2.0, 150.0);
        let direct = t
            * ((f64::hypot(r2, u1) - f64::hypot(r1, u1))
                - (f64::hypot(r2, u2) - f64::hypot(r1, u2)));
        let k = ring_sector_kernel(t, r1, r2, u1, u2);
        assert!((k - direct).abs() < 1e-12 * direct.abs());
    }
}
