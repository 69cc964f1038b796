//! The arithmetic of the sensitivity and checking commands, apart from their wiring:
//! sweep radii and convergence ([`radius`]), input checks and statistics of differences
//! ([`checks`]), and map grids ([`grid`]).

pub mod checks;
pub mod grid;
pub mod radius;
