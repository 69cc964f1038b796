//! Water bodies (lakes, sea) in the terrain correction.
//!
//! With water turned on, the DEM is the **bottom** `B` (land surface and bathymetry) and
//! a water surface `W` is given: a constant level (sea level 0 by default) or a raster of
//! the lake or sea surface, resampled bilinearly to the DEM's cell centres. A DEM cell with
//! `B < W` holds water of density `rho_w` from `B` up to `W` instead of air.
//!
//! # Model
//!
//! In a wet cell the missing mass against the Bouguer reference is air from `W` up to the
//! station (contrast `rho_r`) plus water from `B` up to `W` (contrast `rho_r - rho_w`),
//! both lowered by the curvature drop in the spherical convention (derived again below).
//! Write `K(H)` for the engine's kernel sum (m) of the terrain heights `H`: the terrain
//! correction of rock of density `rho` is `G rho K(B)`, and `K` is additive in height
//! intervals (each element integrates the vertical kernel from the station's level, both
//! ends lowered by the same drop). The water layer between `B` and `W` in wet cells is
//! therefore the difference of two terrain bodies, `min(B, W)` and `W`, and its effect is
//!
//! ```text
//! tc_water = -G rho_w [ K(min(B, W)) - K(W) ]
//! tc       = G rho_r K(B) + tc_water
//! ```
//!
//! In dry cells `min(B, W) = W`, so the two bodies agree there and cancel; cells where the
//! raster has no water surface get the same value in both grids too. For a station at sea
//! level above an ocean of depth `D` (`W = 0` = the station's height, so `K(W) = 0`) this
//! gives `G (rho_r - rho_w) K(B)`, which tends to `2 pi G (rho_r - rho_w) D`, the marine
//! Bouguer slab (Bullard A with the rock-water contrast; checked in `tests/reduction.rs`).
//!
//! Both water bodies are run with the **prisms** inner model, whatever the rock run uses:
//! the surface inner model shifts the surface under the station to the station's height,
//! which is right for the ground the station stands on but wrong for a water bottom or a
//! water surface. For the same reason a station whose own DEM cell is under water (a
//! station on a boat or the shore cell of a lake) is refused with the surface inner model:
//! it would raise the water bottom to the station. A station more than
//! [`SUBMERGED_TOLERANCE_M`] below the water surface of its cell (on the sea floor or a lake
//! bed) is refused in any case: its Bouguer reduction needs the water above it, which this
//! model does not do.
//!
//! # Several DEMs
//!
//! Each DEM of the set gets its own pair of bodies on its own cells (with its weights,
//! the share of each cell no finer DEM covers), so the water layer is taken, like the
//! rock, from the finest DEM with data at each place. A surface raster may be in any CRS:
//! each DEM's cell centres are moved into it.
//!
//! # Cost
//!
//! Two more engine runs over every station (plus one block pyramid per DEM for each).

use crate::config::{WaterSettings, WaterSurface};
use crate::dem::crs::Transform;
use crate::dem::read::read_dem;
use crate::dem::Dem;
use crate::engine::InnerModel;
use anyhow::bail;

/// How far a station may be below the water surface of its own cell (survey and water
/// level differences) before it counts as under water, m. Our choice.
pub const SUBMERGED_TOLERANCE_M: f64 = 1.0;

/// Why a point cannot be computed with water on.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum WaterProblem {
    /// The point is more than [`SUBMERGED_TOLERANCE_M`] below the water surface of its
    /// cell: (surface, bottom), m.
    Submerged(f64, f64),
    /// The point's cell is wet and the surface inner model would raise the bottom to it:
    /// (surface, bottom), m.
    OverWater(f64, f64),
}

/// The water bodies of every DEM of a set, finest first.
#[derive(Debug, Clone)]
pub struct WaterSet {
    pub per_dem: Vec<WaterGrids>,
    pub density_kg_m3: f64,
}

impl WaterSet {
    /// Builds the bodies for every DEM (the bottoms), before any density raster enters
    /// the DEMs' weights.
    pub fn build(dems: &[Dem], settings: &WaterSettings) -> anyhow::Result<WaterSet> {
        let raster = match &settings.surface {
            WaterSurface::Level(_) => None,
            WaterSurface::Raster(path) => Some((
                path,
                read_dem(path).map_err(|e| anyhow::anyhow!("--water-surface: {e}"))?,
            )),
        };
        let mut per_dem = Vec::with_capacity(dems.len());
        for dem in dems {
            let surface = match (&settings.surface, &raster) {
                (WaterSurface::Level(level), _) => vec![*level as f32; dem.len()],
                (WaterSurface::Raster(_), Some((path, r))) => surface_on(dem, path, r)?,
                _ => unreachable!("a raster surface is read above"),
            };
            per_dem.push(WaterGrids::from_surface(
                dem,
                surface,
                settings.density_kg_m3,
            ));
        }
        if let Some((path, _)) = &raster {
            if per_dem.iter().all(|g| g.surface.iter().all(|w| w.is_nan())) {
                bail!(
                    "--water-surface {}: the raster has no water surface over any cell of the DEMs; check that it covers them",
                    path.display()
                );
            }
        }
        Ok(WaterSet {
            per_dem,
            density_kg_m3: settings.density_kg_m3,
        })
    }

    /// The bodies `min(B, W)` (one per DEM).
    pub fn lower(&self) -> Vec<&Dem> {
        self.per_dem.iter().map(|g| &g.lower).collect()
    }

    /// The bodies `W` (one per DEM).
    pub fn upper(&self) -> Vec<&Dem> {
        self.per_dem.iter().map(|g| &g.upper).collect()
    }

