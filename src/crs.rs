//! The one place that builds GDAL spatial references and transforms: WGS84, the grid's CRS, a
//! CRS the user types, a CRS from WKT or from a PROJ string the program builds, a projected
//! CRS's geographic base, the axis order, and the transform from grid coordinates to WGS84
//! lon/lat.
//!
//! Every `SpatialRef` here has the traditional GIS axis order (x = longitude or easting), so
//! no caller has to think about EPSG:4326's official latitude-first order.

use crate::grid::normalise_lon;
use crate::{Error, GridSpec, Result};
use gdal::spatial_ref::{AxisMappingStrategy, CoordTransform, SpatialRef};

fn crs_err(what: &str) -> impl Fn(gdal::errors::GdalError) -> Error + '_ {
    move |e| Error::Crs {
        what: what.into(),
        reason: e.to_string(),
    }
}

/// `srs` with x = longitude / easting.
pub(crate) fn traditional(mut srs: SpatialRef) -> SpatialRef {
    srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    srs
}

/// A CRS as the user typed it (EPSG code, WKT, PROJ string, ...), x first. `what` names where
/// the text came from (an option such as "--records-crs", or a file), for errors.
pub(crate) fn from_definition(text: &str, what: &str) -> Result<SpatialRef> {
    from_definition_like(text, what, "EPSG:4326")
}

/// [`from_definition`], whose errors suggest `example` (a CRS of the kind `what` takes).
pub(crate) fn from_definition_like(text: &str, what: &str, example: &str) -> Result<SpatialRef> {
    let def = text.trim();
    if def.is_empty() {
        return Err(Error::Crs {
            what: what.into(),
            reason: format!("empty CRS; give one such as {example}"),
        });
    }
    let srs = SpatialRef::from_definition(def).map_err(|e| Error::Crs {
        what: what.into(),
        reason: format!(
            "'{def}' is not a CRS GDAL/PROJ understands ({e}); give one such as {example}, \
             a WKT string or a PROJ string"
        ),
    })?;
    Ok(traditional(srs))
}

/// A CRS from a PROJ string built by the program (such as the AOO grid's LAEA), x first.
/// `what` names the CRS in errors.
pub(crate) fn from_proj4(text: &str, what: &str) -> Result<SpatialRef> {
    Ok(traditional(
        SpatialRef::from_proj4(text).map_err(crs_err(what))?,
    ))
}

/// A CRS from WKT (a raster's own CRS), x first. GDAL's error is returned as it is, so the
/// caller names the file the WKT came from (an input or an output) in its own error.
pub(crate) fn from_wkt(wkt: &str) -> std::result::Result<SpatialRef, gdal::errors::GdalError> {
    SpatialRef::from_wkt(wkt).map(traditional)
}

/// Whether two CRSs share the same geographic CRS (datum, prime meridian, angular unit), as
/// GDAL's `OSRIsSameGeogCS` decides.
pub(crate) fn same_geographic_cs(a: &SpatialRef, b: &SpatialRef) -> bool {
    // SAFETY: two live handles, read only.
    unsafe { gdal_sys::OSRIsSameGeogCS(a.to_c_hsrs(), b.to_c_hsrs()) == 1 }
}

/// WGS84 lon/lat (EPSG:4326), x = longitude.
pub(crate) fn wgs84() -> Result<SpatialRef> {
    Ok(traditional(
        SpatialRef::from_epsg(4326).map_err(crs_err("EPSG:4326"))?,
    ))
}

/// The grid's CRS (WGS84 lon/lat when a geographic grid carries none), x first. A projected
/// grid without a CRS is an error.
pub(crate) fn grid_srs(grid: &GridSpec) -> Result<SpatialRef> {
    if grid.crs_wkt.trim().is_empty() {
        if !grid.geographic {
            return Err(Error::Crs {
                what: "raster CRS".into(),
                reason: "the raster is projected but carries no CRS; assign one to the raster \
                         (e.g. gdal_edit.py -a_srs EPSG:6933 FILE) and run again"
                    .into(),
            });
        }
        return wgs84();
    }
    from_wkt(&grid.crs_wkt).map_err(|e| Error::Crs {
        what: "raster CRS".into(),
        reason: format!("GDAL cannot read the CRS WKT: {e}"),
    })
}

/// The geographic CRS a projected `srs` is based on (its datum, lon/lat), x = longitude.
/// `what` names `srs` in errors.
pub(crate) fn geographic_base(srs: &SpatialRef, what: &str) -> Result<SpatialRef> {
    let base = srs.geog_cs().map_err(|e| Error::Crs {
        what: what.into(),
        reason: format!("the projected CRS has no geographic base CRS: {e}"),
    })?;
    Ok(traditional(base))
}

/// A parameter of a projected CRS's projection as GDAL stores it (e.g. "central_meridian"), or
/// `None` when the CRS has no such parameter.
pub(crate) fn proj_parm(srs: &SpatialRef, name: &str) -> Option<f64> {
    let c = std::ffi::CString::new(name).ok()?;
    let mut err = 0;
    // SAFETY: live handle, local out-pointer.
    let v = unsafe { gdal_sys::OSRGetProjParm(srs.to_c_hsrs(), c.as_ptr(), f64::NAN, &mut err) };
    (err == 0 && v.is_finite()).then_some(v)
}

