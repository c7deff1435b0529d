//! Class rows as runs: the form the map is drawn from.
//!
//! A row is a sorted list of non-overlapping [`Run`]s of class 1, class 2 and nodata cells;
//! cells that no run covers are class 0. Sources ([`RowSource`]): the run's [`RangeModel`]
//! (patch runs) with the nodata runs kept as the pass wrote its rows ([`NodataTee`]), or, for
//! `areal report`, [`ClassRuns`] read from a finished `classes.tif`.

use crate::raster_io::class;
use crate::{RangeModel, Result};
use std::ops::Range;

/// Cells `start..end` of a row hold `class` (1, 2 or 255).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Run {
    /// First column.
    pub start: u32,
    /// One past the last column.
    pub end: u32,
    /// Class code: 1, 2 or 255 (nodata).
    pub class: u8,
}

/// Rows of runs on a grid.
pub trait RowSource {
    /// Grid width (columns).
    fn width(&self) -> usize;
    /// Grid height (rows).
    fn height(&self) -> usize;
    /// Call `f` for each row of `rows`, in order, with its runs (sorted by start, not
    /// overlapping; uncovered cells are class 0).
    fn for_rows(
        &self,
        rows: Range<usize>,
        f: &mut dyn FnMut(usize, &[Run]) -> Result<()>,
    ) -> Result<()>;
}

/// Runs of every row, built from class rows.
#[derive(Debug, Clone, Default)]
pub struct ClassRuns {
    /// Keep nodata runs only (class 1 and 2 come from the model).
    nodata_only: bool,
    width: usize,
    /// `runs[row_start[r]..row_start[r + 1]]` are the runs of row r.
    row_start: Vec<usize>,
    runs: Vec<Run>,
}

impl ClassRuns {
    /// No rows yet, on a grid `width` columns wide.
    pub fn new(width: usize) -> Self {
        ClassRuns {
            nodata_only: false,
            width,
            row_start: vec![0],
            runs: Vec::new(),
        }
    }

    /// Append the next row (`classes.len() == width`).
    pub fn push_row(&mut self, classes: &[u8]) {
        debug_assert_eq!(classes.len(), self.width);
        if self.nodata_only {
            return self.push_nodata_row(classes);
        }
        let mut c = 0;
        let n = classes.len();
        while c < n {
            let k = classes[c];
            if k == 0 {
                // Most rows are mostly one class: skip zeros eight at a time.
                while c + 8 <= n && classes[c..c + 8].iter().all(|&v| v == 0) {
                    c += 8;
                }
                while c < n && classes[c] == 0 {
                    c += 1;
                }
                continue;
            }
            let start = c;
            c = crate::scan::run_end(classes, c, |v| v == k);
            let code = if k == class::INSIDE || k == class::OUTSIDE {
                if self.nodata_only {
                    continue;
                }
                k
            } else {
                class::NODATA
            };
            let row_has_runs = self.runs.len() > *self.row_start.last().unwrap_or(&0);
            match self.runs.last_mut() {
                // Adjacent nodata codes (e.g. 255 and a stray value) merge into one run.
                Some(last) if row_has_runs && last.end as usize == start && last.class == code => {
                    last.end = c as u32
                }
                _ => self.runs.push(Run {
                    start: start as u32,
                    end: c as u32,
                    class: code,
                }),
            }
        }
        self.row_start.push(self.runs.len());
    }

    /// The nodata runs of a row (codes above 2); this runs on every cell of the pass, so it
    /// scans 32 cells at a time ([`crate::scan::run_end`]).
    fn push_nodata_row(&mut self, classes: &[u8]) {
        let n = classes.len();
        let mut c = 0;
        while c < n {
            let start = crate::scan::run_end(classes, c, |v| v <= 2);
            if start >= n {
                break;
            }
            c = crate::scan::run_end(classes, start, |v| v > 2);
            self.runs.push(Run {
                start: start as u32,
                end: c as u32,
                class: class::NODATA,
            });
        }
        self.row_start.push(self.runs.len());
    }

    /// Append whole rows (`rows.len()` a multiple of the width).
    pub fn push_rows(&mut self, rows: &[u8]) {
        for r in rows.chunks_exact(self.width.max(1)) {
            self.push_row(r);
        }
    }

    /// Rows pushed so far.
    pub fn rows(&self) -> usize {
        self.row_start.len() - 1
    }

    /// Number of runs held (memory: 12 bytes each).
    pub fn run_count(&self) -> usize {
        self.runs.len()
    }
}

impl ClassRuns {
    /// The runs of `row`.
    pub fn row_runs(&self, row: usize) -> &[Run] {
        &self.runs[self.row_start[row]..self.row_start[row + 1]]
    }

    /// Whether cell (`row`, `col`) is nodata.
    pub fn is_nodata(&self, row: usize, col: usize) -> bool {
        let runs = self.row_runs(row);
        let i = runs.partition_point(|r| (r.end as usize) <= col);
        runs.get(i)
            .is_some_and(|r| r.start as usize <= col && r.class == class::NODATA)
    }
}

