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
use std::collections::BTreeMap;
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
        v.is_finite()
            && self.nodata.is_none_or(|nd| {
                if self.fits_f32 {
                    v as f32 != nd as f32
                } else {
                    v != nd
                }
            })
    }

    /// The value of each cell (row, col), `None` where it is nodata or non-finite.
    /// Cells are grouped by the band's natural blocks, so each block holding a record is
    /// decoded once, whatever GDAL's cache size.
    pub fn sample(&self, cells: &[(usize, usize)]) -> Result<Vec<Option<f64>>> {
        let band = self
            .ds
            .rasterband(1)
            .map_err(Error::gdal(&self.path, "reading band 1"))?;
        let (bw, bh) = band.block_size();
        let (w, h) = (self.grid.width, self.grid.height);
        let mut by_block: BTreeMap<(usize, usize), Vec<usize>> = BTreeMap::new();
        for (i, &(r, c)) in cells.iter().enumerate() {
            by_block.entry((r / bh, c / bw)).or_default().push(i);
        }
        let mut out = vec![None; cells.len()];
        let mut buf = Vec::new();
        for ((by, bx), idx) in by_block {
            let (x0, y0) = (bx * bw, by * bh);
            let (cw, ch) = (bw.min(w - x0), bh.min(h - y0));
            buf.resize(cw * ch, 0f64);
            band.read_into_slice::<f64>(
                (x0 as isize, y0 as isize),
                (cw, ch),
                (cw, ch),
                &mut buf,
                None,
            )
            .map_err(Error::gdal(
                &self.path,
                format!("reading the block at row {y0}, col {x0}"),
            ))?;
            for i in idx {
                let (r, c) = cells[i];
                out[i] = Some(buf[(r - y0) * cw + (c - x0)]).filter(|&v| self.is_data(v));
            }
        }
        Ok(out)
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
        }
    }
}

/// Enough to open a [`StripReader`] in another thread.
#[derive(Debug, Clone)]
pub struct ReaderSpec {
    path: PathBuf,
    width: usize,
    nodata: Option<f64>,
    as_f32: bool,
    non_finite: NonFiniteCount,
}

impl ReaderSpec {
    /// Open the file again for this thread.
    pub fn open(&self) -> Result<StripReader> {
        let ds = open_readonly(
            &self.path,
            GdalOpenFlags::GDAL_OF_RASTER,
            "suitability raster",
        )?;
        Ok(StripReader {
            path: self.path.clone(),
            ds,
            width: self.width,
            nodata: self.nodata,
            as_f32: self.as_f32,
            non_finite: self.non_finite.clone(),
        })
    }
}

/// Reads and thresholds row strips; one per thread.
pub struct StripReader {
    path: PathBuf,
    ds: Dataset,
    width: usize,
    nodata: Option<f64>,
    as_f32: bool,
    non_finite: NonFiniteCount,
}

/// Buffers a [`StripReader`] reuses between strips.
#[derive(Debug, Default)]
pub struct StripBuffers {
    f32s: Vec<f32>,
    f64s: Vec<f64>,
}

impl StripReader {
    /// Read rows `y0 .. y0 + rows` and code each cell into `codes` (resized): 0 below
    /// `t`, 1 at or above `t`, 255 nodata. Returns whether every data cell was exactly 0
    /// or 1.
    pub fn classify_rows(
        &self,
        y0: usize,
        rows: usize,
        t: f64,
        bufs: &mut StripBuffers,
        codes: &mut Vec<u8>,
    ) -> Result<bool> {
        let n = self.width * rows;
        let band = self
            .ds
            .rasterband(1)
            .map_err(Error::gdal(&self.path, "reading band 1"))?;
        let what = || format!("reading rows {y0}..{}", y0 + rows);
        codes.resize(n, 0);
        let mut non_finite = 0u64;
        let binary = if self.as_f32 {
            bufs.f32s.resize(n, 0.0);
            band.read_into_slice::<f32>(
                (0, y0 as isize),
                (self.width, rows),
                (self.width, rows),
                &mut bufs.f32s,
                None,
            )
            .map_err(Error::gdal(&self.path, what()))?;
            code_cells_f32(&bufs.f32s, codes, t, self.nodata, &mut non_finite)
        } else {
            bufs.f64s.resize(n, 0.0);
            band.read_into_slice::<f64>(
                (0, y0 as isize),
                (self.width, rows),
                (self.width, rows),
                &mut bufs.f64s,
                None,
            )
            .map_err(Error::gdal(&self.path, what()))?;
            code_cells_f64(&bufs.f64s, codes, t, self.nodata, &mut non_finite)
        };
        self.non_finite.add_strip(y0, rows, non_finite);
        Ok(binary)
    }
}

