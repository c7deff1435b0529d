//! The internal overviews of `classes.tif`, computed from the class rows as the pass writes
//! them (no read-back of the full-resolution file).
//!
//! Levels 4, 8, 16, ... (halvings until the longer side is under 256 cells; the 2x level is
//! left out: a GIS reads the full resolution there at little cost). An overview cell holds the
//! highest class of its block, class 1 > class 2 > class 0 > nodata (the map's rule, see
//! `report_html::image`), so a one-cell class-1 patch stays visible at every zoom. Level 4
//! is folded from the full-resolution rows, each further level from the one before.

use crate::raster_io::class;

/// Rank of a class code, higher wins in a block: 1 -> 4, 2 -> 3, 0 -> 2, nodata (any other
/// code) -> 1; 0 = nothing seen. Branch-free, so the row loops vectorise.
#[inline]
fn rank(k: u8) -> u8 {
    1 + (k == 1) as u8 * 3 + (k == 2) as u8 * 2 + (k == 0) as u8
}
const CLASS_OF_RANK: [u8; 5] = [class::NODATA, class::NODATA, 0, 2, 1];

/// The overview factors for a `w` x `h` grid. `AREAL_CLASS_OVERVIEWS=0` turns them off
/// (for the benchmark's measure of their cost).
pub(crate) fn levels(w: usize, h: usize) -> Vec<usize> {
    let mut out = Vec::new();
    if std::env::var("AREAL_CLASS_OVERVIEWS").is_ok_and(|v| v == "0") {
        return out;
    }
    let mut f = 4;
    while w.max(h) / f >= 256 && out.len() < 12 {
        out.push(f);
        f *= 2;
    }
    out
}

/// One level: folds rows of its input (ranks, `ratio` to one) into rows of its own.
struct Level {
    ratio: usize,
    width: usize,
    height: usize,
    /// Ranks of the row being folded.
    acc: Vec<u8>,
    /// Input rows folded into `acc`.
    folded: usize,
    /// Rows emitted so far.
    emitted: usize,
    /// Finished class rows not yet written, starting at row `pending_y0`.
    pending: Vec<u8>,
    pending_y0: usize,
}

/// Overview rows ready to be written: (level index, first row, class rows).
pub(crate) type Ready = (usize, usize, Vec<u8>);

/// Folds full-resolution class rows into every level.
pub(crate) struct OverviewFolder {
    width: usize,
    height: usize,
    levels: Vec<Level>,
    next_row: usize,
    /// Ranks of the full-resolution rows of the current first-level block, per cell.
    full: Vec<u8>,
}

const FLUSH_ROWS: usize = 256;

impl OverviewFolder {
    /// For a `width` x `height` grid and the factors `factors` (4, 8, ...).
    pub(crate) fn new(width: usize, height: usize, factors: &[usize]) -> Self {
        let levels = factors
            .iter()
            .enumerate()
            .map(|(i, &f)| {
                let w = width.div_ceil(f);
                Level {
                    ratio: if i == 0 { f } else { 2 },
                    width: w,
                    height: height.div_ceil(f),
                    acc: vec![0; w],
                    folded: 0,
                    emitted: 0,
                    pending: Vec::new(),
                    pending_y0: 0,
                }
            })
            .collect();
        OverviewFolder {
            width,
            height,
            levels,
            next_row: 0,
            full: if factors.is_empty() {
                Vec::new()
            } else {
                vec![0; width]
            },
        }
    }

    /// Start again (the pass classifies a second time).
    pub(crate) fn reset(&mut self) {
        let factors: Vec<usize> = self
            .levels
            .iter()
            .scan(1, |f, l| {
                *f *= l.ratio;
                Some(*f)
            })
            .collect();
        *self = OverviewFolder::new(self.width, self.height, &factors);
    }

