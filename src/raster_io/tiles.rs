//! Sampling the records' values before the pass, and keeping the blocks it decoded.
//!
//! The threshold comes from the values under the records, so every block holding a record
//! is decoded before the pass can start, and would be decoded again by the pass (1,000
//! records touch about a third of the blocks of a 12,000 x 10,000 grid). When the pass reads
//! the raster block by block (blocks [`STRIP_ROWS`] high, narrower than the grid), the
//! decoded blocks are kept, up to [`CACHE_BYTES`], and the pass takes each one instead of
//! decoding it again. The values are the ones GDAL decoded; nothing else changes.

use super::blocks::read_window;
use super::{open_readonly, SuitabilityRaster, STRIP_ROWS};
use crate::{Error, Result};
use gdal::{Dataset, GdalOpenFlags};
use std::collections::{BTreeMap, HashMap};
use std::path::Path;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};

/// At most this many bytes of decoded blocks are kept for the pass, for all rasters of the
/// process together (a batch runs several species at once).
const CACHE_BYTES: usize = 256 << 20;

/// Bytes of decoded blocks kept now, in every [`TileCache`] of the process.
static KEPT: AtomicUsize = AtomicUsize::new(0);

/// A decoded block, in the type the pass reads.
pub(crate) enum TileValues {
    F32(Vec<f32>),
    F64(Vec<f64>),
}

impl TileValues {
    fn bytes(&self) -> usize {
        match self {
            TileValues::F32(v) => v.len() * 4,
            TileValues::F64(v) => v.len() * 8,
        }
    }
}

/// Decoded blocks by their top-left cell (row, col), shared by the raster's readers; each
/// is taken once.
#[derive(Clone, Default)]
pub(crate) struct TileCache(Arc<Mutex<Tiles>>);

#[derive(Default)]
struct Tiles {
    by_origin: HashMap<(usize, usize), TileValues>,
    bytes: usize,
}

impl std::fmt::Debug for TileCache {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("TileCache")
    }
}

impl TileCache {
    /// Keep the block at (`y0`, `x0`) unless the cache is full.
    fn put(&self, y0: usize, x0: usize, values: TileValues) {
        let n = values.bytes();
        if KEPT.fetch_add(n, Ordering::Relaxed) + n > CACHE_BYTES {
            KEPT.fetch_sub(n, Ordering::Relaxed);
            return;
        }
        let mut t = self.0.lock().unwrap_or_else(|e| e.into_inner());
        t.bytes += n;
        if let Some(old) = t.by_origin.insert((y0, x0), values) {
            t.bytes -= old.bytes();
            KEPT.fetch_sub(old.bytes(), Ordering::Relaxed);
        }
    }

    /// The block at (`y0`, `x0`), if it was kept; it leaves the cache.
    pub(crate) fn take(&self, y0: usize, x0: usize) -> Option<TileValues> {
        let mut t = self.0.lock().unwrap_or_else(|e| e.into_inner());
        if t.by_origin.is_empty() {
            return None;
        }
        let v = t.by_origin.remove(&(y0, x0))?;
        t.bytes -= v.bytes();
        KEPT.fetch_sub(v.bytes(), Ordering::Relaxed);
        Some(v)
    }
}

impl Drop for Tiles {
    /// Blocks never taken (the pass stopped early) give their bytes back to the budget.
    fn drop(&mut self) {
        KEPT.fetch_sub(self.bytes, Ordering::Relaxed);
    }
}

/// Whether the pass reads this raster in whole blocks, so that kept blocks can serve it.
pub(crate) fn pass_reads_blocks(width: usize, (bw, bh): (usize, usize)) -> bool {
    bh == STRIP_ROWS && bw > 0 && bw < width
}

/// The value of each cell (row, col), `None` where it is nodata or non-finite. Cells are
/// grouped by the band's natural blocks, so each block holding a record is decoded once,
/// whatever GDAL's cache size; the blocks are shared out between the decode threads, each
/// with its own handle (this thread uses the raster's own), since this comes before the pass
/// can start.
pub(super) fn sample(
    raster: &SuitabilityRaster,
    cells: &[(usize, usize)],
) -> Result<Vec<Option<f64>>> {
    let (bw, bh) = raster
        .ds
        .rasterband(1)
        .map_err(Error::gdal(&raster.path, "reading band 1"))?
        .block_size();
    let mut by_block: BTreeMap<(usize, usize), Vec<usize>> = BTreeMap::new();
    for (i, &(r, c)) in cells.iter().enumerate() {
        by_block.entry((r / bh, c / bw)).or_default().push(i);
    }
    let blocks: Vec<((usize, usize), Vec<usize>)> = by_block.into_iter().collect();
    let threads = crate::pass::decode_threads().min(blocks.len()).max(1);
    let job = Job {
        path: &raster.path,
        size: (raster.grid.width, raster.grid.height),
        block: (bw, bh),
        nodata: raster.nodata,
        as_f32: raster.fits_f32,
        keep: pass_reads_blocks(raster.grid.width, (bw, bh)).then_some(&raster.tiles),
        cells,
    };
    let found: Vec<Result<Samples>> = std::thread::scope(|scope| {
        let handles: Vec<_> = (1..threads)
            .map(|t| {
                let (blocks, job) = (&blocks, &job);
                scope.spawn(move || {
                    let ds = open_readonly(
                        job.path,
                        GdalOpenFlags::GDAL_OF_RASTER,
                        "suitability raster",
                    )?;
                    job.run(&ds, blocks.iter().skip(t).step_by(threads))
                })
            })
            .collect();
        let own = job.run(&raster.ds, blocks.iter().step_by(threads));
        std::iter::once(own)
            .chain(
                handles
                    .into_iter()
                    .map(|h| h.join().expect("sampling thread")),
            )
            .collect()
    });
    let mut out = vec![None; cells.len()];
    for part in found {
        for (i, v) in part? {
            out[i] = v;
        }
    }
    Ok(out)
}

