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
//! both lowered by the curvature drop in the spherical convention (SCIENCE.md section 9).
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
//! Bouguer slab (SCIENCE.md section 9; checked in `tests/reduction.rs`).
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
//! # Cost
//!
//! Two more engine runs over every station (plus one block pyramid each for the zoned
//! method).

use crate::app::with_threads;
use crate::dem::read::{read_dem, same_crs};
use crate::dem::Dem;
use crate::engine::{Engine, EngineConfig, InnerModel, Point};
use crate::stations::StationTable;
use crate::units::{parse_length_m, to_mgal, G};
use crate::zones::ZonePlan;
use anyhow::{bail, Context};
use std::path::PathBuf;

/// How far a station may be below the water surface of its own cell (survey and water
/// level differences) before it counts as under water, m. Our choice.
pub const SUBMERGED_TOLERANCE_M: f64 = 1.0;

/// Where the water surface is.
#[derive(Debug, Clone, PartialEq)]
pub enum WaterSurface {
    /// One level everywhere, m on the DEM's vertical datum (0: sea level).
    Level(f64),
    /// A raster of the water surface in the DEM's CRS; nodata means no water.
    Raster(PathBuf),
}

/// Checked water settings.
#[derive(Debug, Clone, PartialEq)]
pub struct WaterSettings {
    /// Density of the water, kg/m3 (0 allowed: the cells are then air).
    pub density_kg_m3: f64,
    pub surface: WaterSurface,
}

/// Checks a water density: 0 (air) or a plausible water density in kg/m3.
pub fn check_water_density(value: f64) -> anyhow::Result<f64> {
    let option = "--water-density";
    if !value.is_finite() || value < 0.0 {
        bail!("{option} {value}: a density must be zero or positive; give kg/m3, e.g. 1027 for sea water or 1000 for fresh water");
    }
    if value > 0.0 && value < 100.0 {
        bail!("{option} {value}: this looks like g/cm3; give kg/m3, e.g. 1027 for sea water or 1000 for fresh water");
    }
    if value > 1500.0 {
        bail!("{option} {value}: no natural water is this dense; give kg/m3, e.g. 1027 for sea water or 1000 for fresh water");
    }
    Ok(value)
}

impl WaterSettings {
    /// The water settings of the command line, `None` when water is off.
    pub fn from_args(
        density: Option<f64>,
        surface: Option<&str>,
    ) -> anyhow::Result<Option<WaterSettings>> {
        let Some(density) = density else {
            if let Some(s) = surface {
                bail!("--water-surface {s} needs --water-density (1027 for sea water, 1000 for fresh water)");
            }
            return Ok(None);
        };
        let density_kg_m3 = check_water_density(density)?;
        let surface = match surface {
            None => WaterSurface::Level(0.0),
            Some(text) => match parse_length_m(text) {
                Ok(level) => WaterSurface::Level(level),
                Err(_) => {
                    let path = PathBuf::from(text);
                    if !path.is_file() {
                        bail!("--water-surface {text}: neither a level (e.g. 0 or 412.5m) nor an existing raster file; give one of these");
                    }
                    WaterSurface::Raster(path)
                }
            },
        };
        Ok(Some(WaterSettings {
            density_kg_m3,
            surface,
        }))
    }

    /// How the settings read in a sentence (for messages and documents).
    pub fn describe(&self) -> String {
        match &self.surface {
            WaterSurface::Level(l) => format!(
                "water of {} kg/m3 below the level {} m",
                self.density_kg_m3, l
            ),
            WaterSurface::Raster(p) => format!(
                "water of {} kg/m3 below the surface in {}",
                self.density_kg_m3,
                p.display()
            ),
        }
    }
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
    /// Builds the grids for `dem` (the bottom) and the water settings.
    pub fn build(dem: &Dem, settings: &WaterSettings) -> anyhow::Result<WaterGrids> {
        let surface: Vec<f32> = match &settings.surface {
            WaterSurface::Level(level) => vec![*level as f32; dem.len()],
            WaterSurface::Raster(path) => {
                let raster = read_dem(path).map_err(|e| anyhow::anyhow!("--water-surface: {e}"))?;
                if !raster.crs_wkt.is_empty()
                    && !dem.crs_wkt.is_empty()
                    && !same_crs(&raster.crs_wkt, &dem.crs_wkt)
                {
                    bail!(
                        "--water-surface {}: the raster is not in the CRS of {}; reproject it to the DEM's CRS (e.g. gdalwarp -t_srs with the DEM's CRS)",
                        path.display(),
                        dem.source
                    );
                }
                let mut values = Vec::with_capacity(dem.len());
                for row in 0..dem.rows {
                    let y = dem.row_center_y(row);
                    for col in 0..dem.cols {
                        let x = dem.col_center_x(col);
                        values.push(raster.bilinear(x, y).map_or(f32::NAN, |w| w as f32));
                    }
                }
                if values.iter().all(|w| w.is_nan()) {
                    bail!(
                        "--water-surface {}: the raster has no water surface over any cell of {}; check that it covers the DEM",
                        path.display(),
                        dem.source
                    );
                }
                values
            }
        };
        Ok(WaterGrids::from_surface(
            dem,
            surface,
            settings.density_kg_m3,
        ))
    }

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