    /// The next full-resolution row (rows in order from 0). Returns overview rows ready to
    /// be written.
    pub(crate) fn push_row(&mut self, row: usize, classes: &[u8], ready: &mut Vec<Ready>) {
        debug_assert_eq!(row, self.next_row);
        self.next_row = row + 1;
        let Some(first) = self.levels.first_mut() else {
            return;
        };
        // Cell by cell over the block's rows; across the block only when it is complete.
        for (m, &k) in self.full.iter_mut().zip(classes) {
            *m = (*m).max(rank(k));
        }
        first.folded += 1;
        let last = row + 1 == self.height;
        if first.folded == first.ratio || last {
            for (acc, chunk) in first.acc.iter_mut().zip(self.full.chunks(first.ratio)) {
                *acc = chunk.iter().copied().max().unwrap_or(0);
            }
            self.full.iter_mut().for_each(|v| *v = 0);
        }
        self.emit_from(0, last, ready);
    }

    /// Emit level `i`'s row if complete, and fold it into the levels above.
    fn emit_from(&mut self, i: usize, last_input: bool, ready: &mut Vec<Ready>) {
        let lvl = &mut self.levels[i];
        if lvl.folded < lvl.ratio && !last_input {
            return;
        }
        let row_ranks = std::mem::replace(&mut lvl.acc, vec![0; lvl.width]);
        lvl.folded = 0;
        lvl.emitted += 1;
        lvl.pending
            .extend(row_ranks.iter().map(|&r| CLASS_OF_RANK[r as usize]));
        let done = lvl.emitted == lvl.height;
        if lvl.pending.len() >= FLUSH_ROWS * lvl.width || done {
            let rows = std::mem::take(&mut lvl.pending);
            ready.push((i, lvl.pending_y0, rows));
            lvl.pending_y0 = lvl.emitted;
        }
        if let Some(up) = self.levels.get_mut(i + 1) {
            for (acc, pair) in up.acc.iter_mut().zip(row_ranks.chunks(2)) {
                *acc = (*acc).max(pair.iter().copied().max().unwrap_or(0));
            }
            up.folded += 1;
            self.emit_from(i + 1, done, ready);
        }
    }

    /// Width of level `i`.
    pub(crate) fn level_width(&self, i: usize) -> usize {
        self.levels[i].width
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn levels_keep_the_highest_class_of_each_block() {
        // 1030 x 600 cells: levels 4 (258 x 150) only; a class-1 cell at (597, 1029), the
        // last row and column, and nodata elsewhere in that block.
        let (w, h) = (1030, 600);
        assert_eq!(levels(w, h), vec![4]);
        let mut f = OverviewFolder::new(w, h, &levels(w, h));
        let mut ready = Vec::new();
        for r in 0..h {
            let mut row = vec![2u8; w];
            row[1028] = class::NODATA;
            if r == 597 {
                row[1029] = 1;
            }
            f.push_row(r, &row, &mut ready);
        }
        let mut img = vec![0u8; 258 * 150];
        for (lvl, y0, rows) in ready {
            assert_eq!(lvl, 0);
            img[y0 * 258..y0 * 258 + rows.len()].copy_from_slice(&rows);
        }
        assert_eq!(img[149 * 258 + 257], 1);
        assert_eq!(img[148 * 258 + 257], 2);
        assert_eq!(img.iter().filter(|&&k| k == 1).count(), 1);
    }

    #[test]
    fn upper_levels_fold_from_the_one_below() {
        // 2048 x 1024: levels 4, 8 (2048 / 8 = 256); one class-1 cell.
        let (w, h) = (2048, 1024);
        assert_eq!(levels(w, h), vec![4, 8]);
        let mut f = OverviewFolder::new(w, h, &levels(w, h));
        let mut ready = Vec::new();
        for r in 0..h {
            let mut row = vec![0u8; w];
            if r == 1000 {
                row[5] = 1;
            }
            f.push_row(r, &row, &mut ready);
        }
        let rows_of =
            |l: usize| -> usize { ready.iter().filter(|x| x.0 == l).map(|x| x.2.len()).sum() };
        assert_eq!(rows_of(0), 512 * 256);
        assert_eq!(rows_of(1), 256 * 128);
        let l1: Vec<u8> = ready
            .iter()
            .filter(|x| x.0 == 1)
            .flat_map(|x| x.2.clone())
            .collect();
        assert_eq!(l1[(1000 / 8) * 256], 1);
        assert_eq!(l1.iter().filter(|&&k| k == 1).count(), 1);
    }
}
