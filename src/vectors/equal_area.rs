//! The equal-area CRS of `range-equal-area.gpkg` (`--vector-crs`).
//!
//! Automatic choice, from the grid's extent in WGS84 lon/lat:
//! - spanning 180 degrees of longitude or more, or 90 degrees of latitude or more: EPSG:6933
//!   (WGS 84 / NSIDC EASE-Grid 2.0 Global, Lambert cylindrical equal-area, ellipsoidal);
//! - otherwise a Lambert azimuthal equal-area (ellipsoidal, EPSG method 9820) centred on the
//!   middle of the extent, `+proj=laea +lat_0=.. +lon_0=.. +datum=WGS84 +units=m`, with the
//!   centre rounded to 0.001 degree.
//!
//! A CRS the user names (EPSG code, WKT, PROJ string) must be one the area model counts as
//! equal-area on its own figure (see docs/area-method.md); others are refused, since the file
//! is meant for area work. Polygons are cut at the antimeridian of the CRS's central meridian
//! (0 when the CRS gives none), so no part crosses the edge of the map.

use crate::area::{AreaMethod, CellAreas};
use crate::crs::{from_definition_like, grid_srs, proj_parm, transform, wgs84};
use crate::{Error, GridSpec, Result};
use gdal::spatial_ref::SpatialRef;

/// Which equal-area CRS to write.
#[derive(Debug, Clone, PartialEq, Default)]
pub enum VectorCrs {
    /// Chosen from the extent (EPSG:6933 for global extents, LAEA centred on the data otherwise).
    #[default]
    Auto,
    /// A CRS as the user gave it (EPSG:code, WKT or PROJ string); must be equal-area.
    Given(String),
}

/// The chosen target.
pub(crate) struct Target {
    pub srs: SpatialRef,
    /// Central meridian: polygons are cut at centre +- 180.
    pub centre_lon: f64,
    /// How it was chosen, for the report.
    pub label: String,
}

fn crs_err(reason: String) -> Error {
    Error::InvalidOption {
        option: "--vector-crs",
        reason,
    }
}

/// The grid's extent in WGS84 lon/lat: [west, south, east, north], longitudes as the grid
/// gives them (not wrapped, so west < east).
fn extent_lonlat(grid: &GridSpec) -> Result<[f64; 4]> {
    let gt = grid.geo_transform;
    let (x0, y0) = (gt[0], gt[3]);
    let (x1, y1) = (
        gt[0] + grid.width as f64 * gt[1],
        gt[3] + grid.height as f64 * gt[5],
    );
    let b = [x0.min(x1), y0.min(y1), x0.max(x1), y0.max(y1)];
    if grid.geographic {
        return Ok(b);
    }
    let ct = transform(
        &grid_srs(grid)?,
        &wgs84()?,
        "raster CRS to WGS84 lon/lat (extent, for the equal-area CRS)",
    )?;
    ct.transform_bounds(&b, 21).map_err(|e| Error::Crs {
        what: "raster CRS".into(),
        reason: format!("the raster's extent has no WGS84 lon/lat: {e}"),
    })
}

/// Choose the equal-area CRS for `grid`.
pub(crate) fn choose(spec: &VectorCrs, grid: &GridSpec) -> Result<Target> {
    match spec {
        VectorCrs::Auto => {
            let [w, s, e, n] = extent_lonlat(grid)?;
            if e - w >= 180.0 || n - s >= 90.0 {
                let srs = from_text("EPSG:6933")?;
                return Ok(Target {
                    srs,
                    centre_lon: 0.0,
                    label: "EPSG:6933 (WGS 84 / NSIDC EASE-Grid 2.0 Global; global extent)".into(),
                });
            }
            let r = |v: f64| (v * 1000.0).round() / 1000.0;
            let lon0 = r(crate::grid::normalise_lon((w + e) / 2.0));
            let lat0 = r((s + n) / 2.0);
            let proj = format!(
                "+proj=laea +lat_0={lat0} +lon_0={lon0} +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs"
            );
            Ok(Target {
                srs: from_text(&proj)?,
                centre_lon: lon0,
                label: format!("{proj} (Lambert azimuthal equal-area centred on the data)"),
            })
        }
        VectorCrs::Given(text) => {
            let srs = from_text(text)?;
            if srs.is_geographic() {
                return Err(crs_err(format!(
                    "{text} is a geographic CRS, not an equal-area projection; leave the value out for the automatic choice"
                )));
            }
            let probe = GridSpec {
                width: 1,
                height: 1,
                geo_transform: [0.0, 1000.0, 0.0, 0.0, 0.0, -1000.0],
                crs_wkt: srs.to_wkt().map_err(|e| crs_err(e.to_string()))?,
                geographic: false,
            };
            let areas = CellAreas::new(&probe).map_err(|e| crs_err(format!("{text}: {e}")))?;
            if !matches!(areas.method(), AreaMethod::EqualAreaProjection { .. }) {
                return Err(crs_err(format!(
                    "{text} is not an equal-area projection on its own ellipsoid (e.g. EPSG:6933, EPSG:3035, EPSG:8857); \
                     leave the value out for the automatic choice"
                )));
            }
            let centre_lon = proj_parm(&srs, "central_meridian")
                .or_else(|| proj_parm(&srs, "longitude_of_center"))
                .unwrap_or(0.0);
            Ok(Target {
                srs,
                centre_lon,
                label: text.clone(),
            })
        }
    }
}

/// `text` as a CRS; a CRS GDAL does not understand is a bad `--vector-crs` value.
fn from_text(text: &str) -> Result<SpatialRef> {
    // The option takes equal-area projections only: the example is one (EPSG:6933, WGS 84 /
    // NSIDC EASE-Grid 2.0 Global, cylindrical equal-area; EPSG registry).
    from_definition_like(text, "--vector-crs", "EPSG:6933").map_err(|e| match e {
        Error::Crs { reason, .. } => crs_err(reason),
        other => other,
    })
}
