//! Several DEMs in one run, finest first: every place of the disc is integrated from the
//! finest DEM with data there.
//!
//! Each coarser DEM gets a weight per cell, the share of the cell that no finer DEM
//! covers with data (sampled on a 4 x 4 grid of points per cell, transformed into each
//! finer DEM's CRS). Its prisms and block statistics carry that weight, so the DEMs
//! together tile the disc: a cell a finer DEM covers counts once, from the finer DEM; a
//! cell at the edge of a finer DEM counts in part from each. Each DEM runs its own engine
//! (its own pyramid and, for a geographic DEM, its own frame on the ellipsoid); the DEM
//! that has data at the station serves the inner zone, and the parts add up.

use super::{Engine, Point, StationResult};
use crate::dem::Dem;
use crate::zones::InnerZone;

/// Sample points per cell side when weights are computed.
pub const WEIGHT_SAMPLES: usize = 4;

/// A coordinate transformation from one DEM's CRS into another's (`None`: the same CRS).
pub type Transform = Option<proj::Proj>;

/// Sets the weights of `coarse` from the data of the finer DEMs; `to_finer[j]` takes
/// grid coordinates of `coarse` into those of `finer[j]`.
pub fn set_weights(coarse: &mut Dem, finer: &[&Dem], to_finer: &[Transform]) -> anyhow::Result<()> {
    let mut weights = vec![1.0f32; coarse.cols * coarse.rows];
    let s = WEIGHT_SAMPLES;
    for (fine, transform) in finer.iter().zip(to_finer) {
        // The cells of `coarse` that may meet `fine`: its extent brought into this CRS.
        let (x_lo, x_hi, y_lo, y_hi) = extent_in(fine, transform_back(fine, coarse)?.as_ref())?;
        let c_lo =
            (((x_lo - coarse.x_left) / coarse.dx).floor().max(0.0) as usize).min(coarse.cols);
        let c_hi = (((x_hi - coarse.x_left) / coarse.dx).ceil().max(0.0) as usize).min(coarse.cols);
        let r_lo = (((coarse.y_top - y_hi) / coarse.dy).floor().max(0.0) as usize).min(coarse.rows);
        let r_hi = (((coarse.y_top - y_lo) / coarse.dy).ceil().max(0.0) as usize).min(coarse.rows);
        for row in r_lo..r_hi {
            for col in c_lo..c_hi {
                let i = row * coarse.cols + col;
                if weights[i] == 0.0 {
                    continue;
                }
                let mut covered = 0;
                for a in 0..s {
                    for b in 0..s {
                        let x =
                            coarse.x_left + (col as f64 + (a as f64 + 0.5) / s as f64) * coarse.dx;
                        let y =
                            coarse.y_top - (row as f64 + (b as f64 + 0.5) / s as f64) * coarse.dy;
                        let (fx, fy) = match transform {
                            Some(t) => match t.convert((x, y)) {
                                Ok(v) => v,
                                Err(_) => continue,
                            },
                            None => (x, y),
                        };
                        if fine.nearest(fx, fy).is_some() {
                            covered += 1;
                        }
                    }
                }
                let uncovered = 1.0 - covered as f32 / (s * s) as f32;
                weights[i] = weights[i].min(uncovered);
            }
        }
    }
    coarse.weights = Some(weights);
    Ok(())
}

/// The transformation from `fine`'s CRS into `coarse`'s (`None` when they are the same).
fn transform_back(fine: &Dem, coarse: &Dem) -> anyhow::Result<Transform> {
    transform_between(&fine.crs_wkt, &coarse.crs_wkt)
}

/// A transformation between two CRS, `None` when they are the same.
pub fn transform_between(from_wkt: &str, to_wkt: &str) -> anyhow::Result<Transform> {
    if from_wkt == to_wkt || crate::dem::read::same_crs(from_wkt, to_wkt) {
        return Ok(None);
    }
    proj::Proj::new_known_crs(from_wkt, to_wkt, None)
        .map(Some)
        .map_err(|e| anyhow::anyhow!("PROJ cannot transform between the DEMs' CRS ({e})"))
}