impl StripReader {
    /// For each cell of the strip last read into `bufs` by [`StripReader::classify_rows`]
    /// (with its `codes`): how many of the ascending thresholds `cands` its value reaches
    /// (`v >= t`, the comparison the pass makes), or 255 for nodata.
    pub(crate) fn bins(&self, bufs: &StripBuffers, codes: &[u8], cands: &[f64], out: &mut Vec<u8>) {
        out.clear();
        if self.as_f32 {
            let t: Vec<f32> = cands.iter().map(|&c| f32_threshold(c)).collect();
            out.extend(bufs.f32s.iter().zip(codes).map(|(&v, &k)| {
                if k == class::NODATA {
                    class::NODATA
                } else {
                    t.iter().map(|&c| (v >= c) as u8).sum()
                }
            }));
        } else {
            out.extend(bufs.f64s.iter().zip(codes).map(|(&v, &k)| {
                if k == class::NODATA {
                    class::NODATA
                } else {
                    cands.iter().map(|&c| (v >= c) as u8).sum()
                }
            }));
        }
    }
}

/// The smallest f32 `t32` with `v >= t32` exactly when `v as f64 >= t`, for every f32 `v`.
fn f32_threshold(t: f64) -> f32 {
    if t.is_nan() {
        return f32::NAN;
    }
    let mut t32 = t as f32; // round to nearest
    if (t32 as f64) < t {
        t32 = t32.next_up();
    }
    t32
}

/// The two sample types the pass reads.
trait Sample: Copy + PartialEq + PartialOrd {
    const ZERO: Self;
    const ONE: Self;
    fn finite(self) -> bool;
}

impl Sample for f32 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    fn finite(self) -> bool {
        self.is_finite()
    }
}

impl Sample for f64 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    fn finite(self) -> bool {
        self.is_finite()
    }
}

/// Code cells against `t` in their own type (branch-free, so the loop vectorises): 255 for
/// NaN, +-inf and `nd` (NaN: no nodata value), else `v >= t`. Returns whether all data
/// cells are 0 or 1, and adds the NaN/inf cells to `non_finite`.
fn code_cells<T: Sample>(
    values: &[T],
    codes: &mut [u8],
    t: T,
    nd: T,
    non_finite: &mut u64,
) -> bool {
    let mut not_binary = 0u32;
    let mut nf = 0u32;
    for (&v, k) in values.iter().zip(codes.iter_mut()) {
        let inf_or_nan = !v.finite();
        nf += inf_or_nan as u32;
        let missing = inf_or_nan | (v == nd);
        not_binary |= (!missing & (v != T::ZERO) & (v != T::ONE)) as u32;
        *k = if missing {
            class::NODATA
        } else {
            (v >= t) as u8
        };
    }
    *non_finite += nf as u64;
    not_binary == 0
}

/// Code float32 cells; `t` is compared exactly as in float64 (see [`f32_threshold`]) and,
/// as GDAL does for float32 bands, the nodata value is taken at float32 precision.
fn code_cells_f32(
    values: &[f32],
    codes: &mut [u8],
    t: f64,
    nodata: Option<f64>,
    non_finite: &mut u64,
) -> bool {
    let nd = nodata.map(|v| v as f32).unwrap_or(f32::NAN);
    code_cells(values, codes, f32_threshold(t), nd, non_finite)
}

