//! ringsum: gravity terrain corrections from elevation grids.
//!
//! The library behind the `ringsum` command. Modules, from the physics up:
//! - [`units`]: constants (G, mGal) and the length parser.
//! - [`kernels`]: gravity of prisms, columns and ring sectors (pure functions).
//! - [`dem`]: the elevation grid, its GDAL reader and writer.
//! - [`stations`]: the station file and coordinate transformation (PROJ).
//! - [`engine`]: per-station integration, parallel over stations.
//! - [`reduce`]: the reduction chain's formulas (normal gravity, free-air, Bouguer).
//! - [`anomaly`]: the reduction chain's columns in the `correct` table, densities.
//! - [`water`]: lakes and sea in the terrain correction.
//! - [`output`]: the result table writers.
//! - [`cli`] and [`app`]: the command line and what each command does.
//! - [`sweep`], [`audit`], [`map`] (options in [`sens_cli`]) and [`plot`]: sensitivity
//!   to radius, density and DEM, input checks and legacy comparison, TC grids, plots.

pub mod anomaly;
pub mod app;
pub mod audit;
pub mod benchdata;
pub mod cli;
pub mod dem;
pub mod density;
pub mod engine;
pub mod field_inner;
pub mod kernels;
pub mod map;
pub mod nested;
pub mod output;
pub mod plot;
pub mod progress;
pub mod reduce;
pub mod sens_cli;
pub mod stations;
pub mod sweep;
pub mod synthetic;
pub mod units;
pub mod water;
pub mod zones;
