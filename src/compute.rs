//! The engine step of the pipeline: from the read inputs and the checked settings to a
//! typed result per station or grid node.
//!
//! One [`Engines`] holds the engine of the DEM set and, with water on, the two engines of
//! the water bodies (see [`crate::inputs::water`]); every command computes its points
//! through it, so every input kind works in every command. Stations go through
//! [`stations`], which first refuses, with one sentence, stations that lie on no DEM's
//! data, stand under water (or over it with the surface inner model), or whose disc lacks
//! data (unless gaps are allowed), and puts field inner-zone values in place of the DEMs'
//! inner zones.

use crate::config::{RunSettings, TcSettings};
use crate::engine::set::{SetEngine, SetResult};
use crate::engine::{run, EngineConfig, InnerModel, Point, StationResult};
use crate::inputs::{station_name, station_place, Inputs};
use crate::results::{DemServed, FieldInnerPart, PointTc, WaterPart, GROUPS};
use crate::text::{coverage_text, list_some};
use crate::units::{format_length, G, MGAL};
use crate::zones::{InnerZone, ZoneGroup, ZonePlan};
use anyhow::bail;

/// The engines of a run: the rock's, and the water bodies' when water is on.
pub struct Engines<'a> {
    pub rock: SetEngine<'a>,
    water: Option<(SetEngine<'a>, SetEngine<'a>, f64)>,
    plan: ZonePlan,
}

/// What a run over the stations does about their problems.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Work {
    /// Refuse the run if any station has a problem (correct, sweep).
    RefuseProblems,
    /// Compute the stations that can be computed; the others get no value (audit, which
    /// reports the problems itself).
    SkipProblems,
    /// Compute no terrain correction; only the step after (audit without a comparison).
    CoverageOnly,
}

