//! Occupied quarter cells of the modelled AOO as a bitmap over the range's extent in the AOO
//! grid's CRS, and the occupied cells of the 16 grid origins counted from it without a sort.
//!
//! The extent comes from the boundary corners of the occupied patches (the image of a region
//! is bounded by the image of its boundary; a margin of two quarter cells covers the bulge of
//! the cell edges between corners), or is the whole LAEA disk ([`QuarterBitmap::whole_disk`]).
//! A centre that still falls outside makes the caller fall back to sorted keys, so the count
//! never depends on the margin. Above [`MAX_BITS`] the bitmap is not used either.
//!
//! The bits live in tiles of [`TILE_ROWS`] quarter rows by [`TILE_WORDS`] words, allocated when
//! a cell in them is first set: memory follows the occupied area, not the extent.

use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::OnceLock;

/// Largest extent a bitmap may span: 2^35 bits (the whole LAEA disk of a 1 km grid is about
/// 2^33.3). Only touched tiles are allocated; the extent costs 24 bytes a tile of 2^15 bits.
pub(crate) const MAX_BITS: u64 = 1 << 35;

/// Quarter rows of a tile.
const TILE_ROWS: usize = 64;
/// Words (64 quarter columns each) across a tile.
const TILE_WORDS: usize = 8;

pub(crate) struct QuarterBitmap {
    /// Quarter cell width, metres.
    q: f64,
    /// Quarter-cell index of the bitmap's first column and row.
    a0: i64,
    b0: i64,
    cols: usize,
    rows: usize,
    /// Tiles across.
    tiles_x: usize,
    /// Tiles, row-major; a tile holds `TILE_ROWS * TILE_WORDS` words.
    tiles: Vec<OnceLock<Box<[AtomicU64]>>>,
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
        let tiles_x = words.div_ceil(TILE_WORDS);
        let tiles = (0..tiles_x * rows.div_ceil(TILE_ROWS))
            .map(|_| OnceLock::new())
            .collect();
        Some(QuarterBitmap {
            q,
            a0,
            b0,
            cols,
            rows,
            tiles_x,
            tiles,
        })
    }

    /// A bitmap covering x in -hx..hx and y in -hy..hy (the half widths of the whole LAEA
    /// disk, [`super::laea::disk_half_widths`]), with a margin of two quarter cells.
    pub(crate) fn whole_disk(q: f64, (hx, hy): (f64, f64)) -> Option<QuarterBitmap> {
        let (hx, hy) = (hx + 2.0 * q, hy + 2.0 * q);
        QuarterBitmap::new(q, (-hx, hx), (-hy, hy))
    }

    /// Mark the quarter cells holding `pts`; false when one lies outside the bitmap.
    pub(crate) fn set_all(&self, pts: &[(f64, f64)]) -> bool {
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU has AVX2 (checked just above).
            return unsafe { self.set_all_avx2(pts) };
        }
        pts.iter().fold(true, |ok, &(x, y)| self.set(x, y) & ok)
    }

    /// [`QuarterBitmap::set_all`] compiled for AVX2 (its `floor` is one instruction there;
    /// the same cells are set).
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    fn set_all_avx2(&self, pts: &[(f64, f64)]) -> bool {
        pts.iter().fold(true, |ok, &(x, y)| self.set(x, y) & ok)
    }

    /// Mark the quarter cell holding (x, y); false when it lies outside the bitmap.
    #[inline(always)]
    pub(crate) fn set(&self, x: f64, y: f64) -> bool {
        if !(x.is_finite() && y.is_finite()) {
            return false;
        }
        let a = (x / self.q).floor() as i64 - self.a0;
        let b = (y / self.q).floor() as i64 - self.b0;
        if a < 0 || b < 0 || a as usize >= self.cols || b as usize >= self.rows {
            return false;
        }
        let (a, b) = (a as usize, b as usize);
        let w = a / 64;
        let tile = self.tiles[(b / TILE_ROWS) * self.tiles_x + w / TILE_WORDS].get_or_init(|| {
            (0..TILE_ROWS * TILE_WORDS)
                .map(|_| AtomicU64::new(0))
                .collect()
        });
        tile[(b % TILE_ROWS) * TILE_WORDS + w % TILE_WORDS]
            .fetch_or(1 << (a % 64), Ordering::Relaxed);
        true
    }

    /// Occupied cells at each origin (x offset k, y offset l quarter cells: index 4k + l):
    /// a cell of origin (k, l) covers quarter cells a in 4X + k .. 4X + k + 3 and b likewise.
    pub(crate) fn per_origin(&self) -> Vec<usize> {
        let mut out = vec![0usize; 16];
        // The allocated tiles of each tile row, by increasing column.
        let touched: Vec<Vec<usize>> = self
            .tiles
            .chunks(self.tiles_x)
            .map(|row| {
                (0..row.len())
                    .filter(|&tx| row[tx].get().is_some())
                    .collect()
            })
            .collect();
        let mut txs: Vec<usize> = Vec::new();
        for l in 0..4i64 {
            // Rows b with the same (b - l) div 4 form one grid row of origin (., l).
            let first = (self.b0 - l).div_euclid(4);
            let last = (self.b0 + self.rows as i64 - 1 - l).div_euclid(4);
            for yrow in first..=last {
                let rs: Vec<usize> = (4 * yrow + l..4 * yrow + l + 4)
                    .map(|b| b - self.b0)
                    .filter(|&r| r >= 0 && r < self.rows as i64)
                    .map(|r| r as usize)
                    .collect();
                // The tile columns any of the four quarter rows has, in order.
                txs.clear();
                for ty in [rs[0] / TILE_ROWS, rs[rs.len() - 1] / TILE_ROWS] {
                    txs.extend_from_slice(&touched[ty]);
                }
                txs.sort_unstable();
                txs.dedup();
                // Distinct grid columns among the set quarter columns, for each x offset.
                let mut last_col = [i64::MIN; 4];
                for &tx in &txs {
                    let mut or = [0u64; TILE_WORDS];
                    for &r in &rs {
                        let Some(tile) = self.tiles[(r / TILE_ROWS) * self.tiles_x + tx].get()
                        else {
                            continue;
                        };
                        let at = (r % TILE_ROWS) * TILE_WORDS;
                        for (o, w) in or.iter_mut().zip(&tile[at..at + TILE_WORDS]) {
                            *o |= w.load(Ordering::Relaxed);
                        }
                    }
                    for (j, &w) in or.iter().enumerate() {
                        if w == 0 {
                            continue;
                        }
                        let a = self.a0 + ((tx * TILE_WORDS + j) * 64) as i64;
                        for k in 0..4i64 {
                            let (n, first, last) = word_columns(w, a - k);
                            let kk = k as usize;
                            out[(4 * k + l) as usize] += n - (first == last_col[kk]) as usize;
                            last_col[kk] = last;
                        }
                    }
                }
            }
        }
        out
    }
}

