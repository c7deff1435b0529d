//! Per-component accumulators for the streaming labeller.
//!
//! Inputs: one run of cells (a row, a column range, a class), the row's cell areas in m2 and
//! the record counts of the run. Everything is in pixel space: row r, column c, cell centre
//! at (r + 0.5, c + 0.5). An accumulator describes a whole connected component and two of
//! them merge when their components join; [`Acc::into_patch`] turns one into a [`Patch`].
//!
//! Sums of floating-point values use Neumaier's compensated summation, so a patch of
//! millions of cells keeps its area to a few ulps.

use super::Patch;
use crate::area::RowAreas;
use std::f64::consts::TAU;

/// A compensated (Neumaier) running sum.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(crate) struct Neumaier {
    sum: f64,
    comp: f64,
}

impl Neumaier {
    /// Add one term.
    pub(crate) fn add(&mut self, x: f64) {
        let t = self.sum + x;
        if self.sum.abs() >= x.abs() {
            self.comp += (self.sum - t) + x;
        } else {
            self.comp += (x - t) + self.sum;
        }
        self.sum = t;
    }

    /// Add another compensated sum.
    pub(crate) fn merge(&mut self, other: &Neumaier) {
        self.add(other.sum);
        self.comp += other.comp;
    }

    /// The compensated total.
    pub(crate) fn value(&self) -> f64 {
        self.sum + self.comp
    }
}

/// Columns covered by a component: `len` columns going east from `start`, wrapping past
/// `width - 1` to 0 on a wrapping grid. The full circle is `start = 0, len = width`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct ColArc {
    pub(crate) start: usize,
    pub(crate) len: usize,
}

impl ColArc {
    /// Union of two arcs whose column sets overlap or touch (the case whenever two connected
    /// components join). On a line this is the spanning interval. On a circle it is the shorter
    /// of the two arcs that start at one arc's start and reach the other arc's end; when both
    /// reach all the way round (the arcs overlap at both ends), it is the full circle.
    pub(crate) fn merge(self, other: ColArc, width: usize, wrap: bool) -> ColArc {
        if !wrap {
            let start = self.start.min(other.start);
            let end = (self.start + self.len).max(other.start + other.len);
            return ColArc {
                start,
                len: end - start,
            };
        }
        if self.len >= width || other.len >= width {
            return ColArc {
                start: 0,
                len: width,
            };
        }
        // Going east from self.start, other starts d columns later; and the other way round.
        let d = (other.start + width - self.start) % width;
        let e = (self.start + width - other.start) % width;
        let from_self = self.len.max(d + other.len);
        let from_other = other.len.max(e + self.len);
        let (start, len) = if from_self <= from_other {
            (self.start, from_self)
        } else {
            (other.start, from_other)
        };
        if len >= width {
            ColArc {
                start: 0,
                len: width,
            }
        } else {
            ColArc { start, len }
        }
    }
}

/// Column geometry shared by all accumulators of one labeller: the width, whether columns
/// wrap, and on a wrapping grid the sine and cosine of each column centre's angle
/// 2π(c + 0.5)/width (tabulated once, O(width) memory).
#[derive(Debug, Clone)]
pub(crate) struct Columns {
    pub(crate) width: usize,
    pub(crate) wrap: bool,
    sin: Vec<f64>,
    cos: Vec<f64>,
}

impl Columns {
    pub(crate) fn new(width: usize, wrap: bool) -> Self {
        let (sin, cos) = if wrap {
            (0..width)
                .map(|c| (TAU * (c as f64 + 0.5) / width as f64).sin_cos())
                .unzip()
        } else {
            (Vec::new(), Vec::new())
        };
        Columns {
            width,
            wrap,
            sin,
            cos,
        }
    }
}

/// Statistics of one connected component (or of one run, before it joins one).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Acc {
    class: u8,
    cells: u64,
    area: Neumaier,
    first_cell: (usize, usize),
    row_min: usize,
    row_max: usize,
    arc: ColArc,
    /// Σ area · (r + 0.5).
    row_moment: Neumaier,
    /// Σ area · (c + 0.5) on a line; Σ area · sin θ on a circle.
    col_a: Neumaier,
    /// Unused on a line; Σ area · cos θ on a circle.
    col_b: Neumaier,
    records: u64,
}

