//! Reading a window of values, straight from the band's block when the window is one
//! whole block of the band's own type: GDALReadBlock has the driver decode into our buffer,
//! with no trip through GDAL's block cache and no copy out of it. Other windows (and other
//! types) go through RasterIO as before. Both give the same values.

use crate::{Error, Result};
use gdal::raster::{GdalType, RasterBand};
use std::path::Path;

/// Values of the window at (`x0`, `y0`), `ww` x `rows` cells, row-major and compact, into
/// `buf` (resized). `block`: the band's block size; `whole_block`: the window is one block
/// (`x0`, `y0` multiples of it; `ww` and `rows` the block's part inside the raster).
/// `scratch` takes a partial edge block before its rows are packed.
#[allow(clippy::too_many_arguments)]
pub(super) fn read_window<T: GdalType + Copy + Default>(
    band: &RasterBand,
    path: &Path,
    (x0, y0): (usize, usize),
    (ww, rows): (usize, usize),
    block: (usize, usize),
    whole_block: bool,
    buf: &mut Vec<T>,
    scratch: &mut Vec<T>,
) -> Result<()> {
    let what = || format!("reading rows {y0}..{}", y0 + rows);
    let (bw, bh) = block;
    if whole_block && T::gdal_ordinal() == band.band_type() as u32 && bw > 0 && bh > 0 {
        let full = ww == bw && rows == bh;
        let target = if full { &mut *buf } else { &mut *scratch };
        target.resize(bw * bh, T::default());
        // SAFETY: the band is valid while borrowed; the buffer holds a whole block of the
        // band's own type (checked above), which is what GDALReadBlock writes.
        let rv = unsafe {
            gdal_sys::GDALReadBlock(
                band.c_rasterband(),
                (x0 / bw) as i32,
                (y0 / bh) as i32,
                target.as_mut_ptr() as *mut std::ffi::c_void,
            )
        };
        if rv != gdal_sys::CPLErr::CE_None {
            return Err(Error::gdal(path, what())(
                gdal::errors::GdalError::CplError {
                    class: rv,
                    number: 0,
                    msg: "GDALReadBlock failed".into(),
                },
            ));
        }
        if !full {
            buf.clear();
            for r in 0..rows {
                buf.extend_from_slice(&scratch[r * bw..r * bw + ww]);
            }
        }
        return Ok(());
    }
    buf.resize(ww * rows, T::default());
    band.read_into_slice::<T>(
        (x0 as isize, y0 as isize),
        (ww, rows),
        (ww, rows),
        buf,
        None,
    )
    .map_err(Error::gdal(path, what()))
}

/// Columns per read window: the raster's width when its blocks span it (a striped file),
/// else whole blocks adding up to at least 256 columns (256 KB of float32 in a 256-row
/// strip, which stays in the core's cache).
pub(super) fn window_width(width: usize, block_width: usize) -> usize {
    if block_width == 0 || block_width >= width {
        return width;
    }
    (block_width * 256usize.div_ceil(block_width)).min(width)
}

#[cfg(test)]
mod tests {
    use super::*;
    use gdal::raster::Buffer;
    use gdal::DriverManager;

    // Against GDAL's own RasterIO of the same windows: whole blocks, edge blocks cut by the
    // raster's right and bottom sides, and a window that is not one block.
    #[test]
    fn block_reads_equal_rasterio_reads() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.tif");
        let (w, h) = (40usize, 35usize);
        let opts = gdal::raster::RasterCreationOptions::from_iter([
            "TILED=YES",
            "BLOCKXSIZE=16",
            "BLOCKYSIZE=16",
            "COMPRESS=DEFLATE",
            "PREDICTOR=3",
        ]);
        let values: Vec<f32> = (0..w * h).map(|i| (i as f32 * 0.37).sin()).collect();
        {
            let drv = DriverManager::get_driver_by_name("GTiff").unwrap();
            let ds = drv
                .create_with_band_type_with_options::<f32, _>(&path, w, h, 1, &opts)
                .unwrap();
            let mut buf = Buffer::new((w, h), values.clone());
            ds.rasterband(1)
                .unwrap()
                .write((0, 0), (w, h), &mut buf)
                .unwrap();
        }
        let ds = gdal::Dataset::open(&path).unwrap();
        let band = ds.rasterband(1).unwrap();
        let (mut got, mut spare) = (Vec::new(), Vec::new());
        for (y0, x0) in [(0, 0), (0, 32), (32, 16), (32, 32)] {
            let (ww, rows) = (16.min(w - x0), 16.min(h - y0));
            read_window::<f32>(
                &band,
                &path,
                (x0, y0),
                (ww, rows),
                (16, 16),
                true,
                &mut got,
                &mut spare,
            )
            .unwrap();
            let want: Vec<f32> = (0..rows)
                .flat_map(|r| values[(y0 + r) * w + x0..(y0 + r) * w + x0 + ww].to_vec())
                .collect();
            assert_eq!(got, want, "block at ({x0}, {y0})");
        }
        // Not a whole block: RasterIO, converted to float64.
        let mut got64 = Vec::new();
        read_window::<f64>(
            &band,
            &path,
            (5, 3),
            (20, 7),
            (16, 16),
            false,
            &mut got64,
            &mut Vec::new(),
        )
        .unwrap();
        assert_eq!(got64[0], values[3 * w + 5] as f64);
        assert_eq!(got64[6 * 20 + 19], values[9 * w + 24] as f64);
    }
}
