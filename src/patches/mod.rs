//! Connected patches, labelled row by row. OWNER: patches helper. Interface below is fixed.

use crate::area::RowAreas;

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
    /// Number of columns covered by the arc.
    pub col_len: usize,
    /// Area-weighted mean row index of cell centres (pixel coordinates, centre of row r is r + 0.5).
    pub centroid_row: f64,
    /// Area-weighted mean column of cell centres (pixel coordinates; circular mean on wrapping grids, in [0, width)).
    pub centroid_col: f64,
    /// Number of records in its cells.
    pub records: u64,
}

/// Streaming labeller: push rows top to bottom, then finish.
pub struct PatchLabeler {
    _todo: (),
}

impl PatchLabeler {
    /// `width` columns; `wrap` joins column 0 and column width-1 (antimeridian).
    pub fn new(_width: usize, _connectivity: Connectivity, _wrap: bool) -> Self {
        todo!()
    }
    /// Push the classes of `row` (0 unsuitable, 1, 2 patch classes, 255 nodata), its cell areas,
    /// and the record counts in that row as (col, count) pairs.
    pub fn push_row(
        &mut self,
        _row: usize,
        _classes: &[u8],
        _areas: &RowAreas,
        _records: &[(usize, u64)],
    ) {
        todo!()
    }
    /// All patches, sorted by id.
    pub fn finish(self) -> Vec<Patch> {
        todo!()
    }
}
