//! CRS handling for records: move single points from the records CRS to the raster CRS and to
//! WGS84 longitude/latitude.
//!
//! Every `SpatialRef` used here comes from `crate::crs` with `TraditionalGisOrder` (x = easting
//! or longitude); without it EPSG:4326 is read as (lat, lon) and the numbers come out wrong
//! without any error. Points go through PROJ one at a time, because one failing point makes
//! a batch call fail as a whole.

use crate::crs::{from_definition, transform, wgs84};
use crate::grid::normalise_lon_closed;
use crate::Result;
use gdal::spatial_ref::{CoordTransform, SpatialRef};

/// True for a geographic CRS whose angular unit is the degree.
pub(crate) fn is_geographic_degrees(srs: &SpatialRef) -> bool {
    srs.is_geographic() && (srs.angular_units() - std::f64::consts::PI / 180.0).abs() < 1e-12
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
            from_definition(raster_crs, "raster CRS")?
        };
        Ok(Reprojector {
            to_raster: transform(
                records,
                &raster,
                &format!("{records_label}: records CRS to the raster CRS"),
            )?,
            to_wgs84: transform(
                records,
                &wgs84()?,
                &format!("{records_label}: records CRS to WGS84"),
            )?,
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
        Some((rx, ry, normalise_lon_closed(lon), lat))
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
