//! Class rows as runs: the form the map is drawn from.
//!
//! A row is a sorted list of non-overlapping [`Run`]s of class 1, class 2 and nodata cells;
//! cells that no run covers are class 0. [`ClassRuns`] builds them from class rows as the
//! pass writes them (or as `areal report` reads a finished `classes.tif`); anything that can
//! hand out a row's runs ([`RowRuns`]) can be drawn.

use crate::raster_io::class;

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
pub trait RowRuns {
    /// Grid width (columns).
    fn width(&self) -> usize;
    /// Grid height (rows).
    fn height(&self) -> usize;
    /// The runs of `row`, sorted by start, not overlapping; uncovered cells are class 0.
    fn row_runs(&self, row: usize) -> &[Run];
}

/// Runs of every row, built from class rows.
#[derive(Debug, Clone, Default)]
pub struct ClassRuns {
    width: usize,
    /// `runs[row_start[r]..row_start[r + 1]]` are the runs of row r.
    row_start: Vec<usize>,
    runs: Vec<Run>,
}

impl ClassRuns {
    /// No rows yet, on a grid `width` columns wide.
    pub fn new(width: usize) -> Self {
        ClassRuns {
            width,
            row_start: vec![0],
            runs: Vec::new(),
        }
    }

    /// Append the next row (`classes.len() == width`).
    pub fn push_row(&mut self, classes: &[u8]) {
        debug_assert_eq!(classes.len(), self.width);
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
            while c < n && classes[c] == k {
                c += 1;
            }
            let code = if k == class::INSIDE || k == class::OUTSIDE {
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

impl RowRuns for ClassRuns {
    fn width(&self) -> usize {
        self.width
    }
    fn height(&self) -> usize {
        self.rows()
    }
    fn row_runs(&self, row: usize) -> &[Run] {
        &self.runs[self.row_start[row]..self.row_start[row + 1]]
    }
}

/// Receives the class rows of the pass and forwards them: keeps the runs for the map.
pub struct RunsTee<'a> {
    /// The sink the rows go to (`classes.tif`).
    pub inner: &'a mut dyn crate::RowSink,
    /// The runs kept.
    pub runs: ClassRuns,
    next_row: usize,
}

impl<'a> RunsTee<'a> {
    /// Forward to `inner`, keeping runs of a grid `width` wide.
    pub fn new(inner: &'a mut dyn crate::RowSink, width: usize) -> Self {
        RunsTee {
            inner,
            runs: ClassRuns::new(width),
            next_row: 0,
        }
    }
}

impl crate::RowSink for RunsTee<'_> {
    fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> crate::Result<Vec<u8>> {
        if y0 < self.next_row {
            // A second classification (binary input) replaces the rows: start again.
            self.runs = ClassRuns::new(self.runs.width);
            self.next_row = 0;
        }
        if y0 == self.next_row {
            self.runs.push_rows(&rows);
            self.next_row = y0 + rows.len() / self.runs.width.max(1);
        }
        self.inner.write_rows(y0, rows)
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
}
