//! Block statistics of the DEM at coarser levels (2x, 4x, 8x, ... cells per side), built
//! once per DEM and shared read-only by every thread.
//!
//! A block at level `L` holds the `2^L x 2^L` cells whose column and row indices, divided
//! by `2^L`, give the block's indices; blocks at the grid's east and south edges hold
//! fewer. Each block keeps the count of its cells with data, the centroid of their
//! centres, their mean height, and the central second moments of (height, easting,
//! northing) over them. These are what the second-order Taylor expansion of the column
//! kernel about the centroid needs (see [`crate::engine`]), and they are additive, so
//! each level is built from the one below it with the parallel-axis rule:
//!
//! ```text
//! n = sum n_i,  m = sum n_i m_i / n,  C_ab = sum n_i (C_ab,i + (a_i - a)(b_i - b)) / n
//! ```
//!
//! Level 1 is not stored: its four cells are read from the DEM when needed, which keeps
//! the pyramid at a third of the DEM's own size (levels 2 and up hold 1/12 of the cells,
//! 48 bytes each). Two third moments, E[(h - h_mean)^2 (e - e_mean)] and the same with
//! the northing, say where in the block its height spread lies.

use crate::dem::Dem;
use rayon::prelude::*;

/// Statistics of the cells of one block with data. Offsets are from the block's
/// geometric centre, m; moments are per cell (divided by `n`), about the centroid.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct BlockStats {
    /// Cells with data.
    pub n: f32,
    /// Centroid easting offset from the block centre, m.
    pub ex: f32,
    /// Centroid northing offset from the block centre, m.
    pub ny: f32,
    /// Mean height, m.
    pub h: f32,
    /// Height variance, m^2.
    pub hh: f32,
    /// Covariance of height and easting, m^2.
    pub he: f32,
    /// Covariance of height and northing, m^2.
    pub hn: f32,
    /// Variance of the cell-centre eastings, m^2.
    pub ee: f32,
    /// Covariance of cell-centre easting and northing, m^2.
    pub en: f32,
    /// Variance of the cell-centre northings, m^2.
    pub nn: f32,
    /// Third moment E[(h - h_mean)^2 (e - e_mean)], m^3: where in the block the height
    /// spread lies (a step or a wall near one side).
    pub hhe: f32,
    /// Third moment E[(h - h_mean)^2 (n - n_mean)], m^3.
    pub hhn: f32,
}

/// Accumulates block statistics in f64: raw moments about a fixed origin (heights about
/// the first height added, which keeps them well conditioned), centred at the end.
#[derive(Debug, Clone, Copy, Default)]
pub struct StatsAccumulator {
    h0: Option<f64>,
    n: f64,
    se: f64,
    sn: f64,
    sh: f64,
    shh: f64,
    she: f64,
    shn: f64,
    see: f64,
    sen: f64,
    snn: f64,
    shhe: f64,
    shhn: f64,
}

impl StatsAccumulator {
    fn origin(&mut self, h: f64) -> f64 {
        *self.h0.get_or_insert(h)
    }

    /// Adds one cell at offset `(e, n)` from the accumulator's origin with height `h`,
    /// weight `w` (1 for a cell).
    #[inline]
    pub fn add_point(&mut self, e: f64, n: f64, h: f64, w: f64) {
        let h = h - self.origin(h);
        self.n += w;
        self.se += w * e;
        self.sn += w * n;
        self.sh += w * h;
        self.shh += w * h * h;
        self.she += w * h * e;
        self.shn += w * h * n;
        self.see += w * e * e;
        self.sen += w * e * n;
        self.snn += w * n * n;
        self.shhe += w * h * h * e;
        self.shhn += w * h * h * n;
    }

    /// Adds a whole block whose centre is at offset `(ce, cn)` from this origin.
    #[inline]
    pub fn add_block(&mut self, b: &BlockStats, ce: f64, cn: f64) {
        if b.n == 0.0 {
            return;
        }
        let n = b.n as f64;
        let e = ce + b.ex as f64;
        let y = cn + b.ny as f64;
        let h = b.h as f64 - self.origin(b.h as f64);
        let (hh, he, hn) = (b.hh as f64, b.he as f64, b.hn as f64);
        self.n += n;
        self.se += n * e;
        self.sn += n * y;
        self.sh += n * h;
        self.shh += n * (hh + h * h);
        self.she += n * (he + h * e);
        self.shn += n * (hn + h * y);
        self.see += n * (b.ee as f64 + e * e);
        self.sen += n * (b.en as f64 + e * y);
        self.snn += n * (b.nn as f64 + y * y);
        // E[h^2 e] = M_hhe + M_hh e + 2 h M_he + h^2 e about this origin.
        self.shhe += n * (b.hhe as f64 + hh * e + 2.0 * h * he + h * h * e);
        self.shhn += n * (b.hhn as f64 + hh * y + 2.0 * h * hn + h * h * y);
    }

