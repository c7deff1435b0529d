//! The accessible area M. OWNER: access helper. Interface below is fixed; fill in the bodies.

use crate::{GridSpec, Result};
use std::path::PathBuf;

/// What the user asked M to be.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct AccessSpec {
    /// A polygon file (any GDAL vector format).
    pub polygon: Option<PathBuf>,
    /// Geodesic buffer around each record, km.
    pub buffer_km: Option<f64>,
    /// Geodesic buffer around the convex hull of the records, km.
    pub hull_buffer_km: Option<f64>,
}

/// M, rasterised row by row on the grid (a cell is in M when its centre is).
pub struct AccessMask {
    _todo: (),
}

impl AccessMask {
    /// Build M for `grid` from the spec; `records` are WGS84 (lon, lat) degrees.
    pub fn build(
        _grid: &GridSpec,
        _spec: &AccessSpec,
        _records: &[(f64, f64)],
    ) -> Result<AccessMask> {
        todo!()
    }
    /// Whether M is the whole raster (no M option given).
    pub fn is_whole_raster(&self) -> bool {
        todo!()
    }
    /// One line saying how M was made, for the report.
    pub fn description(&self) -> String {
        todo!()
    }
    /// Set `out[col] = true` for each cell of `row` whose centre lies in M, false otherwise.
    pub fn fill_row(&mut self, _row: usize, _out: &mut [bool]) -> Result<()> {
        todo!()
    }
}
