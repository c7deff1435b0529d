//! `classes.tif`: the class codes and the strip-by-strip writer.

use crate::{Error, GridSpec, Result};
use gdal::raster::{ColorEntry, ColorTable, PaletteInterpretation, RasterCreationOptions};
use gdal::{Dataset, DriverManager, Metadata};
use std::path::{Path, PathBuf};

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

/// GeoTIFF creation options of every count or class raster areal writes (`classes.tif`,
/// `change.tif`, `richness.tif`): tiled 256 x 256, Zstandard level 1, BigTIFF when needed.
///
/// Zstandard rather than DEFLATE: on a global 30" class raster it costs about a third of
/// DEFLATE's CPU time (1.3 against 3.6 CPU-s for 933 M cells, `gdal_translate` of the same
/// file) and the file is smaller (2.1 against 2.7 MB). GDAL reads it from version 2.3 on
/// (QGIS, R terra and sf, rasterio); software without Zstandard support can be given a
/// DEFLATE copy with `gdal_translate -co COMPRESS=DEFLATE -co TILED=YES in.tif out.tif`.
pub(crate) const TILED_GEOTIFF: [&str; 6] = [
    "TILED=YES",
    "BLOCKXSIZE=256",
    "BLOCKYSIZE=256",
    "COMPRESS=ZSTD",
    "ZSTD_LEVEL=1",
    "BIGTIFF=IF_SAFER",
];

/// Writes `classes.tif` strip by strip.
pub struct ClassWriter {
    path: PathBuf,
    ds: Dataset,
    width: usize,
    /// Internal overviews, folded from the rows as they are written.
    overviews: crate::class_overviews::OverviewFolder,
    /// Rows folded into the overviews so far.
    next_row: usize,
    /// The rows come through [`ClassWriter::fold_row`], not [`ClassWriter::write_rows`].
    told: bool,
    ready: Vec<crate::class_overviews::Ready>,
}

impl ClassWriter {
    /// Create the GeoTIFF ([`TILED_GEOTIFF`]) on `grid`.
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
        // The tiles are compressed on the writing thread: with Zstandard, handing them to
        // GDAL's worker threads (NUM_THREADS) cost more in thread hand-offs than it saved
        // (about 0.9 CPU-s more at global 30", where both cores are busy anyway).
        let opts = RasterCreationOptions::from_iter(TILED_GEOTIFF);
        let driver =
            DriverManager::get_driver_by_name("GTiff").map_err(err("finding the GTiff driver"))?;
        let mut ds = driver
            .create_with_band_type_with_options::<u8, _>(path, grid.width, grid.height, 1, &opts)
            .map_err(err("creating the class raster"))?;
        ds.set_geo_transform(&grid.geo_transform)
            .map_err(err("setting the geotransform"))?;
        let srs = crate::crs::from_wkt(&grid.crs_wkt).map_err(err("parsing the CRS"))?;
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
            told: false,
            ready: Vec::new(),
        })
    }

    /// Fold row `row` into the overviews now (see [`crate::RowSink::row_ready`]); the
    /// rows are then not folded again when written.
    pub fn fold_row(&mut self, row: usize, classes: &[u8]) {
        self.told = true;
        self.fold(row, classes);
    }

    fn fold(&mut self, row: usize, classes: &[u8]) {
        if row < self.next_row {
            self.overviews.reset(); // a second classification replaces the rows
            self.ready.clear();
            self.next_row = 0;
        }
        if row == self.next_row {
            self.overviews.push_row(row, classes, &mut self.ready);
            self.next_row = row + 1;
        }
    }

    /// Write rows starting at `y0`; `rows` holds whole rows. Returns the buffer for reuse.
    pub fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<Vec<u8>> {
        let n = rows.len() / self.width;
        if !self.told {
            for (i, r) in rows.chunks_exact(self.width).enumerate() {
                self.fold(y0 + i, r);
            }
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
