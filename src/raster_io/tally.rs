//! What the decode workers count for the E sensitivity besides the classes: for each cell,
//! how many of the candidate thresholds its value reaches (`v >= c`, the comparison the pass
//! makes), either kept per cell or summed per row while the values are still in cache.

use super::class;
use super::strips::{code_cells, Sample};

/// The sensitivity counts of one strip.
#[derive(Debug, Default)]
pub(crate) enum Tally {
    /// No candidates: nothing counted.
    #[default]
    None,
    /// Per cell, how many candidates its value reaches (255 nodata). For grids whose cells
    /// differ in area along a row, or an M that only the consumer can apply.
    Bins(Vec<u8>),
    /// Per row and candidate, the data cells whose value reaches it, all and inside M.
    Rows(RowTally),
}

/// Per row of a strip and per candidate (ascending), the data cells reaching it.
#[derive(Debug, Default)]
pub(crate) struct RowTally {
    n: usize,
    ge: Vec<u32>,
    ge_m: Vec<u32>,
}

impl RowTally {
    /// Zeroed counts for `rows` rows and `n` candidates.
    pub(super) fn reset(&mut self, rows: usize, n: usize) {
        self.n = n;
        for v in [&mut self.ge, &mut self.ge_m] {
            v.clear();
            v.resize(rows * n, 0);
        }
    }

    /// Row `r`'s counts per candidate: (all data cells, data cells inside M).
    pub(crate) fn row(&self, r: usize) -> (&[u32], &[u32]) {
        let at = r * self.n..(r + 1) * self.n;
        (&self.ge[at.clone()], &self.ge_m[at])
    }

    /// Count the cells `values` (row `r`, columns `x0..`) reaching each candidate, and
    /// those of them inside `m` (half-open column intervals of the row; `None`: M is the
    /// whole raster). `exact`: no nodata cell of the segment can reach a candidate (the
    /// nodata value lies below them all and no value is infinite), so the codes need not be
    /// consulted.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn count_row<T: Sample>(
        &mut self,
        r: usize,
        x0: usize,
        values: &[T],
        codes: &[u8],
        cands: &[T],
        m: Option<&[(usize, usize)]>,
        exact: bool,
    ) {
        let len = values.len();
        // M covers the whole segment: the counts inside M are the counts.
        let whole = m.is_none_or(|iv| {
            let mut p = pieces_in(iv, x0, len);
            p.next() == Some((0, len)) && p.next().is_none()
        });
        let (ge, ge_m) = (
            &mut self.ge[r * self.n..(r + 1) * self.n],
            &mut self.ge_m[r * self.n..(r + 1) * self.n],
        );
        for (k, &c) in cands.iter().enumerate() {
            let g = count_ge(values, codes, c, exact);
            if g == 0 {
                break; // the candidates ascend: no cell reaches the next ones either
            }
            ge[k] += g;
            ge_m[k] += match m {
                Some(iv) if !whole => pieces_in(iv, x0, len)
                    .map(|(a, b)| count_ge(&values[a..b], &codes[a..b], c, exact))
                    .sum(),
                _ => g,
            };
        }
    }
}

/// Code the cells (see [`code_cells`]) and count the candidates each reaches into `bins`,
/// in blocks small enough to stay in the first-level cache between the two.
pub(super) fn code_and_bin<T: Sample>(
    values: &[T],
    codes: &mut [u8],
    (t, nd): (T, T),
    cands: &[T],
    bins: &mut [u8],
    non_finite: &mut u64,
) -> bool {
    const BLOCK: usize = 2048;
    let mut binary = true;
    for (i, (v, k)) in values
        .chunks(BLOCK)
        .zip(codes.chunks_mut(BLOCK))
        .enumerate()
    {
        binary &= code_cells(v, k, t, nd, non_finite);
        let out = &mut bins[i * BLOCK..i * BLOCK + v.len()];
        if k.iter().all(|&c| c == class::NODATA) {
            out.fill(class::NODATA); // sea on a global grid: nothing to count
        } else {
            count_reached(v, k, cands, out);
        }
    }
    binary
}

/// Per cell, how many of `cands` its value reaches (255 where `codes` says nodata): one
/// simple loop per candidate (these vectorise), then the nodata cells are marked.
fn count_reached<T: Sample>(values: &[T], codes: &[u8], cands: &[T], out: &mut [u8]) {
    let Some((&first, rest)) = cands.split_first() else {
        return;
    };
    for (o, &v) in out.iter_mut().zip(values) {
        *o = (v >= first) as u8;
    }
    for &c in rest {
        for (o, &v) in out.iter_mut().zip(values) {
            *o += (v >= c) as u8;
        }
    }
    // Branch-free (all bits set where nodata, 255 being all ones), so the loop vectorises.
    for (o, &k) in out.iter_mut().zip(codes) {
        *o |= ((k == class::NODATA) as u8).wrapping_neg();
    }
}

