//! Raster input and output through GDAL.
//!
//! The suitability raster is opened read-only, checked (one band, north-up, a CRS) and
//! read in row strips; it is never held whole. Values come back as `f64` (exact for every
//! GDAL data type up to 32-bit integers and for float32/float64). Nodata (the band's
//! nodata value) and non-finite values (NaN, +-inf) are both treated as "no data"; the
//! non-finite cells met while reading are counted for a warning, and a nodata value that
//! cannot occur in an integer band (a fraction, or out of the type's range) is warned of.
//!
//! `classes.tif` is written as a tiled, DEFLATE-compressed uint8 GeoTIFF on the input
//! grid with a colour table and category names.

use crate::{Error, GridSpec, Result};
use gdal::raster::{ColorEntry, ColorTable, PaletteInterpretation, RasterCreationOptions};
use gdal::{Dataset, DatasetOptions, DriverManager, GdalOpenFlags, Metadata};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Mutex;

/// An opened suitability raster.
pub struct SuitabilityRaster {
    path: PathBuf,
    ds: Dataset,
    grid: GridSpec,
    nodata: Option<f64>,
    data_type: String,
    /// Whether the band type can hold NaN/inf (float types).
    float: bool,
    /// Non-finite cells met in the rows read so far (each row counted once).
    non_finite: AtomicU64,
    /// Rows already scanned for non-finite cells.
    scanned: Mutex<Vec<bool>>,
    /// Warnings about the raster found when opening it.
    open_warnings: Vec<String>,
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
        let data_type = format!("{band_type:?}");
        let range = integer_range(band_type);
        let mut open_warnings = Vec::new();
        if let (Some(nd), Some((lo, hi))) = (nodata, range) {
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
            float: range.is_none(),
            non_finite: AtomicU64::new(0),
            scanned: Mutex::new(vec![false; h]),
            open_warnings,
        })
    }

    /// Warnings about the raster: an impossible nodata value, and the non-finite cells
    /// met in the rows read so far (call after the pass).
    pub fn warnings(&self) -> Vec<String> {
        let mut w = self.open_warnings.clone();
        let n = self.non_finite.load(Ordering::Relaxed);
        if n > 0 {
            w.push(format!(
                "{}: {n} cell(s) are NaN or infinite; they were treated as nodata",
                self.path.display()
            ));
        }
        w
    }

    /// Count the non-finite values of rows `y0..` in `buf` not counted before.
    fn count_non_finite(&self, y0: usize, rows: usize, buf: &[f64]) {
        if !self.float {
            return;
        }
        let w = self.grid.width;
        let mut scanned = self.scanned.lock().unwrap_or_else(|e| e.into_inner());
        let mut n = 0u64;
        for r in 0..rows {
            if !std::mem::replace(&mut scanned[y0 + r], true) {
                n += buf[r * w..(r + 1) * w]
                    .iter()
                    .filter(|v| !v.is_finite())
                    .count() as u64;
            }
        }
        self.non_finite.fetch_add(n, Ordering::Relaxed);
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

    /// Whether `v` counts as data (finite and not the nodata value).
    pub fn is_data(&self, v: f64) -> bool {
        v.is_finite() && self.nodata.is_none_or(|nd| v != nd)
    }

    /// The value of each cell (row, col), `None` where it is nodata or non-finite.
    /// Cells are read in row order so GDAL's block cache serves neighbours.
    pub fn sample(&self, cells: &[(usize, usize)]) -> Result<Vec<Option<f64>>> {
        let band = self
            .ds
            .rasterband(1)
            .map_err(Error::gdal(&self.path, "reading band 1"))?;
        let mut order: Vec<usize> = (0..cells.len()).collect();
        order.sort_by_key(|&i| cells[i]);
        let mut out = vec![None; cells.len()];
        let mut buf = [0f64; 1];
        for i in order {
            let (r, c) = cells[i];
            band.read_into_slice::<f64>((c as isize, r as isize), (1, 1), (1, 1), &mut buf, None)
                .map_err(Error::gdal(
                    &self.path,
                    format!("reading cell row {r}, col {c}"),
                ))?;
            out[i] = Some(buf[0]).filter(|&v| self.is_data(v));
        }
        Ok(out)
    }

    /// Read rows `y0 .. y0 + rows` into `buf` (resized to `width * rows`), row-major.
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
        self.count_non_finite(y0, rows, buf);
        Ok(())
    }
}

