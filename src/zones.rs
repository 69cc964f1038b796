//! The zone plan: how a station's surroundings are split into rings and how each ring is
//! integrated. Pure data, printed by `ringsum plan` and read by the engine.
//!
//! A plan is an inner zone and a list of contiguous rings out to the outer radius:
//! - the inner zone: the `(2m+1) x (2m+1)` DEM cells around the station's cell (or a
//!   disc, for a plan file's `inner_radius`);
//! - `Prisms` rings: full-resolution right rectangular prisms (the near zone);
//! - `Blocks` rings: pyramid blocks whose side stays below `ratio` times their distance,
//!   evaluated with their height statistics (the middle zone);
//! - `Sectors` rings: annular sectors with `compartments` compartments, heights sampled
//!   from the pyramid (the chart-era way of Hammer 1939; see [`RingMethod::Sectors`]).
//!
//! Prism and block rings come first (they are walked together as one quadtree of
//! blocks, which keeps the partition exact: every cell belongs to exactly one element);
//! sector rings follow.
//!
//! Where a ring's part goes: an element of the quadtree goes to the ring holding its
//! centroid, except at the plan's hard edges ([`ZonePlan::hard_edges_m`]), where a block
//! straddling the edge is split into the cells whose centres lie inside and those
//! outside, so that a ring holds exactly the cells whose centres lie in it (as the exact
//! method counts them). The Hammer plan ([`ZonePlan::hammer`]) is the automatic plan cut
//! at Hammer's radii, with hard edges there and the inner column limited to zone A
//! ([`ZonePlan::inner_column_radius_m`]).

use crate::units::{format_length, parse_length_m};
use std::f64::consts::PI;
use std::path::Path;

/// How one ring is integrated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum RingMethod {
    /// Full-resolution prisms, one per DEM cell.
    Prisms,
    /// Pyramid blocks no larger than `ratio` times their distance from the station.
    Blocks { ratio: f64 },
    /// One annulus of `compartments` equal sectors of mean height (with second-order
    /// terms for the roughness and radial trend within each; [`crate::engine::sectors`]).
    ///
    /// The chart-era way (Hammer 1939), kept for plan files: it is the less accurate
    /// one. Measured with Hammer's radii and compartment counts (zones B-M, 2 m to 10 km,
    /// the 2 m zone A disc as inner zone) against `--method exact` on the demo's 30 m DEM,
    /// 40 stations, either convention: +0.06 to +1.11 mGal (0.4 % to 2.9 %, up to 5.8
    /// times the target max(0.01 mGal, 0.5 %)) with the surface inner model, up to 6.7
    /// times the target with the prisms inner model; on the real-DEM fixture at 5 km up to
    /// 17 times. The same radii as the automatic plan's prisms and blocks
    /// ([`ZonePlan::hammer`]) stay within 0.05 of the target (`cargo run --release
    /// --example hammer_zones`).
    Sectors { compartments: usize },
}

impl RingMethod {
    pub fn name(&self) -> &'static str {
        match self {
            RingMethod::Prisms => "prisms",
            RingMethod::Blocks { .. } => "blocks",
            RingMethod::Sectors { .. } => "sectors",
        }
    }
}

/// Which summary column a ring's part goes to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum ZoneGroup {
    Inner,
    Near,
    Middle,
    Far,
}

/// One ring of the plan.
#[derive(Debug, Clone, PartialEq)]
pub struct Ring {
    /// Short name, used in per-ring output columns (`tc_<name>_mgal`).
    pub name: String,
    pub inner_m: f64,
    pub outer_m: f64,
    pub method: RingMethod,
    /// The summary column (`tc_near_mgal`, ...) this ring's part goes to.
    pub group: ZoneGroup,
}

impl Ring {
    /// A ring whose summary column follows its method: prisms near, blocks middle,
    /// sectors far.
    pub fn new(name: impl Into<String>, inner_m: f64, outer_m: f64, method: RingMethod) -> Ring {
        let group = match method {
            RingMethod::Prisms => ZoneGroup::Near,
            RingMethod::Blocks { .. } => ZoneGroup::Middle,
            RingMethod::Sectors { .. } => ZoneGroup::Far,
        };
        Ring {
            name: name.into(),
            inner_m,
            outer_m,
            method,
            group,
        }
    }

    /// The summary column this ring feeds.
    pub fn group(&self) -> ZoneGroup {
        self.group
    }
}

/// The inner zone.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum InnerZone {
    /// The `(2m+1)^2` cells centred on the station's cell.
    Cells { half_width: usize },
    /// A disc of this radius around the station (m).
    Disc { radius_m: f64 },
}

