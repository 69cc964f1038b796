//! Input checks of `audit` and the statistics of new-minus-legacy differences.

use crate::inputs::stations::StationTable;
use crate::text::list_some;
use crate::units::parse_length_m;
use anyhow::bail;
use std::collections::HashMap;
use std::path::Path;

/// Names tried, in order, for the legacy TC column (case-insensitive).
pub const LEGACY_NAMES: &[&str] = &[
    "legacy_tc",
    "legacy_tc_mgal",
    "old_tc",
    "old_tc_mgal",
    "tc_old",
    "tc_old_mgal",
    "tc_legacy",
    "tc_legacy_mgal",
];

/// Prefix of the per-zone legacy columns of the Hammer preset: `legacy_tc_B` ... `legacy_tc_M`
/// (and `legacy_tc_A` for the station zone).
pub const LEGACY_ZONE_PREFIX: &str = "legacy_tc_";

/// Slopes below this (degrees) explain no height mismatch by position.
pub const FLAT_SLOPE_DEG: f64 = 0.5;

/// Problem codes of the report, in the order they are listed.
pub const PROBLEMS: [&str; 6] = [
    "outside_dem",
    "on_nodata",
    "partial_coverage",
    "height_mismatch",
    "near_duplicate",
    "bad_legacy",
];

/// A length option that may be zero (`allow_zero`) or must be positive.
pub fn parse_threshold(text: &str, option: &str, allow_zero: bool) -> anyhow::Result<f64> {
    let v = parse_length_m(text).map_err(|e| anyhow::anyhow!("{option}: {e}"))?;
    if v < 0.0 || (!allow_zero && v == 0.0) {
        bail!(
            "{option} {text}: give a {} length, e.g. {}",
            if allow_zero {
                "non-negative"
            } else {
                "positive"
            },
            if allow_zero { "1m" } else { "5m" }
        );
    }
    Ok(v)
}

/// Refuses a station file with repeated ids, listing all of them (the station reader
/// stops at the first).
pub fn check_duplicate_ids(path: &Path, station_col: Option<&str>) -> anyhow::Result<()> {
    let Ok(mut reader) = csv::ReaderBuilder::new()
        .flexible(true)
        .trim(csv::Trim::All)
        .from_path(path)
    else {
        return Ok(()); // the station reader reports unreadable files
    };
    let Ok(headers) = reader.headers().cloned() else {
        return Ok(());
    };
    let names: Vec<String> = match station_col {
        Some(n) => vec![n.to_string()],
        None => crate::inputs::stations::STATION_NAMES
            .iter()
            .map(|s| s.to_string())
            .collect(),
    };
    let Some(col) = names.iter().find_map(|n| {
        headers
            .iter()
            .position(|h| h.trim_start_matches('\u{feff}').eq_ignore_ascii_case(n))
    }) else {
        return Ok(());
    };
    let mut lines: HashMap<String, Vec<u64>> = HashMap::new();
    let mut order = Vec::new();
    for record in reader.records().flatten() {
        let id = record.get(col).unwrap_or("").trim().to_string();
        if id.is_empty() {
            continue;
        }
        let line = record.position().map(|p| p.line()).unwrap_or(0);
        let entry = lines.entry(id.clone()).or_default();
        if entry.is_empty() {
            order.push(id);
        }
        entry.push(line);
    }
    let repeated: Vec<String> = order
        .iter()
        .filter(|id| lines[*id].len() > 1)
        .map(|id| {
            let l: Vec<String> = lines[id].iter().map(|n| n.to_string()).collect();
            format!("{id} (lines {})", l.join(", "))
        })
        .collect();
    if !repeated.is_empty() {
        bail!(
            "{}: {} station id(s) are used more than once: {}; give each station a unique id (a re-occupied station needs its own id)",
            path.display(),
            repeated.len(),
            list_some(&repeated)
        );
    }
    Ok(())
}

/// Pairs of stations within `distance` (horizontal, m) of each other, as
/// `(i, j, distance)` with `i < j`.
pub fn near_pairs(xy: &[(f64, f64)], distance: f64) -> Vec<(usize, usize, f64)> {
    let mut order: Vec<usize> = (0..xy.len()).collect();
    order.sort_by(|&a, &b| xy[a].0.total_cmp(&xy[b].0));
    let mut pairs = Vec::new();
    for (k, &i) in order.iter().enumerate() {
        for &j in &order[k + 1..] {
            if xy[j].0 - xy[i].0 > distance {
                break;
            }
            let d = (xy[j].0 - xy[i].0).hypot(xy[j].1 - xy[i].1);
            if d <= distance {
                pairs.push((i.min(j), i.max(j), d));
            }
        }
    }
    pairs.sort_by_key(|p| (p.0, p.1));
    pairs
}

