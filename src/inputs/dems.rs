//! The DEMs of a run: any number, in any CRS, tiles included, read only where the
//! points' discs need them.
//!
//! Opening: each file's header is read and checked; tiles of one grid (same CRS, cell
//! size and cell alignment) are joined into one mosaic, so a DEM cut into tiles is the
//! whole DEM again; the DEMs are put finest first (with a note when the command line had
//! them in another order); DEMs whose metadata declare different vertical datums are
//! refused. Reading: the points are placed in every DEM's CRS with PROJ; of each DEM only
//! the window holding every point's disc of the outer radius is read, aligned to the
//! largest pyramid block the engine can use there, so that the result does not depend on
//! the window. Then each coarser DEM gets its weights (the share of each cell no finer
//! DEM covers with data) and a set of several DEMs its union grid for the coverage (see
//! [`crate::engine::set`]).

use crate::dem::crs::Transform;
use crate::dem::read::DemHeader;
use crate::dem::{Dem, GridKind};
use crate::text::list_some;
use crate::units::format_length;
use anyhow::bail;
use std::path::PathBuf;

/// Sample points per cell side when weights and the union grid are computed.
pub const WEIGHT_SAMPLES: usize = 4;

/// How much of a DEM file a run reads.
#[derive(Debug, Clone)]
pub struct ReadReport {
    pub path: String,
    pub cells_read: usize,
    pub cells_in_file: usize,
    pub cell_size_m: f64,
}

impl ReadReport {
    /// One line for `plan` and the run summary.
    pub fn describe(&self) -> String {
        format!(
            "{}: {} of {} cells read ({:.1} MB, {:.1} % of the file), cells of {}",
            self.path,
            self.cells_read,
            self.cells_in_file,
            (self.cells_read * 4) as f64 / 1e6,
            100.0 * self.cells_read as f64 / self.cells_in_file.max(1) as f64,
            format_length(self.cell_size_m)
        )
    }
}

/// The DEM files opened and put in order, before their heights are read.
pub struct OpenedDems {
    /// Headers finest first (tiles of one grid joined).
    headers: Vec<DemHeader>,
    /// The files behind each header.
    files: Vec<Vec<PathBuf>>,
    /// Things the user should know about how the DEMs were taken.
    pub notes: Vec<String>,
}

/// The DEMs of a run, read.
pub struct DemSet {
    /// The DEMs finest first (the first is the primary: the run's coordinates are in its CRS).
    pub dems: Vec<Dem>,
    /// With several DEMs, the union grid for the coverage (in the last DEM's CRS).
    pub union: Option<Dem>,
    /// The run's CRS: the finest DEM's (even if no disc reached it), as WKT. Points are
    /// given in it.
    pub base_crs: String,
    /// Whether the run's CRS is geographic (longitude, latitude) or projected.
    pub base_kind: GridKind,
    /// How much of each DEM was read.
    pub reads: Vec<ReadReport>,
    /// Things the user should know about how the DEMs were taken.
    pub notes: Vec<String>,
}