/// A whole plan.
#[derive(Debug, Clone, PartialEq)]
pub struct ZonePlan {
    /// Where the plan came from (auto, hammer, or a file).
    pub source: String,
    pub inner: InnerZone,
    /// Contiguous rings out to the outer radius. Consecutive rings may share a name: they
    /// are pieces of one zone (of the Hammer plan, or of a plan cut by
    /// [`ZonePlan::split_at`]), reported together ([`ZonePlan::zone_columns`]).
    pub rings: Vec<Ring>,
    /// Whether per-zone columns are written (the Hammer preset and custom plans).
    pub per_ring_columns: bool,
    /// Radii (m, strictly between 0 and the outer radius, increasing) at which the
    /// attribution to rings is exact by cell centre: a pyramid block straddling one is
    /// evaluated as its cells inside and its cells outside, each part in its own ring,
    /// and the inner zone's surface quadrature breaks its rays there. Elsewhere an
    /// element goes to the ring holding its centroid.
    pub hard_edges_m: Vec<f64>,
    /// Radius (m) of the inner column when it is less than the inner zone: the inner
    /// column then holds only what lies within this radius of the station (by cell
    /// centre, or by quadrature point of the surface inner model), and the rest of the
    /// inner zone goes to the rings at its radii. `None`: the whole inner zone is the
    /// inner column. (A disc inner zone, a field inner-zone value's, is always whole.)
    pub inner_column_radius_m: Option<f64>,
}

/// One output column of a plan: consecutive rings of one name.
#[derive(Debug, Clone, PartialEq)]
pub struct ZoneColumn {
    /// The zone's name (`tc_<name>_mgal`).
    pub name: String,
    /// Inner radius of its first ring, m.
    pub inner_m: f64,
    /// Outer radius of its last ring, m.
    pub outer_m: f64,
    /// Indices of its rings in the plan.
    pub rings: std::ops::Range<usize>,
}

/// Why a plan is not usable; each message names the ring and what to do.
#[derive(Debug, thiserror::Error, PartialEq)]
pub enum ZoneError {
    #[error("{file}: {detail}")]
    Invalid { file: String, detail: String },
}

/// Hammer's (1939) zones B to M: outer radius in feet and the compartments of his chart
/// (used by the chart-era sector plans, `method = "sectors"`). Zone B starts at 6.56 ft
/// (2 m); zone A inside it is the station zone.
///
/// Radii and counts from memory (Hammer 1939, not confirmed in a retrieved copy); the
/// outer radius 71 996 ft = 21.94 km agrees with the "about 13.6 miles" of Sandberg 1959.
pub const HAMMER_ZONES: [(&str, f64, usize); 12] = [
    ("B", 54.6, 4),
    ("C", 175.0, 6),
    ("D", 558.0, 6),
    ("E", 1280.0, 8),
    ("F", 2936.0, 8),
    ("G", 5018.0, 12),
    ("H", 8578.0, 12),
    ("I", 14662.0, 12),
    ("J", 21826.0, 16),
    ("K", 32490.0, 16),
    ("L", 48365.0, 16),
    ("M", 71996.0, 16),
];

/// Inner radius of Hammer's zone B (6.56 ft), m.
pub const HAMMER_ZONE_A_RADIUS_M: f64 = 6.56 * FOOT_M;

/// Ratio of the radii of the rings that continue Hammer's zones beyond zone M: zone M's
/// own, 71 996 / 48 365 ft.
pub const HAMMER_CONTINUED_RATIO: f64 = 71_996.0 / 48_365.0;

/// Hammer's zones from B out to `outer_m` (m): name, inner and outer radius, the last
/// one cut at `outer_m`; beyond zone M rings with zone M's ratio, named `beyondM1`,
/// `beyondM2`, ... (Hammer 1939).
pub fn hammer_zone_radii(outer_m: f64) -> Vec<(String, f64, f64)> {
    let mut zones = Vec::new();
    let mut r1 = HAMMER_ZONE_A_RADIUS_M;
    for (name, outer_ft, _) in HAMMER_ZONES {
        if r1 >= outer_m {
            return zones;
        }
        let r2 = outer_ft * FOOT_M;
        zones.push((name.to_string(), r1, r2.min(outer_m)));
        r1 = r2;
    }
    let mut k = 1;
    while r1 < outer_m {
        let r2 = (r1 * HAMMER_CONTINUED_RATIO).min(outer_m);
        zones.push((format!("beyondM{k}"), r1, r2));
        r1 = r2;
        k += 1;
    }
    zones
}

/// The international foot, m.
pub const FOOT_M: f64 = 0.3048;

/// Most compartments a sector ring may have: 3600, a tenth of a degree each (our bound;
/// finer rings are better integrated as blocks).
pub const MAX_COMPARTMENTS: usize = 3600;

/// Compartments of a ring from `r1` to `r2` so that the arc at mid-radius is about the
/// ring's width: `n = pi (r1 + r2) / (r2 - r1)`, at least 4.
pub fn compartments_for(r1: f64, r2: f64) -> usize {
    ((PI * (r1 + r2) / (r2 - r1)).round() as usize).max(4)
}

