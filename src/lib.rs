//! areal: from a continuous suitability raster and occurrence records to a species range:
//! an omission-based threshold, the accessible area M, range classes, connected patches
//! and their true areas on the WGS84 ellipsoid.
//!
//! The pipeline stages are modules of their own; this file is the public surface.
#![deny(missing_docs)]

pub mod access;
pub mod area;
mod error;
mod grid;
pub mod patches;
pub mod records;

pub use error::{Error, Result};
pub use grid::GridSpec;
