//! The range model: what one pass over the raster knows about the range, kept compact, and
//! read by every product (tables, metrics, vectors, report).
//!
//! - per row, the runs of class-1 and class-2 cells with their final patch ids ([`Run`]);
//! - M as per-row runs of the data cells inside it;
//! - the patches ([`Patch`], in id order) and the totals ([`Totals`]).
//!
//! Ids: the streaming labeller cannot know a patch's final id while it emits the patch's
//! runs (ids follow the scan order of each patch's first cell, which is known only when the
//! patch closes, and two components may still join rows later). Each run is therefore stored
//! with its component's serial; the labeller records which serials joined, and at the end
//! one sweep over the runs replaces serials by ids.
//!
//! Memory grows with runs, not with cells: 12 bytes a run. Above a budget
//! ([`ModelOptions::budget_bytes`]) the runs spill to a file in the run's working folder and
//! are streamed back (see `store.rs`).

mod boundary;
mod from_classes;
mod store;

pub use boundary::BoundaryCorners;

use crate::area::RowAreas;
use crate::patches::{Connectivity, Patch, PatchLabeler};
use crate::raster_io::class;
use crate::{GridSpec, Result};
use std::path::PathBuf;
use store::RunStore;

/// One run of patch cells in a row: columns `start..end`, all in patch `patch` (1-based id;
/// its class is `patches()[patch - 1].class`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Run {
    /// First column.
    pub start: u32,
    /// One past the last column.
    pub end: u32,
    /// Patch id.
    pub patch: u32,
}

/// Cell counts and areas of the whole grid.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Totals {
    /// Data cells below the threshold (class 0).
    pub cells_unsuitable: u64,
    /// Suitable cells inside M (class 1).
    pub cells_inside: u64,
    /// Suitable cells beyond M (class 2).
    pub cells_outside: u64,
    /// Nodata cells.
    pub cells_nodata: u64,
    /// Area of class 0, m2.
    pub area_m2_unsuitable: f64,
    /// Area of class 1, m2.
    pub area_m2_inside: f64,
    /// Area of class 2, m2.
    pub area_m2_outside: f64,
    /// Area of the data cells inside M, m2.
    pub area_m2_accessible: f64,
}

/// Memory budget and spill folder of a model.
#[derive(Debug, Clone)]
pub struct ModelOptions {
    /// Bytes of runs kept in memory; beyond this they spill to a file.
    pub budget_bytes: usize,
    /// Folder for the spill file (the run's temporary output folder); the system's temporary
    /// folder when `None`.
    pub spill_dir: Option<PathBuf>,
}

impl Default for ModelOptions {
    /// 384 MiB of runs (32 million), or `AREAL_MODEL_BUDGET_MB` megabytes.
    fn default() -> Self {
        let mb = std::env::var("AREAL_MODEL_BUDGET_MB")
            .ok()
            .and_then(|v| v.parse::<usize>().ok())
            .unwrap_or(384);
        ModelOptions {
            budget_bytes: mb << 20,
            spill_dir: None,
        }
    }
}

/// The range as runs. Built by the pass ([`crate::compute_range`]) or from a class raster
/// ([`RangeModel::from_class_raster`]).
#[derive(Debug)]
pub struct RangeModel {
    grid: GridSpec,
    connectivity: Connectivity,
    store: RunStore,
    /// M runs of row r: `m_runs[m_start[r]..m_start[r + 1]]`; empty when M is unknown.
    m_start: Vec<u64>,
    m_runs: Vec<(u32, u32)>,
    patches: Vec<Patch>,
    totals: Totals,
}

impl RangeModel {
    /// The grid.
    pub fn grid(&self) -> &GridSpec {
        &self.grid
    }

    /// The connectivity the patches were labelled with.
    pub fn connectivity(&self) -> Connectivity {
        self.connectivity
    }

    /// Every patch, in id order (`patches()[id - 1]`).
    pub fn patches(&self) -> &[Patch] {
        &self.patches
    }

    /// Cell counts and areas.
    pub fn totals(&self) -> &Totals {
        &self.totals
    }

    /// Number of runs.
    pub fn run_count(&self) -> u64 {
        self.store.len()
    }

    /// Whether the runs went to a spill file.
    pub fn spilled(&self) -> bool {
        self.store.spilled()
    }

    /// Call `f` for every row, north to south, with its runs sorted by column.
    pub fn for_each_row(&self, f: &mut dyn FnMut(usize, &[Run]) -> Result<()>) -> Result<()> {
        self.store.for_rows(0..self.grid.height, f)
    }

    /// Call `f` for the rows in `rows`, in order, with their runs.
    pub fn for_rows(
        &self,
        rows: std::ops::Range<usize>,
        f: &mut dyn FnMut(usize, &[Run]) -> Result<()>,
    ) -> Result<()> {
        self.store.for_rows(rows, f)
    }

    /// Whether M is known (a model rebuilt from a class raster without M options has none).
    pub fn has_m(&self) -> bool {
        self.m_start.len() == self.grid.height + 1
    }

