//! Connected patches, labelled row by row.
//!
//! Inputs: a class raster pushed one row at a time, top (row 0, north) to bottom, with each
//! row's cell areas (m2, [`RowAreas`]) and its record counts per column. Class 0 is unsuitable,
//! 255 is nodata, every other value is a patch class (the pipeline uses 1 and 2); cells of
//! different classes never join. [`Connectivity::Eight`] (default) joins diagonal neighbours
//! too, [`Connectivity::Four`] only edge neighbours. On a wrapping (global lon/lat) grid,
//! column 0 and column `width - 1` are neighbours, so patches join across the antimeridian.
//!
//! Output: [`Patch`] statistics in pixel space (row r, column c, cell centre (r + 0.5, c + 0.5));
//! the pipeline turns them into lon/lat. Ids are 1..n in raster scan order of each patch's first
//! cell, the numbering `scipy.ndimage.label` gives. [`label_grid`] also returns the label raster,
//! for small in-memory grids.
//!
//! Memory: the labeller keeps only the previous row's runs and the accumulators of the
//! components that reach it, plus the finished patches. See docs/connectivity.md.

mod label;
mod measure;
mod raster;
#[cfg(test)]
mod tests;

pub use raster::label_grid;

use crate::area::RowAreas;
use label::Forest;
pub(crate) use measure::Neumaier;
use measure::{Acc, Columns};

/// Which neighbours join cells into one patch.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Connectivity {
    /// Rook: N, S, E, W.
    Four,
    /// Queen: the 4 plus the diagonals (default).
    #[default]
    Eight,
}

/// One finished patch (pixel-space statistics; the pipeline turns them into lon/lat).
#[derive(Debug, Clone, PartialEq)]
pub struct Patch {
    /// 1-based id, in raster scan order of the patch's first cell (top row first, then west to east).
    pub id: u32,
    /// The class value of its cells (1 or 2).
    pub class: u8,
    /// Number of cells.
    pub cells: u64,
    /// Sum of the cell areas, m2.
    pub area_m2: f64,
    /// First cell in scan order (row, col).
    pub first_cell: (usize, usize),
    /// Northernmost and southernmost rows.
    pub row_min: usize,
    /// Southernmost row.
    pub row_max: usize,
    /// Columns covered, as an arc: first column going east, and number of columns (wraps on global grids).
    pub col_start: usize,
    /// Number of columns covered by the arc (`width`, with `col_start` 0, when it covers every column).
    pub col_len: usize,
    /// Area-weighted mean row index of cell centres (pixel coordinates, centre of row r is r + 0.5).
    pub centroid_row: f64,
    /// Area-weighted mean column of cell centres (pixel coordinates; circular mean on wrapping grids, in [0, width)).
    pub centroid_col: f64,
    /// Number of records in its cells.
    pub records: u64,
}

/// A run of equal-class patch cells `start..end` in one row, and its provisional label.
#[derive(Debug, Clone, Copy)]
struct Run {
    start: usize,
    end: usize,
    class: u8,
    label: u32,
    records: u64,
}

/// Whether `class` is a patch class (neither unsuitable nor nodata).
fn is_patch_class(class: u8) -> bool {
    class != 0 && class != 255
}

/// Streaming labeller: push rows top to bottom, then finish.
///
/// ```
/// use areal::area::RowAreas;
/// use areal::patches::{Connectivity, PatchLabeler};
/// // 1 0 0 1
/// // 0 1 1 0     two diagonal pairs and a bar: one patch with Eight, three with Four.
/// let rows = [[1u8, 0, 0, 1], [0, 1, 1, 0]];
/// for (conn, n) in [(Connectivity::Eight, 1), (Connectivity::Four, 3)] {
///     let mut lab = PatchLabeler::new(4, conn, false);
///     for (r, row) in rows.iter().enumerate() {
///         lab.push_row(r, row, &RowAreas::Uniform(1.0), &[]);
///     }
///     assert_eq!(lab.finish().len(), n);
/// }
/// ```
pub struct PatchLabeler {
    connectivity: Connectivity,
    cols: Columns,
    forest: Forest,
    /// Runs of the last pushed row, labels resolved to roots.
    prev: Vec<Run>,
    /// Scratch for the row being pushed.
    cur: Vec<Run>,
    /// Distinct roots referred to by `prev`.
    active: Vec<u32>,
    /// Scratch: labels created in the row being pushed.
    fresh: Vec<u32>,
    last_row: Option<usize>,
    /// Finished patches with their root serial, ids not yet given.
    done: Vec<(Patch, u32)>,
}

