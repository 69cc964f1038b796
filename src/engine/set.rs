//! A set of DEMs in one run, finest first: every place of the disc is integrated from
//! the finest DEM with data there. One DEM is a set of one.
//!
//! Each coarser DEM carries a weight per cell ([`Dem::weights`]), the share of the cell
//! that no finer DEM covers with data (set when the inputs are read). Its prisms, block
//! statistics and sector samples carry that weight, so the DEMs together tile the disc:
//! a cell a finer DEM covers counts once, from the finer DEM; a cell at the edge of a
//! finer DEM counts in part from each. Each DEM runs its own [`Engine`] (its own pyramid
//! and, for a geographic DEM, its own frame on the ellipsoid); the finest DEM with data at
//! the station serves the inner zone, and the parts add up ring by ring.
//!
//! Coverage of the set: with one DEM, the engine's own count of the disc's cells. With
//! several, a union grid on the coarsest DEM's cells (0 where some DEM has data, nodata
//! where none, reaching past the coarsest DEM where the stations' discs do) counted the
//! same way, so tiles side by side, nested DEMs and holes filled from another DEM all
//! give the coverage of the union.

use super::pyramid::Pyramid;
use super::{coverage_with_pyramid, run, Engine, EngineConfig, Point, StationResult};
use crate::dem::Dem;
use crate::zones::{InnerZone, ZonePlan};

/// What each DEM of a set did for one point.
#[derive(Debug, Clone, PartialEq)]
pub struct SetResult {
    /// The sum over the DEMs (inner zone from the serving DEM, coverage of the union).
    pub combined: StationResult,
    /// Each DEM's own part, finest first.
    pub per_dem: Vec<StationResult>,
    /// Index of the DEM that served the inner zone (the finest with data at the point).
    pub serving: usize,
}

/// The engines of a set of DEMs, finest first.
pub struct SetEngine<'a> {
    pub engines: Vec<Engine<'a>>,
    /// The union grid of several DEMs and its pyramid (see the module documentation).
    union: Option<(&'a Dem, Pyramid)>,
}

impl<'a> SetEngine<'a> {
    /// Engines for `dems` (finest first), all on one plan; `union` is the coverage grid
    /// of several DEMs, in the coarsest DEM's CRS (`None` for one DEM).
    pub fn new(
        dems: &[&'a Dem],
        union: Option<&'a Dem>,
        config: EngineConfig,
        plan: &ZonePlan,
    ) -> SetEngine<'a> {
        let engines = dems
            .iter()
            .map(|&d| Engine::new(d, config, plan.clone()))
            .collect();
        SetEngine {
            engines,
            union: union.map(|g| (g, Pyramid::build(g))),
        }
    }

    /// Number of DEMs.
    pub fn len(&self) -> usize {
        self.engines.len()
    }

    /// Whether the set has no DEM.
    pub fn is_empty(&self) -> bool {
        self.engines.is_empty()
    }

    /// The finest DEM with data at the point (given in each DEM's CRS), `None` when none has.
    pub fn serving(&self, points: &[Point]) -> Option<usize> {
        self.engines
            .iter()
            .zip(points)
            .position(|(e, p)| e.dem.bilinear(p.x, p.y).is_some())
    }

    /// Fraction of the disc of the outer radius with data in some DEM of the set, 0..1.
    pub fn coverage(&self, points: &[Point]) -> f64 {
        self.coverage_within(points, self.engines[0].config.outer_radius_m)
    }

    /// Fraction of the disc of radius `radius` (m) with data in some DEM of the set.
    pub fn coverage_within(&self, points: &[Point], radius: f64) -> f64 {
        match &self.union {
            None => {
                let e = &self.engines[0];
                coverage_with_pyramid(e.dem, &e.pyramid, points[0].x, points[0].y, radius)
            }
            Some((grid, pyramid)) => {
                let p = points[points.len() - 1];
                coverage_with_pyramid(grid, pyramid, p.x, p.y, radius)
            }
        }
    }

    /// The correction at one point, given its position in each DEM's CRS; `inner`
    /// replaces the plan's inner zone in the serving DEM (a field value's disc). `None`
    /// when no DEM has data at the point.
    pub fn compute(&self, points: &[Point], inner: Option<InnerZone>) -> Option<SetResult> {
        let serving = self.serving(points)?;
        let mut per_dem = Vec::with_capacity(self.engines.len());
        for (i, (engine, &p)) in self.engines.iter().zip(points).enumerate() {
            per_dem.push(match inner {
                Some(zone) if i == serving => engine.compute_with_inner(p, zone),
                // The other DEMs walk every cell they have weight in; around the station
                // the serving DEM's cells have taken the weight.
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
        if self.engines.len() > 1 {
            combined.coverage = self.coverage(points);
        }
        Some(SetResult {
            combined,
            per_dem,
            serving,
        })
    }

    /// The coverage of every point, in parallel, in input order.
    pub fn coverage_all(&self, points: &[Vec<Point>]) -> Vec<f64> {
        let n = points.first().map(Vec::len).unwrap_or(0);
        run::map_indexed(
            n,
            |i| {
                let ps: Vec<Point> = points.iter().map(|p| p[i]).collect();
                self.coverage(&ps)
            },
            &|_| {},
        )
    }
}