    /// The data cells inside M in `row`, as column runs `start..end` (empty when M is unknown).
    pub fn m_row(&self, row: usize) -> &[(u32, u32)] {
        if !self.has_m() || row >= self.grid.height {
            return &[];
        }
        &self.m_runs[self.m_start[row] as usize..self.m_start[row + 1] as usize]
    }

    /// The class of patch `id`.
    pub fn class_of(&self, id: u32) -> u8 {
        self.patches[id as usize - 1].class
    }
}

/// Builds a [`RangeModel`] from class rows pushed north to south.
pub(crate) struct ModelBuilder {
    width: usize,
    labeler: PatchLabeler,
    store: RunStore,
    m_start: Vec<u64>,
    m_runs: Vec<(u32, u32)>,
    track_m: bool,
}

/// How a row's M is given to [`ModelBuilder::push_row`].
pub(crate) enum RowM<'a> {
    /// M is the whole raster: every data cell.
    Whole,
    /// Per-cell membership.
    Cells(&'a [bool]),
    /// The columns in M as sorted, disjoint, half-open intervals `[a, b)`.
    Intervals(&'a [(usize, usize)]),
    /// Not known.
    Unknown,
}

impl RowM<'_> {
    /// Whether column `c` lies in M (false when not known).
    pub(crate) fn contains(&self, c: usize) -> bool {
        match self {
            RowM::Whole => true,
            RowM::Cells(v) => v[c],
            RowM::Intervals(iv) => {
                let k = iv.partition_point(|&(_, b)| b <= c);
                k < iv.len() && iv[k].0 <= c
            }
            RowM::Unknown => false,
        }
    }
}

impl ModelBuilder {
    pub(crate) fn new(grid: &GridSpec, connectivity: Connectivity, opts: &ModelOptions) -> Self {
        ModelBuilder {
            width: grid.width,
            labeler: PatchLabeler::new(grid.width, connectivity, grid.wraps_antimeridian()),
            store: RunStore::new(opts.budget_bytes, opts.spill_dir.clone()),
            m_start: vec![0],
            m_runs: Vec::new(),
            track_m: true,
        }
    }

    /// Push the next row (rows must come in order, from 0).
    pub(crate) fn push_row(
        &mut self,
        row: usize,
        classes: &[u8],
        areas: &RowAreas,
        records: &[(usize, u64)],
        m: RowM<'_>,
    ) -> Result<()> {
        debug_assert_eq!(row, self.store.rows(), "rows pushed in order");
        self.labeler.push_row(row, classes, areas, records);
        self.store
            .push_row(self.labeler.last_runs().map(|(start, end, serial)| Run {
                start,
                end,
                patch: serial,
            }))?;
        match m {
            RowM::Unknown => self.track_m = false,
            RowM::Whole => push_true_runs(&mut self.m_runs, classes.len(), |c, want| {
                crate::scan::run_end(classes, c, |k| (k != class::NODATA) == want)
            }),
            RowM::Cells(in_m) => push_true_runs(&mut self.m_runs, classes.len(), |c, want| {
                crate::scan::run_end2(classes, in_m, c, |k, m| (m & (k != class::NODATA)) == want)
            }),
            RowM::Intervals(iv) => {
                // Merged intervals are apart by at least one cell: runs never join across.
                for &(a, b) in iv {
                    let seg = &classes[a..b];
                    let from = self.m_runs.len();
                    push_true_runs(&mut self.m_runs, seg.len(), |c, want| {
                        crate::scan::run_end(seg, c, |k| (k != class::NODATA) == want)
                    });
                    for run in &mut self.m_runs[from..] {
                        *run = (run.0 + a as u32, run.1 + a as u32);
                    }
                }
            }
        }
        self.m_start.push(self.m_runs.len() as u64);
        Ok(())
    }

    /// Resolve the ids and make the model.
    pub(crate) fn finish(
        mut self,
        grid: &GridSpec,
        connectivity: Connectivity,
        totals: Totals,
    ) -> Result<RangeModel> {
        debug_assert_eq!(self.width, grid.width);
        let (patches, ids) = self.labeler.finish_with_serials();
        self.store.resolve(ids.0)?;
        if !self.track_m {
            self.m_start.clear();
            self.m_runs = Vec::new();
        }
        Ok(RangeModel {
            grid: grid.clone(),
            connectivity,
            store: self.store,
            m_start: self.m_start,
            m_runs: self.m_runs,
            patches,
            totals,
        })
    }
}

/// Append the runs of M cells of a row of `n` cells; `run_end(c, v)` is where the run from
/// `c` whose cells are (`v` true) or are not in M ends.
fn push_true_runs(out: &mut Vec<(u32, u32)>, n: usize, run_end: impl Fn(usize, bool) -> usize) {
    let mut c = 0;
    while c < n {
        let start = run_end(c, false);
        if start >= n {
            break;
        }
        c = run_end(start, true);
        out.push((start as u32, c as u32));
    }
}

#[cfg(test)]
mod tests;