/// Final patch ids of the serials the labeller gave its components (see
/// [`PatchLabeler::last_runs`]): `ids[serial]` is the 1-based id of the patch it ended in.
#[derive(Debug, Clone, Default)]
pub struct SerialIds(pub Vec<u32>);

impl SerialIds {
    /// The patch id of `serial`.
    #[inline]
    pub fn id(&self, serial: u32) -> u32 {
        self.0[serial as usize]
    }
}

impl PatchLabeler {
    /// `width` columns; `wrap` joins column 0 and column width-1 (antimeridian).
    pub fn new(width: usize, connectivity: Connectivity, wrap: bool) -> Self {
        PatchLabeler {
            connectivity,
            cols: Columns::new(width, wrap),
            forest: Forest::default(),
            prev: Vec::new(),
            cur: Vec::new(),
            active: Vec::new(),
            fresh: Vec::new(),
            last_row: None,
            done: Vec::new(),
        }
    }

    /// Push the classes of `row` (0 unsuitable, 1, 2 patch classes, 255 nodata), its cell areas,
    /// and the record counts in that row as (col, count) pairs.
    ///
    /// Rows must come in increasing order; skipped rows count as rows without patch cells.
    /// Record pairs may repeat a column and come in any order; records on a cell of class 0 or
    /// 255 count towards no patch.
    ///
    /// # Panics
    /// These are caller bugs, not input errors: `classes.len() != width`, `row` not greater
    /// than the previous row, a record column `>= width`, or (from [`RowAreas::get`]) a
    /// per-cell area vector shorter than the row.
    pub fn push_row(
        &mut self,
        row: usize,
        classes: &[u8],
        areas: &RowAreas,
        records: &[(usize, u64)],
    ) {
        let width = self.cols.width;
        assert_eq!(
            classes.len(),
            width,
            "patch labeller: row {row} has {} cells, the grid is {width} wide",
            classes.len()
        );
        if let Some(last) = self.last_row {
            assert!(
                row > last,
                "patch labeller: row {row} pushed after row {last}; rows must increase"
            );
            if row != last + 1 {
                self.close_all();
            }
        }
        self.last_row = Some(row);

        self.split_runs(classes);
        for &(col, count) in records {
            assert!(
                col < width,
                "patch labeller: record column {col} is outside the {width}-column grid"
            );
            if is_patch_class(classes[col]) {
                let i = self.cur.partition_point(|r| r.end <= col);
                self.cur[i].records += count;
            }
        }
        self.join_runs(row, areas);
        self.join_wrap();
        self.close_row(row);
    }

    /// All patches, sorted by id.
    pub fn finish(self) -> Vec<Patch> {
        self.finish_with_serials().0
    }

    /// All patches, sorted by id, and the final id of every serial the labeller gave out.
    pub fn finish_with_serials(mut self) -> (Vec<Patch>, SerialIds) {
        self.close_all();
        let mut done = std::mem::take(&mut self.done);
        done.sort_unstable_by_key(|p| p.0.first_cell);
        let mut ids = self.forest.serial_roots();
        // Root serials first take their patch's id, then every serial its root's.
        let mut root_id = vec![0u32; ids.len()];
        for (i, (p, serial)) in done.iter_mut().enumerate() {
            p.id = u32::try_from(i + 1).expect("more than 4 billion patches");
            root_id[*serial as usize] = p.id;
        }
        for s in ids.iter_mut() {
            *s = root_id[*s as usize];
        }
        let patches = done.into_iter().map(|(p, _)| p).collect();
        (patches, SerialIds(ids))
    }

