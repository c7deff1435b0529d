//! Extent of occurrence: the minimum convex polygon of a point set and its geodesic area.
//!
//! Inputs: points as WGS84 (lon, lat) degrees (records, or the corners of the boundary cells
//! of the occupied modelled range). The hull is built on the sphere by the accessible-area
//! module's spherical hull (`access::hull`): each point is taken to its geodetic unit normal,
//! the points are projected gnomonically around a centre that sees them all in its open
//! hemisphere (great circles become straight lines there) and the planar hull is taken. So
//! sets across the antimeridian and sets around a pole are handled like any other; nothing is
//! done in raw lon/lat. The area is that of the polygon through the hull's vertices with
//! geodesic edges on the WGS84 ellipsoid (Karney 2013, GeographicLib `PolygonArea` through
//! geographiclib-rs), in km2.
//!
//! Degenerate sets: fewer than three distinct points, or points on one great circle, have no
//! polygon; their hull area is 0 with a note. Points that do not fit in an open hemisphere
//! have no spherical convex hull; no EOO is given (None) with a note.

use crate::access::hull::{HullError, HullShape, SphericalHull};
use geographiclib_rs::{Geodesic, PolygonArea, Winding};

/// How the EOO is computed, as printed in the report.
pub const EOO_METHOD: &str = "minimum convex polygon (convex hull) of the points, built on the sphere of geodetic normals (gnomonic projection around the points, so valid across the antimeridian and near the poles); area of the polygon through the hull's vertices with geodesic edges on the WGS84 ellipsoid (Karney 2013, GeographicLib PolygonArea)";

/// The hull of a point set and its area.
#[derive(Debug, Clone, PartialEq)]
pub struct HullArea {
    /// Geodesic area of the hull polygon, km2 (0 for a point or a segment); None when the
    /// points do not fit in one hemisphere.
    pub area_km2: Option<f64>,
    /// Hull vertices (0 when no hull).
    pub vertices: usize,
    /// Distinct points in the set.
    pub distinct_points: usize,
    /// Why the area is 0 or missing, if it is.
    pub note: Option<String>,
}

/// Geodesic area (km2) of the polygon through `lonlat` vertices ((lon, lat) degrees, in
/// order, not closed), WGS84, GeographicLib `PolygonArea`. The absolute value is returned
/// for either winding, so the polygon must cover less than half the ellipsoid.
pub fn geodesic_polygon_area_km2(lonlat: &[(f64, f64)]) -> f64 {
    let g = Geodesic::wgs84();
    let mut pa = PolygonArea::new(&g, Winding::CounterClockwise);
    for &(lon, lat) in lonlat {
        pa.add_point(lat, lon);
    }
    let (_, area_m2, _) = pa.compute(true);
    area_m2.abs() / 1e6
}

/// Normalised copies of the distinct points: lon in [-180, 180), lon 0 at the poles.
pub(crate) fn distinct_points(points: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let mut v: Vec<(f64, f64)> = points
        .iter()
        .filter(|p| p.0.is_finite() && p.1.is_finite())
        .map(|&(lon, lat)| {
            if lat.abs() >= 90.0 {
                (0.0, lat.signum() * 90.0)
            } else {
                (crate::grid::normalise_lon(lon), lat)
            }
        })
        .collect();
    // Points equal in this order are equal bit for bit, so an unstable sort is exact.
    v.sort_unstable_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
    v.dedup();
    v
}

/// The convex hull of `points` and its geodesic area. See the module documentation.
///
/// ```
/// use areal::metrics::hull_area;
/// // A 1-degree square at the equator across the antimeridian, with an inner point: the
/// // hull is the square, 12,308.778 km2 with geodesic edges (GeographicLib PolygonArea).
/// let h = hull_area(&[(179.5, 0.0), (-179.5, 0.0), (-179.5, 1.0), (179.5, 1.0), (180.0, 0.5)]);
/// assert_eq!(h.vertices, 4);
/// assert!((h.area_km2.unwrap() - 12_308.778_361).abs() < 1e-5);
/// // Two distinct points: no area.
/// assert_eq!(hull_area(&[(0.0, 0.0), (1.0, 1.0), (1.0, 1.0)]).area_km2, Some(0.0));
/// ```
pub fn hull_area(points: &[(f64, f64)]) -> HullArea {
    let pts = distinct_points(points);
    let n = pts.len();
    if n < 3 {
        return HullArea {
            area_km2: Some(0.0),
            vertices: n,
            distinct_points: n,
            note: Some(format!(
                "fewer than 3 distinct points ({n}): the convex hull has no area (0 km2)"
            )),
        };
    }
    let hull = match SphericalHull::new(&pts) {
        Ok(h) => h,
        Err(HullError::TooWide) | Err(HullError::Empty) => {
            return HullArea {
                area_km2: None,
                vertices: 0,
                distinct_points: n,
                note: Some(
                    "the points do not fit in one hemisphere, so their convex hull on the sphere is not defined; no EOO is given".into(),
                ),
            }
        }
    };
    let verts = hull.vertices_lonlat();
    if hull.shape != HullShape::Polygon {
        return HullArea {
            area_km2: Some(0.0),
            vertices: verts.len(),
            distinct_points: n,
            note: Some(format!(
                "the {n} distinct points lie on one great circle: the convex hull has no area (0 km2)"
            )),
        };
    }
    HullArea {
        area_km2: Some(geodesic_polygon_area_km2(&verts)),
        vertices: verts.len(),
        distinct_points: n,
        note: None,
    }
}