/// Geometric ring radii from `start` to `end` with ratio close to `ratio`.
fn geometric_radii(start: f64, end: f64, ratio: f64) -> Vec<f64> {
    let steps = ((end / start).ln() / ratio.ln()).ceil().max(1.0) as usize;
    let q = (end / start).powf(1.0 / steps as f64);
    (0..=steps)
        .map(|i| {
            if i == steps {
                end
            } else {
                start * q.powi(i as i32)
            }
        })
        .collect()
}

/// How the automatic plan's far zone is integrated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FarMethod {
    /// Pyramid blocks, as the middle zone (measured the more accurate; the default).
    Blocks,
    /// Annular sectors in geometric rings, compartments as wide as the ring.
    Sectors,
}

/// Settings of the automatic plan (measured choices; see the README's performance section).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AutoSettings {
    /// Inner zone half-width, cells.
    pub inner_half_width: usize,
    /// Near-zone radius in cell sizes (prisms out to here).
    pub near_cells: f64,
    /// Block side / distance.
    pub block_ratio: f64,
    /// Far zone start, m (no far zone if beyond the outer radius).
    pub far_start_m: f64,
    /// How the far zone is integrated.
    pub far_method: FarMethod,
    /// Ratio of successive far-ring radii (sectors).
    pub far_ring_ratio: f64,
}

/// Where the automatic plan's far zone starts: the outer edge of Hammer's zone M
/// (71 996 ft), beyond which the curvature of the Earth starts to matter (Nowell 1999).
pub const AUTO_FAR_START_M: f64 = 71_996.0 * FOOT_M;

/// Near-zone radius of the automatic plan, cell sizes. Not a whole number nor a half:
/// cell centres of a station standing on a cell centre, corner or edge then never lie
/// exactly on the zone's edge, where a shift of a micrometre (a round trip through
/// another CRS) would move a cell from one zone's column to the other's.
pub const NEAR_CELLS: f64 = 7.3;

impl Default for AutoSettings {
    fn default() -> Self {
        AutoSettings {
            inner_half_width: 1,
            near_cells: NEAR_CELLS,
            block_ratio: 0.3,
            far_start_m: AUTO_FAR_START_M,
            far_method: FarMethod::Blocks,
            far_ring_ratio: 1.25,
        }
    }
}

impl ZonePlan {
    /// The automatic plan for a DEM with cell size `cell_m` and an outer radius: the
    /// inner zone, prisms to `near_cells` cells, blocks to the far-zone start, and the
    /// far zone to the outer radius.
    pub fn auto(cell_m: f64, outer_m: f64, s: &AutoSettings) -> ZonePlan {
        let mut rings = Vec::new();
        let near = (s.near_cells * cell_m).min(outer_m);
        rings.push(Ring::new("near", 0.0, near, RingMethod::Prisms));
        let far_start = s.far_start_m.max(near);
        let blocks = RingMethod::Blocks {
            ratio: s.block_ratio,
        };
        let mid_end = far_start.min(outer_m);
        if mid_end > near {
            rings.push(Ring::new("mid", near, mid_end, blocks));
        }
        if far_start < outer_m {
            match s.far_method {
                FarMethod::Blocks => {
                    let mut far = Ring::new("far", far_start, outer_m, blocks);
                    far.group = ZoneGroup::Far;
                    rings.push(far);
                }
                FarMethod::Sectors => {
                    let radii = geometric_radii(far_start, outer_m, s.far_ring_ratio);
                    for (i, w) in radii.windows(2).enumerate() {
                        let method = RingMethod::Sectors {
                            compartments: compartments_for(w[0], w[1]),
                        };
                        rings.push(Ring::new(format!("far{}", i + 1), w[0], w[1], method));
                    }
                }
            }
        }
        ZonePlan {
            source: "auto".into(),
            inner: InnerZone::Cells {
                half_width: s.inner_half_width,
            },
            rings,
            per_ring_columns: false,
            hard_edges_m: Vec::new(),
            inner_column_radius_m: None,
        }
    }

    /// Hammer's (1939) zones at full accuracy: the automatic plan for cell size `cell_m`
    /// cut at Hammer's radii (zones B to M, then rings continued with zone M's ratio to
    /// the outer radius; [`hammer_zone_radii`]). Each piece keeps the integration method
    /// and summary group of the automatic ring it came from and is named after its
    /// Hammer zone, so a zone that spans two methods (prisms, then blocks) is two
    /// consecutive rings of one name. Every zone radius is a hard edge (each zone holds
    /// exactly the cells whose centres lie in it), and the inner column is zone A, the
    /// part of the inner cell square within 2 m of the station; the rest of the square
    /// goes to zones B, C, ... at its radii.
    pub fn hammer(cell_m: f64, outer_m: f64) -> ZonePlan {
        let auto = ZonePlan::auto(cell_m, outer_m, &AutoSettings::default());
        let zones = hammer_zone_radii(outer_m);
        let mut rings = Vec::new();
        for (name, z1, z2) in &zones {
            for ring in &auto.rings {
                let (a, b) = (ring.inner_m.max(*z1), ring.outer_m.min(*z2));
                if b > a {
                    rings.push(Ring {
                        name: name.clone(),
                        inner_m: a,
                        outer_m: b,
                        ..ring.clone()
                    });
                }
            }
        }
        let mut hard_edges_m = vec![HAMMER_ZONE_A_RADIUS_M];
        hard_edges_m.extend(zones.iter().map(|z| z.2));
        hard_edges_m.retain(|&r| r > 0.0 && r < outer_m);
        ZonePlan {
            source: "hammer".into(),
            inner: auto.inner,
            rings,
            per_ring_columns: true,
            hard_edges_m,
            inner_column_radius_m: Some(HAMMER_ZONE_A_RADIUS_M),
        }
    }

