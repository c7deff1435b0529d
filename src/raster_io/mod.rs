//! Raster input and output through GDAL.
//!
//! The suitability raster is opened read-only, checked (one band, north-up, a CRS) and
//! read in row strips; it is never held whole. Values come back as `f64` (exact for every
//! GDAL data type up to 32-bit integers and for float32/float64). Nodata (the band's
//! nodata value) and non-finite values (NaN, +-inf) are both treated as "no data"; the
//! non-finite cells met while reading are counted for a warning, and a nodata value that
//! cannot occur in an integer band (a fraction, or out of the type's range) is warned of.
//!
//! `classes.tif` is written as a tiled, Zstandard-compressed uint8 GeoTIFF on the input
//! grid with a colour table and category names.

mod blocks;
mod classes;
mod strips;
mod tally;
mod tiles;

pub(crate) use classes::TILED_GEOTIFF;
pub use classes::{class, ClassWriter};
pub use strips::{ReaderSpec, StripBuffers, StripReader};
pub(crate) use tally::{RowTally, Tally};

use crate::{Error, GridSpec, Result};

use gdal::{Dataset, DatasetOptions, GdalOpenFlags};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex};

/// An opened suitability raster.
pub struct SuitabilityRaster {
    path: PathBuf,
    ds: Dataset,
    grid: GridSpec,
    nodata: Option<f64>,
    data_type: String,
    fits_f32: bool,
    /// Non-finite cells met in the rows read so far, each row counted once.
    non_finite: NonFiniteCount,
    /// Warnings about the raster found when opening it.
    open_warnings: Vec<String>,
    /// Blocks decoded to sample the records, kept for the pass.
    tiles: tiles::TileCache,
}

/// Non-finite cells seen, shared by every reader of one raster; a row read twice (a
/// second pass) is counted once.
#[derive(Debug, Clone)]
struct NonFiniteCount {
    cells: Arc<AtomicU64>,
    rows_seen: Arc<Mutex<Vec<bool>>>,
}

impl NonFiniteCount {
    fn new(height: usize) -> Self {
        NonFiniteCount {
            cells: Arc::new(AtomicU64::new(0)),
            rows_seen: Arc::new(Mutex::new(vec![false; height])),
        }
    }

    /// Add the non-finite values of the strip at `y0` (`rows` rows of `width`), unless
    /// the strip was counted before.
    fn add<T: Copy>(
        &self,
        y0: usize,
        rows: usize,
        width: usize,
        values: &[T],
        finite: fn(T) -> bool,
    ) {
        let mut seen = self.rows_seen.lock().unwrap_or_else(|e| e.into_inner());
        let mut n = 0u64;
        for r in 0..rows {
            if !std::mem::replace(&mut seen[y0 + r], true) {
                let row = &values[r * width..(r + 1) * width];
                n += row.iter().filter(|&&v| !finite(v)).count() as u64;
            }
        }
        self.cells.fetch_add(n, Ordering::Relaxed);
    }

    /// Add `n` non-finite cells counted in the strip at `y0`, unless it was counted before.
    fn add_strip(&self, y0: usize, rows: usize, n: u64) {
        let mut seen = self.rows_seen.lock().unwrap_or_else(|e| e.into_inner());
        if !seen[y0] {
            seen[y0..y0 + rows].iter_mut().for_each(|r| *r = true);
            self.cells.fetch_add(n, Ordering::Relaxed);
        }
    }
}

/// The range of values of an integer GDAL band type, `None` for float types.
fn integer_range(t: gdal::raster::GdalDataType) -> Option<(f64, f64)> {
    use gdal::raster::GdalDataType as T;
    Some(match t {
        T::UInt8 => (0.0, u8::MAX as f64),
        T::UInt16 => (0.0, u16::MAX as f64),
        T::Int16 => (i16::MIN as f64, i16::MAX as f64),
        T::UInt32 => (0.0, u32::MAX as f64),
        T::Int32 => (i32::MIN as f64, i32::MAX as f64),
        T::UInt64 => (0.0, u64::MAX as f64),
        T::Int64 => (i64::MIN as f64, i64::MAX as f64),
        _ => return None,
    })
}

/// GDAL's name of a band type ("Byte", "Int16", "Float32", ...).
fn type_name(t: gdal::raster::GdalDataType) -> String {
    // SAFETY: GDALGetDataTypeName returns a static string or null.
    let p = unsafe { gdal_sys::GDALGetDataTypeName(t as gdal_sys::GDALDataType::Type) };
    if p.is_null() {
        format!("{t:?}")
    } else {
        unsafe { std::ffi::CStr::from_ptr(p) }
            .to_string_lossy()
            .into_owned()
    }
}

/// Rows read per strip: a multiple of the output tile height.
pub const STRIP_ROWS: usize = 256;

/// Open a dataset read-only, with GDAL's own message on failure.
pub(crate) fn open_readonly(
    path: &Path,
    flags: GdalOpenFlags,
    what: &'static str,
) -> Result<Dataset> {
    if !path.exists() {
        return Err(Error::MissingInput {
            path: path.to_path_buf(),
            what,
        });
    }
    Dataset::open_ex(
        path,
        DatasetOptions {
            open_flags: flags
                | GdalOpenFlags::GDAL_OF_READONLY
                | GdalOpenFlags::GDAL_OF_VERBOSE_ERROR,
            ..Default::default()
        },
    )
    .map_err(Error::gdal(path, format!("opening the {what}")))
}

