//! Physical constants and the one parser for lengths given on the command line.
//!
//! ringsum computes in SI units (m, kg/m3, m/s2) and converts to mGal only where it
//! reports. Constants carry their source.

/// Newtonian constant of gravitation, m^3 kg^-1 s^-2.
///
/// CODATA 2018 recommended value (Tiesinga et al. 2021); CODATA 2022 keeps it.
pub const G: f64 = 6.674_30e-11;

/// One milligal in m/s^2 (1 mGal = 1e-5 m/s^2).
pub const MGAL: f64 = 1e-5;

/// Mean Earth radius used for the curvature drop s^2/(2R), m: the same R0 = 6 371 km as
/// the Bullard B cap (LaFehr 1991a).
pub const EARTH_RADIUS_M: f64 = 6_371_000.0;

/// Outer radius of the standard terrain correction (Hayford-Bowie zone O), m.
///
/// 166.735 km is the radius of Bullard B (LaFehr 1991a); it is usually written 166.7 km.
pub const STANDARD_OUTER_RADIUS_M: f64 = 166_735.0;

/// Density of the Bouguer reduction by convention, kg/m3 (Hinze et al. 2005).
pub const STANDARD_DENSITY_KG_M3: f64 = 2670.0;

/// Converts an acceleration in m/s^2 to mGal.
pub fn to_mgal(acceleration_m_s2: f64) -> f64 {
    acceleration_m_s2 / MGAL
}

/// Parses a length such as `166.7km`, `10 km`, `500m` or `500` (metres) into metres.
///
/// Returns a sentence saying what is wrong when the text is not a finite length with
/// unit `m` or `km`.
pub fn parse_length_m(text: &str) -> Result<f64, String> {
    let t = text.trim();
    let lower = t.to_ascii_lowercase();
    let (number, factor) = if let Some(n) = lower.strip_suffix("km") {
        (n, 1000.0)
    } else if let Some(n) = lower.strip_suffix('m') {
        (n, 1.0)
    } else {
        (lower.as_str(), 1.0)
    };
    let value: f64 = number.trim().parse().map_err(|_| {
        format!("'{t}' is not a length; give a number with m or km, e.g. 166.7km or 500m")
    })?;
    if !value.is_finite() {
        return Err(format!("'{t}' is not a finite length"));
    }
    Ok(value * factor)
}

/// Formats a length in metres the way the command line accepts it back (`12.5km`, `300m`).
pub fn format_length(metres: f64) -> String {
    // Lengths no survey has (below a millimetre, beyond a million kilometres) in powers
    // of ten, which parse back.
    if metres > 0.0 && metres < 1e-3 {
        format!("{metres:.3e}m")
    } else if metres >= 1e9 {
        format!("{:.3e}km", metres / 1000.0)
    } else if metres >= 1000.0 {
        let km = metres / 1000.0;
        format!("{}km", trim_float(km))
    } else {
        format!("{}m", trim_float(metres))
    }
}

fn trim_float(v: f64) -> String {
    let s = format!("{v:.3}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lengths_take_m_and_km() {
        assert_eq!(parse_length_m("166.7km").unwrap(), 166_700.0);
        assert_eq!(parse_length_m("10 km").unwrap(), 10_000.0);
        assert_eq!(parse_length_m("500m").unwrap(), 500.0);
        assert_eq!(parse_length_m("500").unwrap(), 500.0);
        assert_eq!(parse_length_m("2.5KM").unwrap(), 2500.0);
        assert!(parse_length_m("ten km").is_err());
        assert!(parse_length_m("inf").is_err());
        assert!(parse_length_m("").is_err());
    }

    #[test]
    fn lengths_print_back() {
        assert_eq!(format_length(166_735.0), "166.735km");
        assert_eq!(format_length(10_000.0), "10km");
        assert_eq!(format_length(53.3), "53.3m");
        assert_eq!(format_length(1e-300), "1.000e-300m");
        assert_eq!(format_length(1.5e30), "1.500e27km");
        for v in [1e-300, 2.5e-4, 1.5e30, 7e12] {
            let back = parse_length_m(&format_length(v)).unwrap();
            assert!((back - v).abs() <= 1e-3 * v, "{v}: {}", format_length(v));
        }
    }

    #[test]
    fn slab_constant_matches_handbook() {
        // 2 pi G rho = 0.1119688 mGal/m at 2670 kg/m3 (CODATA 2018 G; derived again here:
        // 2 pi x 6.67430e-11 x 2670 / 1e-5).
        let per_metre = to_mgal(2.0 * std::f64::consts::PI * G * 2670.0);
        assert!((per_metre - 0.111_968_8).abs() < 1e-7);
    }
}
