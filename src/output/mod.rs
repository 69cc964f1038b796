//! Writers: tables (CSV), grids (GeoTIFF) and plots (PNG, SVG), and the shared text
//! formatting. Numbers reach this module as numbers in SI units or typed results and are
//! formatted here. Every file is written through a temporary file beside it that is
//! renamed at the end, so a failed run leaves nothing half-written.

pub mod files;
pub mod geotiff;
pub mod plot;
pub mod record;
pub mod station_table;
pub mod table;
pub mod vector;