impl RowSource for ClassRuns {
    fn width(&self) -> usize {
        self.width
    }
    fn height(&self) -> usize {
        self.rows()
    }
    fn for_rows(
        &self,
        rows: Range<usize>,
        f: &mut dyn FnMut(usize, &[Run]) -> Result<()>,
    ) -> Result<()> {
        for r in rows.start..rows.end.min(self.rows()) {
            f(r, self.row_runs(r))?;
        }
        Ok(())
    }
}

/// The run's range model (patch runs) with the nodata runs kept during the pass.
pub struct ModelRows<'a> {
    /// The model.
    pub model: &'a RangeModel,
    /// Nodata runs of every row ([`NodataTee`]).
    pub nodata: &'a ClassRuns,
}

impl RowSource for ModelRows<'_> {
    fn width(&self) -> usize {
        self.model.grid().width
    }
    fn height(&self) -> usize {
        self.model.grid().height
    }
    fn for_rows(
        &self,
        rows: Range<usize>,
        f: &mut dyn FnMut(usize, &[Run]) -> Result<()>,
    ) -> Result<()> {
        let mut merged: Vec<Run> = Vec::new();
        self.model.for_rows(rows, &mut |row, patch_runs| {
            merged.clear();
            let holes: &[Run] = if row < self.nodata.rows() {
                self.nodata.row_runs(row)
            } else {
                &[]
            };
            let mut h = holes.iter().peekable();
            for pr in patch_runs {
                while let Some(n) = h.next_if(|n| n.start < pr.start) {
                    merged.push(*n);
                }
                merged.push(Run {
                    start: pr.start,
                    end: pr.end,
                    class: self.model.class_of(pr.patch),
                });
            }
            merged.extend(h);
            f(row, &merged)
        })
    }
}

/// Receives the class rows of the pass and forwards them, keeping the nodata runs (the
/// range model holds the patch cells and M, not nodata).
pub struct NodataTee<'a> {
    /// The sink the rows go to (`classes.tif`).
    pub inner: &'a mut dyn crate::RowSink,
    /// The nodata runs kept.
    pub runs: ClassRuns,
    next_row: usize,
    /// Rows come through `row_ready`.
    told: bool,
}

impl<'a> NodataTee<'a> {
    /// Forward to `inner`, keeping nodata runs of a grid `width` wide.
    pub fn new(inner: &'a mut dyn crate::RowSink, width: usize) -> Self {
        NodataTee {
            inner,
            runs: ClassRuns {
                nodata_only: true,
                ..ClassRuns::new(width)
            },
            next_row: 0,
            told: false,
        }
    }
}

impl NodataTee<'_> {
    fn keep(&mut self, row: usize, classes: &[u8]) {
        if row < self.next_row {
            // A second classification (binary input) replaces the rows: start again.
            self.runs = ClassRuns {
                nodata_only: true,
                ..ClassRuns::new(self.runs.width)
            };
            self.next_row = 0;
        }
        if row == self.next_row {
            self.runs.push_row(classes);
            self.next_row = row + 1;
        }
    }
}

impl crate::RowSink for NodataTee<'_> {
    fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> crate::Result<Vec<u8>> {
        if !self.told {
            for (i, r) in rows.chunks_exact(self.runs.width.max(1)).enumerate() {
                self.keep(y0 + i, r);
            }
        }
        self.inner.write_rows(y0, rows)
    }

    fn row_ready(&mut self, row: usize, classes: &[u8]) {
        self.told = true;
        self.keep(row, classes);
        self.inner.row_ready(row, classes);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn runs_cover_every_non_zero_cell_and_nothing_else() {
        let row = [
            0, 1, 1, 0, 2, 255, 255, 7, 1, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 2,
        ];
        let mut r = ClassRuns::new(row.len());
        r.push_row(&row);
        // Rebuild the row from the runs: codes other than 1 and 2 become nodata.
        let mut back = vec![0u8; row.len()];
        for run in r.row_runs(0) {
            for c in run.start..run.end {
                back[c as usize] = run.class;
            }
        }
        let want: Vec<u8> = row.iter().map(|&k| if k > 2 { 255 } else { k }).collect();
        assert_eq!(back, want);
        assert_eq!(r.row_runs(0).len(), 5); // 1-1, 2, nodata (255,255,7), 1, 2
    }

    #[test]
    fn nodata_runs_alone_match_the_full_runs() {
        // Long stretches on both sides of the 32-cell blocks.
        let mut row = vec![0u8; 200];
        row[31..70].iter_mut().for_each(|v| *v = 255);
        row[70] = 1;
        row[100] = 255;
        row[150..200].iter_mut().for_each(|v| *v = 254);
        let mut full = ClassRuns::new(200);
        full.push_row(&row);
        let mut holes = ClassRuns {
            nodata_only: true,
            ..ClassRuns::new(200)
        };
        holes.push_row(&row);
        let want: Vec<Run> = full
            .row_runs(0)
            .iter()
            .copied()
            .filter(|r| r.class == 255)
            .collect();
        assert_eq!(holes.row_runs(0), &want[..]);
        assert_eq!(want.len(), 3);
    }
}
