//! The grids of `map`: nodes at whole multiples of the spacing, the extent they cover,
//! and the size bound.

use crate::text::bytes_text;
use crate::units::format_length;
use anyhow::bail;

/// Largest grid `map` computes, nodes (about 1.6 GB of grid values while writing).
pub const MAX_NODES: f64 = 2e8;

/// Bytes per node while the grid is computed and written (a 4-byte value and its copy
/// in the writer's buffer).
pub const BYTES_PER_NODE: f64 = 8.0;

/// A regular grid of nodes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NodeGrid {
    /// Easting of the westernmost nodes, m.
    pub x_first: f64,
    /// Northing of the northernmost nodes, m.
    pub y_first: f64,
    pub spacing: f64,
    pub cols: usize,
    pub rows: usize,
}

impl NodeGrid {
    /// Western edge of the GeoTIFF cells (half a spacing west of the first node).
    pub fn x_left(&self) -> f64 {
        self.x_first - 0.5 * self.spacing
    }
    /// Northern edge of the GeoTIFF cells.
    pub fn y_top(&self) -> f64 {
        self.y_first + 0.5 * self.spacing
    }
    /// Position of node `(col, row)`, m.
    pub fn node(&self, col: usize, row: usize) -> (f64, f64) {
        (
            self.x_first + col as f64 * self.spacing,
            self.y_first - row as f64 * self.spacing,
        )
    }
    pub fn len(&self) -> usize {
        self.cols * self.rows
    }
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

/// The node counts of the grid at `spacing` over the extent `(xmin, ymin, xmax, ymax)`,
/// as (first node index, count) along each axis, in floating point (the count may be too
/// large for memory).
fn axis(lo: f64, hi: f64, spacing: f64) -> (f64, f64) {
    let first = (lo / spacing - 1e-9).ceil();
    let last = (hi / spacing + 1e-9).floor();
    (first, (last - first + 1.0).max(0.0))
}

/// A spacing of 1, 2 or 5 times a power of ten at least `spacing * sqrt(nodes / limit)`.
pub fn suggest_spacing(spacing: f64, nodes: f64, limit: f64) -> f64 {
    next_125(spacing * (nodes / limit).sqrt() * 1.0001)
}

/// The smallest of 1, 2 or 5 times a power of ten that is at least `need` (> 0, finite).
fn next_125(need: f64) -> f64 {
    let mut p = 10f64.powf(need.log10().floor());
    loop {
        for m in [1.0, 2.0, 5.0] {
            if m * p >= need {
                return m * p;
            }
        }
        p *= 10.0;
    }
}

/// The finest 1-2-5 spacing whose grid over `extent` holds at most [`MAX_NODES`], with
/// its node count; `None` when the extent is too large for any.
fn fitting_spacing(extent: (f64, f64, f64, f64), spacing: f64) -> Option<(f64, f64)> {
    let (xmin, ymin, xmax, ymax) = extent;
    let count = |s: f64| axis(xmin, xmax, s).1 * axis(ymin, ymax, s).1;
    // The grid's nodes fill its area at one per spacing squared, at least.
    let from_area = ((xmax - xmin) * (ymax - ymin) / MAX_NODES).sqrt();
    let from_count = spacing * (count(spacing) / MAX_NODES).sqrt();
    let start = [from_area, from_count]
        .into_iter()
        .filter(|v| v.is_finite() && *v > 0.0)
        .fold(spacing, f64::max);
    let mut s = next_125(start * 1.0001);
    for _ in 0..64 {
        let n = count(s);
        if !s.is_finite() || !n.is_finite() {
            return None;
        }
        if n <= MAX_NODES {
            return Some((s, n));
        }
        s = next_125(s * 1.5);
    }
    None
}

/// A node count along an axis: digits up to a billion, else in powers of ten.
fn count_text(n: f64) -> String {
    if n < 1e9 {
        format!("{n:.0}")
    } else {
        total_text(n)
    }
}

/// A grid's node count, in powers of ten.
fn total_text(n: f64) -> String {
    if n.is_finite() {
        format!("{n:.2e}")
    } else {
        "more than 1e308".to_string()
    }
}

/// The node grid over an extent, refused when it holds no node or more than
/// [`MAX_NODES`].
pub fn node_grid(extent: (f64, f64, f64, f64), spacing: f64) -> anyhow::Result<NodeGrid> {
    let (xmin, ymin, xmax, ymax) = extent;
    let (kx, nx) = axis(xmin, xmax, spacing);
    let (_, ny) = axis(ymin, ymax, spacing);
    if nx < 1.0 || ny < 1.0 {
        bail!(
            "the extent ({:.1} to {:.1} east, {:.1} to {:.1} north) holds no multiple of the {} spacing; give a smaller --spacing or a larger --extent",
            xmin,
            xmax,
            ymin,
            ymax,
            format_length(spacing)
        );
    }
    let nodes = nx * ny;
    if nodes > MAX_NODES {
        let fix = match fitting_spacing(extent, spacing) {
            Some((better, n)) => format!(
                "give --spacing {} ({} nodes) or a smaller --extent",
                format_length(better),
                total_text(n)
            ),
            None => "give a much smaller --extent".to_string(),
        };
        let bytes = nodes * BYTES_PER_NODE;
        let memory = if bytes.is_finite() {
            format!("would need about {} and ", bytes_text(bytes))
        } else {
            String::new()
        };
        bail!(
            "a grid of {} x {} = {} nodes at {} spacing {memory}is over the limit of {:.0e} nodes; {fix}",
            count_text(nx),
            count_text(ny),
            total_text(nodes),
            format_length(spacing),
            MAX_NODES,
        );
    }
    let top = (ymax / spacing + 1e-9).floor();
    Ok(NodeGrid {
        x_first: kx * spacing,
        y_first: top * spacing,
        spacing,
        cols: nx as usize,
        rows: ny as usize,
    })
}

/// The extent named by `--extent`, `(xmin, ymin, xmax, ymax)`: `dem` is `finest`
/// (`(x_lo, x_hi, y_lo, y_hi)` of the finest DEM, named `name`) inset by `inset` grid
/// units east-west and north-south (the outer radius `radius_m`, or 0); `stations` the
/// stations' box widened by one spacing; or four numbers.
pub fn extent_of(
    text: &str,
    finest: (f64, f64, f64, f64),
    name: &str,
    inset: (f64, f64),
    radius_m: f64,
    stations: Option<&[(f64, f64)]>,
    spacing: f64,
) -> anyhow::Result<(f64, f64, f64, f64)> {
    match text.trim() {
        "dem" => {
            let (x0, x1, y0, y1) = finest;
            let e = (x0 + inset.0, y0 + inset.1, x1 - inset.0, y1 - inset.1);
            if e.0 > e.2 || e.1 > e.3 {
                bail!(
                    "{name} is too small for a {} outer radius: no node would have the whole disc on the DEM; give a smaller --outer-radius, --allow-gaps, another DEM around it, or --extent",
                    format_length(radius_m)
                );
            }
            Ok(e)
        }
        "stations" => {
            let Some(xy) = stations else {
                bail!("--extent stations needs --stations PATH");
            };
            let (mut e, mut n) = (
                (f64::INFINITY, f64::INFINITY),
                (f64::NEG_INFINITY, f64::NEG_INFINITY),
            );
            for &(x, y) in xy {
                e = (e.0.min(x), e.1.min(y));
                n = (n.0.max(x), n.1.max(y));
            }
            Ok((e.0 - spacing, e.1 - spacing, n.0 + spacing, n.1 + spacing))
        }
        other => {
            let parts: Vec<&str> = other.split(',').map(str::trim).collect();
            let bad = || {
                anyhow::anyhow!(
                    "--extent {other}: give dem, stations, or XMIN,YMIN,XMAX,YMAX in the DEM's CRS (m), e.g. 500000,5000000,520000,5020000"
                )
            };
            if parts.len() != 4 {
                return Err(bad());
            }
            let v: Vec<f64> = parts
                .iter()
                .map(|p| p.parse::<f64>().ok().filter(|v| v.is_finite()))
                .collect::<Option<_>>()
                .ok_or_else(bad)?;
            if v[0] >= v[2] || v[1] >= v[3] {
                bail!(
                    "--extent {other}: XMIN must be below XMAX and YMIN below YMAX; give XMIN,YMIN,XMAX,YMAX"
                );
            }
            Ok((v[0], v[1], v[2], v[3]))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nodes_sit_on_multiples_of_the_spacing() {
        let g = node_grid((1010.0, 2020.0, 1990.0, 2990.0), 250.0).unwrap();
        assert_eq!((g.cols, g.rows), (3, 3));
        assert_eq!(g.node(0, 0), (1250.0, 2750.0));
        assert_eq!(g.node(2, 2), (1750.0, 2250.0));
        assert_eq!(g.x_left(), 1125.0);
        assert_eq!(g.y_top(), 2875.0);
        // Edges on multiples are inside.
        let g = node_grid((0.0, 0.0, 1000.0, 500.0), 250.0).unwrap();
        assert_eq!((g.cols, g.rows), (5, 3));
        assert!(node_grid((10.0, 10.0, 20.0, 20.0), 250.0).is_err());
    }

    #[test]
    fn large_grids_are_refused_with_a_spacing_that_fits() {
        let e = node_grid((0.0, 0.0, 400_000.0, 400_000.0), 10.0)
            .unwrap_err()
            .to_string();
        assert!(e.contains("40001 x 40001 = 1.60e9 nodes"), "{e}");
        assert!(e.contains("12.8 GB"), "{e}");
        assert!(e.contains("--spacing 50m"), "{e}");
        assert_eq!(suggest_spacing(10.0, 1.6e9, 2e8), 50.0);
        assert_eq!(suggest_spacing(250.0, 4e8, 2e8), 500.0);
        // Absurd sizes give a short sentence and a spacing that fits.
        for (extent, spacing) in [
            ((0.0, 0.0, 10_000.0, 10_000.0), 1e-300),
            ((0.0, 0.0, 1e30, 1e30), 100.0),
            ((-1e300, -1e300, 1e300, 1e300), 1.0),
        ] {
            let e = node_grid(extent, spacing).unwrap_err().to_string();
            assert!(e.len() < 300, "{e}");
            assert!(!e.contains("inf") && !e.contains("NaN"), "{e}");
        }
        let e = node_grid((0.0, 0.0, 10_000.0, 10_000.0), 1e-300)
            .unwrap_err()
            .to_string();
        assert!(e.contains("--spacing 1m (1.00e8 nodes)"), "{e}");
    }
}