impl OpenedDems {
    /// Opens and checks every DEM file, joins tiles of one grid, and orders the DEMs
    /// finest first.
    pub fn open(paths: &[PathBuf], dem_nodata: Option<f64>) -> anyhow::Result<OpenedDems> {
        let mut groups: Vec<Vec<DemHeader>> = Vec::new();
        let mut group_files: Vec<Vec<PathBuf>> = Vec::new();
        for path in paths {
            let mut header = DemHeader::open(path)?;
            header.assume_nodata(dem_nodata);
            match groups.iter().position(|g| g[0].same_grid(&header)) {
                Some(k) => {
                    groups[k].push(header);
                    group_files[k].push(path.clone());
                }
                None => {
                    groups.push(vec![header]);
                    group_files.push(vec![path.clone()]);
                }
            }
        }
        let mut notes = Vec::new();
        for g in groups.iter().filter(|g| g.len() > 1) {
            notes.push(format!(
                "{} tiles of one grid are read as one DEM: {}",
                g.len(),
                g.iter().map(|h| h.path()).collect::<Vec<_>>().join(", ")
            ));
        }
        let headers: Vec<DemHeader> = groups.into_iter().map(DemHeader::mosaic).collect();
        let mut order: Vec<usize> = (0..headers.len()).collect();
        order.sort_by(|&a, &b| {
            headers[a]
                .cell_size_m()
                .total_cmp(&headers[b].cell_size_m())
        });
        if order.iter().enumerate().any(|(i, &k)| i != k) {
            notes.push(format!(
                "the DEMs were put finest first: {}",
                order
                    .iter()
                    .map(|&k| format!(
                        "{} ({})",
                        headers[k].path(),
                        format_length(headers[k].cell_size_m())
                    ))
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        }
        let mut slots: Vec<Option<DemHeader>> = headers.into_iter().map(Some).collect();
        let headers: Vec<DemHeader> = order
            .iter()
            .map(|&k| slots[k].take().expect("each DEM once"))
            .collect();
        let files: Vec<Vec<PathBuf>> = order.iter().map(|&k| group_files[k].clone()).collect();
        for w in headers.windows(2) {
            if let (Some(a), Some(b)) = (&w[0].vertical_crs, &w[1].vertical_crs) {
                if a != b {
                    bail!(
                        "{} has heights on {a} but {} on {b}; give DEMs on one vertical datum (convert one with a geoid model first)",
                        w[0].path(),
                        w[1].path()
                    );
                }
            }
        }
        Ok(OpenedDems {
            headers,
            files,
            notes,
        })
    }

    /// The files of each DEM, finest first (several for tiles joined into one DEM).
    pub fn files(&self) -> &[Vec<PathBuf>] {
        &self.files
    }

    /// CRS of the primary (finest) DEM, as WKT.
    pub fn primary_crs(&self) -> &str {
        &self.headers[0].crs_wkt
    }

    /// Name of the primary DEM.
    pub fn primary_name(&self) -> &str {
        self.headers[0].path()
    }

    /// Grid kind of the primary DEM.
    pub fn primary_kind(&self) -> GridKind {
        self.headers[0].kind
    }

    /// Extent `(x_lo, x_hi, y_lo, y_hi)` of the primary DEM in its CRS.
    pub fn primary_extent(&self) -> (f64, f64, f64, f64) {
        let h = &self.headers[0];
        let gt = h.geotransform;
        (
            gt[0],
            gt[0] + gt[1] * h.cols as f64,
            gt[3] + gt[5] * h.rows as f64,
            gt[3],
        )
    }

    /// Cell size of the primary DEM, m.
    pub fn primary_cell_m(&self) -> f64 {
        self.headers[0].cell_size_m()
    }

    /// Number of DEMs (tiles of one grid counted once).
    pub fn len(&self) -> usize {
        self.headers.len()
    }

    /// Whether there is no DEM.
    pub fn is_empty(&self) -> bool {
        self.headers.is_empty()
    }

    /// Reads the part of every DEM that the discs of radius `radius` (m) around the
    /// `footprint` points (in the primary DEM's CRS) need, or every DEM whole for `None`.
    /// DEMs that reach no disc are left out (with a note); `points` names the points in
    /// messages (the station file, or the map's grid).
    pub fn read(
        self,
        footprint: &[(f64, f64)],
        radius: Option<f64>,
        points: &str,
    ) -> anyhow::Result<DemSet> {
        let OpenedDems {
            headers, mut notes, ..
        } = self;
        let base_wkt = headers[0].crs_wkt.clone();
        let base_name = headers[0].path().to_string();
        let base_kind = headers[0].kind;
        let mut dems = Vec::new();
        let mut reads = Vec::new();
        for header in &headers {
            let t = Transform::between(&base_wkt, &header.crs_wkt, &base_name, header.path())?;
            let window = match radius {
                None => None,
                Some(r) => {
                    let mut moved = footprint.to_vec();
                    t.convert_all(&mut moved).map_err(|e| {
                        anyhow::anyhow!(
                            "the points cannot be placed in the CRS of {} ({e}); check their coordinates",
                            header.path()
                        )
                    })?;
                    match disc_window(header, &moved, r) {
                        Some(w) => Some(w),
                        None => {
                            notes.push(format!(
                                "{} does not reach any station's disc and is left out",
                                header.path()
                            ));
                            continue;
                        }
                    }
                }
            };
            let dem = header.read(window)?;
            reads.push(ReadReport {
                path: header.path().to_string(),
                cells_read: dem.len(),
                cells_in_file: header.cols * header.rows,
                cell_size_m: header.cell_size_m(),
            });
            dems.push(dem);
        }
        if dems.is_empty() {
            bail!(
                "{points}: none of the DEMs ({}) reaches any of its points; check the coordinates and --stations-crs",
                headers.iter().map(|h| h.path()).collect::<Vec<_>>().join(", ")
            );
        }
        set_weights(&mut dems)?;
        Ok(DemSet {
            dems,
            union: None,
            base_crs: base_wkt,
            base_kind,
            reads,
            notes,
        })
    }
}

impl DemSet {
    /// Builds the union grid of several DEMs for the coverage of the discs of radius
    /// `radius` (m) around the footprint points (in the run's CRS); nothing for one DEM.
    /// Call it once the DEMs' data are final (after a density raster has marked the
    /// cells it does not cover).
    pub fn build_union(&mut self, footprint: &[(f64, f64)], radius: f64) -> anyhow::Result<()> {
        self.union = if self.dems.len() > 1 {
            Some(union_grid(
                &self.dems,
                &self.transforms()?,
                footprint,
                radius,
            )?)
        } else {
            None
        };
        Ok(())
    }

    /// The finest DEM read.
    pub fn finest(&self) -> &Dem {
        &self.dems[0]
    }

    /// The transformations from the run's CRS into each DEM's (built when asked: PROJ's
    /// objects are not to be shared between threads).
    pub fn transforms(&self) -> anyhow::Result<Vec<Transform>> {
        self.dems
            .iter()
            .map(|d| {
                Transform::between(&self.base_crs, &d.crs_wkt, "the stations' CRS", &d.source)
                    .map_err(anyhow::Error::from)
            })
            .collect()
    }

    /// Positions `xy` (in the run's CRS) in every DEM's CRS: `[dem][point]`.
    /// `what(i)` names point `i` in a message.
    pub fn locate(
        &self,
        xy: &[(f64, f64)],
        what: &dyn Fn(usize) -> String,
    ) -> anyhow::Result<Vec<Vec<(f64, f64)>>> {
        let mut out = Vec::with_capacity(self.dems.len());
        for (dem, t) in self.dems.iter().zip(self.transforms()?) {
            let mut moved = xy.to_vec();
            if t.convert_all(&mut moved).is_err() {
                for (i, p) in xy.iter().enumerate() {
                    if let Err(e) = t.convert(p.0, p.1) {
                        bail!(
                            "{} cannot be placed in the CRS of {} ({e}); check its coordinates",
                            what(i),
                            dem.source
                        );
                    }
                }
            }
            out.push(moved);
        }
        Ok(out)
    }

    /// Index of the finest DEM with data at point `i` of `located` (`[dem][point]`).
    pub fn serving(&self, located: &[Vec<(f64, f64)>], i: usize) -> Option<usize> {
        self.dems
            .iter()
            .zip(located)
            .position(|(d, p)| d.bilinear(p[i].0, p[i].1).is_some())
    }
}

/// Grid-unit margin around points that holds their discs of `radius` m.
fn margin(header: &DemHeader, max_abs_lat: f64, radius: f64) -> (f64, f64) {
    let gt = header.geotransform;
    match header.kind {
        GridKind::Projected => (radius + 2.0 * gt[1], radius - 2.0 * gt[5]),
        GridKind::Geographic(_) => {
            // 110.5 km per degree of latitude is a lower bound of its length.
            let lat = radius / 110_500.0 * 1.02 - 2.0 * gt[5];
            let cos = (max_abs_lat + lat).min(89.0).to_radians().cos();
            (radius / (110_500.0 * cos) * 1.02 + 2.0 * gt[1], lat)
        }
    }
}

/// Bounding box of points widened by the discs' margin, in a header's grid units.
fn disc_box(header: &DemHeader, points: &[(f64, f64)], radius: f64) -> (f64, f64, f64, f64) {
    let max_lat = points.iter().map(|p| p.1.abs()).fold(0.0, f64::max);
    let (mx, my) = margin(header, max_lat, radius);
    let x_lo = points.iter().map(|p| p.0).fold(f64::INFINITY, f64::min) - mx;
    let x_hi = points.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max) + mx;
    let y_lo = points.iter().map(|p| p.1).fold(f64::INFINITY, f64::min) - my;
    let y_hi = points.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max) + my;
    (x_lo, x_hi, y_lo, y_hi)
}

