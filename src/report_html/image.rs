//! The decimated class image the map is drawn from, and the accessible area M at the same
//! resolution.
//!
//! A map pixel covers a block of `factor` x `factor` cells. Its class is the highest-ranked
//! class present in the block: class 1 > class 2 > class 0 > nodata, so a class-1 patch of a
//! single cell still colours its pixel, however large the grid.

use super::runs::{ClassRuns, RowSource, Run};
use crate::raster_io::class;
use crate::Result;

/// The part of the grid a map shows: cells `row0..row0 + rows` and `col0..col0 + cols`,
/// columns taken modulo the grid width (on grids that wrap the globe a window may cross
/// the grid's east edge).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Window {
    /// First column (may be such that `col0 + cols > width` on a wrapping grid).
    pub col0: usize,
    /// First row.
    pub row0: usize,
    /// Columns shown.
    pub cols: usize,
    /// Rows shown.
    pub rows: usize,
    /// Cells per map pixel, each way.
    pub factor: usize,
}

impl Window {
    /// The image size in pixels.
    pub fn image_size(&self) -> (usize, usize) {
        (
            self.cols.div_ceil(self.factor),
            self.rows.div_ceil(self.factor),
        )
    }

    /// The smallest factor that fits `cols` x `rows` cells in `max_w` x `max_h` pixels.
    pub fn fit(
        col0: usize,
        row0: usize,
        cols: usize,
        rows: usize,
        max_w: usize,
        max_h: usize,
    ) -> Self {
        let factor = cols.div_ceil(max_w).max(rows.div_ceil(max_h)).max(1);
        Window {
            col0,
            row0,
            cols,
            rows,
            factor,
        }
    }
}

/// A decimated class image: one class code per pixel, row-major.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ClassImage {
    /// Pixels across.
    pub cols: usize,
    /// Pixels down.
    pub rows: usize,
    /// The grid cells shown.
    pub window: Window,
    /// Class codes (0, 1, 2, 255).
    pub pixels: Vec<u8>,
}

/// Rank of a class in a block: higher wins.
fn rank(class: u8) -> u8 {
    match class {
        1 => 4,
        2 => 3,
        0 => 2,
        _ => 1,
    }
}

const CLASS_OF_RANK: [u8; 5] = [class::NODATA, class::NODATA, 0, 2, 1];

impl ClassImage {
    /// Decimate the runs of `src` inside `window`.
    pub fn build(src: &dyn RowSource, window: Window) -> Result<Self> {
        let (iw, ih) = window.image_size();
        let width = src.width();
        let f = window.factor;
        let mut ranks = vec![0u8; iw * ih];
        let rows = window.row0..(window.row0 + window.rows).min(src.height());
        src.for_rows(rows, &mut |row, runs| {
            let r = row - window.row0;
            let line = &mut ranks[(r / f) * iw..(r / f + 1) * iw];
            let mut mark = |start: usize, end: usize, k: u8| {
                for (a, b) in clip(start, end, &window, width) {
                    let rk = rank(k);
                    for px in &mut line[a / f..=(b - 1) / f] {
                        *px = (*px).max(rk);
                    }
                }
            };
            let mut c = 0usize;
            for &Run { start, end, class } in runs {
                let (s, e) = (start as usize, end as usize);
                if s > c {
                    mark(c, s, 0);
                }
                mark(s, e, class);
                c = e;
            }
            if c < width {
                mark(c, width, 0);
            }
            Ok(())
        })?;
        Ok(ClassImage {
            cols: iw,
            rows: ih,
            window,
            pixels: ranks
                .into_iter()
                .map(|k| CLASS_OF_RANK[k as usize])
                .collect(),
        })
    }

    /// Pixels of each class: [class 0, class 1, class 2, nodata].
    pub fn counts(&self) -> [usize; 4] {
        let mut n = [0; 4];
        for &k in &self.pixels {
            n[if k <= 2 { k as usize } else { 3 }] += 1;
        }
        n
    }
}

/// The window columns (relative to `col0`) of grid columns `start..end`: up to two
/// half-open intervals.
fn clip(
    start: usize,
    end: usize,
    w: &Window,
    width: usize,
) -> impl Iterator<Item = (usize, usize)> {
    let mut out = [(0, 0); 2];
    let mut n = 0;
    // The window covers grid columns col0..col0+cols, and on a wrapping grid also their
    // images shifted by one grid width.
    for shift in [0usize, width] {
        let (s, e) = (start + shift, end + shift);
        let (a, b) = (s.max(w.col0), e.min(w.col0 + w.cols));
        if a < b && n < 2 {
            out[n] = (a - w.col0, b - w.col0);
            n += 1;
        }
    }
    out.into_iter().take(n)
}

