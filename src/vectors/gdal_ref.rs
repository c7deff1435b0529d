//! The reference the tracer is checked against: GDAL's polygonizer (GDALPolygonize) on a
//! label raster, with pieces GDAL 3.6 leaves invalid (rings touching themselves at a corner)
//! rebuilt by GEOS MakeValid. Tests only.

use super::polygonize::{is_valid_quiet, polygons_of};
use crate::patches::Connectivity;
use crate::{Error, GridSpec, Result};
use gdal::cpl::CslStringList;
use gdal::vector::{LayerAccess, LayerOptions, OGRFieldType, OGRwkbGeometryType, ToGdal};
use gdal::DriverManager;
use geo_types::{MultiPolygon, Polygon};
use std::path::Path;

/// Polygonize `labels` (row-major on `grid`, 0 = no feature, ids 1..=n_ids) into one
/// multipolygon per id; index `id - 1` of the result. `context` names the file the labels came
/// from, for error messages.
pub(crate) fn polygonize_labels(
    labels: &mut [u32],
    grid: &GridSpec,
    connectivity: Connectivity,
    n_ids: usize,
    context: &Path,
) -> Result<Vec<MultiPolygon<f64>>> {
    let fail = |what: &str| Error::gdal(context, format!("polygonizing {what}"));
    assert_eq!(
        labels.len(),
        grid.width * grid.height,
        "label raster does not match the grid"
    );
    if n_ids > i32::MAX as usize {
        return Err(Error::UnsupportedRaster {
            path: context.to_path_buf(),
            reason: format!(
                "{n_ids} patches are more than GDAL's polygonizer can number (2^31 - 1)"
            ),
        });
    }
    let mem = DriverManager::get_driver_by_name("MEM").map_err(fail("(MEM driver)"))?;
    let mut ds = mem
        .create_with_band_type::<u8, _>("", grid.width, grid.height, 0)
        .map_err(fail("(in-memory raster)"))?;
    ds.set_geo_transform(&grid.geo_transform)
        .map_err(fail("(geotransform)"))?;
    let mut opts = CslStringList::new();
    opts.set_name_value("DATAPOINTER", &format!("{:p}", labels.as_mut_ptr()))
        .map_err(fail("(band options)"))?;
    opts.set_name_value("PIXELOFFSET", "4")
        .map_err(fail("(band options)"))?;
    opts.set_name_value("LINEOFFSET", &(4 * grid.width).to_string())
        .map_err(fail("(band options)"))?;
    // SAFETY: `labels` outlives `ds` (dropped at the end of this function) and is not touched
    // by us while GDAL reads it; the offsets describe its row-major u32 layout.
    let rv = unsafe {
        gdal_sys::GDALAddBand(
            ds.c_dataset(),
            gdal_sys::GDALDataType::GDT_UInt32,
            opts.as_ptr() as gdal_sys::CSLConstList,
        )
    };
    if rv != gdal_sys::CPLErr::CE_None {
        return Err(Error::Output {
            path: context.to_path_buf(),
            reason: "GDAL could not wrap the label raster in memory".into(),
        });
    }
    let band = ds.rasterband(1).map_err(fail("(band)"))?;

    let vmem = DriverManager::get_driver_by_name("Memory").map_err(fail("(Memory driver)"))?;
    let mut vds = vmem
        .create_vector_only("")
        .map_err(fail("(vector layer)"))?;
    let srs = if grid.crs_wkt.trim().is_empty() {
        None
    } else {
        Some(crate::crs::grid_srs(grid)?)
    };
    let mut pieces: Vec<Vec<Polygon<f64>>> = vec![Vec::new(); n_ids];
    {
        let mut layer = vds
            .create_layer(LayerOptions {
                name: "labels",
                srs: srs.as_ref(),
                ty: OGRwkbGeometryType::wkbPolygon,
                ..Default::default()
            })
            .map_err(fail("(vector layer)"))?;
        layer
            .create_defn_fields(&[("id", OGRFieldType::OFTInteger)])
            .map_err(fail("(vector layer)"))?;
        let mut popts = CslStringList::new();
        if connectivity == Connectivity::Eight {
            popts
                .set_name_value("8CONNECTED", "8")
                .map_err(fail("(options)"))?;
        }
        // SAFETY: band and layer handles are live; the band doubles as its own mask (0 = skip).
        let rv = unsafe {
            gdal_sys::GDALPolygonize(
                band.c_rasterband(),
                band.c_rasterband(),
                layer.c_layer(),
                0,
                popts.as_ptr(),
                None,
                std::ptr::null_mut(),
            )
        };
        if rv != gdal_sys::CPLErr::CE_None {
            return Err(Error::Output {
                path: context.to_path_buf(),
                reason: "GDAL's polygonizer failed on the label raster".into(),
            });
        }
        for f in layer.features() {
            let id = f
                .field_as_integer(0)
                .map_err(fail("(reading ids)"))?
                .unwrap_or(0);
            let Some(g) = f.geometry() else { continue };
            let id = usize::try_from(id).ok().filter(|&i| i >= 1 && i <= n_ids);
            let Some(id) = id else {
                return Err(Error::Output {
                    path: context.to_path_buf(),
                    reason: "GDAL's polygonizer returned a polygon with an unknown id".into(),
                });
            };
            let geo = g.to_geo().map_err(fail("(reading polygons)"))?;
            match geo {
                geo_types::Geometry::Polygon(p) => pieces[id - 1].push(p),
                geo_types::Geometry::MultiPolygon(mp) => pieces[id - 1].extend(mp.0),
                _ => {}
            }
        }
    }
    drop(ds);
    pieces
        .into_iter()
        .map(|p| make_valid(MultiPolygon(p), context))
        .collect()
}

/// `mp` unchanged when GEOS finds it valid, else rebuilt by GEOS `MakeValid` (polygons only).
pub(crate) fn make_valid(mp: MultiPolygon<f64>, context: &Path) -> Result<MultiPolygon<f64>> {
    let fail = |what: &str| Error::gdal(context, format!("making polygons valid ({what})"));
    if mp.0.is_empty() {
        return Ok(mp);
    }
    let g = mp.to_gdal().map_err(fail("to OGR"))?;
    if is_valid_quiet(&g) {
        return Ok(mp);
    }
    let fixed = g
        .make_valid(&CslStringList::new())
        .map_err(fail("MakeValid"))?;
    polygons_of(&fixed, context)
}