/// The cell window of a DEM that holds the discs, aligned to the largest pyramid block
/// the zoned engine can use at this radius: the blocks of the window are then the blocks
/// of the whole file, and the results do not depend on how much of the file was read.
fn disc_window(
    header: &DemHeader,
    points: &[(f64, f64)],
    radius: f64,
) -> Option<(usize, usize, usize, usize)> {
    let (x_lo, x_hi, y_lo, y_hi) = disc_box(header, points, radius);
    let w = header.window(x_lo, x_hi, y_lo, y_hi)?;
    let cells = (0.6 * radius / header.cell_size_m()).max(1.0);
    let level = (cells.log2().ceil() as u32 + 1).min(20);
    let a = 1usize << level;
    let (c0, r0) = (w.0 / a * a, w.1 / a * a);
    let c1 = ((w.0 + w.2).div_ceil(a) * a).min(header.cols);
    let r1 = ((w.1 + w.3).div_ceil(a) * a).min(header.rows);
    Some((c0, r0, c1 - c0, r1 - r0))
}

/// Transformations between every pair of DEMs: `t[from][to]`.
fn pairwise(dems: &[Dem]) -> anyhow::Result<Vec<Vec<Transform>>> {
    dems.iter()
        .map(|a| {
            dems.iter()
                .map(|b| {
                    Transform::between(&a.crs_wkt, &b.crs_wkt, &a.source, &b.source)
                        .map_err(anyhow::Error::from)
                })
                .collect()
        })
        .collect()
}