    /// The statistics, centred on their centroid; offsets relative to this origin.
    pub fn finish(&self) -> BlockStats {
        if self.n <= 0.0 {
            return BlockStats::default();
        }
        let n = self.n;
        let e = self.se / n;
        let y = self.sn / n;
        let h = self.sh / n;
        let cov = |sab: f64, a: f64, b: f64| (sab / n - a * b) as f32;
        // E[(h - h)^2 (e - e)] = E[h^2 e] - 2 h E[h e] - e E[h^2] + 2 h^2 e.
        let third = |shhx: f64, shx: f64, x: f64| {
            (shhx / n - 2.0 * h * shx / n - x * self.shh / n + 2.0 * h * h * x) as f32
        };
        BlockStats {
            n: n as f32,
            ex: e as f32,
            ny: y as f32,
            h: (h + self.h0.unwrap_or(0.0)) as f32,
            hh: cov(self.shh, h, h).max(0.0),
            he: cov(self.she, h, e),
            hn: cov(self.shn, h, y),
            ee: cov(self.see, e, e).max(0.0),
            en: cov(self.sen, e, y),
            nn: cov(self.snn, y, y).max(0.0),
            hhe: third(self.shhe, self.she, e),
            hhn: third(self.shhn, self.shn, y),
        }
    }
}

/// One stored level of the pyramid.
#[derive(Debug, Clone)]
pub struct Level {
    /// Level number: blocks of `2^level` cells per side.
    pub level: u32,
    /// Blocks per row and per column.
    pub cols: usize,
    pub rows: usize,
    /// Block statistics, row-major from the north-west.
    pub blocks: Vec<BlockStats>,
    /// Cells of each block on the grid without data (for coverage).
    pub missing: Vec<u32>,
}

/// The block-statistics pyramid of a DEM.
#[derive(Debug, Clone)]
pub struct Pyramid {
    /// Levels 2, 3, ..., up to the level whose blocks cover the grid in one or two.
    pub levels: Vec<Level>,
    /// Cell sizes of the DEM, m.
    pub dx: f64,
    pub dy: f64,
}

impl Pyramid {
    /// Builds the pyramid of `dem` (levels 2 and up), in parallel over block rows.
    pub fn build(dem: &Dem) -> Pyramid {
        let mut levels = Vec::new();
        let top = top_level(dem.cols.max(dem.rows));
        if top >= 2 {
            levels.push(level_from_dem(dem, 2));
            for _ in 3..=top {
                let finer = levels.last().expect("a finer level");
                levels.push(level_from_finer(finer, dem.dx, dem.dy));
            }
        }
        Pyramid {
            levels,
            dx: dem.dx,
            dy: dem.dy,
        }
    }

    /// Highest level stored (1 when there is none).
    pub fn top_level(&self) -> u32 {
        self.levels.last().map(|l| l.level).unwrap_or(1)
    }

    /// The stored level `level` (>= 2).
    pub fn level(&self, level: u32) -> Option<&Level> {
        self.levels.get(level.checked_sub(2)? as usize)
    }

    /// Bytes held by the stored levels.
    pub fn bytes(&self) -> usize {
        self.levels
            .iter()
            .map(|l| {
                l.blocks.len() * (std::mem::size_of::<BlockStats>() + std::mem::size_of::<u32>())
            })
            .sum()
    }

    /// Cells without data of block `(bcol, brow)` at `level` (any level).
    pub fn missing(&self, dem: &Dem, level: u32, bcol: usize, brow: usize) -> u32 {
        match self.level(level) {
            Some(l) => l.missing[brow * l.cols + bcol],
            None => missing_from_dem(dem, level, bcol, brow),
        }
    }
}

/// Lowest level at which one block spans `cells` cells.
fn top_level(cells: usize) -> u32 {
    let mut level = 0;
    while (1usize << level) < cells {
        level += 1;
    }
    level
}

/// Statistics of one block straight from the DEM's cells.
pub fn block_from_dem(dem: &Dem, level: u32, bcol: usize, brow: usize) -> BlockStats {
    let size = 1usize << level;
    let c0 = bcol * size;
    let r0 = brow * size;
    let c1 = (c0 + size).min(dem.cols);
    let r1 = (r0 + size).min(dem.rows);
    let half_e = 0.5 * size as f64 * dem.dx;
    let half_n = 0.5 * size as f64 * dem.dy;
    let mut acc = StatsAccumulator::default();
    for row in r0..r1 {
        let n = half_n - ((row - r0) as f64 + 0.5) * dem.dy;
        let area = dem.area_factor(row);
        for col in c0..c1 {
            if let Some(h) = dem.height(col, row) {
                let w = area * dem.weight(col, row);
                if w > 0.0 {
                    let e = ((col - c0) as f64 + 0.5) * dem.dx - half_e;
                    acc.add_point(e, n, h, w);
                }
            }
        }
    }
    acc.finish()
}

/// Cells of block `(bcol, brow)` at `level` that lie on the grid but have no data.
pub fn missing_from_dem(dem: &Dem, level: u32, bcol: usize, brow: usize) -> u32 {
    let size = 1usize << level;
    let (c0, r0) = (bcol * size, brow * size);
    let (c1, r1) = ((c0 + size).min(dem.cols), (r0 + size).min(dem.rows));
    let mut missing = 0;
    for row in r0..r1 {
        for col in c0..c1 {
            if dem.height(col, row).is_none() {
                missing += 1;
            }
        }
    }
    missing
}

