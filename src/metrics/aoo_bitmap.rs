//! Occupied quarter cells of the modelled AOO as a bitmap over the range's extent in the AOO
//! grid's CRS, and the occupied cells of the 16 grid origins counted from it without a sort.
//!
//! The extent comes from the boundary corners of the occupied patches (the image of a region
//! is bounded by the image of its boundary; a margin of two quarter cells covers the bulge of
//! the cell edges between corners). A centre that still falls outside makes the caller fall
//! back to sorted keys, so the count never depends on the margin. Above [`MAX_BITS`] the
//! bitmap is not used either.

use std::sync::atomic::{AtomicU64, Ordering};

/// Largest bitmap used (256 MiB).
pub(crate) const MAX_BITS: u64 = 1 << 31;

pub(crate) struct QuarterBitmap {
    /// Quarter cell width, metres.
    q: f64,
    /// Quarter-cell index of the bitmap's first column and row.
    a0: i64,
    b0: i64,
    cols: usize,
    rows: usize,
    words: usize,
    bits: Vec<AtomicU64>,
}

impl QuarterBitmap {
    /// A bitmap covering x in `xr` and y in `yr` (metres, already with their margin) for
    /// quarter cells `q` metres wide; `None` when it would exceed [`MAX_BITS`].
    pub(crate) fn new(q: f64, xr: (f64, f64), yr: (f64, f64)) -> Option<QuarterBitmap> {
        if !(xr.0.is_finite() && xr.1.is_finite() && yr.0.is_finite() && yr.1.is_finite()) {
            return None;
        }
        let a0 = (xr.0 / q).floor() as i64;
        let b0 = (yr.0 / q).floor() as i64;
        let cols = ((xr.1 / q).floor() as i64 - a0 + 1).max(1) as usize;
        let rows = ((yr.1 / q).floor() as i64 - b0 + 1).max(1) as usize;
        let words = cols.div_ceil(64);
        if (words as u64) * 64 * rows as u64 > MAX_BITS {
            return None;
        }
        let bits = (0..words * rows).map(|_| AtomicU64::new(0)).collect();
        Some(QuarterBitmap {
            q,
            a0,
            b0,
            cols,
            rows,
            words,
            bits,
        })
    }

    /// Mark the quarter cell holding (x, y); false when it lies outside the bitmap.
    pub(crate) fn set(&self, x: f64, y: f64) -> bool {
        let a = (x / self.q).floor() as i64 - self.a0;
        let b = (y / self.q).floor() as i64 - self.b0;
        if a < 0 || b < 0 || a as usize >= self.cols || b as usize >= self.rows {
            return false;
        }
        let (a, b) = (a as usize, b as usize);
        self.bits[b * self.words + a / 64].fetch_or(1 << (a % 64), Ordering::Relaxed);
        true
    }

    /// Occupied cells at each origin (x offset k, y offset l quarter cells: index 4k + l):
    /// a cell of origin (k, l) covers quarter cells a in 4X + k .. 4X + k + 3 and b likewise.
    pub(crate) fn per_origin(&self) -> Vec<usize> {
        let words: Vec<u64> = self
            .bits
            .iter()
            .map(|w| w.load(Ordering::Relaxed))
            .collect();
        let mut out = vec![0usize; 16];
        let mut or = vec![0u64; self.words];
        for l in 0..4i64 {
            // Rows b with the same (b - l) div 4 form one grid row of origin (., l).
            let first = (self.b0 - l).div_euclid(4);
            let last = (self.b0 + self.rows as i64 - 1 - l).div_euclid(4);
            for yrow in first..=last {
                or.iter_mut().for_each(|w| *w = 0);
                let mut any = false;
                for b in 4 * yrow + l..4 * yrow + l + 4 {
                    let r = b - self.b0;
                    if r < 0 || r >= self.rows as i64 {
                        continue;
                    }
                    let row = &words[r as usize * self.words..(r as usize + 1) * self.words];
                    for (o, &w) in or.iter_mut().zip(row) {
                        *o |= w;
                        any |= w != 0;
                    }
                }
                if !any {
                    continue;
                }
                // Distinct grid columns among the set quarter columns, for each x offset.
                let mut last_col = [i64::MIN; 4];
                for (wi, &w) in or.iter().enumerate() {
                    let mut w = w;
                    while w != 0 {
                        let bit = w.trailing_zeros() as i64;
                        w &= w - 1;
                        let a = self.a0 + wi as i64 * 64 + bit;
                        for k in 0..4i64 {
                            let x = (a - k).div_euclid(4);
                            if x != last_col[k as usize] {
                                last_col[k as usize] = x;
                                out[(4 * k + l) as usize] += 1;
                            }
                        }
                    }
                }
            }
        }
        out
    }
}