/// Class codes of `classes.tif`.
pub mod class {
    /// Data, below the threshold.
    pub const UNSUITABLE: u8 = 0;
    /// Suitable, inside the accessible area M.
    pub const INSIDE: u8 = 1;
    /// Suitable, outside M (not reachable today).
    pub const OUTSIDE: u8 = 2;
    /// No data in the suitability raster.
    pub const NODATA: u8 = 255;
    /// Category names, index = class value.
    pub const NAMES: [&str; 3] = [
        "below threshold",
        "suitable, accessible (in M)",
        "suitable, beyond M",
    ];
}

/// Writes `classes.tif` strip by strip.
pub struct ClassWriter {
    path: PathBuf,
    ds: Dataset,
    width: usize,
}

impl ClassWriter {
    /// Create the GeoTIFF (tiled 256 x 256, DEFLATE, BIGTIFF if needed) on `grid`.
    pub fn create(path: &Path, grid: &GridSpec) -> Result<Self> {
        let err = |op: &str| output_error(path, op.to_string());
        let opts = RasterCreationOptions::from_iter([
            "TILED=YES",
            "BLOCKXSIZE=256",
            "BLOCKYSIZE=256",
            "COMPRESS=DEFLATE",
            "PREDICTOR=1",
            "BIGTIFF=IF_SAFER",
        ]);
        let driver =
            DriverManager::get_driver_by_name("GTiff").map_err(err("finding the GTiff driver"))?;
        let mut ds = driver
            .create_with_band_type_with_options::<u8, _>(path, grid.width, grid.height, 1, &opts)
            .map_err(err("creating the class raster"))?;
        ds.set_geo_transform(&grid.geo_transform)
            .map_err(err("setting the geotransform"))?;
        let srs = gdal::spatial_ref::SpatialRef::from_wkt(&grid.crs_wkt)
            .map_err(err("parsing the CRS"))?;
        ds.set_spatial_ref(&srs).map_err(err("setting the CRS"))?;
        {
            let mut band = ds.rasterband(1).map_err(err("opening band 1"))?;
            band.set_no_data_value(Some(class::NODATA as f64))
                .map_err(err("setting nodata"))?;
            band.set_description("range class")
                .map_err(err("setting the band description"))?;
            let mut ct = ColorTable::new(PaletteInterpretation::Rgba);
            // Our own palette: pale sand for below threshold, deep teal for the accessible
            // range, warm amber for suitable land beyond M, transparent nodata.
            ct.set_color_entry(0, &ColorEntry::rgba(236, 229, 206, 255));
            ct.set_color_entry(1, &ColorEntry::rgba(0, 109, 119, 255));
            ct.set_color_entry(2, &ColorEntry::rgba(230, 145, 56, 255));
            ct.set_color_entry(255, &ColorEntry::rgba(0, 0, 0, 0));
            band.set_color_table(&ct);
            let mut names = gdal::cpl::CslStringList::new();
            for n in class::NAMES {
                names.add_string(n).map_err(err("setting category names"))?;
            }
            // SAFETY: the band handle is live for this call; the list outlives it.
            let rv = unsafe {
                gdal_sys::GDALSetRasterCategoryNames(band.c_rasterband(), names.as_ptr())
            };
            if rv != gdal_sys::CPLErr::CE_None {
                return Err(Error::Output {
                    path: path.to_path_buf(),
                    reason: "could not set category names".into(),
                });
            }
        }
        Ok(ClassWriter {
            path: path.to_path_buf(),
            ds,
            width: grid.width,
        })
    }

    /// Write rows starting at `y0`; `rows` holds whole rows.
    pub fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<()> {
        let n = rows.len() / self.width;
        let mut band = self
            .ds
            .rasterband(1)
            .map_err(output_error(&self.path, "opening band 1".into()))?;
        let mut buf = gdal::raster::Buffer::new((self.width, n), rows);
        band.write((0, y0 as isize), (self.width, n), &mut buf)
            .map_err(output_error(
                &self.path,
                format!("writing rows {y0}..{}", y0 + n),
            ))
    }

    /// Flush and close.
    pub fn close(self) -> Result<()> {
        let path = self.path.clone();
        self.ds
            .close()
            .map_err(output_error(&path, "closing the class raster".into()))?;
        Ok(())
    }
}

/// A GDAL failure on an output file: an output error (exit 4), with GDAL's text.
fn output_error(path: &Path, op: String) -> impl FnOnce(gdal::errors::GdalError) -> Error {
    let path = path.to_path_buf();
    move |e| Error::Output {
        path,
        reason: format!(
            "{op} failed ({}); is the disk full or the folder not writable?",
            crate::error::gdal_text(&e)
        ),
    }
}
