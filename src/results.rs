//! Typed per-point results: what the pipeline found at each station or grid node, in SI
//! units (kernel sums in m, accelerations in m/s^2) until a writer formats them.

use crate::units::G;
use crate::zones::{ZoneGroup, ZonePlan};

/// The water's part at one point (water turned on).
#[derive(Debug, Clone, PartialEq)]
pub struct WaterPart {
    /// Kernel sums `K(min(B, W)) - K(W)` of the inner zone and each ring, m.
    pub inner_m: f64,
    pub rings_m: Vec<f64>,
    /// Water density, kg/m3.
    pub density_kg_m3: f64,
}

impl WaterPart {
    /// `-G rho_w k`: the water's effect of a kernel difference, m/s^2.
    pub fn effect_m_s2(&self, kernel_m: f64) -> f64 {
        -G * self.density_kg_m3 * kernel_m
    }

    /// The water's whole effect, m/s^2.
    pub fn total_m_s2(&self) -> f64 {
        self.effect_m_s2(self.inner_m + self.rings_m.iter().sum::<f64>())
    }
}

/// A field inner-zone value and the DEMs' own value of the same zone, m/s^2.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FieldInnerPart {
    pub field_m_s2: f64,
    pub dem_m_s2: f64,
}

/// What one DEM of the set served at a point.
#[derive(Debug, Clone, PartialEq)]
pub struct DemServed {
    /// Horizontal area it served in each zone group (inner, near, middle, far), m^2.
    pub group_area_m2: [f64; 4],
}

impl DemServed {
    /// The whole area it served, m^2.
    pub fn area_m2(&self) -> f64 {
        self.group_area_m2.iter().sum()
    }
}

/// The zone groups in column order.
pub const GROUPS: [ZoneGroup; 4] = [
    ZoneGroup::Inner,
    ZoneGroup::Near,
    ZoneGroup::Middle,
    ZoneGroup::Far,
];

/// The terrain correction at one point.
#[derive(Debug, Clone, PartialEq)]
pub struct PointTc {
    /// The finest DEM with data at the point (0 = the finest of the set).
    pub serving: usize,
    /// Bilinear height of that DEM at the point, m.
    pub dem_elev_m: f64,
    /// Rock kernel sums, m: the inner zone (a field value where one replaced it) and each
    /// ring of the plan.
    pub inner_m: f64,
    pub rings_m: Vec<f64>,
    /// The density that turns the rock kernel sums into the TC, kg/m3.
    pub tc_density_kg_m3: f64,
    pub water: Option<WaterPart>,
    pub field_inner: Option<FieldInnerPart>,
    /// Fraction of the outer-radius disc with data in some DEM, 0..1.
    pub coverage: f64,
    /// What each DEM served, finest first.
    pub per_dem: Vec<DemServed>,
    /// Kernel evaluations in the inner zone, and elements in each ring.
    pub inner_elements: u64,
    pub ring_elements: Vec<u64>,
}

impl PointTc {
    /// A rock kernel sum as an acceleration, m/s^2.
    pub fn rock_m_s2(&self, kernel_m: f64) -> f64 {
        G * self.tc_density_kg_m3 * kernel_m
    }

    /// The rock's terrain correction, m/s^2.
    pub fn rock_total_m_s2(&self) -> f64 {
        self.rock_m_s2(self.inner_m + self.rings_m.iter().sum::<f64>())
    }

    /// The water's part, m/s^2 (0 without water).
    pub fn water_m_s2(&self) -> f64 {
        self.water.as_ref().map_or(0.0, WaterPart::total_m_s2)
    }

    /// The terrain correction, m/s^2 (downward positive): rock plus water.
    pub fn tc_m_s2(&self) -> f64 {
        self.rock_total_m_s2() + self.water_m_s2()
    }

    /// The rock's part in one zone group, m/s^2.
    pub fn group_m_s2(&self, plan: &ZonePlan, group: ZoneGroup) -> f64 {
        if group == ZoneGroup::Inner {
            return self.rock_m_s2(self.inner_m);
        }
        let k: f64 = plan
            .rings
            .iter()
            .zip(&self.rings_m)
            .filter(|(ring, _)| ring.group() == group)
            .map(|(_, k)| k)
            .sum();
        self.rock_m_s2(k)
    }

    /// The terrain correction from the inner zone out to each ring's outer edge (rock at
    /// the point's density plus water), m/s^2: `cumulative[j]` holds rings `0..=j`.
    pub fn cumulative_m_s2(&self) -> Vec<f64> {
        let mut sum = self.rock_m_s2(self.inner_m)
            + self
                .water
                .as_ref()
                .map_or(0.0, |w| w.effect_m_s2(w.inner_m));
        let mut out = Vec::with_capacity(self.rings_m.len());
        for (j, &k) in self.rings_m.iter().enumerate() {
            sum += self.rock_m_s2(k);
            if let Some(w) = &self.water {
                sum += w.effect_m_s2(w.rings_m[j]);
            }
            out.push(sum);
        }
        out
    }
}

/// The reduction chain's terms at one station (observed gravity given), m/s^2, with the
/// sign they carry in the anomaly (see [`crate::reduce`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReductionTerms {
    /// Geodetic latitude, degrees.
    pub latitude_deg: f64,
    /// Ellipsoidal height used by the reduction, m.
    pub height_m: f64,
    /// Observed gravity (`None`: the station's field is empty).
    pub observed_m_s2: Option<f64>,
    /// Normal gravity on the ellipsoid, subtracted.
    pub normal_m_s2: f64,
    /// Free-air correction, added.
    pub free_air_m_s2: f64,
    /// Atmospheric correction, added.
    pub atmospheric_m_s2: f64,
    /// Bouguer correction (slab, or slab plus Bullard B), subtracted.
    pub bouguer_m_s2: f64,
}

impl ReductionTerms {
    /// The terms of one station from the reduction formulas.
    pub fn compute(
        observed_mgal: Option<f64>,
        latitude_deg: f64,
        height_m: f64,
        density_kg_m3: f64,
        ellipsoid: crate::reduce::Ellipsoid,
        free_air: crate::reduce::FreeAirModel,
        bouguer: crate::reduce::BouguerModel,
    ) -> ReductionTerms {
        let r = crate::reduce::reduce(&crate::reduce::ReductionInput {
            observed_mgal: 0.0,
            latitude_deg,
            height_m,
            density_kg_m3,
            tc_mgal: 0.0,
            ellipsoid,
            free_air,
            bouguer,
        });
        let si = |mgal: f64| mgal * crate::units::MGAL;
        ReductionTerms {
            latitude_deg,
            height_m,
            observed_m_s2: observed_mgal.map(si),
            normal_m_s2: si(r.normal_gravity_mgal),
            free_air_m_s2: si(r.free_air_corr_mgal),
            atmospheric_m_s2: si(r.atmos_corr_mgal),
            bouguer_m_s2: si(r.bouguer_corr_mgal),
        }
    }
}