/// The grid columns holding the set bits of `w`, whose bit p is quarter column `a + p` of an
/// origin whose column X spans quarter columns 4X .. 4X + 3: (how many distinct columns,
/// the first, the last). `w` must not be 0. Word-wide: shifted so that columns fall on
/// nibbles, a column is held when its nibble has a bit.
fn word_columns(w: u64, a: i64) -> (usize, i64, i64) {
    // Bit p moves to p + t, with a - t a multiple of 4: column (a + p) div 4 is then
    // a div 4 + (p + t) div 4, the nibble index.
    let t = a.rem_euclid(4) as u32;
    let x0 = a.div_euclid(4);
    let shifted = (w as u128) << t;
    let any = (shifted | shifted >> 1 | shifted >> 2 | shifted >> 3) & NIBBLE_LOW;
    let first = x0 + (any.trailing_zeros() / 4) as i64;
    let last = x0 + ((127 - any.leading_zeros()) / 4) as i64;
    (any.count_ones() as usize, first, last)
}

/// The lowest bit of every nibble of a u128.
const NIBBLE_LOW: u128 = 0x1111_1111_1111_1111_1111_1111_1111_1111;

#[cfg(test)]
mod tests {
    // Against the bit-by-bit rule it replaces (no outside source: two ways of counting).
    #[test]
    fn word_columns_equal_a_bit_by_bit_count() {
        let mut s = 12345u64;
        for i in 0..4000 {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            // Sparse, dense and single-bit words.
            let w = match i % 3 {
                0 => s & (s >> 7) & (s >> 13),
                1 => s | (s >> 3),
                _ => 1u64 << (s % 64),
            };
            if w == 0 {
                continue;
            }
            let a = (s >> 40) as i64 % 1000 - 500;
            let cols: Vec<i64> = (0..64)
                .filter(|p| w >> p & 1 == 1)
                .map(|p| (a + p).div_euclid(4))
                .collect();
            let mut distinct = cols.clone();
            distinct.dedup();
            let want = (distinct.len(), cols[0], *cols.last().unwrap());
            assert_eq!(super::word_columns(w, a), want, "w = {w:#x}, a = {a}");
        }
    }
}