impl Acc {
    /// The statistics of the run of `class` cells `start..end` of `row`.
    pub(crate) fn run(
        row: usize,
        start: usize,
        end: usize,
        class: u8,
        areas: &RowAreas,
        records: u64,
        cols: &Columns,
    ) -> Acc {
        let mut area = Neumaier::default();
        let mut col_a = Neumaier::default();
        let mut col_b = Neumaier::default();
        for c in start..end {
            let w = areas.get(c);
            area.add(w);
            if cols.wrap {
                col_a.add(w * cols.sin[c]);
                col_b.add(w * cols.cos[c]);
            } else {
                col_a.add(w * (c as f64 + 0.5));
            }
        }
        let mut row_moment = Neumaier::default();
        row_moment.add(area.sum * (row as f64 + 0.5));
        row_moment.add(area.comp * (row as f64 + 0.5));
        Acc {
            class,
            cells: (end - start) as u64,
            area,
            first_cell: (row, start),
            row_min: row,
            row_max: row,
            arc: ColArc {
                start,
                len: end - start,
            },
            row_moment,
            col_a,
            col_b,
            records,
        }
    }

    /// Fold `other` (a component joining this one) into `self`.
    pub(crate) fn merge(&mut self, other: &Acc, cols: &Columns) {
        debug_assert_eq!(
            self.class, other.class,
            "components of different classes joined"
        );
        self.cells += other.cells;
        self.area.merge(&other.area);
        self.first_cell = self.first_cell.min(other.first_cell);
        self.row_min = self.row_min.min(other.row_min);
        self.row_max = self.row_max.max(other.row_max);
        self.arc = self.arc.merge(other.arc, cols.width, cols.wrap);
        self.row_moment.merge(&other.row_moment);
        self.col_a.merge(&other.col_a);
        self.col_b.merge(&other.col_b);
        self.records += other.records;
    }

    /// The finished patch, with id 0 (ids are given once all patches are known).
    ///
    /// The centroids are NaN when the patch's total area is 0, and `centroid_col` is NaN on a
    /// wrapping grid when the area is spread so evenly round the circle that the circular mean
    /// is undefined (resultant below 1e-9 of the total area).
    pub(crate) fn into_patch(self, cols: &Columns) -> Patch {
        let area = self.area.value();
        let centroid_row = self.row_moment.value() / area;
        let centroid_col = if cols.wrap {
            let (s, c) = (self.col_a.value(), self.col_b.value());
            if s.hypot(c) > 1e-9 * area.abs() {
                let width = cols.width as f64;
                let col = (s.atan2(c) / TAU * width).rem_euclid(width);
                // rem_euclid of a tiny negative value rounds up to `width` itself.
                if col >= width {
                    0.0
                } else {
                    col
                }
            } else {
                f64::NAN
            }
        } else {
            self.col_a.value() / area
        };
        Patch {
            id: 0,
            class: self.class,
            cells: self.cells,
            area_m2: area,
            first_cell: self.first_cell,
            row_min: self.row_min,
            row_max: self.row_max,
            col_start: self.arc.start,
            col_len: self.arc.len,
            centroid_row,
            centroid_col,
            records: self.records,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Arc unions, worked by hand on a 10-column circle (hand-checked; no outside source).
    #[test]
    fn arc_union_on_a_circle() {
        let a = |start, len| ColArc { start, len };
        // Overlap inside the grid.
        assert_eq!(a(0, 5).merge(a(3, 5), 10, true), a(0, 8));
        // Touching across the antimeridian: {8,9,0} and {0,1,2} -> {8,9,0,1,2}.
        assert_eq!(a(0, 3).merge(a(8, 3), 10, true), a(8, 5));
        assert_eq!(a(8, 3).merge(a(0, 3), 10, true), a(8, 5));
        // Adjacent without overlap: {9} and {0}.
        assert_eq!(a(9, 1).merge(a(0, 1), 10, true), a(9, 2));
        // Overlapping at both ends closes the circle.
        assert_eq!(a(0, 6).merge(a(5, 6), 10, true), a(0, 10));
        assert_eq!(a(0, 5).merge(a(5, 5), 10, true), a(0, 10));
        // Containment.
        assert_eq!(a(7, 6).merge(a(9, 2), 10, true), a(7, 6));
        // On a line the span is taken.
        assert_eq!(a(0, 3).merge(a(3, 4), 10, false), a(0, 7));
    }

    // Neumaier's own example: 1 + 1e100 + 1 - 1e100 = 2, where plain summation gives 0
    // (Neumaier 1974, as quoted in the Wikipedia article on Kahan summation; from memory).
    #[test]
    fn compensated_sum() {
        let mut s = Neumaier::default();
        for x in [1.0, 1e100, 1.0, -1e100] {
            s.add(x);
        }
        assert_eq!(s.value(), 2.0);
    }
}
