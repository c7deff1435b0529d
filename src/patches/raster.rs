//! The full label raster of a small in-memory class grid.
//!
//! Input: a row-major class grid (row 0 north, `width` columns; classes as in the parent
//! module). The patches come from the streaming labeller; a second pass floods each patch from
//! its first cell and writes its id, so the raster and the patch list agree by construction.
//! The flood is checked against the labeller's cell counts.

use super::{Connectivity, Patch, PatchLabeler};
use crate::area::RowAreas;

/// Label a whole in-memory grid: the label raster (row-major, 0 = no patch, otherwise the
/// patch id) and the patches, with the ids [`PatchLabeler`] gives.
///
/// Every cell counts 1 m2 (`area_m2 == cells`) and no records are attached; push rows to a
/// [`PatchLabeler`] for true areas and records.
///
/// ```
/// use areal::patches::{label_grid, Connectivity};
/// // 1 1 0 0
/// // 0 0 0 2
/// // 2 0 1 2     classes 1 and 2 touch at (2,2)-(2,3) but stay apart
/// // 2 0 0 0
/// let g = [1, 1, 0, 0, 0, 0, 0, 2, 2, 0, 1, 2, 2, 0, 0, 0];
/// let (labels, patches) = label_grid(&g, 4, Connectivity::Eight, false);
/// assert_eq!(labels, [1, 1, 0, 0, 0, 0, 0, 2, 3, 0, 4, 2, 3, 0, 0, 0]);
/// assert_eq!(patches.len(), 4);
/// // Wrapping joins (1,3)-(2,3) with (2,0)-(3,0) across the antimeridian.
/// let (_, patches) = label_grid(&g, 4, Connectivity::Eight, true);
/// assert_eq!(patches.len(), 3);
/// ```
///
/// # Panics
/// If `width` is 0 while `classes` is not empty, or `classes.len()` is not a multiple of
/// `width`.
pub fn label_grid(
    classes: &[u8],
    width: usize,
    connectivity: Connectivity,
    wrap: bool,
) -> (Vec<u32>, Vec<Patch>) {
    if classes.is_empty() {
        return (Vec::new(), Vec::new());
    }
    assert!(
        width > 0 && classes.len().is_multiple_of(width),
        "label_grid: {} cells do not make rows of {width}",
        classes.len()
    );
    let height = classes.len() / width;
    let mut labeler = PatchLabeler::new(width, connectivity, wrap);
    for (r, row) in classes.chunks_exact(width).enumerate() {
        labeler.push_row(r, row, &RowAreas::Uniform(1.0), &[]);
    }
    let patches = labeler.finish();

    let mut labels = vec![0u32; classes.len()];
    let mut stack = Vec::new();
    for p in &patches {
        let (r0, c0) = p.first_cell;
        let seed = r0 * width + c0;
        assert_eq!(
            labels[seed], 0,
            "internal error: patch {} starts inside another",
            p.id
        );
        labels[seed] = p.id;
        stack.push((r0, c0));
        let mut cells = 0u64;
        while let Some((r, c)) = stack.pop() {
            cells += 1;
            for &(dr, dc) in neighbour_offsets(connectivity) {
                let Some(nr) = r.checked_add_signed(dr).filter(|&nr| nr < height) else {
                    continue;
                };
                let nc = match c.checked_add_signed(dc).filter(|&nc| nc < width) {
                    Some(nc) => nc,
                    None if wrap => (c + width).wrapping_add_signed(dc) % width,
                    None => continue,
                };
                let i = nr * width + nc;
                if classes[i] == p.class && labels[i] == 0 {
                    labels[i] = p.id;
                    stack.push((nr, nc));
                }
            }
        }
        assert_eq!(
            cells, p.cells,
            "internal error: patch {} floods to a different size",
            p.id
        );
    }
    (labels, patches)
}

/// (row, col) offsets of the neighbours of a cell.
fn neighbour_offsets(connectivity: Connectivity) -> &'static [(isize, isize)] {
    match connectivity {
        Connectivity::Four => &[(-1, 0), (0, -1), (0, 1), (1, 0)],
        Connectivity::Eight => &[
            (-1, -1),
            (-1, 0),
            (-1, 1),
            (0, -1),
            (0, 1),
            (1, -1),
            (1, 0),
            (1, 1),
        ],
    }
}