/// Bounding box of `dem`'s extent in another CRS (edges sampled at 16 points each).
fn extent_in(dem: &Dem, transform: Option<&proj::Proj>) -> anyhow::Result<(f64, f64, f64, f64)> {
    let mut b = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    let (x0, x1, y0, y1) = (dem.x_left, dem.x_right(), dem.y_bottom(), dem.y_top);
    for k in 0..=16 {
        let t = k as f64 / 16.0;
        for (x, y) in [
            (x0 + t * (x1 - x0), y0),
            (x0 + t * (x1 - x0), y1),
            (x0, y0 + t * (y1 - y0)),
            (x1, y0 + t * (y1 - y0)),
        ] {
            let (u, v) = match transform {
                Some(tr) => match tr.convert((x, y)) {
                    Ok(v) => v,
                    Err(_) => continue,
                },
                None => (x, y),
            };
            b = (b.0.min(u), b.1.max(u), b.2.min(v), b.3.max(v));
        }
    }
    Ok(b)
}

/// What each DEM of a layered run did for one station.
#[derive(Debug, Clone, PartialEq)]
pub struct LayeredResult {
    /// The sum over the DEMs (inner zone from the serving DEM, coverage of the union).
    pub combined: StationResult,
    /// Each DEM's own part, finest first.
    pub per_dem: Vec<StationResult>,
    /// Index of the DEM that served the inner zone.
    pub serving: usize,
}

/// The engines of a layered run, finest first (the last one's coverage counts the union).
pub struct LayeredEngine<'a> {
    pub engines: Vec<Engine<'a>>,
}

impl LayeredEngine<'_> {
    /// The DEM with data at the station, or `None` when none has.
    pub fn serving(&self, points: &[Point]) -> Option<usize> {
        self.engines
            .iter()
            .zip(points)
            .position(|(e, p)| e.dem.bilinear(p.x, p.y).is_some())
    }

    /// Fraction of the disc with data in any of the DEMs (counted on the coarsest one).
    pub fn coverage(&self, points: &[Point]) -> f64 {
        let last = self.engines.len() - 1;
        self.engines[last].coverage(points[last])
    }

    /// The correction at one station, given its position in each DEM's CRS; `inner`
    /// replaces the plan's inner zone in the serving DEM (a field value's disc).
    pub fn compute(&self, points: &[Point], inner: Option<InnerZone>) -> Option<LayeredResult> {
        let serving = self.serving(points)?;
        let mut per_dem = Vec::with_capacity(self.engines.len());
        for (i, (engine, &p)) in self.engines.iter().zip(points).enumerate() {
            per_dem.push(match inner {
                Some(zone) if i == serving => engine.compute_with_inner(p, zone),
                // The other DEMs leave out the same disc (their cells there have no
                // weight left but are dropped all the same).
                _ => engine.compute_with(p, i != serving),
            });
        }
        let mut combined = per_dem[serving].clone();
        for (i, r) in per_dem.iter().enumerate() {
            if i == serving {
                continue;
            }
            // Only the serving DEM integrates the inner zone; another DEM's inner column
            // holds its cells within the plan's inner column radius (if any), outside
            // the serving DEM's inner square.
            combined.inner_m += r.inner_m;
            combined.inner_elements += r.inner_elements;
            for (a, b) in combined.rings_m.iter_mut().zip(&r.rings_m) {
                *a += b;
            }
            for (a, b) in combined.ring_elements.iter_mut().zip(&r.ring_elements) {
                *a += b;
            }
            for (a, b) in combined.ring_area_m2.iter_mut().zip(&r.ring_area_m2) {
                *a += b;
            }
            combined.area_m2 += r.area_m2;
        }
        combined.coverage = per_dem.last().map(|r| r.coverage).unwrap_or(0.0);
        Some(LayeredResult {
            combined,
            per_dem,
            serving,
        })
    }
}
