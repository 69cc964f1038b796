//! The radius sweep's arithmetic: the radii (E12 series or a list), radii moved to the
//! edges of sector rings, running sums at each radius, and the convergence radii.
//!
//! # How the radius sweep is computed
//! The zone plan is cut at the sweep radii ([`ZonePlan::split_at`]) and every station is
//! computed once: the engine walks exactly the elements of the uncut plan (the cut only
//! decides which ring an element's part is added to, by the ring holding its centroid),
//! so the running sum of the ring parts at radius `r` is the TC of everything whose
//! centroid lies within `r`, and the sum at the outer radius is the `correct` value.
//! An intermediate value is therefore exact to the size of the elements there: full
//! cells in the near zone, blocks up to `ratio` times their distance further out (a block
//! straddling `r` counts wholly on the side of its centroid). Sector rings are
//! integrated a compartment at a time and are never cut: a radius inside one moves to the
//! ring's nearest edge.
//!
//! # Convergence radii
//! `r95` (`r99`) is the first sweep radius from which on the TC stays within 5% (1%) of
//! its final value. Where the TC only grows (the planar convention) this is where 95%
//! (99%) of it is reached; in the spherical convention, where the far zone can lower it,
//! it is where it has settled.

use crate::config::check_density;
use crate::units::{format_length, parse_length_m};
use crate::zones::{InnerZone, RingMethod, ZonePlan};
use anyhow::bail;
use std::path::Path;

/// Mantissas of the E12 series of preferred numbers (IEC 60063), times ten: twelve
/// steps per decade, each about 21% larger than the one before.
pub const E12_TENTHS: [u32; 12] = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82];

/// Relative tolerance for comparing radii.
const SAME: f64 = 1e-9;

/// Radius of the inner zone, m: the half-width of its cell square, `(m + 1/2)` cells, or
/// the disc's radius.
pub fn inner_zone_radius_m(plan: &ZonePlan, cell_m: f64) -> f64 {
    match plan.inner {
        InnerZone::Cells { half_width } => (half_width as f64 + 0.5) * cell_m,
        InnerZone::Disc { radius_m } => radius_m,
    }
}

/// The default sweep: `first_m`, the E12 values between it and `outer_m`, and `outer_m`.
pub fn default_radii(first_m: f64, outer_m: f64) -> Vec<f64> {
    let first = first_m.min(outer_m);
    let mut radii = vec![first];
    let mut k = first.max(1e-3).log10().floor() as i32;
    loop {
        let decade = 10f64.powi(k - 1);
        if 10.0 * decade > outer_m {
            break;
        }
        for m in E12_TENTHS {
            let r = m as f64 * decade;
            if r > first * (1.0 + SAME) && r < outer_m * (1.0 - SAME) {
                radii.push(r);
            }
        }
        k += 1;
    }
    if outer_m > first * (1.0 + SAME) {
        radii.push(outer_m);
    }
    radii
}

/// Parses `--radii`: increasing lengths, none inside the inner zone or beyond the outer
/// radius; the outer radius is added when the list stops short of it.
pub fn parse_radii(text: &str, inner_m: f64, outer_m: f64) -> anyhow::Result<Vec<f64>> {
    let mut radii: Vec<f64> = Vec::new();
    for item in text.split(',') {
        let item = item.trim();
        if item.is_empty() {
            bail!("--radii {text}: an item is empty; give lengths separated by commas, e.g. 1km,2km,5km");
        }
        let r = parse_length_m(item).map_err(|e| anyhow::anyhow!("--radii {text}: {e}"))?;
        if r <= 0.0 {
            bail!(
                "--radii {text}: {item} is not a positive radius; give lengths such as 500m or 2km"
            );
        }
        if let Some(&prev) = radii.last() {
            if r <= prev * (1.0 + SAME) {
                bail!(
                    "--radii {text}: the radii must increase, but {} is followed by {}; list them from the station outward",
                    format_length(prev),
                    format_length(r)
                );
            }
        }
        if r > outer_m * (1.0 + SAME) {
            bail!(
                "--radii {text}: {} is beyond the outer radius {}; drop it or give a larger --outer-radius",
                format_length(r),
                format_length(outer_m)
            );
        }
        if r < inner_m * (1.0 - SAME) {
            bail!(
                "--radii {text}: {} lies inside the inner zone ({} from the station), which is integrated whole; give radii from {} on",
                format_length(r),
                format_length(inner_m),
                format_length(inner_m)
            );
        }
        radii.push(r);
    }
    match radii.last_mut() {
        Some(last) if *last >= outer_m * (1.0 - SAME) => *last = outer_m,
        _ => radii.push(outer_m),
    }
    Ok(radii)
}