    /// The output columns: consecutive rings of one name together, in plan order; empty
    /// when the plan writes no per-zone columns.
    pub fn zone_columns(&self) -> Vec<ZoneColumn> {
        if !self.per_ring_columns {
            return Vec::new();
        }
        let mut columns: Vec<ZoneColumn> = Vec::new();
        for (i, ring) in self.rings.iter().enumerate() {
            match columns.last_mut() {
                Some(column) if column.name == ring.name => {
                    column.outer_m = ring.outer_m;
                    column.rings.end = i + 1;
                }
                _ => columns.push(ZoneColumn {
                    name: ring.name.clone(),
                    inner_m: ring.inner_m,
                    outer_m: ring.outer_m,
                    rings: i..i + 1,
                }),
            }
        }
        columns
    }

    /// Reads a plan from a TOML file (see [`ZonePlan::from_toml`]).
    pub fn from_file(path: &Path) -> Result<ZonePlan, ZoneError> {
        let source = path.display().to_string();
        let text = std::fs::read_to_string(path).map_err(|e| ZoneError::Invalid {
            file: source.clone(),
            detail: format!("cannot read the zone plan ({e}); check the path given with --zones"),
        })?;
        ZonePlan::from_toml(&text, &source)
    }

    /// Parses a plan:
    ///
    /// ```toml
    /// inner_cells = 1          # half-width of the inner zone in cells (or inner_radius = "2m")
    /// [[ring]]
    /// name = "near"            # optional; used for per-ring columns
    /// outer = "250m"
    /// method = "prisms"
    /// [[ring]]
    /// outer = "20km"
    /// method = "blocks"
    /// block_ratio = 0.3        # block side / distance, 0 < r <= 1
    /// [[ring]]
    /// outer = "30km"
    /// method = "sectors"
    /// compartments = 16
    /// group = "far"            # optional summary column: near, mid or far (default by method)
    /// ```
    ///
    /// Each ring starts where the previous one ends (`inner` may be given and must
    /// then match).
    pub fn from_toml(text: &str, source: &str) -> Result<ZonePlan, ZoneError> {
        let bad = |detail: String| ZoneError::Invalid {
            file: source.to_string(),
            detail,
        };
        let value: toml::Table = text.parse().map_err(|e: toml::de::Error| {
            bad(format!("not a valid TOML file ({})", e.message()))
        })?;
        for key in value.keys() {
            if !["inner_cells", "inner_radius", "ring"].contains(&key.as_str()) {
                return Err(bad(format!(
                    "unknown key '{key}'; a plan has inner_cells or inner_radius, and [[ring]] tables"
                )));
            }
        }
        let inner = match (value.get("inner_cells"), value.get("inner_radius")) {
            (Some(_), Some(_)) => {
                return Err(bad("give inner_cells or inner_radius, not both".into()))
            }
            (Some(v), None) => {
                let m = v
                    .as_integer()
                    .filter(|m| (0..=16).contains(m))
                    .ok_or_else(|| bad("inner_cells must be a whole number from 0 to 16".into()))?;
                InnerZone::Cells {
                    half_width: m as usize,
                }
            }
            (None, Some(v)) => {
                let r = length_value(v).map_err(|e| bad(format!("inner_radius: {e}")))?;
                if r <= 0.0 {
                    return Err(bad("inner_radius must be positive".into()));
                }
                InnerZone::Disc { radius_m: r }
            }
            (None, None) => InnerZone::Cells { half_width: 1 },
        };
        let rings_value = value
            .get("ring")
            .and_then(|v| v.as_array())
            .ok_or_else(|| bad("the plan has no [[ring]] tables".into()))?;
        let mut rings = Vec::new();
        let mut previous_outer = match inner {
            InnerZone::Disc { radius_m } => radius_m,
            InnerZone::Cells { .. } => 0.0,
        };
        for (i, item) in rings_value.iter().enumerate() {
            let number = i + 1;
            let table = item
                .as_table()
                .ok_or_else(|| bad(format!("ring {number} is not a table")))?;
            for key in table.keys() {
                if ![
                    "name",
                    "inner",
                    "outer",
                    "method",
                    "block_ratio",
                    "compartments",
                    "group",
                ]
                .contains(&key.as_str())
                {
                    return Err(bad(format!(
                        "ring {number}: unknown key '{key}' (known: name, inner, outer, method, block_ratio, compartments, group)"
                    )));
                }
            }
            let name = match table.get("name") {
                Some(v) => v
                    .as_str()
                    .ok_or_else(|| bad(format!("ring {number}: name must be text")))?
                    .to_string(),
                None => format!("ring{number}"),
            };
            if !name.chars().all(|c| c.is_ascii_alphanumeric() || c == '_') || name.is_empty() {
                return Err(bad(format!(
                    "ring {number}: name '{name}' may hold only letters, digits and _"
                )));
            }
            let outer = length_value(
                table
                    .get("outer")
                    .ok_or_else(|| bad(format!("ring {number} ({name}) has no outer radius")))?,
            )
            .map_err(|e| bad(format!("ring {number} ({name}): outer: {e}")))?;
            let inner_r = match table.get("inner") {
                Some(v) => length_value(v)
                    .map_err(|e| bad(format!("ring {number} ({name}): inner: {e}")))?,
                None => previous_outer,
            };
            if inner_r > previous_outer + 1e-9 {
                return Err(bad(format!(
                    "ring {number} ({name}) starts at {} but the previous zone ends at {}: the gap would be left out; make them meet",
                    format_length(inner_r),
                    format_length(previous_outer)
                )));
            }
            if inner_r < previous_outer - 1e-9 {
                return Err(bad(format!(
                    "ring {number} ({name}) starts at {} inside the previous zone, which ends at {}: the overlap would be counted twice; make them meet",
                    format_length(inner_r),
                    format_length(previous_outer)
                )));
            }
            if outer <= inner_r {
                return Err(bad(format!(
                    "ring {number} ({name}): radii must increase, but outer {} is not beyond inner {}",
                    format_length(outer),
                    format_length(inner_r)
                )));
            }
            let group = match table.get("group") {
                None => None,
                Some(v) => Some(match v.as_str() {
                    Some("near") => ZoneGroup::Near,
                    Some("mid") => ZoneGroup::Middle,
                    Some("far") => ZoneGroup::Far,
                    _ => {
                        return Err(bad(format!(
                            "ring {number} ({name}): group must be \"near\", \"mid\" or \"far\""
                        )))
                    }
                }),
            };
            let method_name = table
                .get("method")
                .and_then(|v| v.as_str())
                .ok_or_else(|| {
                    bad(format!(
                        "ring {number} ({name}) has no method (prisms, blocks or sectors)"
                    ))
                })?;
            let method = match method_name {
                "prisms" => RingMethod::Prisms,
                "blocks" => {
                    let ratio = table
                        .get("block_ratio")
                        .map(|v| v.as_float().or_else(|| v.as_integer().map(|i| i as f64)))
                        .unwrap_or(Some(0.3))
                        .ok_or_else(|| bad(format!("ring {number} ({name}): block_ratio must be a number")))?;
                    if !(ratio > 0.0 && ratio <= 1.0) {
                        return Err(bad(format!("ring {number} ({name}): block_ratio {ratio} must be in (0, 1]")));
                    }
                    RingMethod::Blocks { ratio }
                }
                "sectors" => {
                    let n = table
                        .get("compartments")
                        .map(|v| v.as_integer())
                        .unwrap_or(Some(compartments_for(inner_r, outer) as i64))
                        .ok_or_else(|| bad(format!("ring {number} ({name}): compartments must be a whole number")))?;
                    if n <= 0 {
                        return Err(bad(format!("ring {number} ({name}): compartments must be at least 1, not {n}")));
                    }
                    if n > MAX_COMPARTMENTS as i64 {
                        return Err(bad(format!("ring {number} ({name}): {n} compartments is more than the {MAX_COMPARTMENTS} accepted (a compartment of a tenth of a degree); use a blocks ring for finer detail")));
                    }
                    RingMethod::Sectors { compartments: n as usize }
                }
                other => {
                    return Err(bad(format!(
                        "ring {number} ({name}): unknown method '{other}'; use prisms, blocks or sectors"
                    )))
                }
            };
            let mut ring = Ring::new(name, inner_r, outer, method);
            if let Some(group) = group {
                ring.group = group;
            }
            rings.push(ring);
            previous_outer = outer;
        }
        // Every ring edge is a hard edge: each ring holds exactly the cells whose centres
        // lie in it.
        let mut hard_edges_m: Vec<f64> = Vec::new();
        for ring in &rings {
            for r in [ring.inner_m, ring.outer_m] {
                if r > 0.0 && hard_edges_m.last().map_or(true, |&last| r > last) {
                    hard_edges_m.push(r);
                }
            }
        }
        // The last ring's outer edge is the plan's end, not an edge inside it.
        hard_edges_m.pop();
        let plan = ZonePlan {
            source: source.to_string(),
            inner,
            rings,
            per_ring_columns: true,
            hard_edges_m,
            inner_column_radius_m: None,
        };
        plan.check_order().map_err(bad)?;
        plan.check_unique_names().map_err(bad)?;
        Ok(plan)
    }