impl<'a> Engines<'a> {
    /// Builds the engines (and the block pyramids) for the inputs and the plan.
    pub fn build(inputs: &'a Inputs, tc: &TcSettings, plan: &ZonePlan) -> Engines<'a> {
        let dems: Vec<_> = inputs.dems.dems.iter().collect();
        let rock = SetEngine::new(&dems, inputs.dems.union.as_ref(), tc.engine, plan);
        let water = inputs.water.as_ref().map(|w| {
            // Both water bodies with the prisms inner model: the surface model would shift
            // a water bottom or surface to the station's height.
            let config = EngineConfig {
                inner_model: InnerModel::Prisms,
                ..tc.engine
            };
            (
                SetEngine::new(&w.lower(), None, config, plan),
                SetEngine::new(&w.upper(), None, config, plan),
                w.density_kg_m3,
            )
        });
        Engines {
            rock,
            water,
            plan: plan.clone(),
        }
    }

    /// The plan the engines run.
    pub fn plan(&self) -> &ZonePlan {
        &self.plan
    }

    /// The correction at one point given in each DEM's CRS; `None` when no DEM has data
    /// there. `tc_density_kg_m3` turns the rock's kernel sums into its TC.
    pub fn point(
        &self,
        points: &[Point],
        inner: Option<InnerZone>,
        tc_density_kg_m3: f64,
    ) -> Option<PointTc> {
        let rock = self.rock.compute(points, inner)?;
        let water = self.water.as_ref().map(|(lower, upper, density)| {
            let zero = |r: Option<SetResult>| r.map(|r| r.combined);
            let l = zero(lower.compute(points, inner));
            let u = zero(upper.compute(points, inner));
            let (inner_m, rings_m) = match (l, u) {
                (Some(l), Some(u)) => (
                    l.inner_m - u.inner_m,
                    l.rings_m
                        .iter()
                        .zip(&u.rings_m)
                        .map(|(a, b)| a - b)
                        .collect(),
                ),
                _ => (0.0, vec![0.0; self.plan.rings.len()]),
            };
            WaterPart {
                inner_m,
                rings_m,
                density_kg_m3: *density,
            }
        });
        let serving = rock.serving;
        let p = points[serving];
        let dem_elev_m = self.rock.engines[serving]
            .dem
            .bilinear(p.x, p.y)
            .expect("the serving DEM has data at the point");
        let per_dem = rock.per_dem.iter().map(|r| served(&self.plan, r)).collect();
        let c = rock.combined;
        Some(PointTc {
            serving,
            dem_elev_m,
            inner_m: c.inner_m,
            rings_m: c.rings_m,
            tc_density_kg_m3,
            water,
            field_inner: None,
            coverage: c.coverage,
            per_dem,
            inner_elements: c.inner_elements,
            ring_elements: c.ring_elements,
        })
    }

    /// Every point, in parallel (on the current pool), in input order: `points[k][i]` is
    /// point `i` in DEM `k`'s CRS; `tick(1)` after each point.
    pub fn points(
        &self,
        points: &[Vec<Point>],
        inner: &[Option<InnerZone>],
        tc_density_kg_m3: &[f64],
        tick: &(dyn Fn(u64) + Sync),
    ) -> Vec<Option<PointTc>> {
        let n = points.first().map(Vec::len).unwrap_or(0);
        run::map_indexed(
            n,
            |i| {
                let ps: Vec<Point> = points.iter().map(|p| p[i]).collect();
                self.point(&ps, inner.get(i).copied().flatten(), tc_density_kg_m3[i])
            },
            tick,
        )
    }
}

/// The area one DEM served in each zone group.
fn served(plan: &ZonePlan, r: &StationResult) -> DemServed {
    let mut group_area_m2 = [0.0; 4];
    let rings: f64 = r.ring_area_m2.iter().sum();
    group_area_m2[0] = (r.area_m2 - rings).max(0.0);
    for (ring, a) in plan.rings.iter().zip(&r.ring_area_m2) {
        let g = GROUPS.iter().position(|&g| g == ring.group()).unwrap_or(3);
        if ring.group() != ZoneGroup::Inner {
            group_area_m2[g] += a;
        }
    }
    DemServed { group_area_m2 }
}

/// The stations' positions in every DEM, their own inner zones (field values) and the
/// densities that scale their kernel sums.
fn station_setup(inputs: &Inputs) -> (Vec<Option<InnerZone>>, Vec<f64>) {
    let n = inputs.station_count();
    let zones = match &inputs.field_inner {
        Some(f) => f.zones(),
        None => vec![None; n],
    };
    let densities = inputs
        .densities
        .as_ref()
        .map(|d| d.tc_kg_m3.clone())
        .unwrap_or_default();
    (zones, densities)
}

/// Refuses stations on no DEM's data, under water (or over it with the surface inner
/// model), and stations whose disc reaches past the DEMs or into nodata unless gaps are
/// allowed. Returns each station's coverage.
fn refuse_problems(
    inputs: &Inputs,
    tc: &TcSettings,
    engines: &Engines,
) -> anyhow::Result<Vec<f64>> {
    let table = inputs.table();
    let points = &inputs.station_points;
    let at = |i: usize| -> Vec<Point> { points.iter().map(|p| p[i]).collect() };
    let mut nowhere = Vec::new();
    for i in 0..table.stations.len() {
        let ps = at(i);
        match engines.rock.serving(&ps) {
            None => {
                let d = inputs.dems.finest();
                let p = ps[0];
                if d.contains(p.x, p.y) || inputs.dems.dems.len() > 1 {
                    nowhere.push(format!("{} is on nodata", station_name(table, i)));
                } else {
                    nowhere.push(format!(
                        "{} is {} outside",
                        station_name(table, i),
                        format_length(-d.distance_inside(p.x, p.y))
                    ));
                }
            }
            Some(k) => {
                if let Some(w) = &inputs.water {
                    let p = ps[k];
                    if let Some(problem) = w.problem(
                        &inputs.dems.dems,
                        k,
                        p.x,
                        p.y,
                        p.elev,
                        tc.engine.inner_model,
                    ) {
                        bail!("{}", problem.sentence(&station_place(table, i), p.elev));
                    }
                }
            }
        }
    }
    if !nowhere.is_empty() {
        let names: Vec<&str> = inputs.dems.dems.iter().map(|d| d.source.as_str()).collect();
        bail!(
            "{}: {} station(s) lie outside the data of {}: {}; check the coordinates and --stations-crs, or give a DEM that covers them",
            table.path.display(),
            nowhere.len(),
            names.join(", "),
            list_some(&nowhere)
        );
    }
    let coverage = engines.rock.coverage_all(points);
    if !tc.allow_gaps {
        let gaps: Vec<String> = table
            .stations
            .iter()
            .zip(&coverage)
            .filter(|(_, &c)| c < 1.0)
            .map(|(s, &c)| format!("{} coverage {}", s.id, coverage_text(c)))
            .collect();
        if !gaps.is_empty() {
            let past = if inputs.dems.dems.len() > 1 {
                "past every DEM given".to_string()
            } else {
                format!("past {}", inputs.dems.finest().source)
            };
            bail!(
                "{} station(s) have their {} outer radius reaching {past} or into nodata ({}); use a larger DEM (or add one), a smaller --outer-radius, or --allow-gaps to accept this and report the coverage",
                gaps.len(),
                format_length(tc.engine.outer_radius_m),
                list_some(&gaps)
            );
        }
    }
    Ok(coverage)
}

/// Puts each station's field inner-zone value in place of the DEMs' inner zone.
fn apply_field_inner(inputs: &Inputs, results: &mut [Option<PointTc>]) {
    let Some(field) = &inputs.field_inner else {
        return;
    };
    for (r, v) in results.iter_mut().zip(&field.values_mgal) {
        if let (Some(r), Some(v)) = (r.as_mut(), v) {
            let dem_m_s2 = r.rock_m_s2(r.inner_m);
            let field_m_s2 = v * MGAL;
            r.inner_m = field_m_s2 / (G * r.tc_density_kg_m3);
            r.field_inner = Some(FieldInnerPart {
                field_m_s2,
                dem_m_s2,
            });
        }
    }
}

/// The terrain correction of every station of the inputs with the plan `plan`, in
/// station order. With [`Work::RefuseProblems`] every station has a result or the run is
/// refused first; with [`Work::SkipProblems`] stations on no DEM's data (or that the water
/// model cannot take) are `None`. `what` names the stations on the progress bar.
pub fn stations(
    inputs: &Inputs,
    tc: &TcSettings,
    plan: &ZonePlan,
    run: &RunSettings,
    work: Work,
    what: &str,
) -> anyhow::Result<Vec<Option<PointTc>>> {
    Ok(stations_then(inputs, tc, plan, run, work, what, |_, _| ())?.0)
}

/// As [`stations`], then `after` with the engines and the results, on the same pool
/// (for more from the same engines, such as the coverage at other radii).
pub fn stations_then<T: Send>(
    inputs: &Inputs,
    tc: &TcSettings,
    plan: &ZonePlan,
    run: &RunSettings,
    work: Work,
    what: &str,
    after: impl FnOnce(&Engines, &[Option<PointTc>]) -> T + Send,
) -> anyhow::Result<(Vec<Option<PointTc>>, T)> {
    let (zones, densities) = station_setup(inputs);
    let n = inputs.station_count();
    let shown = if work == Work::CoverageOnly { 0 } else { n };
    let bar = crate::progress::bar(shown as u64, run.quiet, what);
    let (mut results, extra) = run::with_threads(run.threads, || -> anyhow::Result<_> {
        let engines = Engines::build(inputs, tc, plan);
        if work == Work::RefuseProblems {
            refuse_problems(inputs, tc, &engines)?;
        }
        bar.reset_elapsed();
        let results = if work == Work::CoverageOnly {
            vec![None; n]
        } else {
            engines.points(&inputs.station_points, &zones, &densities, &|k| bar.inc(k))
        };
        let extra = after(&engines, &results);
        Ok((results, extra))
    })??;
    bar.finish_and_clear();
    if work != Work::RefuseProblems {
        if let Some(w) = &inputs.water {
            // Stations the water model cannot take get no value (audit lists them).
            for (i, r) in results.iter_mut().enumerate() {
                let Some(k) = r.as_ref().map(|r| r.serving) else {
                    continue;
                };
                let p = inputs.station_points[k][i];
                if w.problem(
                    &inputs.dems.dems,
                    k,
                    p.x,
                    p.y,
                    p.elev,
                    tc.engine.inner_model,
                )
                .is_some()
                {
                    *r = None;
                }
            }
        }
    }
    apply_field_inner(inputs, &mut results);
    Ok((results, extra))
}

/// How far a sector ring of a plan file is from the same ring integrated with blocks
/// (which meet the exact sum within the engine's target), at the worst of the points.
#[derive(Debug, Clone, PartialEq)]
pub struct SectorRingCheck {
    /// The ring's name.
    pub ring: String,
    /// Largest |sectors - blocks| over the points, mGal.
    pub worst_mgal: f64,
    /// That difference against the target max(0.01 mGal, 0.5 % of the point's TC): above
    /// 1 the ring misses the target.
    pub worst_of_target: f64,
}

/// The plan with every sector ring integrated by blocks (side at most 0.3 of the
/// distance, the automatic plan's ratio), the reference the sector rings are measured
/// against.
fn sectors_as_blocks(plan: &ZonePlan) -> ZonePlan {
    let mut blocks = plan.clone();
    for ring in &mut blocks.rings {
        if matches!(ring.method, crate::zones::RingMethod::Sectors { .. }) {
            ring.method = crate::zones::RingMethod::Blocks {
                ratio: crate::zones::AutoSettings::default().block_ratio,
            };
        }
    }
    blocks
}

/// Measures every sector ring of `plan` against blocks at the points `points[k][i]`
/// (empty when the plan has no sector ring). Runs on the current pool.
pub fn check_sector_rings(
    inputs: &Inputs,
    tc: &TcSettings,
    plan: &ZonePlan,
    points: &[Vec<Point>],
    tc_density_kg_m3: f64,
) -> Vec<SectorRingCheck> {
    let sector_rings: Vec<usize> = plan
        .rings
        .iter()
        .enumerate()
        .filter(|(_, r)| matches!(r.method, crate::zones::RingMethod::Sectors { .. }))
        .map(|(i, _)| i)
        .collect();
    if sector_rings.is_empty() {
        return Vec::new();
    }
    let n = points.first().map(Vec::len).unwrap_or(0);
    let reference = Engines::build(inputs, tc, &sectors_as_blocks(plan));
    let tested = Engines::build(inputs, tc, plan);
    let densities = vec![tc_density_kg_m3; n];
    let a = tested.points(points, &vec![None; n], &densities, &|_| {});
    let b = reference.points(points, &vec![None; n], &densities, &|_| {});
    sector_rings
        .iter()
        .map(|&k| {
            let mut worst = (0.0f64, 0.0f64);
            for (x, y) in a.iter().zip(&b) {
                if let (Some(x), Some(y)) = (x, y) {
                    let d = crate::units::to_mgal(
                        (x.rock_m_s2(x.rings_m[k]) - y.rock_m_s2(y.rings_m[k])).abs(),
                    );
                    let target = 0.01f64.max(0.005 * crate::units::to_mgal(y.tc_m_s2()).abs());
                    if d / target > worst.1 {
                        worst = (d, d / target);
                    }
                }
            }
            SectorRingCheck {
                ring: plan.rings[k].name.clone(),
                worst_mgal: worst.0,
                worst_of_target: worst.1,
            }
        })
        .collect()
}

/// Stations the sector rings of a plan file are measured on before a run.
pub const SECTOR_CHECK_STATIONS: usize = 8;

/// Warnings for the sector rings of `plan` that miss the target on the first
/// [`SECTOR_CHECK_STATIONS`] stations (measured against blocks, see
/// [`check_sector_rings`]); empty when the plan has none or they all meet it.
pub fn sector_ring_warnings(
    inputs: &Inputs,
    tc: &TcSettings,
    plan: &ZonePlan,
    run: &RunSettings,
) -> anyhow::Result<Vec<String>> {
    if !plan
        .rings
        .iter()
        .any(|r| matches!(r.method, crate::zones::RingMethod::Sectors { .. }))
    {
        return Ok(Vec::new());
    }
    let n = inputs.station_count().min(SECTOR_CHECK_STATIONS);
    let points: Vec<Vec<Point>> = inputs
        .station_points
        .iter()
        .map(|p| p[..n].to_vec())
        .collect();
    let checks = run::with_threads(run.threads, || {
        check_sector_rings(inputs, tc, plan, &points, tc.density_kg_m3)
    })?;
    Ok(checks
        .into_iter()
        .filter(|c| c.worst_of_target > 1.0)
        .map(|c| {
            format!(
                "sector ring {} of the plan differs from the same ring integrated with blocks by up to {:.4} mGal ({:.1} times the target max(0.01 mGal, 0.5 %)) on the first {n} stations; blocks are the more accurate method there",
                c.ring, c.worst_mgal, c.worst_of_target
            )
        })
        .collect())
}
