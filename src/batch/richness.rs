//! `richness.tif`: on a grid shared by several species, the number of species whose range
//! (class 1, suitable inside M) covers each cell.
//!
//! Built by `areal gather` from the species' `classes.tif`, strip by strip: for each strip of
//! rows (about 16 M cells) every species' strip is read and added to one uint16 count strip,
//! which is then written. Memory is one count strip and one class strip, whatever the number
//! of species; time is one read of every species' classes.tif. uint16, tiled 256 x 256,
//! Zstandard, internal overviews (nearest neighbour), nodata 65535 on cells that are nodata in
//! every species.

use crate::raster_io::class;
use crate::{Error, GridSpec, Result};
use gdal::raster::RasterCreationOptions;
use gdal::{Dataset, DriverManager};
use std::path::{Path, PathBuf};

/// Cells per strip.
const STRIP_CELLS: usize = 16 << 20;
/// Nodata of richness.tif.
pub const RICHNESS_NODATA: u16 = u16::MAX;

/// Two grids are shared when size, geotransform and CRS are identical.
pub fn same_grid(a: &GridSpec, b: &GridSpec) -> bool {
    a.width == b.width
        && a.height == b.height
        && a.geo_transform == b.geo_transform
        && a.crs_wkt == b.crs_wkt
}

/// Write `out` (a new file) from the `classes.tif` files `classes`, all on `grid`.
pub fn write_richness(out: &Path, grid: &GridSpec, classes: &[PathBuf]) -> Result<()> {
    if classes.len() >= RICHNESS_NODATA as usize {
        return Err(Error::Processing {
            what: "richness.tif".into(),
            reason: format!(
                "{} species share the grid, more than a uint16 count holds",
                classes.len()
            ),
        });
    }
    let err = |op: &'static str| Error::gdal(out.to_path_buf(), op);
    let opts = RasterCreationOptions::from_iter(crate::raster_io::TILED_GEOTIFF);
    let mut ds = DriverManager::get_driver_by_name("GTiff")
        .map_err(err("finding the GTiff driver"))?
        .create_with_band_type_with_options::<u16, _>(out, grid.width, grid.height, 1, &opts)
        .map_err(err("creating richness.tif"))?;
    ds.set_geo_transform(&grid.geo_transform)
        .map_err(err("setting the geotransform"))?;
    ds.set_projection(&grid.crs_wkt)
        .map_err(err("setting the CRS"))?;
    let (w, h) = (grid.width, grid.height);
    let strip = (STRIP_CELLS / w).clamp(1, h);
    let mut count: Vec<u16> = Vec::new();
    let mut data: Vec<bool> = Vec::new();
    for y0 in (0..h).step_by(strip) {
        let rows = strip.min(h - y0);
        count.clear();
        count.resize(rows * w, 0);
        data.clear();
        data.resize(rows * w, false);
        for path in classes {
            let src = Dataset::open(path).map_err(Error::gdal(path, "opening"))?;
            let band = src
                .rasterband(1)
                .map_err(Error::gdal(path, "opening band 1"))?;
            let buf = band
                .read_as::<u8>((0, y0 as isize), (w, rows), (w, rows), None)
                .map_err(Error::gdal(path, "reading"))?;
            for ((c, d), &k) in count.iter_mut().zip(data.iter_mut()).zip(buf.data()) {
                *c += u16::from(k == class::INSIDE);
                *d |= k != class::NODATA;
            }
        }
        for (c, &d) in count.iter_mut().zip(&data) {
            if !d {
                *c = RICHNESS_NODATA;
            }
        }
        let mut band = ds.rasterband(1).map_err(err("opening band 1"))?;
        let mut buf = gdal::raster::Buffer::new((w, rows), std::mem::take(&mut count));
        band.write((0, y0 as isize), (w, rows), &mut buf)
            .map_err(err("writing"))?;
        count = buf.into_shape_and_vec().1;
    }
    {
        let mut band = ds.rasterband(1).map_err(err("opening band 1"))?;
        band.set_no_data_value(Some(RICHNESS_NODATA as f64))
            .map_err(err("setting nodata"))?;
    }
    let mut levels = Vec::new();
    let mut f = 2;
    while w.max(h) / f >= 256 {
        levels.push(f as i32);
        f *= 2;
    }
    if !levels.is_empty() {
        ds.build_overviews("NEAREST", &levels, &[])
            .map_err(err("building overviews"))?;
    }
    ds.close().map_err(err("closing"))?;
    Ok(())
}
