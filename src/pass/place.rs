//! Records on the grid: each record's cell and the suitability value there, sampled before
//! the pass; the per-row index the pass uses to count records in patches and to give each
//! record its class.

use crate::raster_io::SuitabilityRaster;
use crate::records::Record;
use crate::report::RecordStatus;
use crate::{GridSpec, Result};
use std::collections::BTreeMap;

/// A record with its cell, the value there and (after the pass) the class of the cell.
#[derive(Debug, Clone)]
pub(crate) struct PlacedRecord {
    pub(crate) rec: Record,
    pub(crate) cell: Option<(usize, usize)>,
    pub(crate) value: Option<f64>,
    pub(crate) class: Option<u8>,
}

impl PlacedRecord {
    /// Where the record stands with threshold `t`.
    pub(crate) fn status(&self, t: f64) -> RecordStatus {
        match (self.cell, self.value) {
            (None, _) => RecordStatus::OutsideRaster,
            (Some(_), None) => RecordStatus::OnNodata,
            (Some(_), Some(v)) if v < t => RecordStatus::BelowThreshold,
            _ => RecordStatus::Used,
        }
    }
}

/// The records placed and sampled, with the counts the report needs.
pub(crate) struct Placement {
    pub(crate) placed: Vec<PlacedRecord>,
    /// Records outside the raster.
    pub(crate) outside: usize,
    /// Records on nodata cells.
    pub(crate) on_nodata: usize,
    /// One value per occupied data cell, in cell order.
    pub(crate) by_cell: BTreeMap<(usize, usize), f64>,
    /// Row -> (col, index into `placed`) of the records on data cells.
    pub(crate) rows: BTreeMap<usize, Vec<(usize, usize)>>,
}

/// Place `records` on `grid` and sample `raster` at their cells.
pub(crate) fn place(
    records: &[Record],
    grid: &GridSpec,
    raster: &SuitabilityRaster,
) -> Result<Placement> {
    let mut placed: Vec<PlacedRecord> = records
        .iter()
        .map(|r| PlacedRecord {
            rec: r.clone(),
            cell: grid.cell_of(r.x, r.y),
            value: None,
            class: None,
        })
        .collect();
    let cells: Vec<(usize, usize)> = placed.iter().filter_map(|p| p.cell).collect();
    let values = raster.sample(&cells)?;
    let mut vi = values.into_iter();
    for p in placed.iter_mut().filter(|p| p.cell.is_some()) {
        p.value = vi.next().flatten();
    }
    let outside = placed.iter().filter(|p| p.cell.is_none()).count();
    let on_nodata = placed
        .iter()
        .filter(|p| p.cell.is_some() && p.value.is_none())
        .count();
    let mut by_cell = BTreeMap::new();
    let mut rows: BTreeMap<usize, Vec<(usize, usize)>> = BTreeMap::new();
    for (i, p) in placed.iter().enumerate() {
        if let (Some((r, c)), Some(v)) = (p.cell, p.value) {
            by_cell.insert((r, c), v);
            rows.entry(r).or_default().push((c, i));
        }
    }
    Ok(Placement {
        placed,
        outside,
        on_nodata,
        by_cell,
        rows,
    })
}

/// Usable records whose value is below `t`.
pub(crate) fn count_below(placed: &[PlacedRecord], t: f64) -> usize {
    placed
        .iter()
        .filter(|p| p.value.is_some_and(|v| v < t))
        .count()
}
