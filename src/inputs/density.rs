//! A density raster: every element of the terrain correction at its own density.
//!
//! The raster (any CRS) is sampled at the centre of each DEM cell with data (nearest
//! raster cell: density maps are often of geological units, which interpolation would
//! blur), and the ratio to the reference density (`--density`) goes into the DEMs' cell
//! weights, which the prisms, the block statistics (mass-weighted moments) and the sectors
//! already carry. The kernel sums are then in units of the reference density, so the
//! terrain correction is `G rho_ref K`; the inner zone's surface takes the density of the
//! station's cell. Each station's Bouguer correction takes the density under it. With
//! several DEMs every DEM of the set is weighted the same way.

use crate::dem::crs::Transform;
use crate::dem::read::DemHeader;
use crate::dem::Dem;
use crate::engine::pyramid::Pyramid;
use crate::engine::{coverage_with_pyramid, run, Point};
use crate::text::list_some;
use crate::units::format_length;
use anyhow::bail;
use std::path::{Path, PathBuf};

/// A density raster, read whole.
pub struct DensityRaster {
    path: PathBuf,
    raster: Dem,
}

impl DensityRaster {
    /// Reads the raster.
    pub fn read(path: &Path) -> anyhow::Result<DensityRaster> {
        Ok(DensityRaster {
            path: path.to_path_buf(),
            raster: DemHeader::open_values(path)?.read(None)?,
        })
    }

    fn transform_from(&self, crs_wkt: &str, name: &str) -> anyhow::Result<Transform> {
        Ok(Transform::between(
            crs_wkt,
            &self.raster.crs_wkt,
            name,
            &self.path.display().to_string(),
        )?)
    }

    /// Checks one density value (kg/m3) found at `place`.
    fn check(&self, value: f64, place: &str) -> anyhow::Result<()> {
        let raster = self.path.display();
        if value <= 0.0 {
            bail!("{raster}: the density {value} at {place} is not positive; give densities in kg/m3, e.g. 2670");
        }
        if value < 100.0 {
            bail!(
                "{raster}: the density {value} at {place} looks like g/cm3; give kg/m3, e.g. 2670"
            );
        }
        Ok(())
    }

    /// The density under each point `xy` (in the CRS `crs_wkt`), kg/m3; `what(i)` names
    /// point `i` in a message.
    pub fn at_points(
        &self,
        crs_wkt: &str,
        xy: &[(f64, f64)],
        what: &dyn Fn(usize) -> String,
    ) -> anyhow::Result<Vec<f64>> {
        let t = self.transform_from(crs_wkt, "the stations' CRS")?;
        let mut out = Vec::with_capacity(xy.len());
        for (i, &(x, y)) in xy.iter().enumerate() {
            let rho = t
                .convert(x, y)
                .ok()
                .and_then(|(u, v)| self.raster.nearest(u, v));
            let Some(rho) = rho else {
                bail!(
                    "{}: {} lies outside the density raster's data; give a raster that covers the stations and their discs",
                    self.path.display(),
                    what(i)
                );
            };
            self.check(rho, &what(i))?;
            out.push(rho);
        }
        Ok(out)
    }

    /// Multiplies the weights of `dem` by the raster's density over `reference`; returns
    /// the grid of cells that have heights but no density (NaN there, 0 elsewhere), for
    /// the coverage check.
    fn weigh(&self, dem: &mut Dem, reference: f64) -> anyhow::Result<Dem> {
        let t = self.transform_from(&dem.crs_wkt, &dem.source.clone())?;
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
            t.convert_all(&mut xs)?;
            for (col, &(x, yy)) in xs.iter().enumerate() {
                let i = row * dem.cols + col;
                if dem.heights[i].is_nan() || weights[i] == 0.0 {
                    continue;
                }
                match self.raster.nearest(x, yy) {
                    Some(rho) => {
                        self.check(
                            rho,
                            &format!("the centre of {} cell ({col}, {row})", dem.source),
                        )?;
                        weights[i] *= (rho / reference) as f32;
                    }
                    None => {
                        // No density, no terrain: the cell counts as a gap of the DEM.
                        weights[i] = 0.0;
                        dem.heights[i] = f32::NAN;
                        missing.heights[i] = f32::NAN;
                    }
                }
            }
        }
        dem.weights = Some(weights);
        Ok(missing)
    }

    /// Puts the raster's densities into the weights of every DEM (cells without a
    /// density become nodata), and refuses points whose disc of `radius` (m) reaches past
    /// the raster's data unless `allow_gaps`;
    /// `points[k]` are the points in DEM `k`'s CRS, `name(i)` names point `i`.
    pub fn apply(
        &self,
        dems: &mut [Dem],
        reference: f64,
        points: &[Vec<Point>],
        radius: f64,
        allow_gaps: bool,
        name: &dyn Fn(usize) -> String,
    ) -> anyhow::Result<()> {
        let mut missing = Vec::with_capacity(dems.len());
        for dem in dems.iter_mut() {
            missing.push(self.weigh(dem, reference)?);
        }
        if allow_gaps {
            return Ok(());
        }
        let mut short = Vec::new();
        for (grid, pts) in missing.iter().zip(points) {
            if grid.heights.iter().all(|h| !h.is_nan()) {
                continue;
            }
            let pyramid = Pyramid::build(grid);
            let coverage = run::map_items(pts, |p| {
                coverage_with_pyramid(grid, &pyramid, p.x, p.y, radius)
            });
            for (i, c) in coverage.into_iter().enumerate() {
                if c < 1.0 {
                    short.push(format!(
                        "{} ({:.4} of its disc in {})",
                        name(i),
                        c,
                        grid.source
                    ));
                }
            }
        }
        if !short.is_empty() {
            bail!(
                "{}: the density raster does not reach over the {} disc of {} station(s) ({}); give a raster that covers them, a smaller --outer-radius, or --allow-gaps to leave those cells out",
                self.path.display(),
                format_length(radius),
                short.len(),
                list_some(&short)
            );
        }
        Ok(())
    }
}
