//! The metrics pass over a class raster: the runs of patch cells, their patch ids, and the
//! boundary cells of every patch.
//!
//! Input: class rows (0 unsuitable, 255 nodata, any other value a patch class, as in
//! `classes.tif`) pulled strip by strip from a [`ClassRows`], north to south. Patches follow
//! the same rules as the patch labeller (`crate::patches`): equal classes join, 4 or 8
//! neighbours, column 0 and column `width - 1` join on a wrapping grid. Each run of equal
//! patch class in a row is kept (row, start, end, class) in a union-find whose root is
//! always the run with the smallest index, i.e. the component's first run in scan order; so
//! numbering the roots in order gives the patch ids the labeller gives (scan order of the
//! first cell).
//!
//! A boundary cell is a patch cell with at least one edge neighbour (N, S, W, E; across the
//! antimeridian on a wrapping grid) of another class, or on the raster's edge. The distance
//! between two sets of cells is reached between corners of their boundary cells, so these
//! cells are all the distance and hull computations need.
//!
//! Memory: 20 bytes per run and 8 per boundary cell, for the whole raster. Above
//! [`MAX_ITEMS`] runs plus boundary cells the pass stops with an error that names
//! `--no-metrics`.

use crate::patches::Connectivity;
use crate::{Error, Result};
use std::path::Path;

/// Class rows, strip by strip.
pub trait ClassRows {
    /// Fill `out` with rows `y0 .. y0 + rows` (row-major, `width * rows` values).
    fn read_class_rows(&mut self, y0: usize, rows: usize, out: &mut Vec<u8>) -> Result<()>;
}

/// Class rows held in memory (row-major, `width` columns), e.g. a [`crate::MemorySink`]'s.
pub struct InMemoryClasses<'a> {
    /// The classes, row-major.
    pub classes: &'a [u8],
    /// Columns per row.
    pub width: usize,
}

impl ClassRows for InMemoryClasses<'_> {
    fn read_class_rows(&mut self, y0: usize, rows: usize, out: &mut Vec<u8>) -> Result<()> {
        let (a, b) = (y0 * self.width, (y0 + rows) * self.width);
        out.clear();
        out.extend_from_slice(&self.classes[a.min(self.classes.len())..b.min(self.classes.len())]);
        out.resize(rows * self.width, crate::raster_io::class::NODATA);
        Ok(())
    }
}

/// A `classes.tif` (or any raster of class codes 0, 1, 2 and nodata) read through GDAL.
impl ClassRows for crate::raster_io::SuitabilityRaster {
    fn read_class_rows(&mut self, y0: usize, rows: usize, out: &mut Vec<u8>) -> Result<()> {
        let mut vals = Vec::new();
        self.read_rows(y0, rows, &mut vals)?;
        out.clear();
        for (i, &v) in vals.iter().enumerate() {
            if !self.is_data(v) || v == 255.0 {
                out.push(crate::raster_io::class::NODATA);
            } else if v == 0.0 || v == 1.0 || v == 2.0 {
                out.push(v as u8);
            } else {
                return Err(Error::UnsupportedRaster {
                    path: self.path().to_path_buf(),
                    reason: format!(
                        "cell at row {}, column {} holds {v}; a range raster holds only the classes 0, 1, 2 and nodata 255 (give the classes.tif written by areal range)",
                        y0 + i / self.grid().width,
                        i % self.grid().width
                    ),
                });
            }
        }
        Ok(())
    }
}

/// Most runs plus boundary cells the pass keeps (about 1 GB).
pub const MAX_ITEMS: usize = 60_000_000;

/// Rows read per call.
const STRIP: usize = 256;

/// One run of patch cells `start..end` in `row`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct RunRec {
    pub(crate) row: u32,
    pub(crate) start: u32,
    pub(crate) end: u32,
    pub(crate) class: u8,
}

/// What the pass found.
#[derive(Debug, Default)]
pub(crate) struct Scan {
    /// Every run, in scan order.
    pub(crate) runs: Vec<RunRec>,
    /// The 1-based patch id of each run.
    pub(crate) run_patch: Vec<u32>,
    /// Boundary cells as (row, col, patch id), in scan order.
    pub(crate) boundary: Vec<(u32, u32, u32)>,
    /// Number of patches.
    pub(crate) patches: usize,
}

fn is_patch(k: u8) -> bool {
    k != 0 && k != 255
}

struct State {
    width: usize,
    wrap: bool,
    reach: usize,
    parent: Vec<u32>,
    runs: Vec<RunRec>,
    /// (run index, col) for boundary cells.
    boundary: Vec<(u32, u32)>,
    prev: std::ops::Range<usize>,
}

impl State {
    fn find(&mut self, mut x: u32) -> u32 {
        loop {
            let p = self.parent[x as usize];
            if p == x {
                return x;
            }
            let gp = self.parent[p as usize];
            self.parent[x as usize] = gp;
            x = gp;
        }
    }
    fn union(&mut self, a: usize, b: usize) {
        let (ra, rb) = (self.find(a as u32), self.find(b as u32));
        if ra != rb {
            let (keep, gone) = (ra.min(rb), ra.max(rb));
            self.parent[gone as usize] = keep;
        }
    }

