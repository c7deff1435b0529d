//! Where the vector step reads the range from: rows of runs with their patch ids, the
//! patches, and M as runs; traced here into pixel polygons, one region at a time.

use super::trace::{IdRun, PixelPolygon, Tracer};
use crate::model::RangeModel;
use crate::patches::Patch;
use crate::{GridSpec, Result};

/// A range as rows of runs (the run's model).
pub(crate) trait RunSource {
    /// The grid.
    fn grid(&self) -> &GridSpec;
    /// The patches in id order.
    fn patches(&self) -> &[Patch];
    /// Every row north to south with its runs of patch cells, sorted by column.
    fn for_each_row(&self, f: &mut dyn FnMut(usize, &[IdRun]) -> Result<()>) -> Result<()>;
    /// The data cells inside M in `row`, as column runs.
    fn m_row(&self, row: usize) -> &[(u32, u32)];
}

/// The traced regions of a range.
pub(crate) struct Traced {
    /// Polygons of patch id i + 1 at index i.
    pub patches: Vec<Vec<PixelPolygon>>,
    /// M as used: the data cells inside M.
    pub accessible: Vec<PixelPolygon>,
    /// Cells of M.
    pub m_cells: u64,
}

/// Trace every patch (handed over as soon as the row below its last row is read) and M, in
/// one sweep over the rows.
pub(crate) fn trace(src: &dyn RunSource) -> Result<Traced> {
    let patches = src.patches();
    let mut by_last: Vec<u32> = (1..=patches.len() as u32).collect();
    by_last.sort_by_key(|&id| patches[id as usize - 1].row_max);
    let mut out: Vec<Vec<PixelPolygon>> = vec![Vec::new(); patches.len()];
    let (mut tp, mut tm) = (Tracer::new(), Tracer::new());
    let mut m_runs: Vec<IdRun> = Vec::new();
    let mut m_cells = 0u64;
    let mut next = 0usize;
    src.for_each_row(&mut |r, runs| {
        let row = u32::try_from(r).expect("rows fit in u32");
        tp.push_row(row, runs)?;
        while next < by_last.len() && patches[by_last[next] as usize - 1].row_max < r {
            let id = by_last[next];
            out[id as usize - 1] = tp.take(id)?;
            next += 1;
        }
        m_runs.clear();
        for &(start, end) in src.m_row(r) {
            m_cells += u64::from(end - start);
            m_runs.push(IdRun { start, end, id: 1 });
        }
        tm.push_row(row, &m_runs)
    })?;
    for id in tp.finish()? {
        out[id as usize - 1] = tp.take(id)?;
    }
    tm.finish()?;
    Ok(Traced {
        patches: out,
        accessible: tm.take(1)?,
        m_cells,
    })
}

impl RunSource for RangeModel {
    fn grid(&self) -> &GridSpec {
        RangeModel::grid(self)
    }
    fn patches(&self) -> &[Patch] {
        RangeModel::patches(self)
    }
    fn for_each_row(&self, f: &mut dyn FnMut(usize, &[IdRun]) -> Result<()>) -> Result<()> {
        let mut runs: Vec<IdRun> = Vec::new();
        RangeModel::for_each_row(self, &mut |r, model_runs| {
            runs.clear();
            runs.extend(model_runs.iter().map(|x| IdRun {
                start: x.start,
                end: x.end,
                id: x.patch,
            }));
            f(r, &runs)
        })
    }
    fn m_row(&self, row: usize) -> &[(u32, u32)] {
        RangeModel::m_row(self, row)
    }
}