/// The parts of the half-open intervals `iv` (sorted, disjoint) within columns
/// `x0..x0 + len`, relative to `x0`.
fn pieces_in(
    iv: &[(usize, usize)],
    x0: usize,
    len: usize,
) -> impl Iterator<Item = (usize, usize)> + '_ {
    let first = iv.partition_point(|&(_, b)| b <= x0);
    iv[first..]
        .iter()
        .take_while(move |&&(a, _)| a < x0 + len)
        .map(move |&(a, b)| (a.max(x0) - x0, b.min(x0 + len) - x0))
}

/// Mark the suitable cells (1) of a row segment (columns `x0..`) outside M's intervals `iv`
/// as suitable beyond M (2).
pub(super) fn mark_beyond(codes: &mut [u8], x0: usize, iv: &[(usize, usize)]) {
    // Branch-free, so the loops vectorise.
    let beyond = |k: &mut [u8]| k.iter_mut().for_each(|k| *k += (*k == 1) as u8);
    let mut from = 0;
    for (a, b) in pieces_in(iv, x0, codes.len()) {
        beyond(&mut codes[from..a]);
        from = b;
    }
    beyond(&mut codes[from..]);
}

/// Cells with `v >= c` (and, unless `exact`, a data code).
fn count_ge<T: Sample>(values: &[T], codes: &[u8], c: T, exact: bool) -> u32 {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the CPU has AVX2 (checked just above).
        return unsafe { count_ge_avx2(values, codes, c, exact) };
    }
    count_ge_body(values, codes, c, exact)
}

/// [`count_ge`] compiled for AVX2 (the same counts: comparisons are exact in every width).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn count_ge_avx2<T: Sample>(values: &[T], codes: &[u8], c: T, exact: bool) -> u32 {
    count_ge_body(values, codes, c, exact)
}

#[inline(always)]
fn count_ge_body<T: Sample>(values: &[T], codes: &[u8], c: T, exact: bool) -> u32 {
    if exact {
        values.iter().fold(0u32, |n, &v| n + (v >= c) as u32)
    } else {
        values.iter().zip(codes).fold(0u32, |n, (&v, &k)| {
            n + ((v >= c) & (k != class::NODATA)) as u32
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Against a plain per-cell count (no outside source: two ways of counting the same cells).
    #[test]
    fn row_counts_equal_a_plain_count_inside_and_outside_m() {
        let mut s = 11u64;
        let values: Vec<f32> = (0..1000)
            .map(|_| {
                s = s.wrapping_mul(6364136223846793005).wrapping_add(1);
                [0.1f32, 0.3, 0.5, 0.7, 0.9, -9999.0, f32::INFINITY][(s >> 61) as usize % 7]
            })
            .collect();
        let codes: Vec<u8> = values
            .iter()
            .map(|&v| {
                if v == -9999.0 || !v.is_finite() {
                    255
                } else {
                    0
                }
            })
            .collect();
        let cands = [0.3f32, 0.5, 0.9];
        let iv = [(5usize, 40usize), (100, 101), (380, 700), (990, 1000)];
        let mut t = RowTally::default();
        t.reset(2, 3);
        // Row 1 in two segments (columns 0..400 and 400..1000), as the windows cut it.
        t.count_row(
            1,
            0,
            &values[..400],
            &codes[..400],
            &cands,
            Some(&iv),
            false,
        );
        t.count_row(
            1,
            400,
            &values[400..],
            &codes[400..],
            &cands,
            Some(&iv),
            false,
        );
        let in_m = |c: usize| iv.iter().any(|&(a, b)| a <= c && c < b);
        let (ge, ge_m) = t.row(1);
        for (k, &c) in cands.iter().enumerate() {
            let hit = |i: usize| codes[i] != 255 && values[i] >= c;
            assert_eq!(ge[k] as usize, (0..1000).filter(|&i| hit(i)).count());
            assert_eq!(
                ge_m[k] as usize,
                (0..1000).filter(|&i| hit(i) && in_m(i)).count()
            );
            assert!(ge_m[k] > 0 && ge_m[k] < ge[k]);
        }
        assert_eq!(t.row(0).0, [0, 0, 0], "row 0 untouched");
    }
}