    /// Prism and block rings must come before sector rings.
    fn check_order(&self) -> Result<(), String> {
        let mut seen_sectors = false;
        for (i, ring) in self.rings.iter().enumerate() {
            match ring.method {
                RingMethod::Sectors { .. } => seen_sectors = true,
                _ if seen_sectors => {
                    return Err(format!(
                        "ring {} ({}) uses {} outside a sector ring; prism and block rings must come before sector rings",
                        i + 1,
                        ring.name,
                        ring.method.name()
                    ))
                }
                _ => {}
            }
        }
        Ok(())
    }

    /// A plan file's ring names are unique (each is its own output column).
    fn check_unique_names(&self) -> Result<(), String> {
        let mut names = std::collections::HashSet::new();
        for ring in &self.rings {
            if !names.insert(ring.name.as_str()) {
                return Err(format!(
                    "two rings are named '{}'; give each ring its own name",
                    ring.name
                ));
            }
        }
        Ok(())
    }

    /// Cuts the plan at the outer radius; refuses a plan that ends before it.
    pub fn fitted_to(mut self, outer_m: f64) -> Result<ZonePlan, ZoneError> {
        let end = self.rings.last().map(|r| r.outer_m).unwrap_or(0.0);
        if end + 1e-6 < outer_m {
            return Err(ZoneError::Invalid {
                file: self.source.clone(),
                detail: format!(
                    "the plan ends at {} but the outer radius is {}; add rings or give --outer-radius {}",
                    format_length(end),
                    format_length(outer_m),
                    format_length(end)
                ),
            });
        }
        self.rings.retain(|r| r.inner_m < outer_m);
        if let Some(last) = self.rings.last_mut() {
            last.outer_m = last.outer_m.min(outer_m);
        }
        self.hard_edges_m.retain(|&r| r < outer_m);
        Ok(self)
    }