impl SuitabilityRaster {
    /// Open and check a single-band raster with a CRS and a north-up geotransform.
    pub fn open(path: &Path) -> Result<Self> {
        let ds = open_readonly(path, GdalOpenFlags::GDAL_OF_RASTER, "suitability raster")?;
        let unsupported = |reason: String| Error::UnsupportedRaster {
            path: path.to_path_buf(),
            reason,
        };
        if ds.raster_count() != 1 {
            return Err(unsupported(format!(
                "has {} bands; give a single-band suitability raster (e.g. gdal_translate -b 1)",
                ds.raster_count()
            )));
        }
        let srs = ds.spatial_ref().map_err(|_| Error::MissingCrs {
            path: path.to_path_buf(),
        })?;
        let gt = ds.geo_transform().map_err(|_| {
            unsupported("has no georeferencing (geotransform); georeference it first".into())
        })?;
        if gt[2] != 0.0 || gt[4] != 0.0 {
            return Err(unsupported(
                "has a rotated or sheared geotransform; warp it to a north-up grid first (gdalwarp)".into(),
            ));
        }
        if !(gt[1] > 0.0 && gt[5] < 0.0) {
            return Err(unsupported(format!(
                "geotransform has cell size {} x {}; expected positive width and negative height (north-up); \
                 warp it to a north-up grid first (gdalwarp)",
                gt[1], gt[5]
            )));
        }
        let crs_wkt = srs.to_wkt().map_err(Error::gdal(path, "reading the CRS"))?;
        let geographic = srs.is_geographic();
        let band = ds
            .rasterband(1)
            .map_err(Error::gdal(path, "reading band 1"))?;
        let (w, h) = band.size();
        if w == 0 || h == 0 {
            return Err(unsupported("is empty (0 rows or columns)".into()));
        }
        let nodata = band.no_data_value();
        let band_type = band.band_type();
        let data_type = band_type.name(); // GDAL's own name: "Float32", "Int16", ...
        use gdal::raster::GdalDataType as T;
        // float32 holds these types exactly; wider ones are read as float64.
        let fits_f32 = matches!(band_type, T::UInt8 | T::UInt16 | T::Int16 | T::Float32);
        let mut open_warnings = Vec::new();
        if let (Some(nd), Some((lo, hi))) = (nodata, integer_range(band_type)) {
            if nd.is_nan() || nd.fract() != 0.0 || nd < lo || nd > hi {
                open_warnings.push(format!(
                    "{}: nodata value {nd} cannot occur in a {} band (values {lo}..{hi}), so no \
                     cell is treated as nodata; set the right one with gdal_edit.py -a_nodata",
                    path.display(),
                    type_name(band_type)
                ));
            }
        }
        let grid = GridSpec {
            width: w,
            height: h,
            geo_transform: gt,
            crs_wkt,
            geographic,
        };
        Ok(SuitabilityRaster {
            path: path.to_path_buf(),
            ds,
            grid,
            nodata,
            data_type,
            fits_f32,
            non_finite: NonFiniteCount::new(h),
            tiles: tiles::TileCache::default(),
            open_warnings,
        })
    }

    /// Warnings about the raster: an impossible nodata value, and the non-finite cells
    /// met in the rows read so far (call after the pass).
    pub fn warnings(&self) -> Vec<String> {
        let mut w = self.open_warnings.clone();
        let n = self.non_finite.cells.load(Ordering::Relaxed);
        if n > 0 {
            w.push(format!(
                "{}: {n} cell(s) are NaN or infinite; they were treated as nodata",
                self.path.display()
            ));
        }
        w
    }

    /// The grid.
    pub fn grid(&self) -> &GridSpec {
        &self.grid
    }

    /// The file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The band's nodata value, if any.
    pub fn nodata(&self) -> Option<f64> {
        self.nodata
    }

    /// GDAL's name of the band data type.
    pub fn data_type(&self) -> &str {
        &self.data_type
    }

    /// Whether `v` counts as data (finite and not the nodata value; on bands read as
    /// float32 the comparison is at float32 precision, as in the strip pass).
    pub fn is_data(&self, v: f64) -> bool {
        tiles::is_data_value(v, self.nodata, self.fits_f32)
    }

    /// The values at `cells` (row, col), None for nodata: see [`tiles::sample`].
    pub fn sample(&self, cells: &[(usize, usize)]) -> Result<Vec<Option<f64>>> {
        tiles::sample(self, cells)
    }

    /// Read rows `y0 .. y0 + rows` into `buf` (resized to `width * rows`), row-major, as f64.
    pub fn read_rows(&self, y0: usize, rows: usize, buf: &mut Vec<f64>) -> Result<()> {
        let w = self.grid.width;
        buf.resize(w * rows, 0.0);
        let band = self
            .ds
            .rasterband(1)
            .map_err(Error::gdal(&self.path, "reading band 1"))?;
        band.read_into_slice::<f64>((0, y0 as isize), (w, rows), (w, rows), &mut buf[..], None)
            .map_err(Error::gdal(
                &self.path,
                format!("reading rows {y0}..{}", y0 + rows),
            ))?;
        self.non_finite.add(y0, rows, w, buf, f64::is_finite);
        Ok(())
    }

    /// What a worker thread needs to open its own handle.
    pub fn reader_spec(&self) -> ReaderSpec {
        ReaderSpec {
            path: self.path.clone(),
            width: self.grid.width,
            nodata: self.nodata,
            as_f32: self.fits_f32,
            non_finite: self.non_finite.clone(),
            tiles: self.tiles.clone(),
        }
    }
}