/// Value at fraction `q` (0..1) of sorted finite values, linearly interpolated.
pub fn quantile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let pos = q.clamp(0.0, 1.0) * (sorted.len() - 1) as f64;
    let i = pos.floor() as usize;
    let j = (i + 1).min(sorted.len() - 1);
    sorted[i] + (pos - i as f64) * (sorted[j] - sorted[i])
}

/// Summary statistics of differences.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stats {
    pub n: usize,
    pub mean: f64,
    pub median: f64,
    pub sd: f64,
    pub rms: f64,
    pub min: f64,
    pub max: f64,
}

/// Statistics of `values` (`None` when empty). `sd` is the sample standard deviation
/// (n - 1; 0 for one value).
pub fn stats(values: &[f64]) -> Option<Stats> {
    if values.is_empty() {
        return None;
    }
    let n = values.len();
    let mean = values.iter().sum::<f64>() / n as f64;
    let var = if n > 1 {
        values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64
    } else {
        0.0
    };
    let rms = (values.iter().map(|v| v * v).sum::<f64>() / n as f64).sqrt();
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    Some(Stats {
        n,
        mean,
        median: quantile(&sorted, 0.5),
        sd: var.sqrt(),
        rms,
        min: sorted[0],
        max: sorted[n - 1],
    })
}

/// A legacy column: its header and each station's value (`None` where it is bad).
#[derive(Debug, Clone)]
pub struct LegacyColumn {
    pub name: String,
    pub values: Vec<Option<f64>>,
}

/// Reads column `col` as legacy values; bad fields (empty, not a number) are collected
/// as "line N (station X): 'text'" into `bad`.
pub fn legacy_values(
    table: &StationTable,
    col: usize,
    bad: &mut Vec<(usize, String)>,
) -> LegacyColumn {
    let name = table.headers[col].clone();
    let values = (0..table.stations.len())
        .map(|i| {
            let text = table.records[i][col].trim();
            match text.parse::<f64>() {
                Ok(v) if v.is_finite() => Some(v),
                _ => {
                    let s = &table.stations[i];
                    bad.push((
                        i,
                        format!("line {} (station {}): {name} is '{text}'", s.line, s.id),
                    ));
                    None
                }
            }
        })
        .collect();
    LegacyColumn { name, values }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn near_pairs_finds_exactly_the_close_ones() {
        let xy = [
            (0.0, 0.0),
            (10.0, 0.0),
            (0.5, 0.0),
            (10.0, 0.9),
            (50.0, 50.0),
            (50.0, 50.0),
        ];
        let pairs = near_pairs(&xy, 1.0);
        let ij: Vec<(usize, usize)> = pairs.iter().map(|p| (p.0, p.1)).collect();
        assert_eq!(ij, [(0, 2), (1, 3), (4, 5)]);
        assert!((pairs[1].2 - 0.9).abs() < 1e-12);
        let exact = near_pairs(&xy, 0.0);
        assert_eq!(exact.len(), 1);
        assert_eq!((exact[0].0, exact[0].1), (4, 5));
    }

    #[test]
    fn statistics_of_differences() {
        let s = stats(&[1.0, -1.0, 3.0, 1.0]).unwrap();
        assert_eq!(s.n, 4);
        assert_eq!(s.mean, 1.0);
        assert_eq!(s.median, 1.0);
        assert!((s.sd - (8.0f64 / 3.0).sqrt()).abs() < 1e-12);
        assert!((s.rms - 3.0f64.sqrt()).abs() < 1e-12);
        assert_eq!((s.min, s.max), (-1.0, 3.0));
        assert!(stats(&[]).is_none());
    }

    #[test]
    fn thresholds_are_checked() {
        assert_eq!(parse_threshold("5m", "--x", false).unwrap(), 5.0);
        assert_eq!(parse_threshold("0", "--x", true).unwrap(), 0.0);
        assert!(parse_threshold("0", "--x", false).is_err());
        assert!(parse_threshold("-1m", "--x", true).is_err());
    }
}