    /// The plan with its prism and block rings cut at `radii_m` (m), for sweeps over the
    /// outer radius. Each piece keeps its ring's name, method and summary group (so the
    /// plan's zone columns are unchanged); sector rings are kept whole (a compartment is
    /// integrated as one piece, so cutting one would change the result). The cuts are
    /// not hard edges (the plan keeps its own): the engine walks the same elements with
    /// either plan, only the attribution of an element to a ring (by its centroid)
    /// becomes finer, so the pieces add up to the rings they came from.
    pub fn split_at(&self, radii_m: &[f64]) -> ZonePlan {
        let mut rings = Vec::new();
        for ring in &self.rings {
            let cuts: Vec<f64> = match ring.method {
                RingMethod::Sectors { .. } => Vec::new(),
                _ => radii_m
                    .iter()
                    .copied()
                    .filter(|&r| r > ring.inner_m && r < ring.outer_m)
                    .collect(),
            };
            if cuts.is_empty() {
                rings.push(ring.clone());
                continue;
            }
            let mut edges = vec![ring.inner_m];
            edges.extend(cuts);
            edges.push(ring.outer_m);
            for w in edges.windows(2) {
                let mut piece = ring.clone();
                piece.inner_m = w[0];
                piece.outer_m = w[1];
                rings.push(piece);
            }
        }
        ZonePlan {
            rings,
            ..self.clone()
        }
    }

    /// Outer radius of the prism and block rings (where sectors begin), m.
    pub fn quadtree_outer_m(&self) -> f64 {
        self.rings
            .iter()
            .filter(|r| !matches!(r.method, RingMethod::Sectors { .. }))
            .map(|r| r.outer_m)
            .fold(0.0, f64::max)
    }

    /// Index of the ring containing distance `d` (the last ring for `d` beyond the plan).
    pub fn ring_at(&self, d: f64) -> usize {
        match self.rings.iter().position(|r| d < r.outer_m) {
            Some(i) => i,
            None => self.rings.len().saturating_sub(1),
        }
    }
}

