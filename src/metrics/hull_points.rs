//! The points the modelled EOO hull is built from: the boundary corners of the occupied
//! patches, as WGS84 (lon, lat).

use crate::model::RangeModel;
use crate::Result;

/// (lon, lat) of the boundary corners of the patches `occupied` marks (by index).
pub(crate) fn occupied_hull_points(
    model: &RangeModel,
    occupied: &[bool],
) -> Result<Vec<(f64, f64)>> {
    let corners = model.boundary_corners(&|id| occupied[id as usize - 1])?;
    model.corner_lonlat(&corners)
}
