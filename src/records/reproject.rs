//! CRS handling for records: parse user CRS strings, and move single points from the
//! records CRS to the raster CRS and to WGS84 longitude/latitude.
//!
//! Every `SpatialRef` made or received here gets `TraditionalGisOrder` (x = easting or
//! longitude); without it EPSG:4326 is read as (lat, lon) and the numbers come out wrong
//! without any error. Points go through PROJ one at a time, because one failing point makes
//! a batch call fail as a whole.

use crate::{Error, Result};
use gdal::spatial_ref::{AxisMappingStrategy, CoordTransform, SpatialRef};

/// Parse a CRS definition as typed by the user (EPSG code, WKT, PROJ string, ...).
/// `what` names where the string came from, e.g. "--records-crs".
pub(crate) fn user_srs(definition: &str, what: &str) -> Result<SpatialRef> {
    let def = definition.trim();
    if def.is_empty() {
        return Err(Error::Crs {
            what: what.to_string(),
            reason: "empty CRS; give one such as EPSG:4326".into(),
        });
    }
    let mut srs = SpatialRef::from_definition(def).map_err(|e| Error::Crs {
        what: what.to_string(),
        reason: format!(
            "'{def}' is not a CRS GDAL/PROJ understands ({e}); give one such as EPSG:4326, \
             a WKT string or a PROJ string"
        ),
    })?;
    srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    Ok(srs)
}

/// Force the traditional GIS axis order on a CRS read from a file.
pub(crate) fn traditional(mut srs: SpatialRef) -> SpatialRef {
    srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    srs
}

/// WGS84 longitude/latitude, x = longitude.
fn wgs84() -> Result<SpatialRef> {
    user_srs("EPSG:4326", "WGS84 (EPSG:4326)")
}

/// True for a geographic CRS whose angular unit is the degree.
pub(crate) fn is_geographic_degrees(srs: &SpatialRef) -> bool {
    srs.is_geographic() && (srs.angular_units() - std::f64::consts::PI / 180.0).abs() < 1e-12
}

/// Wrap a longitude in degrees into [-180, 180].
pub(crate) fn wrap_lon(lon: f64) -> f64 {
    if (-180.0..=180.0).contains(&lon) {
        lon
    } else {
        let w = (lon + 180.0).rem_euclid(360.0) - 180.0;
        // rem_euclid maps 180 to -180; keep a value that was exactly on the seam positive.
        if w == -180.0 && lon > 0.0 {
            180.0
        } else {
            w
        }
    }
}

/// The two transforms every record goes through.
pub(crate) struct Reprojector {
    to_raster: CoordTransform,
    to_wgs84: CoordTransform,
}

impl Reprojector {
    /// From the records CRS (`records`, labelled `records_label` in errors) to the raster CRS
    /// (`raster_crs`: WKT or any GDAL definition, empty = WGS84) and to WGS84.
    pub(crate) fn new(records: &SpatialRef, raster_crs: &str, records_label: &str) -> Result<Self> {
        let raster = if raster_crs.trim().is_empty() {
            wgs84()?
        } else {
            user_srs(raster_crs, "raster CRS")?
        };
        let wgs = wgs84()?;
        let fail = |target: &str| {
            let label = records_label.to_string();
            let target = target.to_string();
            move |e: gdal::errors::GdalError| Error::Crs {
                what: label,
                reason: format!(
                    "no transformation from the records CRS to the {target} ({e}); check the \
                     records CRS"
                ),
            }
        };
        Ok(Reprojector {
            to_raster: CoordTransform::new(records, &raster).map_err(fail("raster CRS"))?,
            to_wgs84: CoordTransform::new(records, &wgs).map_err(fail("WGS84"))?,
        })
    }

    /// `(x, y)` in the raster CRS and `(lon, lat)` in WGS84 for one point, or `None` when
    /// PROJ cannot transform it or gives a non-finite result.
    pub(crate) fn point(&self, x: f64, y: f64) -> Option<(f64, f64, f64, f64)> {
        let (rx, ry) = one(&self.to_raster, x, y)?;
        let (lon, lat) = one(&self.to_wgs84, x, y)?;
        if !(-90.0..=90.0).contains(&lat) {
            return None;
        }
        Some((rx, ry, wrap_lon(lon), lat))
    }
}

/// Largest coordinate magnitude handed to PROJ, in the records CRS's units. No CRS in use
/// has coordinates near it (the Earth's circumference is 4e7 m, 1.3e8 ft); PROJ 9.1 spends
/// time proportional to |x| on a projected x (6 s at 1e17, endless beyond), so a stray value
/// such as 1e308 would hang the run. Found by tests/fuzz_readers.rs.
const MAX_COORD: f64 = 1e10;

fn one(ct: &CoordTransform, x: f64, y: f64) -> Option<(f64, f64)> {
    if !x.is_finite() || !y.is_finite() || x.abs() > MAX_COORD || y.abs() > MAX_COORD {
        return None;
    }
    let (mut xs, mut ys) = ([x], [y]);
    ct.transform_coords(&mut xs, &mut ys, &mut []).ok()?;
    (xs[0].is_finite() && ys[0].is_finite()).then_some((xs[0], ys[0]))
}
