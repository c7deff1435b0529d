//! The present range as run lengths, taken from the class rows of the present run while
//! they stream to `classes.tif` (so the present raster is decoded once and nothing is read
//! back).
//!
//! Per row: the runs of class 1 (the present range: suitable inside M) and the runs of
//! nodata, as half-open column intervals `start..end`. Memory follows the number of runs,
//! not the number of cells.

use crate::raster_io::class;
use crate::{Result, RowSink};

/// Half-open column runs `start..end` of one row.
pub(crate) type Runs = Vec<(u32, u32)>;

/// The present range (class 1) and the present nodata cells, row by row.
#[derive(Debug, Clone, Default)]
pub(crate) struct PresentRuns {
    pub(crate) width: usize,
    /// Runs of class 1, per row.
    pub(crate) range: Vec<Runs>,
    /// Runs of nodata, per row.
    pub(crate) nodata: Vec<Runs>,
}

/// Runs of cells equal to `v` in `row`.
fn runs_of(row: &[u8], v: u8, out: &mut Runs) {
    out.clear();
    let mut c = 0;
    let w = row.len();
    while c < w {
        if row[c] != v {
            c += 1;
            continue;
        }
        let s = c;
        while c < w && row[c] == v {
            c += 1;
        }
        out.push((s as u32, c as u32));
    }
}

impl PresentRuns {
    pub(crate) fn new(width: usize, height: usize) -> Self {
        PresentRuns {
            width,
            range: vec![Vec::new(); height],
            nodata: vec![Vec::new(); height],
        }
    }

    /// Take the class rows starting at `y0` (whole rows).
    pub(crate) fn take_rows(&mut self, y0: usize, rows: &[u8]) {
        for (r, row) in rows.chunks(self.width).enumerate() {
            runs_of(row, class::INSIDE, &mut self.range[y0 + r]);
            runs_of(row, class::NODATA, &mut self.nodata[y0 + r]);
            self.range[y0 + r].shrink_to_fit();
            self.nodata[y0 + r].shrink_to_fit();
        }
    }

    /// Fill `out` (one row) with the present state: 1 present range, 255 nodata, 0 else.
    pub(crate) fn fill_row(&self, row: usize, out: &mut [u8]) {
        out.iter_mut().for_each(|v| *v = 0);
        for &(a, b) in &self.range[row] {
            out[a as usize..b as usize].iter_mut().for_each(|v| *v = 1);
        }
        for &(a, b) in &self.nodata[row] {
            out[a as usize..b as usize]
                .iter_mut()
                .for_each(|v| *v = class::NODATA);
        }
    }

    /// Number of present-range cells.
    #[cfg(test)]
    pub(crate) fn range_cells(&self) -> u64 {
        self.range
            .iter()
            .flatten()
            .map(|&(a, b)| (b - a) as u64)
            .sum()
    }

    /// Present-range cells with a 4-neighbour outside the range (grid edges do not count;
    /// columns wrap when `wrap`), as (row, col). The nearest range cell to any cell outside
    /// the range is one of these (see docs/change.md).
    pub(crate) fn boundary_cells(&self, wrap: bool) -> Vec<(usize, usize)> {
        let w = self.width;
        let h = self.range.len();
        let mut rows = [vec![0u8; w], vec![0u8; w], vec![0u8; w]];
        let mask = |r: usize, buf: &mut Vec<u8>| {
            buf.iter_mut().for_each(|v| *v = 0);
            for &(a, b) in &self.range[r] {
                buf[a as usize..b as usize].iter_mut().for_each(|v| *v = 1);
            }
        };
        let mut out = Vec::new();
        for r in 0..h {
            if self.range[r].is_empty() {
                continue;
            }
            if r > 0 {
                mask(r - 1, &mut rows[0]);
            } else {
                rows[0].iter_mut().for_each(|v| *v = 1);
            }
            mask(r, &mut rows[1]);
            if r + 1 < h {
                mask(r + 1, &mut rows[2]);
            } else {
                rows[2].iter_mut().for_each(|v| *v = 1);
            }
            for &(a, b) in &self.range[r] {
                for c in a as usize..b as usize {
                    let left = if c > 0 {
                        rows[1][c - 1]
                    } else if wrap {
                        rows[1][w - 1]
                    } else {
                        1
                    };
                    let right = if c + 1 < w {
                        rows[1][c + 1]
                    } else if wrap {
                        rows[1][0]
                    } else {
                        1
                    };
                    if left == 0 || right == 0 || rows[0][c] == 0 || rows[2][c] == 0 {
                        out.push((r, c));
                    }
                }
            }
        }
        out
    }
}

/// Passes class rows on to `inner` and keeps the present range as runs.
pub(crate) struct TeeSink<'a> {
    pub(crate) inner: &'a mut dyn RowSink,
    pub(crate) runs: PresentRuns,
}

impl RowSink for TeeSink<'_> {
    fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<Vec<u8>> {
        // A later call for the same rows replaces them (binary rasters are classified twice).
        self.runs.take_rows(y0, &rows);
        self.inner.write_rows(y0, rows)
    }

    fn row_ready(&mut self, row: usize, classes: &[u8]) {
        self.inner.row_ready(row, classes);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn runs_and_boundary_of_a_block() {
        // 5 x 4 grid, a 3 x 3 block of class 1 at rows 0..3, cols 1..4, one nodata cell.
        let mut rows = vec![0u8; 20];
        for r in 0..3 {
            for c in 1..4 {
                rows[r * 5 + c] = 1;
            }
        }
        rows[19] = 255;
        let mut p = PresentRuns::new(5, 4);
        p.take_rows(0, &rows);
        assert_eq!(p.range[0], vec![(1, 4)]);
        assert_eq!(p.nodata[3], vec![(4, 5)]);
        assert_eq!(p.range_cells(), 9);
        let mut row = vec![9u8; 5];
        p.fill_row(3, &mut row);
        assert_eq!(row, vec![0, 0, 0, 0, 255]);
        // Row 0 touches the grid edge: its middle cell has all 4 neighbours in range or off
        // the grid, so it is not a boundary cell; the centre (1, 2) is interior too.
        let b = p.boundary_cells(false);
        assert!(!b.contains(&(1, 2)) && !b.contains(&(0, 2)));
        assert_eq!(b.len(), 7);
        // Wrapping changes nothing here (column 0 and 4 are not in range).
        assert_eq!(p.boundary_cells(true).len(), 7);
    }
}