/// Code float64 cells.
fn code_cells_f64(
    values: &[f64],
    codes: &mut [u8],
    t: f64,
    nodata: Option<f64>,
    non_finite: &mut u64,
) -> bool {
    code_cells(values, codes, t, nodata.unwrap_or(f64::NAN), non_finite)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn f32_threshold_is_exact_for_every_neighbour() {
        // For thresholds that are and are not f32 values, the f32 comparison must agree
        // with the f64 one on the f32 values around T.
        for t in [0.12f64, 0.12f32 as f64, 0.5, 1.0 / 3.0, -0.0, 1e-40, 3.4e38] {
            let t32 = f32_threshold(t);
            let mut v = (t as f32).next_down().next_down();
            for _ in 0..5 {
                assert_eq!(v >= t32, v as f64 >= t, "t = {t}, v = {v}");
                v = v.next_up();
            }
        }
    }

    #[test]
    fn cells_are_coded_with_nodata_nan_and_inf() {
        // CHECKS.md section 5: cells [0.1165, 0.118, 0.12, 0.13] with T = 0.12 -> [0, 0, 1, 1].
        let v = [
            0.1165f32,
            0.118,
            0.12,
            0.13,
            -9999.0,
            f32::NAN,
            f32::INFINITY,
            f32::NEG_INFINITY,
        ];
        let mut k = [9u8; 8];
        let mut nf = 0;
        let binary = code_cells_f32(&v, &mut k, 0.12f32 as f64, Some(-9999.0), &mut nf);
        assert_eq!(k, [0, 0, 1, 1, 255, 255, 255, 255]);
        assert!(!binary);
        assert_eq!(nf, 3, "NaN, +inf and -inf");
        let v64: Vec<f64> = v.iter().map(|&x| x as f64).collect();
        let mut k64 = [9u8; 8];
        let mut nf64 = 0;
        code_cells_f64(&v64, &mut k64, 0.12f32 as f64, Some(-9999.0), &mut nf64);
        assert_eq!(k64, k);
        assert_eq!(nf64, 3);
        let mut kb = [9u8; 4];
        let kb_binary = code_cells_f32(
            &[0.0, 1.0, -9999.0, 1.0],
            &mut kb,
            0.5,
            Some(-9999.0),
            &mut nf,
        );
        assert!(kb_binary);
    }

    #[test]
    fn float32_nodata_is_compared_at_float32_precision() {
        // A Float32 band with nodata "0.1": its cells hold 0.1f32 (0.100000001...), which
        // GDAL treats as nodata (the nodata value is cast to the band type; from memory).
        let mut k = [9u8; 2];
        code_cells_f32(&[0.1, 0.9], &mut k, 0.5, Some(0.1), &mut 0);
        assert_eq!(k, [255, 1]);
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
    /// Internal overviews, folded from the rows as they are written.
    overviews: crate::class_overviews::OverviewFolder,
    next_row: usize,
    ready: Vec<crate::class_overviews::Ready>,
}

impl ClassWriter {
    /// Create the GeoTIFF (tiled 256 x 256, DEFLATE, BIGTIFF if needed) on `grid`.
    /// With internal overviews folded from the rows by the range classes' rule
    /// (`class_overviews`).
    pub fn create(path: &Path, grid: &GridSpec) -> Result<Self> {
        let mut w = Self::create_styled(path, grid, "range class", &crate::styles::CLASS_STYLES)?;
        // The overview structure now (resampling NONE: GDAL computes nothing); the rows
        // are folded into it as they are written.
        let factors = crate::class_overviews::levels(grid.width, grid.height);
        if !factors.is_empty() {
            let f: Vec<i32> = factors.iter().map(|&f| f as i32).collect();
            w.ds.build_overviews("NONE", &f, &[])
                .map_err(output_error(path, "creating the overviews".into()))?;
        }
        w.overviews =
            crate::class_overviews::OverviewFolder::new(grid.width, grid.height, &factors);
        Ok(w)
    }

    /// Create a uint8 GeoTIFF like [`ClassWriter::create`] with its own band description
    /// and classes (colours; category names by value, so values must run 0, 1, ...); nodata
    /// 255, transparent.
    pub(crate) fn create_styled(
        path: &Path,
        grid: &GridSpec,
        description: &str,
        classes: &[crate::styles::ClassStyle],
    ) -> Result<Self> {
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
            band.set_description(description)
                .map_err(err("setting the band description"))?;
            let mut ct = ColorTable::new(PaletteInterpretation::Rgba);
            for c in classes {
                let [r, g, b, a] = c.rgba.map(i16::from);
                ct.set_color_entry(c.value as u16, &ColorEntry::rgba(r, g, b, a));
            }
            // Transparent nodata.
            ct.set_color_entry(class::NODATA as u16, &ColorEntry::rgba(0, 0, 0, 0));
            band.set_color_table(&ct);
            let mut names = gdal::cpl::CslStringList::new();
            for (i, c) in classes.iter().enumerate() {
                debug_assert_eq!(c.value as usize, i, "class values run 0, 1, ...");
                names
                    .add_string(c.name)
                    .map_err(err("setting category names"))?;
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
            // No overviews folded unless asked ([`ClassWriter::create`]).
            overviews: crate::class_overviews::OverviewFolder::new(grid.width, grid.height, &[]),
            next_row: 0,
            ready: Vec::new(),
        })
    }

    /// Write rows starting at `y0`; `rows` holds whole rows. Returns the buffer for reuse.
    pub fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<Vec<u8>> {
        let n = rows.len() / self.width;
        if y0 < self.next_row {
            self.overviews.reset(); // a second classification replaces the rows
            self.ready.clear();
            self.next_row = 0;
        }
        if y0 == self.next_row {
            for (i, r) in rows.chunks_exact(self.width).enumerate() {
                self.overviews.push_row(y0 + i, r, &mut self.ready);
            }
            self.next_row = y0 + n;
        }
        // Write the strip's tiles and flush: left to GDAL's block cache (shared with the decode
        // workers' reads and with every run of a process, e.g. a batch), the order in which
        // tiles reach the file, and so the file's bytes, would depend on when other threads
        // fill the cache. The overview rows are kept (1/15 of a byte a cell) and written at
        // the end, in order, when no other thread uses the cache.
        let mut band = self
            .ds
            .rasterband(1)
            .map_err(output_error(&self.path, "opening band 1".into()))?;
        let mut buf = gdal::raster::Buffer::new((self.width, n), rows);
        band.write((0, y0 as isize), (self.width, n), &mut buf)
            .map_err(output_error(
                &self.path,
                format!("writing rows {y0}..{}", y0 + n),
            ))?;
        self.ds.flush_cache().map_err(output_error(
            &self.path,
            format!("writing rows {y0}..{}", y0 + n),
        ))?;
        Ok(buf.into_shape_and_vec().1)
    }

    /// Build nearest-neighbour overviews (factors 2, 4, ... down to about 256 cells), then
    /// flush and close.
    pub fn close_with_overviews(mut self) -> Result<()> {
        let (w, h) = self.ds.raster_size();
        let mut levels = Vec::new();
        let mut f = 2;
        while w.max(h) / f >= 256 {
            levels.push(f as i32);
            f *= 2;
        }
        if !levels.is_empty() {
            self.ds
                .build_overviews("NEAREST", &levels, &[])
                .map_err(output_error(&self.path, "building overviews".into()))?;
        }
        self.close()
    }

    /// The dataset being written (for `styles::describe_classes`).
    pub(crate) fn dataset(&self) -> &Dataset {
        &self.ds
    }

    /// Flush and close (the overviews were written with the rows).
    pub fn close(mut self) -> Result<()> {
        let path = self.path.clone();
        for (level, oy0, data) in std::mem::take(&mut self.ready) {
            let ow = self.overviews.level_width(level);
            let on = data.len() / ow;
            let band = self
                .ds
                .rasterband(1)
                .map_err(output_error(&path, "opening band 1".into()))?;
            let mut ov = band
                .overview(level)
                .map_err(output_error(&path, format!("opening overview {level}")))?;
            let mut obuf = gdal::raster::Buffer::new((ow, on), data);
            ov.write((0, oy0 as isize), (ow, on), &mut obuf)
                .map_err(output_error(
                    &path,
                    format!("writing overview {level} rows {oy0}..{}", oy0 + on),
                ))?;
        }
        self.ds
            .flush_cache()
            .map_err(output_error(&path, "writing the overviews".into()))?;
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