    /// Refuses stations under water, and stations over water with the surface inner
    /// model (see the module documentation).
    pub fn check_stations(
        &self,
        dem: &Dem,
        table: &StationTable,
        inner_model: InnerModel,
    ) -> anyhow::Result<()> {
        for s in &table.stations {
            let Some((w, b)) = self.wet_at(dem, s.x, s.y) else {
                continue;
            };
            let place = format!("{} line {}: station {}", table.path.display(), s.line, s.id);
            if s.elev < w - SUBMERGED_TOLERANCE_M {
                bail!(
                    "{place} is {:.3} m below the water surface of its DEM cell ({w:.3} m, bottom {b:.3} m): stations under water are not supported; if this ground is dry land below the water level, give a --water-surface raster with nodata there",
                    w - s.elev
                );
            }
            if inner_model == InnerModel::Surface {
                bail!(
                    "{place} stands over water in the DEM (its cell's bottom {b:.3} m is below the water surface {w:.3} m); the surface inner model would raise the bottom to the station: use --inner-model prisms, or check the station's position"
                );
            }
        }
        Ok(())
    }

    /// Kernel sums `K(min(B, W)) - K(W)` of every point, m, with the prisms inner model.
    pub fn kernel_difference_m(
        &self,
        config: EngineConfig,
        plan: &ZonePlan,
        points: &[Point],
        threads: Option<usize>,
        quiet: bool,
    ) -> anyhow::Result<Vec<f64>> {
        let config = EngineConfig {
            inner_model: InnerModel::Prisms,
            ..config
        };
        let run = |grid: &Dem, what: &str| -> anyhow::Result<Vec<f64>> {
            let engine = Engine::new(grid, config, plan.clone());
            let bar = crate::progress::station_bar(points.len() as u64, quiet, what);
            let results = with_threads(threads, || engine.compute_all(points, &|| bar.inc(1)))
                .context("the water correction")?;
            bar.finish_and_clear();
            Ok(results.iter().map(|r| r.kernel_sum_m()).collect())
        };
        let lower = run(&self.lower, "stations (water bottom)")?;
        let upper = run(&self.upper, "stations (water surface)")?;
        Ok(lower.iter().zip(&upper).map(|(l, u)| l - u).collect())
    }

    /// The water's part of the terrain correction from a kernel difference, mGal.
    pub fn effect_mgal(&self, kernel_difference_m: f64) -> f64 {
        -to_mgal(G * self.density_kg_m3 * kernel_difference_m)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::{Convention, Method};

    #[test]
    fn water_settings_from_the_command_line() {
        assert_eq!(WaterSettings::from_args(None, None).unwrap(), None);
        let sea = WaterSettings::from_args(Some(1027.0), None)
            .unwrap()
            .unwrap();
        assert_eq!(sea.surface, WaterSurface::Level(0.0));
        let lake = WaterSettings::from_args(Some(1000.0), Some("412.5m"))
            .unwrap()
            .unwrap();
        assert_eq!(lake.surface, WaterSurface::Level(412.5));
        let low = WaterSettings::from_args(Some(1000.0), Some("-28"))
            .unwrap()
            .unwrap();
        assert_eq!(low.surface, WaterSurface::Level(-28.0));
        assert!(WaterSettings::from_args(Some(0.0), None).unwrap().is_some());
        let e = WaterSettings::from_args(Some(1000.0), Some("no_such.tif"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("neither a level"), "{e}");
        let e = WaterSettings::from_args(None, Some("0"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("needs --water-density"), "{e}");
        for (bad, word) in [
            (-1.0, "zero or positive"),
            (1.027, "g/cm3"),
            (2670.0, "dense"),
        ] {
            let e = check_water_density(bad).unwrap_err().to_string();
            assert!(e.contains(word), "{bad}: {e}");
        }
    }

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

    #[test]
    fn a_water_layer_is_the_difference_of_two_bodies() {
        // A cell-exact pond 5 m deep next to the station: the water's effect must equal
        // minus the attraction of the water prisms, summed here prism by prism.
        let dem = Dem::from_fn("pond", 41, 41, -205.0, 205.0, 10.0, |x, y| {
            if (x - 60.0).abs() < 30.0 && (y + 10.0).abs() < 20.0 {
                95.0
            } else {
                100.0
            }
        });
        let grids = WaterGrids::from_surface(&dem, vec![100.0; dem.len()], 1000.0);
        assert_eq!(grids.wet_cells, 5 * 3);
        let config = EngineConfig {
            outer_radius_m: 190.0,
            convention: Convention::Planar,
            method: Method::Exact,
            inner_model: InnerModel::Surface,
        };
        let plan = ZonePlan::auto(10.0, 190.0, &crate::zones::AutoSettings::default());
        let p = Point {
            x: 3.0,
            y: -2.0,
            elev: 100.0,
        };
        let k = grids
            .kernel_difference_m(config, &plan, &[p], Some(1), true)
            .unwrap();
        let mut direct = 0.0;
        for row in 0..dem.rows {
            for col in 0..dem.cols {
                let b = dem.height(col, row).unwrap();
                if b < 100.0 {
                    let (e, n) = (dem.col_center_x(col) - p.x, dem.row_center_y(row) - p.y);
                    // Upward attraction per unit G rho of the water prism from b to 100.
                    direct += crate::kernels::prism_kernel(
                        e - 5.0,
                        e + 5.0,
                        n - 5.0,
                        n + 5.0,
                        0.0,
                        b - p.elev,
                    );
                }
            }
        }
        // K(min(B,W)) - K(W) is the kernel of the layer; the effect is -G rho_w times it.
        assert!(
            (k[0] - direct).abs() < 1e-12 * direct.abs().max(1.0),
            "{} {direct}",
            k[0]
        );
        assert!(grids.effect_mgal(k[0]) < 0.0);
    }
}