/// Parses `--densities`: positive densities in kg/m3 (checked as `--density` is).
pub fn parse_densities(text: &str) -> anyhow::Result<Vec<f64>> {
    let mut out = Vec::new();
    for item in text.split(',') {
        let item = item.trim();
        let value: f64 = item.parse().map_err(|_| {
            anyhow::anyhow!(
                "--densities {text}: '{item}' is not a number; give densities in kg/m3 separated by commas, e.g. 2000,2300,2670"
            )
        })?;
        out.push(check_density(value, "--densities")?);
    }
    Ok(out)
}

/// Moves radii that fall inside a sector ring of `plan` to that ring's nearest edge and
/// drops the repeats; returns the radii and the (asked, used) pairs that moved.
pub fn snap_to_sector_edges(plan: &ZonePlan, radii: &[f64]) -> (Vec<f64>, Vec<(f64, f64)>) {
    let mut out: Vec<f64> = Vec::new();
    let mut moved = Vec::new();
    for &r in radii {
        let mut used = r;
        for ring in &plan.rings {
            if matches!(ring.method, RingMethod::Sectors { .. })
                && r > ring.inner_m * (1.0 + SAME)
                && r < ring.outer_m * (1.0 - SAME)
            {
                used = if r - ring.inner_m <= ring.outer_m - r {
                    ring.inner_m
                } else {
                    ring.outer_m
                };
                moved.push((r, used));
            }
        }
        let new = match out.last() {
            Some(&last) => used > last * (1.0 + SAME),
            None => true,
        };
        if new {
            out.push(used);
        }
    }
    (out, moved)
}

/// The values at each radius from running values at each ring's outer edge
/// (`at_ring_ends[j]`: the inner zone and rings `0..=j` of `split`, the plan cut at
/// `radii`); `inner` is the inner zone's value (for radii inside the first ring).
pub fn at_radii(split: &ZonePlan, inner: f64, at_ring_ends: &[f64], radii: &[f64]) -> Vec<f64> {
    let mut out = Vec::with_capacity(radii.len());
    let mut k = 0;
    for &r in radii {
        while k < split.rings.len() && split.rings[k].outer_m <= r * (1.0 + SAME) {
            k += 1;
        }
        out.push(if k == 0 { inner } else { at_ring_ends[k - 1] });
    }
    // The last radius is the outer radius: every ring is in.
    if let (Some(last), Some(&all)) = (out.last_mut(), at_ring_ends.last()) {
        *last = all;
    }
    out
}

/// The first radius from which on `values` stays within `fraction` of the last value.
pub fn convergence_radius(radii: &[f64], values: &[f64], fraction: f64) -> f64 {
    let last = values[values.len() - 1];
    let tol = fraction * last.abs();
    let mut j = values.len() - 1;
    while j > 0 && (values[j - 1] - last).abs() <= tol {
        j -= 1;
    }
    radii[j]
}

