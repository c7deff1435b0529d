//! Reading the grid's CRS for the area model: the ellipsoid, the projection method and whether
//! PROJ computes that method as equal-area on the CRS's own figure.
//!
//! Input: a GDAL `SpatialRef`. The projection method is read from the CRS's PROJJSON
//! (`conversion.method`), which keeps the EPSG method name and code even where WKT1 has no name
//! for the method (Equal Earth) or hides the spherical variant (EPSG methods 9834 and 1027; a
//! CRS read from such WKT1 is the ellipsoidal method, and PROJ computes it so).

use super::ellipsoid::Ellipsoid;
use crate::{Error, Result};
use gdal::spatial_ref::SpatialRef;

/// The projection method of a projected CRS.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Method {
    /// The method name as the CRS gives it (PROJJSON `conversion.method.name`).
    pub name: String,
    /// The EPSG method code when the CRS carries one.
    pub epsg_code: Option<i64>,
}

/// Methods that PROJ implements with ellipsoidal equal-area formulas (equal-area on any figure).
/// EPSG codes: 9835 Lambert Cylindrical Equal Area, 9820 Lambert Azimuthal Equal Area,
/// 9822 Albers Equal Area, 1078 Equal Earth; Sinusoidal has no EPSG method code.
const ELLIPSOIDAL_EQUAL_AREA: &[(&str, Option<i64>)] = &[
    ("lambert cylindrical equal area", Some(9835)),
    ("lambert azimuthal equal area", Some(9820)),
    ("albers equal area", Some(9822)),
    ("equal earth", Some(1078)),
    ("sinusoidal", None),
];

/// Methods that are equal-area only on a sphere: the EPSG "(Spherical)" variants (9834, 1027) and
/// the projections PROJ implements on a sphere only (Mollweide: PROJ lists it as "PCyl., Sph.";
/// on an ellipsoid it maps geodetic latitude onto a sphere of radius a, which is not
/// equal-area: computed with PROJ via pyproj). Eckert IV and VI are spherical-only in PROJ as
/// well (from memory).
const SPHERICAL_EQUAL_AREA: &[(&str, Option<i64>)] = &[
    ("lambert cylindrical equal area (spherical)", Some(9834)),
    ("lambert azimuthal equal area (spherical)", Some(1027)),
    ("mollweide", None),
    ("eckert iv", None),
    ("eckert vi", None),
];

fn listed(list: &[(&str, Option<i64>)], m: &Method) -> bool {
    let name = m.name.trim().to_ascii_lowercase().replace('_', " ");
    list.iter()
        .any(|(n, code)| *n == name || (code.is_some() && *code == m.epsg_code))
}

/// Whether cells of a grid in a CRS with method `m` on figure `ell` all have their nominal area.
pub(crate) fn is_equal_area(m: &Method, ell: &Ellipsoid) -> bool {
    if listed(SPHERICAL_EQUAL_AREA, m) {
        return ell.is_sphere();
    }
    listed(ELLIPSOIDAL_EQUAL_AREA, m)
}

/// A CRS error about the raster's CRS.
pub(crate) fn crs_err(reason: impl Into<String>) -> Error {
    Error::Crs {
        what: "raster CRS".into(),
        reason: reason.into(),
    }
}

/// The ellipsoid of the CRS (semi-major axis and inverse flattening as GDAL reports them).
pub(crate) fn ellipsoid_of(srs: &SpatialRef) -> Result<Ellipsoid> {
    let mut err_a = 0;
    let mut err_f = 0;
    // SAFETY: the handle is valid for the life of `srs`; the out-pointers are local.
    let (a, inv_f) = unsafe {
        (
            gdal_sys::OSRGetSemiMajor(srs.to_c_hsrs(), &mut err_a),
            gdal_sys::OSRGetInvFlattening(srs.to_c_hsrs(), &mut err_f),
        )
    };
    if err_a != 0 || err_f != 0 || !(a.is_finite() && a > 0.0) || !inv_f.is_finite() {
        return Err(crs_err(
            "the CRS has no usable ellipsoid (semi-major axis / inverse flattening); \
             assign a CRS with a datum, e.g. EPSG:4326",
        ));
    }
    let ell = Ellipsoid::from_inverse_flattening(a, inv_f);
    if !(0.0..0.5).contains(&ell.f) {
        return Err(crs_err(format!(
            "the CRS's ellipsoid has inverse flattening {inv_f}, which is not a plausible figure"
        )));
    }
    Ok(ell)
}

/// The projection method of a projected CRS, from its PROJJSON.
pub(crate) fn projection_method(srs: &SpatialRef) -> Result<Method> {
    let json = srs
        .to_projjson()
        .map_err(|e| crs_err(format!("GDAL cannot export the CRS as PROJJSON: {e}")))?;
    let v: serde_json::Value = serde_json::from_str(&json)
        .map_err(|e| crs_err(format!("GDAL's PROJJSON export is not valid JSON: {e}")))?;
    find_method(&v).ok_or_else(|| {
        crs_err("the projected CRS has no projection method (conversion) that can be read")
    })
}

/// The first `conversion.method` in a PROJJSON tree (looks through BoundCRS and CompoundCRS).
fn find_method(v: &serde_json::Value) -> Option<Method> {
    if let Some(m) = v.get("conversion").and_then(|c| c.get("method")) {
        let name = m.get("name")?.as_str()?.to_string();
        let epsg_code = m
            .get("id")
            .filter(|id| id.get("authority").and_then(|a| a.as_str()) == Some("EPSG"))
            .and_then(|id| id.get("code"))
            .and_then(|c| c.as_i64());
        return Some(Method { name, epsg_code });
    }
    if let Some(src) = v.get("source_crs") {
        return find_method(src);
    }
    v.get("components")?
        .as_array()?
        .iter()
        .find_map(find_method)
}