/// Whether DEM `dem` has data at the point `(x, y)` of another DEM's CRS moved by `t`.
fn has_data(dem: &Dem, t: &Transform, x: f64, y: f64) -> bool {
    match t.convert(x, y) {
        Ok((u, v)) => dem.nearest(u, v).is_some(),
        Err(_) => false,
    }
}

/// Bounding box of `dem`'s extent in another CRS (`t`: from the DEM's CRS into it),
/// edges sampled at 16 points each.
fn extent_in(dem: &Dem, t: &Transform) -> (f64, f64, f64, f64) {
    let mut b = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    let (x0, x1, y0, y1) = (dem.x_left, dem.x_right(), dem.y_bottom(), dem.y_top);
    for k in 0..=16 {
        let f = k as f64 / 16.0;
        for (x, y) in [
            (x0 + f * (x1 - x0), y0),
            (x0 + f * (x1 - x0), y1),
            (x0, y0 + f * (y1 - y0)),
            (x1, y0 + f * (y1 - y0)),
        ] {
            if let Ok((u, v)) = t.convert(x, y) {
                b = (b.0.min(u), b.1.max(u), b.2.min(v), b.3.max(v));
            }
        }
    }
    b
}

/// Cell index range of `dem` meeting the box `(x_lo, x_hi, y_lo, y_hi)` of its CRS.
fn cells_in(dem: &Dem, b: (f64, f64, f64, f64)) -> (usize, usize, usize, usize) {
    let c_lo = (((b.0 - dem.x_left) / dem.dx).floor().max(0.0) as usize).min(dem.cols);
    let c_hi = (((b.1 - dem.x_left) / dem.dx).ceil().max(0.0) as usize).min(dem.cols);
    let r_lo = (((dem.y_top - b.3) / dem.dy).floor().max(0.0) as usize).min(dem.rows);
    let r_hi = (((dem.y_top - b.2) / dem.dy).ceil().max(0.0) as usize).min(dem.rows);
    (c_lo, c_hi, r_lo, r_hi)
}

