//! Synthetic test terrains: deterministic, analytic height functions for tests,
//! benchmarks and accuracy studies (fractal relief, a cliff, a narrow valley, a lone
//! peak). Heights are in metres, coordinates in metres of any projected frame.

use crate::dem::Dem;

/// A 64-bit integer hash (SplitMix64 finaliser), the source of all randomness here.
#[inline]
fn hash(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// A uniform value in [-1, 1] for lattice point `(i, j)` of octave `octave`.
#[inline]
fn lattice(seed: u64, octave: u32, i: i64, j: i64) -> f64 {
    let h = hash(seed ^ hash((octave as u64) << 48 ^ hash(i as u64 ^ hash(j as u64))));
    (h >> 11) as f64 / (1u64 << 52) as f64 - 1.0
}

/// Smoothly interpolated value noise of wavelength `wavelength` (m).
fn value_noise(seed: u64, octave: u32, x: f64, y: f64, wavelength: f64) -> f64 {
    let fx = x / wavelength;
    let fy = y / wavelength;
    let (i, j) = (fx.floor() as i64, fy.floor() as i64);
    let (tx, ty) = (fx - i as f64, fy - j as f64);
    let s = |t: f64| t * t * (3.0 - 2.0 * t);
    let (sx, sy) = (s(tx), s(ty));
    let a = lattice(seed, octave, i, j);
    let b = lattice(seed, octave, i + 1, j);
    let c = lattice(seed, octave, i, j + 1);
    let d = lattice(seed, octave, i + 1, j + 1);
    a + (b - a) * sx + (c - a) * sy + (a - b - c + d) * sx * sy
}

/// Fractal relief: octaves of value noise from `longest` down to `shortest` wavelength
/// (m), each halving the wavelength and scaling the amplitude by `2^-hurst`; the longest
/// octave has amplitude `amplitude` (m).
#[derive(Debug, Clone, Copy)]
pub struct Fractal {
    pub seed: u64,
    pub amplitude: f64,
    pub longest: f64,
    pub shortest: f64,
    pub hurst: f64,
}

impl Fractal {
    pub fn height(&self, x: f64, y: f64) -> f64 {
        let mut h = 0.0;
        let mut wavelength = self.longest;
        let mut amp = self.amplitude;
        let mut octave = 0;
        while wavelength >= self.shortest {
            h += amp * value_noise(self.seed, octave, x, y, wavelength);
            wavelength *= 0.5;
            amp *= 0.5f64.powf(self.hurst);
            octave += 1;
        }
        h
    }
}

/// The test terrains of the accuracy studies, centred on `(0, 0)`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Terrain {
    /// Mountainous fractal relief of about 1500 m amplitude.
    Fractal,
    /// A 1000 m cliff along the northing axis (x = 0), with rough ground on both sides.
    Cliff,
    /// A narrow (200 m) V-shaped valley 600 m deep along the easting axis.
    NarrowValley,
    /// A lone steep peak 800 m high, 300 m east of the origin, on gentle ground.
    LonePeak,
}

impl Terrain {
    pub const ALL: [Terrain; 4] = [
        Terrain::Fractal,
        Terrain::Cliff,
        Terrain::NarrowValley,
        Terrain::LonePeak,
    ];

    pub fn name(self) -> &'static str {
        match self {
            Terrain::Fractal => "fractal",
            Terrain::Cliff => "cliff",
            Terrain::NarrowValley => "narrow-valley",
            Terrain::LonePeak => "lone-peak",
        }
    }

    /// Height at `(x, y)`, m.
    pub fn height(self, x: f64, y: f64) -> f64 {
        let rough = Fractal {
            seed: 7,
            amplitude: 120.0,
            longest: 4000.0,
            shortest: 20.0,
            hurst: 0.7,
        };
        match self {
            Terrain::Fractal => {
                1500.0
                    + Fractal {
                        seed: 11,
                        amplitude: 900.0,
                        longest: 20_000.0,
                        shortest: 20.0,
                        hurst: 0.75,
                    }
                    .height(x, y)
            }
            Terrain::Cliff => {
                let step = 1000.0 / (1.0 + (-x / 8.0).exp());
                800.0 + step + rough.height(x, y)
            }
            Terrain::NarrowValley => {
                let depth = 600.0 * (1.0 - (y.abs() / 100.0)).max(0.0);
                let walls = 0.4 * y.abs().min(3000.0);
                1200.0 - depth + walls + 0.3 * rough.height(x, y)
            }
            Terrain::LonePeak => {
                let r2 = (x - 300.0).powi(2) + y * y;
                600.0 + 800.0 * (-r2 / (2.0 * 150.0f64.powi(2))).exp() + 0.2 * rough.height(x, y)
            }
        }
    }

    /// The terrain sampled on a square grid of `cells` x `cells` cells of size `cell`
    /// centred on the origin (cell centres off the origin by half a cell).
    pub fn dem(self, cells: usize, cell: f64) -> Dem {
        let half = cells as f64 * cell / 2.0;
        Dem::from_fn(self.name(), cells, cells, -half, half, cell, |x, y| {
            self.height(x, y)
        })
    }
}

/// Points to test at, near the origin: on cell centres, cell corners, cell edges and at
/// pseudo-random places, for a grid of cell size `cell` whose nodes include the origin.
pub fn test_positions(cell: f64) -> Vec<(&'static str, f64, f64)> {
    let mut out = vec![
        ("centre", 0.5 * cell, 0.5 * cell),
        ("corner", 0.0, 0.0),
        ("edge", 0.5 * cell, 0.0),
        ("centre2", -1.5 * cell, 2.5 * cell),
        ("corner2", 3.0 * cell, -2.0 * cell),
    ];
    for k in 0..5u64 {
        let u = (hash(1000 + k) >> 11) as f64 / (1u64 << 53) as f64;
        let v = (hash(2000 + k) >> 11) as f64 / (1u64 << 53) as f64;
        out.push(("random", (u - 0.5) * 20.0 * cell, (v - 0.5) * 20.0 * cell));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn terrains_are_deterministic_and_plausible() {
        for t in Terrain::ALL {
            let a = t.height(123.4, -567.8);
            assert_eq!(a, t.height(123.4, -567.8));
            assert!(a > 0.0 && a < 4000.0, "{} {a}", t.name());
        }
        let cliff_top = Terrain::Cliff.height(100.0, 0.0);
        let cliff_foot = Terrain::Cliff.height(-100.0, 0.0);
        assert!(cliff_top - cliff_foot > 800.0);
    }
}