/// A column-name-safe label from a file name (letters, digits and `_`).
pub fn label_of(path: &Path) -> String {
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    let label: String = stem
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect();
    if label.is_empty() {
        "dem".into()
    } else {
        label
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_radii_follow_e12() {
        let r = default_radii(45.0, 10_000.0);
        assert_eq!(r[0], 45.0);
        assert_eq!(&r[1..6], [47.0, 56.0, 68.0, 82.0, 100.0]);
        assert_eq!(*r.last().unwrap(), 10_000.0);
        assert!(r.windows(2).all(|w| w[1] > w[0]));
        // 12 per decade: 100 m to 1 km holds 12 values.
        assert_eq!(
            r.iter().filter(|&&x| (100.0..1000.0).contains(&x)).count(),
            12
        );
        assert!(r.contains(&8200.0));
    }

    #[test]
    fn radii_lists_are_checked() {
        let e = |t: &str| parse_radii(t, 45.0, 10_000.0).unwrap_err().to_string();
        assert!(e("1km,5km,2km").contains("must increase, but 5km is followed by 2km"));
        assert!(e("1km,1km").contains("must increase"));
        assert!(e("1km,20km").contains("beyond the outer radius 10km"));
        assert!(e("10m,1km").contains("inside the inner zone"));
        assert!(e("1km,,2km").contains("empty"));
        assert!(e("-1km").contains("not a positive radius"));
        assert!(e("1 mile").contains("not a length"));
        assert_eq!(
            parse_radii("1km,2km", 45.0, 10_000.0).unwrap(),
            [1000.0, 2000.0, 10_000.0]
        );
        assert_eq!(
            parse_radii("1km,10km", 45.0, 10_000.0).unwrap(),
            [1000.0, 10_000.0]
        );
    }

    #[test]
    fn densities_are_checked_like_density() {
        assert_eq!(parse_densities("2000, 2670").unwrap(), [2000.0, 2670.0]);
        let e = |t: &str| parse_densities(t).unwrap_err().to_string();
        assert!(e("2000,-5").contains("must be a positive number"));
        assert!(e("0").contains("must be a positive number"));
        assert!(e("2.67").contains("looks like g/cm3"));
        assert!(e("2000,x").contains("'x' is not a number"));
    }

    #[test]
    fn convergence_radius_is_where_the_value_settles() {
        let r = [1.0, 2.0, 3.0, 4.0, 5.0];
        let v = [0.5, 0.9, 0.96, 0.995, 1.0];
        assert_eq!(convergence_radius(&r, &v, 0.05), 3.0);
        assert_eq!(convergence_radius(&r, &v, 0.01), 4.0);
        // Overshoot and return: settled only where it stays within the band.
        let v = [0.5, 1.2, 0.9, 1.0, 1.0];
        assert_eq!(convergence_radius(&r, &v, 0.05), 4.0);
    }

    #[test]
    fn sector_radii_move_to_ring_edges() {
        // A plan file of sector rings (the chart-era way): 2-16.6 m, 16.6-53.3 m.
        let text = "inner_radius = \"2m\"\n[[ring]]\nname = \"B\"\nouter = 16.6\nmethod = \"sectors\"\n[[ring]]\nname = \"C\"\nouter = 53.3\nmethod = \"sectors\"\n";
        let plan = ZonePlan::from_toml(text, "chart.toml").unwrap();
        let (r, moved) = snap_to_sector_edges(&plan, &[10.0, 16.0, 40.0, 53.3]);
        // 10 m moves to 16.6 m, 16 m to the same edge, 40 m to 53.3 m.
        assert_eq!(r, [16.6, 53.3]);
        assert_eq!(moved.len(), 3);
        // The Hammer plan integrates its zones as prisms and blocks: nothing moves.
        let hammer = ZonePlan::hammer(30.0, 21_944.0);
        let radii = [10.0, 16.0, 100.0, 21_944.0];
        assert_eq!(
            snap_to_sector_edges(&hammer, &radii),
            (radii.to_vec(), vec![])
        );
    }
}