/// Sets each coarser DEM's weights: the share of each cell that no finer DEM covers with
/// data, sampled on [`WEIGHT_SAMPLES`]^2 points per cell.
fn set_weights(dems: &mut [Dem]) -> anyhow::Result<()> {
    if dems.len() < 2 {
        return Ok(());
    }
    let t = pairwise(dems)?;
    let s = WEIGHT_SAMPLES;
    #[allow(clippy::needless_range_loop)] // `k` indexes the DEMs, split around it, and `t`
    for k in 1..dems.len() {
        let (finer, rest) = dems.split_at_mut(k);
        let coarse = &mut rest[0];
        let mut weights = vec![1.0f32; coarse.cols * coarse.rows];
        for (j, fine) in finer.iter().enumerate() {
            let (c_lo, c_hi, r_lo, r_hi) = cells_in(coarse, extent_in(fine, &t[j][k]));
            for row in r_lo..r_hi {
                for col in c_lo..c_hi {
                    let i = row * coarse.cols + col;
                    if weights[i] == 0.0 {
                        continue;
                    }
                    let mut covered = 0;
                    for a in 0..s {
                        for b in 0..s {
                            let x = coarse.x_left
                                + (col as f64 + (a as f64 + 0.5) / s as f64) * coarse.dx;
                            let y = coarse.y_top
                                - (row as f64 + (b as f64 + 0.5) / s as f64) * coarse.dy;
                            if has_data(fine, &t[k][j], x, y) {
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
    }
    Ok(())
}

/// Largest union grid built, cells (its 4-byte values and pyramid take about 6 bytes a cell).
pub const MAX_UNION_CELLS: usize = 400_000_000;

/// The union grid of several DEMs: on the last (coarsest) DEM's cells, over the discs of
/// radius `radius` around the footprint points (reaching past that DEM where they do),
/// 0 where some DEM has data at the cell's centre and nodata (NaN) where none has.
fn union_grid(
    dems: &[Dem],
    transforms: &[Transform],
    footprint: &[(f64, f64)],
    radius: f64,
) -> anyhow::Result<Dem> {
    let last = dems.len() - 1;
    let k = &dems[last];
    let mut moved = footprint.to_vec();
    transforms[last].convert_all(&mut moved)?;
    let max_lat = moved.iter().map(|p| p.1.abs()).fold(0.0, f64::max);
    let (mx, my) = match k.kind {
        GridKind::Projected => (radius + 2.0 * k.dx, radius + 2.0 * k.dy),
        GridKind::Geographic(_) => {
            let lat = radius / 110_500.0 * 1.02 + 2.0 * k.dy;
            let cos = (max_lat + lat).min(89.0).to_radians().cos();
            (radius / (110_500.0 * cos) * 1.02 + 2.0 * k.dx, lat)
        }
    };
    let x_lo = moved.iter().map(|p| p.0).fold(f64::INFINITY, f64::min) - mx;
    let x_hi = moved.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max) + mx;
    let y_lo = moved.iter().map(|p| p.1).fold(f64::INFINITY, f64::min) - my;
    let y_hi = moved.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max) + my;
    // Whole cells of the coarsest DEM's lattice, extended past its edges.
    let c0 = ((x_lo - k.x_left) / k.dx).floor() as i64;
    let c1 = ((x_hi - k.x_left) / k.dx).ceil() as i64;
    let r0 = ((k.y_top - y_hi) / k.dy).floor() as i64;
    let r1 = ((k.y_top - y_lo) / k.dy).ceil() as i64;
    let (cols, rows) = ((c1 - c0).max(1) as usize, (r1 - r0).max(1) as usize);
    if cols.saturating_mul(rows) > MAX_UNION_CELLS {
        bail!(
            "the stations' discs span {cols} x {rows} cells of {}, more than the {MAX_UNION_CELLS} cells ringsum counts the coverage of several DEMs on; give a coarser last DEM or fewer, closer stations per run",
            k.source
        );
    }
    let from_k = pairwise(dems)?.swap_remove(last);
    let mut heights = vec![f32::NAN; cols * rows];
    for row in 0..rows {
        let gr = r0 + row as i64;
        let y = k.y_top - (gr as f64 + 0.5) * k.dy;
        for col in 0..cols {
            let gc = c0 + col as i64;
            let x = k.x_left + (gc as f64 + 0.5) * k.dx;
            let on_k = gc >= 0
                && gr >= 0
                && (gc as usize) < k.cols
                && (gr as usize) < k.rows
                && k.height(gc as usize, gr as usize).is_some();
            let covered = on_k
                || dems[..last]
                    .iter()
                    .zip(&from_k)
                    .any(|(d, t)| has_data(d, t, x, y));
            if covered {
                heights[row * cols + col] = 0.0;
            }
        }
    }
    Ok(Dem {
        source: format!(
            "the union of {}",
            list_some(&dems.iter().map(|d| d.source.clone()).collect::<Vec<_>>())
        ),
        cols,
        rows,
        x_left: k.x_left + c0 as f64 * k.dx,
        y_top: k.y_top - r0 as f64 * k.dy,
        dx: k.dx,
        dy: k.dy,
        heights,
        crs_wkt: k.crs_wkt.clone(),
        kind: k.kind,
        weights: None,
    })
}