    /// What keeps a point (at height `elev`, in the cell of DEM `serving` holding
    /// `(x, y)`) from being computed with water, if anything.
    pub fn problem(
        &self,
        dems: &[Dem],
        serving: usize,
        x: f64,
        y: f64,
        elev: f64,
        inner_model: InnerModel,
    ) -> Option<WaterProblem> {
        let (w, b) = self.per_dem[serving].wet_at(&dems[serving], x, y)?;
        if elev < w - SUBMERGED_TOLERANCE_M {
            return Some(WaterProblem::Submerged(w, b));
        }
        (inner_model == InnerModel::Surface).then_some(WaterProblem::OverWater(w, b))
    }
}

impl WaterProblem {
    /// The refusal for a station (`place` names file, line and station).
    pub fn sentence(&self, place: &str, elev: f64) -> String {
        match *self {
            WaterProblem::Submerged(w, b) => format!(
                "{place} is {:.3} m below the water surface of its DEM cell ({w:.3} m, bottom {b:.3} m): stations under water are not supported; if this ground is dry land below the water level, give a --water-surface raster with nodata there",
                w - elev
            ),
            WaterProblem::OverWater(w, b) => format!(
                "{place} stands over water in the DEM (its cell's bottom {b:.3} m is below the water surface {w:.3} m); the surface inner model would raise the bottom to the station: use --inner-model prisms, or check the station's position"
            ),
        }
    }
}

/// The surface raster at every cell centre of `dem` (NaN where it has none), bilinear,
/// through the CRS transformation when the raster's CRS is another.
fn surface_on(dem: &Dem, path: &std::path::Path, raster: &Dem) -> anyhow::Result<Vec<f32>> {
    let t = Transform::between(
        &dem.crs_wkt,
        &raster.crs_wkt,
        &dem.source,
        &path.display().to_string(),
    )?;
    let mut values = Vec::with_capacity(dem.len());
    let mut row_points = Vec::with_capacity(dem.cols);
    for row in 0..dem.rows {
        let y = dem.row_center_y(row);
        row_points.clear();
        row_points.extend((0..dem.cols).map(|c| (dem.col_center_x(c), y)));
        t.convert_all(&mut row_points)?;
        values.extend(
            row_points
                .iter()
                .map(|&(x, y)| raster.bilinear(x, y).map_or(f32::NAN, |w| w as f32)),
        );
    }
    Ok(values)
}

/// The two terrain bodies whose difference is the water layer, on the DEM's grid.
#[derive(Debug, Clone)]
pub struct WaterGrids {
    /// `min(B, W)` in cells with a water surface, `B` elsewhere; NaN where the DEM is.
    pub lower: Dem,
    /// `W` in cells with a water surface, `B` elsewhere; NaN where the DEM is.
    pub upper: Dem,
    /// Water surface at each cell (NaN: none), m.
    pub surface: Vec<f32>,
    /// Number of wet cells (`B < W`).
    pub wet_cells: usize,
    /// Water density, kg/m3.
    pub density_kg_m3: f64,
}

impl WaterGrids {
    /// Builds the grids from a water surface given at every cell of `dem` (NaN: none).
    pub fn from_surface(dem: &Dem, surface: Vec<f32>, density_kg_m3: f64) -> WaterGrids {
        assert_eq!(surface.len(), dem.len(), "one water level per DEM cell");
        let mut lower = dem.clone();
        let mut upper = dem.clone();
        lower.source = format!("{} (water bottom)", dem.source);
        upper.source = format!("{} (water surface)", dem.source);
        let mut wet_cells = 0;
        for (i, (&b, &w)) in dem.heights.iter().zip(&surface).enumerate() {
            if b.is_nan() || w.is_nan() {
                continue;
            }
            if b < w {
                wet_cells += 1;
            }
            lower.heights[i] = b.min(w);
            upper.heights[i] = w;
        }
        WaterGrids {
            lower,
            upper,
            surface,
            wet_cells,
            density_kg_m3,
        }
    }

    /// Water surface and bottom of the DEM cell holding `(x, y)`, when it is wet.
    pub fn wet_at(&self, dem: &Dem, x: f64, y: f64) -> Option<(f64, f64)> {
        if !dem.contains(x, y) {
            return None;
        }
        let col = (((x - dem.x_left) / dem.dx) as usize).min(dem.cols - 1);
        let row = (((dem.y_top - y) / dem.dy) as usize).min(dem.rows - 1);
        let i = row * dem.cols + col;
        let (b, w) = (dem.heights[i], self.surface[i]);
        (b < w).then_some((w as f64, b as f64))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grids_hold_the_layer_and_agree_where_dry() {
        let mut dem = Dem::from_fn("t", 4, 1, 0.0, 10.0, 10.0, |x, _| x - 20.0);
        dem.heights[3] = f32::NAN;
        // Bottom -15, -5, 5, nodata; surface 0 except none at the second cell.
        let grids = WaterGrids::from_surface(&dem, vec![0.0, f32::NAN, 0.0, 0.0], 1027.0);
        assert_eq!(grids.wet_cells, 1);
        assert_eq!(grids.lower.heights[..3], [-15.0, -5.0, 0.0]);
        assert_eq!(grids.upper.heights[..3], [0.0, -5.0, 0.0]);
        assert!(grids.lower.heights[3].is_nan() && grids.upper.heights[3].is_nan());
        assert_eq!(grids.wet_at(&dem, 5.0, 5.0), Some((0.0, -15.0)));
        assert_eq!(grids.wet_at(&dem, 15.0, 5.0), None);
        assert_eq!(grids.wet_at(&dem, 25.0, 5.0), None);
    }
}