/// Sampled values: (index into the cells asked for, value or None for nodata).
type Samples = Vec<(usize, Option<f64>)>;

/// What every sampling thread shares.
struct Job<'a> {
    path: &'a Path,
    size: (usize, usize),
    block: (usize, usize),
    nodata: Option<f64>,
    as_f32: bool,
    /// Where to keep the decoded blocks (None: the pass would not use them).
    keep: Option<&'a TileCache>,
    cells: &'a [(usize, usize)],
}

impl Job<'_> {
    /// The values of the cells in `blocks` (block row and column, indices into the cells),
    /// read through `ds`.
    fn run<'b>(
        &self,
        ds: &Dataset,
        blocks: impl Iterator<Item = &'b ((usize, usize), Vec<usize>)>,
    ) -> Result<Samples> {
        let band = ds
            .rasterband(1)
            .map_err(Error::gdal(self.path, "reading band 1"))?;
        let ((w, h), (bw, bh)) = (self.size, self.block);
        let mut out = Vec::new();
        let (mut spare32, mut spare64) = (Vec::new(), Vec::new());
        for ((by, bx), idx) in blocks {
            let (x0, y0) = (bx * bw, by * bh);
            let (cw, ch) = (bw.min(w - x0), bh.min(h - y0));
            let at = |i: usize| {
                let (r, c) = self.cells[i];
                (r - y0) * cw + (c - x0)
            };
            let tile = if self.as_f32 {
                let mut buf = Vec::new();
                let spare = &mut spare32;
                read_window(
                    &band,
                    self.path,
                    (x0, y0),
                    (cw, ch),
                    (bw, bh),
                    true,
                    &mut buf,
                    spare,
                )?;
                for &i in idx {
                    out.push((i, self.data(buf[at(i)] as f64)));
                }
                TileValues::F32(buf)
            } else {
                let mut buf = Vec::new();
                let spare = &mut spare64;
                read_window(
                    &band,
                    self.path,
                    (x0, y0),
                    (cw, ch),
                    (bw, bh),
                    true,
                    &mut buf,
                    spare,
                )?;
                for &i in idx {
                    out.push((i, self.data(buf[at(i)])));
                }
                TileValues::F64(buf)
            };
            if let Some(keep) = self.keep {
                keep.put(y0, x0, tile);
            }
        }
        Ok(out)
    }

    fn data(&self, v: f64) -> Option<f64> {
        Some(v).filter(|&v| is_data_value(v, self.nodata, self.as_f32))
    }
}

/// A value is data unless non-finite or the nodata value (compared at float32 precision on
/// float32 bands, as GDAL does).
pub(super) fn is_data_value(v: f64, nodata: Option<f64>, fits_f32: bool) -> bool {
    v.is_finite()
        && nodata.is_none_or(|nd| {
            if fits_f32 {
                v as f32 != nd as f32
            } else {
                v != nd
            }
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    // Bookkeeping only (no outside source): a kept block comes back once, with its values;
    // a block larger than the whole budget is never kept.
    #[test]
    fn kept_blocks_are_taken_once_and_the_budget_holds() {
        let cache = TileCache::default();
        cache.put(256, 512, TileValues::F32(vec![0.25, 0.5]));
        match cache.take(256, 512) {
            Some(TileValues::F32(v)) => assert_eq!(v, [0.25, 0.5]),
            _ => panic!("the block was kept"),
        }
        assert!(cache.take(256, 512).is_none(), "taken once");
        assert!(cache.take(0, 0).is_none(), "never kept");
        cache.put(0, 0, TileValues::F64(vec![0.0; CACHE_BYTES / 8 + 1]));
        assert!(cache.take(0, 0).is_none(), "over the budget");
    }
}