fn length_value(v: &toml::Value) -> Result<f64, String> {
    match v {
        toml::Value::String(s) => parse_length_m(s),
        toml::Value::Float(f) => Ok(*f),
        toml::Value::Integer(i) => Ok(*i as f64),
        _ => Err("give a length such as \"20km\" or 500".into()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hammer_plan_is_the_auto_plan_cut_at_hammers_radii() {
        // Hammer (1939) zones B-M (from memory; metres are feet x 0.3048).
        let metres = [
            16.6, 53.3, 170.1, 390.1, 894.9, 1529.5, 2614.6, 4469.0, 6652.6, 9903.0, 14741.7,
            21944.4,
        ];
        let counts: Vec<usize> = HAMMER_ZONES.iter().map(|z| z.2).collect();
        assert_eq!(counts, [4, 6, 6, 8, 8, 12, 12, 12, 16, 16, 16, 16]);
        let outer = 71_996.0 * FOOT_M;
        let plan = ZonePlan::hammer(30.0, outer);
        let auto = ZonePlan::auto(30.0, outer, &AutoSettings::default());
        let columns = plan.zone_columns();
        let names: Vec<&str> = columns.iter().map(|z| z.name.as_str()).collect();
        assert_eq!(
            names,
            ["B", "C", "D", "E", "F", "G", "H", "I", "J", "K", "L", "M"]
        );
        assert!((columns[0].inner_m - 2.0).abs() < 0.01);
        for (column, m) in columns.iter().zip(metres) {
            assert!(
                (column.outer_m - m).abs() < 0.06,
                "{} {} vs {m}",
                column.name,
                column.outer_m
            );
        }
        // Zone E spans the automatic plan's prisms (to 7.3 cells, 219 m) and blocks: two
        // consecutive rings of one name, each with its automatic ring's method and group.
        let e = &columns[3];
        assert_eq!(e.rings, 3..5);
        assert_eq!(plan.rings[3].method, RingMethod::Prisms);
        assert_eq!(plan.rings[3].outer_m, NEAR_CELLS * 30.0);
        assert_eq!(plan.rings[4].method, RingMethod::Blocks { ratio: 0.3 });
        for ring in &plan.rings {
            let parent = &auto.rings[auto.ring_at(0.5 * (ring.inner_m + ring.outer_m))];
            assert_eq!((ring.method, ring.group), (parent.method, parent.group));
        }
        for w in plan.rings.windows(2) {
            assert_eq!(w[0].outer_m, w[1].inner_m);
        }
        // Every zone radius inside the outer radius is a hard edge; the inner zone is the
        // automatic plan's cell square, its column zone A.
        let mut edges = vec![HAMMER_ZONE_A_RADIUS_M];
        edges.extend(columns.iter().map(|z| z.outer_m).filter(|&r| r < outer));
        assert_eq!(plan.hard_edges_m, edges);
        assert_eq!(plan.inner, auto.inner);
        assert_eq!(plan.inner_column_radius_m, Some(HAMMER_ZONE_A_RADIUS_M));
        // Continued beyond M to 166.7 km with zone M's ratio; the far zone (blocks) keeps
        // its summary group.
        let long = ZonePlan::hammer(30.0, 166_735.0);
        let columns = long.zone_columns();
        assert_eq!(columns[12].name, "beyondM1");
        let ratio = columns[12].outer_m / columns[12].inner_m;
        assert!((ratio - 71_996.0 / 48_365.0).abs() < 1e-12);
        assert_eq!(long.rings.last().unwrap().outer_m, 166_735.0);
        assert_eq!(long.rings.last().unwrap().group, ZoneGroup::Far);
        assert!(*long.hard_edges_m.last().unwrap() < 166_735.0);
        // A plan without per-zone columns has none.
        assert!(auto.zone_columns().is_empty());
    }

    #[test]
    fn auto_plan_is_contiguous() {
        let s = AutoSettings {
            far_start_m: 30_000.0,
            ..AutoSettings::default()
        };
        let plan = ZonePlan::auto(30.0, 166_735.0, &s);
        assert_eq!(plan.rings[0].inner_m, 0.0);
        for w in plan.rings.windows(2) {
            assert_eq!(w[0].outer_m, w[1].inner_m);
        }
        assert_eq!(plan.rings.last().unwrap().outer_m, 166_735.0);
        for r in &plan.rings {
            if let RingMethod::Sectors { compartments } = r.method {
                let arc = PI * (r.inner_m + r.outer_m) / compartments as f64;
                let width = r.outer_m - r.inner_m;
                assert!((arc / width - 1.0).abs() < 0.1);
            }
        }
    }

    #[test]
    fn toml_plans_are_validated() {
        let good = "inner_cells = 1\n[[ring]]\nouter = \"300m\"\nmethod = \"prisms\"\n[[ring]]\nouter = \"10km\"\nmethod = \"blocks\"\nblock_ratio = 0.25\n[[ring]]\nname = \"far\"\nouter = \"20km\"\nmethod = \"sectors\"\ncompartments = 24\n";
        let plan = ZonePlan::from_toml(good, "p.toml").unwrap();
        assert_eq!(plan.rings.len(), 3);
        assert_eq!(plan.rings[1].method, RingMethod::Blocks { ratio: 0.25 });
        // Every ring edge inside the plan is a hard edge; the inner zone is whole.
        assert_eq!(plan.hard_edges_m, [300.0, 10_000.0]);
        assert_eq!(plan.inner_column_radius_m, None);
        assert_eq!(plan.fitted_to(5000.0).unwrap().hard_edges_m, [300.0]);
        let err = |text: &str| ZonePlan::from_toml(text, "p.toml").unwrap_err().to_string();
        assert!(err("[[ring]]\nname = \"a\"\nouter = \"1km\"\nmethod = \"prisms\"\n[[ring]]\nname = \"a\"\nouter = \"5km\"\nmethod = \"blocks\"\n").contains("two rings are named 'a'"));
        assert!(err("[[ring]]\nouter = \"1km\"\nmethod = \"prisms\"\n[[ring]]\nouter = \"500m\"\nmethod = \"blocks\"\n").contains("radii must increase"));
        assert!(err("[[ring]]\nouter = \"1km\"\nmethod = \"prisms\"\n[[ring]]\ninner = \"2km\"\nouter = \"5km\"\nmethod = \"blocks\"\n").contains("gap"));
        assert!(err("[[ring]]\nouter = \"1km\"\nmethod = \"prisms\"\n[[ring]]\ninner = \"500m\"\nouter = \"5km\"\nmethod = \"blocks\"\n").contains("overlap"));
        assert!(err("[[ring]]\nouter = \"1km\"\nmethod = \"magic\"\n")
            .contains("unknown method 'magic'"));
        assert!(
            err("[[ring]]\nouter = \"1km\"\nmethod = \"sectors\"\ncompartments = 0\n")
                .contains("at least 1")
        );
        assert!(err("[[ring]]\nouter = \"1km\"\nmethod = \"sectors\"\n[[ring]]\nouter = \"5km\"\nmethod = \"blocks\"\n").contains("must come before"));
        assert!(err("inner_cells = 1\n").contains("no [[ring]]"));
        assert!(
            err("[[ring]]\nouter = \"1km\"\nmethod = \"prisms\"\nratio = 3\n")
                .contains("unknown key 'ratio'")
        );
    }

    #[test]
    fn split_keeps_methods_groups_and_sector_rings() {
        let s = AutoSettings {
            far_start_m: 30_000.0,
            far_method: FarMethod::Sectors,
            ..AutoSettings::default()
        };
        let plan = ZonePlan::auto(30.0, 50_000.0, &s);
        let split = plan.split_at(&[100.0, 210.0, 1000.0, 5000.0, 31_000.0, 50_000.0]);
        // Contiguous from 0 to the outer radius, cut at every radius inside a prism or
        // block ring, and nowhere inside a sector ring.
        assert_eq!(split.rings[0].inner_m, 0.0);
        for w in split.rings.windows(2) {
            assert_eq!(w[0].outer_m, w[1].inner_m);
        }
        assert_eq!(split.rings.last().unwrap().outer_m, 50_000.0);
        let edges: Vec<f64> = split.rings.iter().map(|r| r.outer_m).collect();
        for r in [100.0, 1000.0, 5000.0] {
            assert!(edges.contains(&r), "{r} not an edge of {edges:?}");
        }
        assert!(!edges.contains(&31_000.0));
        let names: Vec<&str> = split.rings.iter().map(|r| r.name.as_str()).collect();
        assert_eq!(&names[..5], ["near", "near", "near", "mid", "mid"]);
        for piece in &split.rings {
            let parent = &plan.rings[plan.ring_at(0.5 * (piece.inner_m + piece.outer_m))];
            assert_eq!(piece.name, parent.name);
            assert_eq!(piece.method, parent.method);
            assert_eq!(piece.group, parent.group);
        }
        // The cuts add no hard edges; a split Hammer plan keeps its own and its zone
        // columns.
        assert!(split.hard_edges_m.is_empty());
        let hammer = ZonePlan::hammer(30.0, 10_000.0);
        let cut = hammer.split_at(&[100.0, 1000.0, 5000.0]);
        assert_eq!(cut.rings.len(), hammer.rings.len() + 3);
        assert_eq!(cut.hard_edges_m, hammer.hard_edges_m);
        let spans = |p: &ZonePlan| {
            p.zone_columns()
                .iter()
                .map(|z| (z.name.clone(), z.inner_m, z.outer_m))
                .collect::<Vec<_>>()
        };
        assert_eq!(spans(&cut), spans(&hammer));
        let sectors = |p: &ZonePlan| {
            p.rings
                .iter()
                .filter(|r| matches!(r.method, RingMethod::Sectors { .. }))
                .count()
        };
        assert_eq!(sectors(&split), sectors(&plan));
        assert!(split.check_order().is_ok());
    }

    #[test]
    fn plans_fit_the_outer_radius() {
        let plan = ZonePlan::hammer(30.0, 71_996.0 * FOOT_M);
        let short = plan.clone().fitted_to(10_000.0).unwrap();
        assert_eq!(short.rings.last().unwrap().outer_m, 10_000.0);
        assert!(*short.hard_edges_m.last().unwrap() < 10_000.0);
        assert_eq!(
            short.hard_edges_m,
            ZonePlan::hammer(30.0, 10_000.0).hard_edges_m
        );
        let text = "[[ring]]\nouter = \"1km\"\nmethod = \"prisms\"\n";
        let p = ZonePlan::from_toml(text, "p.toml").unwrap();
        assert!(p
            .fitted_to(2000.0)
            .unwrap_err()
            .to_string()
            .contains("ends at 1km"));
    }
}
