//! Where the pass's class rows go: `classes.tif` ([`crate::raster_io::ClassWriter`]) or
//! memory ([`MemorySink`], for tests and small grids).

use crate::raster_io::class;
use crate::Result;

/// Where class rows go during the pass.
pub trait RowSink {
    /// Receive whole rows starting at `y0`. A later call for the same rows replaces them.
    /// Returns the buffer for reuse.
    fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<Vec<u8>>;

    /// Row `row` is final (rows come in order, each before the strip holding it is written;
    /// a later row 0 starts a second classification): a sink may take from it now, while
    /// it is in the cache. A sink told its rows this way does not look at them again in
    /// [`RowSink::write_rows`].
    fn row_ready(&mut self, _row: usize, _classes: &[u8]) {}
}

impl RowSink for crate::raster_io::ClassWriter {
    fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<Vec<u8>> {
        crate::raster_io::ClassWriter::write_rows(self, y0, rows)
    }

    fn row_ready(&mut self, row: usize, classes: &[u8]) {
        crate::raster_io::ClassWriter::fold_row(self, row, classes)
    }
}

/// Collects every class row in memory (for tests and small grids).
#[derive(Debug, Default)]
pub struct MemorySink {
    width: usize,
    /// Class rows, row-major.
    pub classes: Vec<u8>,
}

impl MemorySink {
    /// A sink for a grid `width` columns wide.
    pub fn new(width: usize) -> Self {
        MemorySink {
            width,
            classes: Vec::new(),
        }
    }
}

impl RowSink for MemorySink {
    fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<Vec<u8>> {
        let start = y0 * self.width;
        if self.classes.len() < start + rows.len() {
            self.classes.resize(start + rows.len(), class::NODATA);
        }
        self.classes[start..start + rows.len()].copy_from_slice(&rows);
        Ok(rows)
    }
}