/// Fills `out[col]` with whether the centre of cell (`row`, col) lies in M.
pub trait AccessRows {
    /// One row of M.
    fn access_row(&mut self, row: usize, out: &mut [bool]) -> Result<()>;
}

/// M of the run: the range model's M runs (data cells inside M).
pub struct ModelAccess<'a>(pub &'a crate::RangeModel);

impl AccessRows for ModelAccess<'_> {
    fn access_row(&mut self, row: usize, out: &mut [bool]) -> Result<()> {
        out.iter_mut().for_each(|v| *v = false);
        for &(s, e) in self.0.m_row(row) {
            out[s as usize..e as usize]
                .iter_mut()
                .for_each(|v| *v = true);
        }
        Ok(())
    }
}

/// M rebuilt from the run's M options, restricted to data cells like the model's M.
pub struct RebuiltAccess<'a> {
    /// M from the options.
    pub mask: crate::access::AccessMask,
    /// The classes (for nodata).
    pub classes: &'a ClassRuns,
}

impl AccessRows for RebuiltAccess<'_> {
    fn access_row(&mut self, row: usize, out: &mut [bool]) -> Result<()> {
        self.mask.fill_row(row, out)?;
        for r in self.classes.row_runs(row) {
            if r.class == class::NODATA {
                out[r.start as usize..r.end as usize]
                    .iter_mut()
                    .for_each(|v| *v = false);
            }
        }
        Ok(())
    }
}

/// M on the image's pixels: a pixel is in M when the cell at its block's centre is.
/// Rows are asked in increasing order.
pub fn access_image(
    m: &mut dyn AccessRows,
    window: &Window,
    width: usize,
    height: usize,
) -> Result<Vec<bool>> {
    let (iw, ih) = window.image_size();
    let f = window.factor;
    let mut row = vec![false; width];
    let mut out = vec![false; iw * ih];
    for r in 0..ih {
        let gr = (window.row0 + r * f + f / 2)
            .min(window.row0 + window.rows - 1)
            .min(height - 1);
        m.access_row(gr, &mut row)?;
        for c in 0..iw {
            let wc = (c * f + f / 2).min(window.cols - 1);
            out[r * iw + c] = row[(window.col0 + wc) % width];
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::super::runs::ClassRuns;
    use super::*;

    fn grid_runs(w: usize, h: usize, cells: &[(usize, usize, u8)]) -> ClassRuns {
        let mut g = vec![0u8; w * h];
        for &(r, c, k) in cells {
            g[r * w + c] = k;
        }
        let mut runs = ClassRuns::new(w);
        runs.push_rows(&g);
        runs
    }

    #[test]
    fn a_one_cell_class_1_patch_survives_any_decimation() {
        // 4000 x 2000 cells of nodata and class 2 with one class-1 cell, shown in 100 x 50 px.
        let (w, h) = (4000, 2000);
        let mut cells: Vec<(usize, usize, u8)> = (0..h).map(|r| (r, 1234, 2)).collect();
        cells.push((777, 1235, 1));
        let runs = grid_runs(w, h, &cells);
        let win = Window::fit(0, 0, w, h, 100, 50);
        assert_eq!(win.factor, 40);
        let img = ClassImage::build(&runs, win).unwrap();
        assert_eq!((img.cols, img.rows), (100, 50));
        // The pixel holding (777, 1235) is class 1; the rest of that column of pixels is class 2.
        assert_eq!(img.pixels[(777 / 40) * 100 + 1235 / 40], 1);
        assert_eq!(img.counts(), [100 * 50 - 50, 1, 49, 0]);
    }

    #[test]
    fn nodata_only_where_a_block_has_nothing_else() {
        // 4 x 2 cells, factor 2: block 0 all nodata, block 1 nodata and one class-0 cell.
        let mut runs = ClassRuns::new(4);
        runs.push_row(&[255, 255, 255, 255]);
        runs.push_row(&[255, 255, 0, 255]);
        let img = ClassImage::build(
            &runs,
            Window {
                col0: 0,
                row0: 0,
                cols: 4,
                rows: 2,
                factor: 2,
            },
        )
        .unwrap();
        assert_eq!(img.pixels, vec![255, 0]);
    }

    #[test]
    fn a_window_across_the_grid_edge_wraps() {
        // 10 columns; window of 4 columns starting at column 8: columns 8, 9, 0, 1.
        let mut runs = ClassRuns::new(10);
        runs.push_row(&[1, 0, 0, 0, 0, 0, 0, 0, 0, 2]);
        let img = ClassImage::build(
            &runs,
            Window {
                col0: 8,
                row0: 0,
                cols: 4,
                rows: 1,
                factor: 1,
            },
        )
        .unwrap();
        assert_eq!(img.pixels, vec![0, 2, 1, 0]);
    }
}