    /// Split `row` into runs and join them with the previous row's.
    fn push(&mut self, row: usize, cls: &[u8]) -> std::ops::Range<usize> {
        let first = self.runs.len();
        let mut c = 0;
        while c < cls.len() {
            let k = cls[c];
            let s = c;
            while c < cls.len() && cls[c] == k {
                c += 1;
            }
            if is_patch(k) {
                self.parent.push(self.runs.len() as u32);
                self.runs.push(RunRec {
                    row: row as u32,
                    start: s as u32,
                    end: c as u32,
                    class: k,
                });
            }
        }
        let cur = first..self.runs.len();
        let mut lo = self.prev.start;
        for j in cur.clone() {
            let r = self.runs[j];
            let (s, e) = (r.start as usize, r.end as usize);
            while lo < self.prev.end && self.runs[lo].end as usize + self.reach <= s {
                lo += 1;
            }
            let mut i = lo;
            while i < self.prev.end && (self.runs[i].start as usize) < e + self.reach {
                if self.runs[i].class == r.class {
                    self.union(i, j);
                }
                i += 1;
            }
        }
        if self.wrap && !cur.is_empty() {
            let w = self.width as u32;
            let (a, b) = (cur.start, cur.end - 1);
            let west = (self.runs[a].start == 0).then_some(a);
            let east = (self.runs[b].end == w).then_some(b);
            if let (Some(x), Some(y)) = (west, east) {
                if self.runs[x].class == self.runs[y].class {
                    self.union(x, y);
                }
            }
            if self.reach == 1 && !self.prev.is_empty() {
                let (pa, pb) = (self.prev.start, self.prev.end - 1);
                if let Some(x) = west {
                    if self.runs[pb].end == w && self.runs[pb].class == self.runs[x].class {
                        self.union(x, pb);
                    }
                }
                if let Some(y) = east {
                    if self.runs[pa].start == 0 && self.runs[pa].class == self.runs[y].class {
                        self.union(y, pa);
                    }
                }
            }
        }
        self.prev = cur.clone();
        cur
    }

    /// Record the boundary cells of `mid` (runs `runs`) given the rows above and below.
    fn boundary_of(
        &mut self,
        mid: &[u8],
        above: Option<&[u8]>,
        below: Option<&[u8]>,
        runs: std::ops::Range<usize>,
    ) {
        let w = self.width;
        let mut j = runs.start;
        for c in 0..w {
            let k = mid[c];
            if !is_patch(k) {
                continue;
            }
            let west = if c > 0 {
                Some(mid[c - 1])
            } else if self.wrap {
                Some(mid[w - 1])
            } else {
                None
            };
            let east = if c + 1 < w {
                Some(mid[c + 1])
            } else if self.wrap {
                Some(mid[0])
            } else {
                None
            };
            let edge = [above.map(|a| a[c]), below.map(|b| b[c]), west, east]
                .iter()
                .any(|n| *n != Some(k));
            if edge {
                while self.runs[j].end as usize <= c {
                    j += 1;
                }
                self.boundary.push((j as u32, c as u32));
            }
        }
    }
}

/// Run the pass over `height` rows of `width` columns. `source` names the raster in errors.
pub(crate) fn scan(
    rows_in: &mut dyn ClassRows,
    width: usize,
    height: usize,
    wrap: bool,
    connectivity: Connectivity,
    source: &Path,
) -> Result<Scan> {
    let mut st = State {
        width,
        wrap,
        reach: usize::from(connectivity == Connectivity::Eight),
        parent: Vec::new(),
        runs: Vec::new(),
        boundary: Vec::new(),
        prev: 0..0,
    };
    let mut strip = Vec::new();
    // The rows above and being finished (with its runs), for the boundary test.
    type Row = (Vec<u8>, std::ops::Range<usize>);
    let (mut above, mut mid): (Option<Vec<u8>>, Option<Row>) = (None, None);
    for y0 in (0..height).step_by(STRIP) {
        let n = STRIP.min(height - y0);
        rows_in.read_class_rows(y0, n, &mut strip)?;
        for r in 0..n {
            let row = strip[r * width..(r + 1) * width].to_vec();
            let runs = st.push(y0 + r, &row);
            if let Some((m, mruns)) = mid.take() {
                st.boundary_of(&m, above.as_deref(), Some(&row), mruns);
                above = Some(m);
            }
            mid = Some((row, runs));
            if st.runs.len() + st.boundary.len() > MAX_ITEMS {
                return Err(Error::UnsupportedRaster {
                    path: source.to_path_buf(),
                    reason: format!(
                        "the range metrics need every run of patch cells and every patch boundary cell in memory, and this raster has more than {MAX_ITEMS} by row {}; run without metrics (--no-metrics) or on a coarser raster",
                        y0 + r
                    ),
                });
            }
        }
    }
    if let Some((m, mruns)) = mid.take() {
        st.boundary_of(&m, above.as_deref(), None, mruns);
    }
    // Flatten, then number the roots in scan order.
    let n = st.runs.len();
    for j in 0..n {
        let r = st.find(j as u32);
        st.parent[j] = r;
    }
    let mut ids = st.parent;
    let mut next = 0u32;
    for j in 0..n {
        if ids[j] as usize == j {
            next += 1;
            ids[j] = next;
        } else {
            ids[j] = ids[ids[j] as usize];
        }
    }
    let boundary = st
        .boundary
        .iter()
        .map(|&(j, c)| (st.runs[j as usize].row, c, ids[j as usize]))
        .collect();
    Ok(Scan {
        runs: st.runs,
        run_patch: ids,
        boundary,
        patches: next as usize,
    })
}