fn level_from_dem(dem: &Dem, level: u32) -> Level {
    let size = 1usize << level;
    let cols = dem.cols.div_ceil(size);
    let rows = dem.rows.div_ceil(size);
    let blocks: Vec<BlockStats> = (0..rows)
        .into_par_iter()
        .flat_map_iter(|brow| (0..cols).map(move |bcol| block_from_dem(dem, level, bcol, brow)))
        .collect();
    let missing: Vec<u32> = (0..rows)
        .into_par_iter()
        .flat_map_iter(|brow| (0..cols).map(move |bcol| missing_from_dem(dem, level, bcol, brow)))
        .collect();
    Level {
        level,
        cols,
        rows,
        blocks,
        missing,
    }
}

fn level_from_finer(finer: &Level, dx: f64, dy: f64) -> Level {
    let level = finer.level + 1;
    let cols = finer.cols.div_ceil(2);
    let rows = finer.rows.div_ceil(2);
    // Child centres are a quarter of the parent's side from its centre.
    let child_e = 0.5 * (1usize << finer.level) as f64 * dx;
    let child_n = 0.5 * (1usize << finer.level) as f64 * dy;
    let blocks: Vec<BlockStats> = (0..rows)
        .into_par_iter()
        .flat_map_iter(|brow| {
            (0..cols).map(move |bcol| {
                let mut acc = StatsAccumulator::default();
                for (dc, dr, ce, cn) in [
                    (0, 0, -child_e, child_n),
                    (1, 0, child_e, child_n),
                    (0, 1, -child_e, -child_n),
                    (1, 1, child_e, -child_n),
                ] {
                    let c = 2 * bcol + dc;
                    let r = 2 * brow + dr;
                    if c < finer.cols && r < finer.rows {
                        acc.add_block(&finer.blocks[r * finer.cols + c], ce, cn);
                    }
                }
                acc.finish()
            })
        })
        .collect();
    let mut missing = vec![0u32; cols * rows];
    for r in 0..finer.rows {
        for c in 0..finer.cols {
            missing[(r / 2) * cols + c / 2] += finer.missing[r * finer.cols + c];
        }
    }
    Level {
        level,
        cols,
        rows,
        blocks,
        missing,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rough_dem() -> Dem {
        let mut dem = Dem::from_fn("rough", 37, 29, 1000.0, 9000.0, 30.0, |x, y| {
            800.0 + 120.0 * (x / 97.0).sin() + 0.3 * y - 45.0 * (x * y / 5.0e5).cos()
        });
        // A few nodata cells.
        for i in [5, 77, 300, 301, 302, 900] {
            dem.heights[i] = f32::NAN;
        }
        dem
    }

    #[test]
    fn levels_agree_with_direct_statistics() {
        let dem = rough_dem();
        let pyr = Pyramid::build(&dem);
        assert_eq!(pyr.top_level(), 6);
        for level in 2..=pyr.top_level() {
            let l = pyr.level(level).unwrap();
            for brow in 0..l.rows {
                for bcol in 0..l.cols {
                    let direct = block_from_dem(&dem, level, bcol, brow);
                    let built = l.blocks[brow * l.cols + bcol];
                    let close = |a: f32, b: f32, scale: f32| (a - b).abs() <= 2e-5 * scale.max(1.0);
                    assert_eq!(direct.n, built.n);
                    assert!(close(direct.h, built.h, direct.h.abs()));
                    assert!(
                        close(direct.hh, built.hh, direct.hh),
                        "{} vs {}",
                        direct.hh,
                        built.hh
                    );
                    assert!(close(direct.he, built.he, direct.he.abs().max(direct.hh)));
                    assert!(close(direct.ee, built.ee, direct.ee));
                    assert!(close(direct.ex, built.ex, 30.0));
                    let scale = direct.hh * 300.0;
                    assert!(
                        close(direct.hhe, built.hhe, scale),
                        "{} vs {}",
                        direct.hhe,
                        built.hhe
                    );
                    assert!(
                        close(direct.hhn, built.hhn, scale),
                        "{} vs {}",
                        direct.hhn,
                        built.hhn
                    );
                }
            }
        }
    }

    #[test]
    fn full_block_has_uniform_grid_moments() {
        let dem = Dem::from_fn("flat", 16, 16, 0.0, 160.0, 10.0, |_, _| 5.0);
        let b = block_from_dem(&dem, 2, 1, 1);
        assert_eq!(b.n, 16.0);
        assert_eq!((b.ex, b.ny, b.h, b.hh), (0.0, 0.0, 5.0, 0.0));
        // Centres of 4 cells of 10 m: variance (4^2 - 1)/12 * 10^2 = 125 m^2.
        assert!((b.ee - 125.0).abs() < 1e-4 && (b.nn - 125.0).abs() < 1e-4);
    }
}
