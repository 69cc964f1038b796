//! Gravity kernels of simple bodies, in station-centred coordinates.
//!
//! # Frame and sign
//! The station is at the origin; `e` (easting), `n` (northing) and `u` (upward) are in
//! metres. Every kernel here returns the **terrain-correction contribution per unit
//! G*rho** of the mass between two heights `u_ref` and `u_top` at some place:
//!
//! ```text
//! k(u_ref, u_top) = (upward attraction of the mass filling [u_ref, u_top]) / (G rho)   if u_top > u_ref
//! k(u_ref, u_top) = (downward attraction of the mass filling [u_top, u_ref]) / (G rho) if u_top < u_ref
//! ```
//!
//! so `k` is antisymmetric in its two heights. With `u_ref` the Bouguer reference surface
//! (the station's level, lowered by the curvature drop in the spherical convention) and
//! `u_top` the terrain, `G rho k` is that place's part of the terrain correction: a hill
//! above the station (mass the Bouguer slab lacks, pulling up) and a valley below it (slab
//! mass that is not there) both give positive values. A hill whose whole column sits below
//! the station's horizon (curvature) gives a negative value, as it should: distant
//! terrain adjusted for curvature can give negative terrain corrections (Nowell 1999).
//! The unit of `k` is metres for prisms and sectors (volume integrals over distance
//! squared) and 1/m for the column kernel per unit area.
//!
//! # Kernels
//! - [`prism`](mod@prism): right rectangular prism, Nagy et al. (2000) closed form, with a quadrature
//!   form far from the prism where the closed form loses digits.
//! - [`column`](mod@column): vertical line mass (column) per unit area and its derivatives, for block
//!   statistics evaluated by Taylor expansion.
//! - [`ring_sector`](mod@ring_sector): annular sector of uniform height (Hammer 1939 compartments).

pub mod column;
pub mod prism;
pub mod ring_sector;

pub use column::column_kernel;
pub use prism::{prism_kernel, prism_kernel_closed_form};
pub use ring_sector::ring_sector_kernel;
