//! ringsum: gravity terrain corrections from elevation grids.
//!
//! The library behind the `ringsum` command. One pipeline serves every command:
//!
//! ```text
//! config (checked settings) -> inputs (DEMs, stations, rasters) -> compute (engine)
//!   -> results (typed, SI) -> output (tables, grids, plots)
//! ```
//!
//! The core (no native libraries; `cargo build --lib --no-default-features`):
//! - [`units`]: constants (G, mGal) and the length parser.
//! - [`kernels`]: gravity of prisms, columns and ring sectors (pure functions).
//! - [`zones`]: the zone plan (pure data).
//! - [`dem`]: the elevation grid.
//! - [`engine`]: per-point integration over a set of DEMs, the block pyramid, and the
//!   parallel runs (the only place that uses rayon).
//! - [`reduce`]: the reduction chain's formulas (normal gravity, free-air, Bouguer).
//! - [`synthetic`]: analytic test terrains; [`text`]: lists, numbers and sizes in words.
//!
//! Around it (the default feature `io`: GDAL, PROJ, the command line):
//! - [`cli`] and [`config`]: the command line and its checked settings.
//! - [`inputs`]: reading DEMs (any number, any CRS, tiles), stations, rasters, water.
//! - [`compute`] and [`results`]: the engine step and its typed per-point results.
//! - [`analysis`]: the arithmetic of sweep, audit and map.
//! - [`output`]: tables, GeoTIFF grids and plots; [`progress`], the progress bar.
//! - [`commands`]: each command's wiring.

pub mod dem;
pub mod engine;
pub mod kernels;
pub mod reduce;
pub mod synthetic;
pub mod text;
pub mod units;
pub mod zones;

#[cfg(feature = "io")]
pub mod analysis;
#[cfg(feature = "io")]
pub mod benchdata;
#[cfg(feature = "io")]
pub mod cli;
#[cfg(feature = "io")]
pub mod commands;
#[cfg(feature = "io")]
pub mod compute;
#[cfg(feature = "io")]
pub mod config;
#[cfg(feature = "io")]
pub mod inputs;
#[cfg(feature = "io")]
pub mod output;
#[cfg(feature = "io")]
pub mod paths;
#[cfg(feature = "io")]
pub mod progress;
#[cfg(feature = "io")]
pub mod results;