    /// The runs of the last pushed row as (start, end, serial): columns `start..end`, and the
    /// serial of their component (resolve it with [`PatchLabeler::finish_with_serials`]).
    pub fn last_runs(&self) -> impl Iterator<Item = (u32, u32, u32)> + '_ {
        self.prev
            .iter()
            .map(|r| (r.start as u32, r.end as u32, self.forest.serial(r.label)))
    }

    /// Serials given out so far (4 bytes each are kept until [`Self::finish_with_serials`]).
    pub fn serials(&self) -> usize {
        self.forest.serials()
    }

    /// Number of components that reach the last pushed row.
    pub fn active_components(&self) -> usize {
        self.active.len()
    }

    /// Working memory in label slots (in use or free for reuse). It stays bounded by the runs
    /// of two consecutive rows, however many rows and patches there are.
    pub fn label_slots(&self) -> usize {
        self.forest.capacity()
    }

    /// Cut the row into runs of equal patch class.
    fn split_runs(&mut self, classes: &[u8]) {
        self.cur.clear();
        let mut c = 0;
        while c < classes.len() {
            let class = classes[c];
            let start = c;
            c = crate::scan::run_end(classes, c, |k| k == class);
            if is_patch_class(class) {
                self.cur.push(Run {
                    start,
                    end: c,
                    class,
                    label: u32::MAX,
                    records: 0,
                });
            }
        }
    }

    /// Give each run of the current row a label, joining it with the previous row's runs of
    /// the same class that touch it. A run's own cells are added before any further union, so
    /// the two column arcs of every union overlap or touch.
    fn join_runs(&mut self, row: usize, areas: &RowAreas) {
        // With Eight, a run `s..e` touches previous-row cells `s-1..e+1`.
        let reach = usize::from(self.connectivity == Connectivity::Eight);
        self.fresh.clear();
        let mut lo = 0; // first previous run that can still touch the current run
        for j in 0..self.cur.len() {
            let run = self.cur[j];
            let acc = Acc::run(
                row,
                run.start,
                run.end,
                run.class,
                areas,
                run.records,
                &self.cols,
            );
            while lo < self.prev.len() && self.prev[lo].end + reach <= run.start {
                lo += 1;
            }
            let mut label = None;
            let mut i = lo;
            while i < self.prev.len() && self.prev[i].start < run.end + reach {
                let p = self.prev[i];
                if p.class == run.class {
                    label = Some(match label {
                        None => {
                            let root = self.forest.find(p.label);
                            self.forest.add(root, &acc, &self.cols);
                            root
                        }
                        Some(l) => self.forest.union(l, p.label, &self.cols),
                    });
                }
                i += 1;
            }
            self.cur[j].label = label.unwrap_or_else(|| {
                let l = self.forest.alloc(acc);
                self.fresh.push(l);
                l
            });
        }
    }

    /// On a wrapping grid, join across the antimeridian: column 0 with column width-1 in the
    /// current row, and (Eight) diagonally with the previous row.
    fn join_wrap(&mut self) {
        let width = self.cols.width;
        if !self.cols.wrap || self.cur.is_empty() {
            return;
        }
        let (first, last) = (self.cur[0], self.cur[self.cur.len() - 1]);
        let west = (first.start == 0).then_some(first); // run holding column 0
        let east = (last.end == width).then_some(last); // run holding column width-1
        if let (Some(w), Some(e)) = (west, east) {
            if w.class == e.class {
                self.forest.union(w.label, e.label, &self.cols);
            }
        }
        if self.connectivity == Connectivity::Eight && !self.prev.is_empty() {
            let (pfirst, plast) = (self.prev[0], self.prev[self.prev.len() - 1]);
            if let Some(w) = west {
                if plast.end == width && plast.class == w.class {
                    self.forest.union(w.label, plast.label, &self.cols);
                }
            }
            if let Some(e) = east {
                if pfirst.start == 0 && pfirst.class == e.class {
                    self.forest.union(e.label, pfirst.label, &self.cols);
                }
            }
        }
    }

    /// Resolve the current runs to roots; finish the components that no longer continue and
    /// release every slot nothing refers to any more.
    fn close_row(&mut self, row: usize) {
        for j in 0..self.cur.len() {
            let root = self.forest.find(self.cur[j].label);
            self.cur[j].label = root;
            self.forest.mark_live(root, row);
        }
        let mut still = Vec::with_capacity(self.active.len() + self.fresh.len());
        for &x in self.active.iter().chain(self.fresh.iter()) {
            if !self.forest.is_root(x) {
                self.forest.release(x);
            } else if self.forest.is_live(x, row) {
                self.forest.reset_rank(x);
                still.push(x);
            } else {
                let (acc, serial) = self.forest.release(x);
                self.done.push((acc.into_patch(&self.cols), serial));
            }
        }
        self.active = still;
        std::mem::swap(&mut self.prev, &mut self.cur);
        debug_assert_eq!(self.forest.in_use(), self.active.len());
    }

    /// Finish every component still open (end of input, or a gap in the rows).
    fn close_all(&mut self) {
        for &x in &self.active {
            let (acc, serial) = self.forest.release(x);
            self.done.push((acc.into_patch(&self.cols), serial));
        }
        self.active.clear();
        self.prev.clear();
    }
}