/// A transform between two spatial references, named `what` in errors.
pub(crate) fn transform(src: &SpatialRef, dst: &SpatialRef, what: &str) -> Result<CoordTransform> {
    CoordTransform::new(src, dst).map_err(crs_err(what))
}

/// Transform `xs`/`ys` in place; any failure, or a point that does not transform to finite
/// values, is an error naming `what`.
pub(crate) fn transform_points(
    ct: &CoordTransform,
    xs: &mut [f64],
    ys: &mut [f64],
    what: &str,
) -> Result<()> {
    if xs.is_empty() {
        return Ok(());
    }
    ct.transform_coords(xs, ys, &mut [])
        .map_err(|e| Error::Crs {
            what: what.into(),
            reason: format!("transforming points: {e}"),
        })?;
    if xs.iter().chain(ys.iter()).any(|v| !v.is_finite()) {
        return Err(Error::Crs {
            what: what.into(),
            reason: "a point could not be transformed (it may lie opposite the grid's centre)"
                .into(),
        });
    }
    Ok(())
}

/// Grid coordinates (the grid's CRS units) to WGS84 lon/lat.
pub(crate) struct LonLat {
    to_wgs84: Option<CoordTransform>,
}

impl LonLat {
    /// For `grid`: no transform on a lon/lat grid.
    pub(crate) fn new(grid: &GridSpec) -> Result<Self> {
        if grid.geographic {
            return Ok(LonLat { to_wgs84: None });
        }
        let src = grid_srs(grid)?;
        Ok(LonLat {
            to_wgs84: Some(transform(&src, &wgs84()?, "raster CRS")?),
        })
    }

    /// The transform to WGS84, `None` on a lon/lat grid.
    pub(crate) fn transform(&self) -> Option<&CoordTransform> {
        self.to_wgs84.as_ref()
    }

    /// One point to (lon, lat); longitudes of a lon/lat grid into [-180, 180).
    pub(crate) fn point(&self, x: f64, y: f64) -> Result<(f64, f64)> {
        match &self.to_wgs84 {
            None => Ok((normalise_lon(x), y)),
            Some(ct) => {
                let (mut xs, mut ys) = ([x], [y]);
                ct.transform_coords(&mut xs, &mut ys, &mut [])
                    .map_err(|e| Error::Crs {
                        what: "raster CRS".into(),
                        reason: format!("to WGS84: {e}"),
                    })?;
                Ok((xs[0], ys[0]))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The EPSG worked example for Lambert Azimuthal Equal Area (EPSG Guidance Note 7-2,
    /// method 9820, ETRS89 / LAEA Europe, from memory): 50°N 5°E -> E 3962799.45 m,
    /// N 2999718.85 m. EPSG:3035 and EPSG:4258 both put the northing / latitude first, so the
    /// numbers only come out with x = longitude / easting on both sides.
    const EXAMPLE_EN: (f64, f64) = (3_962_799.45, 2_999_718.85);

    fn example(src: &SpatialRef, dst: &SpatialRef) -> (f64, f64) {
        let ct = transform(src, dst, "test").unwrap();
        let (mut xs, mut ys) = ([5.0], [50.0]);
        transform_points(&ct, &mut xs, &mut ys, "test").unwrap();
        (xs[0], ys[0])
    }

    fn wkt_of(epsg: u32) -> String {
        SpatialRef::from_epsg(epsg).unwrap().to_wkt().unwrap()
    }

    #[test]
    fn from_wkt_puts_easting_first() {
        let src = from_wkt(&wkt_of(4258)).unwrap();
        let dst = from_wkt(&wkt_of(3035)).unwrap();
        let (e, n) = example(&src, &dst);
        assert!((e - EXAMPLE_EN.0).abs() < 0.01, "{e}");
        assert!((n - EXAMPLE_EN.1).abs() < 0.01, "{n}");
        assert!(from_wkt("not a CRS").is_err());
    }

    #[test]
    fn from_proj4_puts_easting_first_and_names_the_crs_in_errors() {
        let src = from_wkt(&wkt_of(4258)).unwrap();
        let dst = from_proj4(
            "+proj=laea +lat_0=52 +lon_0=10 +x_0=4321000 +y_0=3210000 +ellps=GRS80 +units=m +no_defs",
            "test grid",
        )
        .unwrap();
        let (e, n) = example(&src, &dst);
        assert!((e - EXAMPLE_EN.0).abs() < 0.01, "{e}");
        assert!((n - EXAMPLE_EN.1).abs() < 0.01, "{n}");
        let err = from_proj4("+proj=nonsense", "AOO grid CRS").unwrap_err();
        assert!(err.to_string().starts_with("AOO grid CRS: "), "{err}");
    }

    #[test]
    fn same_geographic_cs_follows_the_datum() {
        // EPSG registry: EPSG:3857 is based on WGS 84, EPSG:3035 on ETRS89.
        let wgs = wgs84().unwrap();
        let merc = from_wkt(&wkt_of(3857)).unwrap();
        let laea = from_wkt(&wkt_of(3035)).unwrap();
        assert!(same_geographic_cs(&merc, &wgs));
        assert!(!same_geographic_cs(&laea, &wgs));
    }
}
