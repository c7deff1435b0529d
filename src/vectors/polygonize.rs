//! Polygons through GDAL/GEOS: validity without GDAL's warning on stderr, and the polygons of
//! an OGR geometry (what GEOS set operations return).

use crate::{Error, Result};
use gdal::vector::Geometry;
use geo_types::{MultiPolygon, Polygon};
use std::path::Path;

/// GEOS validity through GDAL, without GDAL's "Self-intersection at or near point" warning on
/// stderr (an invalid piece is expected here and repaired, not a user-facing problem).
pub(crate) fn is_valid_quiet(g: &Geometry) -> bool {
    // SAFETY: a thread-local handler pushed and popped around one call.
    unsafe { gdal_sys::CPLPushErrorHandler(Some(gdal_sys::CPLQuietErrorHandler)) };
    let ok = g.is_valid();
    unsafe { gdal_sys::CPLPopErrorHandler() };
    ok
}

/// The polygons of an OGR geometry (lines and points that set operations may leave are dropped).
pub(crate) fn polygons_of(g: &Geometry, context: &Path) -> Result<MultiPolygon<f64>> {
    let geo = g
        .to_geo()
        .map_err(Error::gdal(context, "reading a polygon from GDAL"))?;
    let mut out = Vec::new();
    collect_polygons(geo, &mut out);
    Ok(MultiPolygon(out))
}

fn collect_polygons(g: geo_types::Geometry<f64>, out: &mut Vec<Polygon<f64>>) {
    match g {
        geo_types::Geometry::Polygon(p) => out.push(p),
        geo_types::Geometry::MultiPolygon(mp) => out.extend(mp.0),
        geo_types::Geometry::GeometryCollection(gc) => {
            for g in gc.0 {
                collect_polygons(g, out);
            }
        }
        _ => {}
    }
}
