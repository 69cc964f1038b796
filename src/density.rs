//! A density raster: every element of the terrain correction at its own density.
//!
//! The raster (any CRS) is sampled at the centre of each DEM cell with data (nearest
//! raster cell: density maps are often of geological units, which interpolation would
//! blur), and the ratio to the reference density (`--density`) goes into the DEM's cell
//! weights, which the prisms, the block statistics (mass-weighted moments) and the sectors
//! already carry. The kernel sums are then in units of the reference density, so the
//! terrain correction is `G rho_ref K`; the inner zone's surface takes the density of the
//! station's cell. Each station's Bouguer correction takes the density under it.

use crate::app::{list_some, Inputs};
use crate::dem::read::DemHeader;
use crate::dem::Dem;
use crate::engine::coverage_with_pyramid;
use crate::engine::layers::transform_between;
use crate::engine::pyramid::Pyramid;
use crate::stations::StationTable;
use crate::units::format_length;
use anyhow::bail;
use rayon::prelude::*;
use std::path::Path;

/// Reads the density raster whole.
fn read(path: &Path) -> anyhow::Result<Dem> {
    Ok(DemHeader::open_values(path)?.read(None)?)
}

/// Checks one density value (kg/m3) found at `place`.
fn check(value: f64, raster: &Path, place: &str) -> anyhow::Result<()> {
    if value <= 0.0 {
        bail!("{}: the density {value} at {place} is not positive; give densities in kg/m3, e.g. 2670", raster.display());
    }
    if value < 100.0 {
        bail!(
            "{}: the density {value} at {place} looks like g/cm3; give kg/m3, e.g. 2670",
            raster.display()
        );
    }
    Ok(())
}

/// The density under each station (for its Bouguer correction), kg/m3; the stations are
/// in the CRS `crs_wkt`.
pub fn at_stations(path: &Path, table: &StationTable, crs_wkt: &str) -> anyhow::Result<Vec<f64>> {
    let raster = read(path)?;
    let t = transform_between(crs_wkt, &raster.crs_wkt)?;
    let mut out = Vec::with_capacity(table.stations.len());
    for s in &table.stations {
        let (x, y) = match &t {
            None => (s.x, s.y),
            Some(t) => t.convert((s.x, s.y)).map_err(|e| anyhow::anyhow!("{e}"))?,
        };
        let Some(rho) = raster.nearest(x, y) else {
            bail!(
                "{}: station {} (line {}) lies outside the density raster's data; give a raster that covers the stations and their discs",
                path.display(),
                s.id,
                s.line
            );
        };
        check(rho, path, &format!("station {} (line {})", s.id, s.line))?;
        out.push(rho);
    }
    Ok(out)
}

/// Multiplies the weights of `dem` by the raster's density over `reference`; returns the
/// grid of cells that have heights but no density (NaN there, 0 elsewhere), for the
/// coverage check.
fn weigh(dem: &mut Dem, raster: &Dem, path: &Path, reference: f64) -> anyhow::Result<Dem> {
    let t = transform_between(&dem.crs_wkt, &raster.crs_wkt)?;
    let mut weights = dem.weights.take().unwrap_or_else(|| vec![1.0; dem.len()]);
    let mut missing = Dem {
        heights: vec![0.0; dem.len()],
        weights: None,
        ..dem.clone()
    };
    let mut xs: Vec<(f64, f64)> = Vec::with_capacity(dem.cols);
    for row in 0..dem.rows {
        xs.clear();
        let y = dem.row_center_y(row);
        xs.extend((0..dem.cols).map(|c| (dem.col_center_x(c), y)));
        if let Some(t) = &t {
            t.convert_array(&mut xs)
                .map_err(|e| anyhow::anyhow!("{e}"))?;
        }
        for (col, &(x, yy)) in xs.iter().enumerate() {
            let i = row * dem.cols + col;
            if dem.heights[i].is_nan() || weights[i] == 0.0 {
                continue;
            }
            match raster.nearest(x, yy) {
                Some(rho) => {
                    check(
                        rho,
                        path,
                        &format!("the centre of {} cell ({col}, {row})", dem.source),
                    )?;
                    weights[i] *= (rho / reference) as f32;
                }
                None => {
                    weights[i] = 0.0;
                    missing.heights[i] = f32::NAN;
                }
            }
        }
    }
    dem.weights = Some(weights);
    Ok(missing)
}

/// Puts the raster's densities into the weights of every DEM of the run, and refuses
/// stations whose disc reaches past the raster's data (unless gaps are allowed).
pub fn apply(
    inputs: &mut Inputs,
    path: &Path,
    reference: f64,
    radius: f64,
    allow_gaps: bool,
) -> anyhow::Result<()> {
    let raster = read(path)?;
    let mut missing = vec![weigh(&mut inputs.dem, &raster, path, reference)?];
    for layer in &mut inputs.layers {
        missing.push(weigh(&mut layer.dem, &raster, path, reference)?);
    }
    if allow_gaps {
        return Ok(());
    }
    let points = crate::nested::points_per_dem(inputs);
    let mut short = Vec::new();
    for (grid, pts) in missing.iter().zip(&points) {
        if grid.heights.iter().all(|h| !h.is_nan()) {
            continue;
        }
        let pyramid = Pyramid::build(grid);
        let coverage: Vec<f64> = pts
            .par_iter()
            .map(|p| coverage_with_pyramid(grid, &pyramid, p.x, p.y, radius))
            .collect();
        for (s, c) in inputs.stations.stations.iter().zip(coverage) {
            if c < 1.0 {
                short.push(format!(
                    "{} ({:.4} of its disc in {})",
                    s.id, c, grid.source
                ));
            }
        }
    }
    if !short.is_empty() {
        bail!(
            "{}: the density raster does not reach over the {} disc of {} station(s) ({}); give a raster that covers them, a smaller --outer-radius, or --allow-gaps to leave those cells out",
            path.display(),
            format_length(radius),
            short.len(),
            list_some(&short)
        );
    }
    Ok(())
}
