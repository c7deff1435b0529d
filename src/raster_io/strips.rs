//! Row strips read and thresholded in the decode workers, one GDAL handle per thread.

use super::blocks::{read_window, window_width};
use super::class;
use super::open_readonly;
use super::tally::{code_and_bin, mark_beyond, Tally};
use super::tiles::{pass_reads_blocks, TileCache, TileValues};
use super::NonFiniteCount;
use crate::{Error, Result};
use gdal::{Dataset, GdalOpenFlags};
use std::cmp::Ordering;
use std::path::PathBuf;

/// Enough to open a [`StripReader`] in another thread.
#[derive(Debug, Clone)]
pub struct ReaderSpec {
    pub(super) path: PathBuf,
    pub(super) width: usize,
    pub(super) nodata: Option<f64>,
    pub(super) as_f32: bool,
    pub(super) non_finite: NonFiniteCount,
    pub(super) tiles: TileCache,
}

impl ReaderSpec {
    /// Open the file again for this thread.
    pub fn open(&self) -> Result<StripReader> {
        let ds = open_readonly(
            &self.path,
            GdalOpenFlags::GDAL_OF_RASTER,
            "suitability raster",
        )?;
        Ok(StripReader {
            path: self.path.clone(),
            ds,
            width: self.width,
            nodata: self.nodata,
            as_f32: self.as_f32,
            non_finite: self.non_finite.clone(),
            tiles: self.tiles.clone(),
        })
    }
}

/// Reads and thresholds row strips; one per thread.
pub struct StripReader {
    path: PathBuf,
    ds: Dataset,
    width: usize,
    nodata: Option<f64>,
    as_f32: bool,
    non_finite: NonFiniteCount,
    /// Blocks decoded while sampling the records, taken instead of decoding them again.
    tiles: TileCache,
}

/// Buffers a [`StripReader`] reuses between strips.
#[derive(Debug, Default)]
pub struct StripBuffers {
    f32s: Vec<f32>,
    f64s: Vec<f64>,
    spare32: Vec<f32>,
    spare64: Vec<f64>,
}

impl StripReader {
    /// Read rows `y0 .. y0 + rows` and code each cell into `codes` (resized): 0 below
    /// `t`, 1 at or above `t`, 255 nodata. Returns whether every data cell was exactly 0
    /// or 1.
    pub fn classify_rows(
        &self,
        y0: usize,
        rows: usize,
        t: f64,
        bufs: &mut StripBuffers,
        codes: &mut Vec<u8>,
    ) -> Result<bool> {
        self.classify_and_tally(y0, rows, t, &[], bufs, codes, &mut Tally::None, None)
    }

    /// [`StripReader::classify_rows`], and how many of the ascending thresholds `cands`
    /// each cell's value reaches (`v >= t`, the comparison the pass makes), into `tally`:
    /// per cell for [`Tally::Bins`], per row (all, and inside `m`: per row of the strip, the
    /// half-open column intervals of M; `None` the whole raster) for [`Tally::Rows`]. Both
    /// are made window by window while the values are in cache.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn classify_and_tally(
        &self,
        y0: usize,
        rows: usize,
        t: f64,
        cands: &[f64],
        bufs: &mut StripBuffers,
        codes: &mut Vec<u8>,
        tally: &mut Tally,
        m: Option<&[Vec<(usize, usize)>]>,
    ) -> Result<bool> {
        let n = self.width * rows;
        let band = self
            .ds
            .rasterband(1)
            .map_err(Error::gdal(&self.path, "reading band 1"))?;
        // Every cell of both is written below; a pooled buffer keeps its old bytes until then.
        codes.resize(n, 0);
        match tally {
            _ if cands.is_empty() => *tally = Tally::None,
            Tally::Bins(b) => b.resize(n, 0),
            Tally::Rows(rt) => rt.reset(rows, cands.len()),
            Tally::None => {}
        }
        // Thresholds in the band's type, compared exactly as in float64 (`f32_threshold`);
        // as GDAL does for float32 bands, the nodata value is taken at float32 precision.
        let t32 = f32_threshold(t);
        let c32: Vec<f32> = cands.iter().map(|&c| f32_threshold(c)).collect();
        let nd32 = self.nodata.map(|v| v as f32).unwrap_or(f32::NAN);
        let nd64 = self.nodata.unwrap_or(f64::NAN);
        let mut non_finite = 0u64;
        let mut binary = true;
        // Column windows one block wide (or a few tiles, at least 256 columns): each window
        // is coded while GDAL's copy of it is still in cache (a whole 256-row strip of a
        // global 30" grid is 44 MB of float32, read back from memory). A striped file is read
        // whole-width: its blocks are rows, and a narrower window would decode each block
        // again. Blocks decoded while sampling the records are taken, not decoded again.
        let (block, p) = (band.block_size(), self.path.as_path());
        let cw = window_width(self.width, block.0);
        let whole_blocks = pass_reads_blocks(self.width, block) && cw == block.0;
        for x0 in (0..self.width).step_by(cw) {
            let ww = cw.min(self.width - x0);
            let kept = if whole_blocks {
                self.tiles.take(y0, x0)
            } else {
                None
            };
            if self.as_f32 {
                let values: &[f32] = match &kept {
                    Some(TileValues::F32(v)) => v,
                    _ => {
                        let (buf, spare) = (&mut bufs.f32s, &mut bufs.spare32);
                        read_window(
                            &band,
                            p,
                            (x0, y0),
                            (ww, rows),
                            block,
                            whole_blocks,
                            buf,
                            spare,
                        )?;
                        &bufs.f32s
                    }
                };
                for r in 0..rows {
                    let at = r * self.width + x0;
                    let cells = Cells {
                        values: &values[r * ww..(r + 1) * ww],
                        t: t32,
                        nd: nd32,
                        cands: &c32,
                    };
                    binary &= code_row(cells, codes, tally, (r, at, x0), m, &mut non_finite);
                }
            } else {
                let values: &[f64] = match &kept {
                    Some(TileValues::F64(v)) => v,
                    _ => {
                        let (buf, spare) = (&mut bufs.f64s, &mut bufs.spare64);
                        read_window(
                            &band,
                            p,
                            (x0, y0),
                            (ww, rows),
                            block,
                            whole_blocks,
                            buf,
                            spare,
                        )?;
                        &bufs.f64s
                    }
                };
                for r in 0..rows {
                    let at = r * self.width + x0;
                    let cells = Cells {
                        values: &values[r * ww..(r + 1) * ww],
                        t,
                        nd: nd64,
                        cands,
                    };
                    binary &= code_row(cells, codes, tally, (r, at, x0), m, &mut non_finite);
                }
            }
        }
        self.non_finite.add_strip(y0, rows, non_finite);
        Ok(binary)
    }
}

/// One row segment of values with the thresholds in their type.
struct Cells<'a, T> {
    values: &'a [T],
    t: T,
    nd: T,
    cands: &'a [T],
}

/// Code one row segment (`at`: its first cell in the strip, row `r`, column `x0`) into
/// `codes` and count the candidates its cells reach into `tally`.
fn code_row<T: Sample>(
    cells: Cells<'_, T>,
    codes: &mut [u8],
    tally: &mut Tally,
    (r, at, x0): (usize, usize, usize),
    m: Option<&[Vec<(usize, usize)>]>,
    non_finite: &mut u64,
) -> bool {
    let Cells {
        values,
        t,
        nd,
        cands,
    } = cells;
    let codes = &mut codes[at..at + values.len()];
    let binary = match tally {
        Tally::None => code_cells(values, codes, t, nd, non_finite),
        Tally::Bins(b) => {
            let out = &mut b[at..at + values.len()];
            code_and_bin(values, codes, (t, nd), cands, out, non_finite)
        }
        Tally::Rows(rt) => {
            let before = *non_finite;
            let binary = code_cells(values, codes, t, nd, non_finite);
            // No infinite value and a nodata value below every candidate (or NaN): no
            // nodata cell can reach one, so the counts need not consult the codes.
            let below = matches!(nd.partial_cmp(&cands[0]), None | Some(Ordering::Less));
            let exact = *non_finite == before && below;
            let m_row = m.map(|m| m[r].as_slice());
            rt.count_row(r, x0, values, codes, cands, m_row, exact);
            binary
        }
    };
    if let Some(m) = m {
        mark_beyond(codes, x0, &m[r]); // while the codes are in cache
    }
    binary
}

/// The smallest f32 `t32` with `v >= t32` exactly when `v as f64 >= t`, for every f32 `v`.
fn f32_threshold(t: f64) -> f32 {
    if t.is_nan() {
        return f32::NAN;
    }
    let mut t32 = t as f32; // round to nearest
    if (t32 as f64) < t {
        t32 = t32.next_up();
    }
    t32
}

/// The two sample types the pass reads.
pub(super) trait Sample: Copy + PartialEq + PartialOrd {
    const ZERO: Self;
    const ONE: Self;
    fn finite(self) -> bool;
}

impl Sample for f32 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    #[inline(always)]
    fn finite(self) -> bool {
        self.is_finite()
    }
}

impl Sample for f64 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    #[inline(always)]
    fn finite(self) -> bool {
        self.is_finite()
    }
}

/// Code cells against `t` in their own type (branch-free, so the loop vectorises): 255 for
/// NaN, +-inf and `nd` (NaN: no nodata value), else `v >= t`. Returns whether all data
/// cells are 0 or 1, and adds the NaN/inf cells to `non_finite`.
pub(super) fn code_cells<T: Sample>(
    values: &[T],
    codes: &mut [u8],
    t: T,
    nd: T,
    non_finite: &mut u64,
) -> bool {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the CPU has AVX2 (checked just above).
        return unsafe { code_cells_avx2(values, codes, t, nd, non_finite) };
    }
    code_cells_body(values, codes, t, nd, non_finite)
}

/// [`code_cells`] compiled for AVX2: the same operations on wider vectors, so the same
/// codes (comparisons are exact in every width).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn code_cells_avx2<T: Sample>(
    values: &[T],
    codes: &mut [u8],
    t: T,
    nd: T,
    non_finite: &mut u64,
) -> bool {
    code_cells_body(values, codes, t, nd, non_finite)
}

#[inline(always)]
fn code_cells_body<T: Sample>(
    values: &[T],
    codes: &mut [u8],
    t: T,
    nd: T,
    non_finite: &mut u64,
) -> bool {
    let mut not_binary = 0u32;
    let mut nf = 0u32;
    for (&v, k) in values.iter().zip(codes.iter_mut()) {
        let inf_or_nan = !v.finite();
        nf += inf_or_nan as u32;
        let missing = inf_or_nan | (v == nd);
        not_binary |= (!missing & (v != T::ZERO) & (v != T::ONE)) as u32;
        *k = if missing {
            class::NODATA
        } else {
            (v >= t) as u8
        };
    }
    *non_finite += nf as u64;
    not_binary == 0
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Code float32 cells (and count the candidates they reach into `bins`, unless empty) as
    /// the pass does: `t` and the candidates compared exactly as in float64, nodata at
    /// float32 precision.
    fn code_cells_f32(
        values: &[f32],
        codes: &mut [u8],
        t: f64,
        nodata: Option<f64>,
        (cands, bins): (&[f64], &mut [u8]),
        non_finite: &mut u64,
    ) -> bool {
        let nd = nodata.map(|v| v as f32).unwrap_or(f32::NAN);
        let c32: Vec<f32> = cands.iter().map(|&c| f32_threshold(c)).collect();
        let tt = (f32_threshold(t), nd);
        if bins.is_empty() {
            return code_cells(values, codes, tt.0, nd, non_finite);
        }
        code_and_bin(values, codes, tt, &c32, bins, non_finite)
    }

    /// Code float64 cells (and count the candidates they reach into `bins`, unless empty).
    fn code_cells_f64(
        values: &[f64],
        codes: &mut [u8],
        t: f64,
        nodata: Option<f64>,
        (cands, bins): (&[f64], &mut [u8]),
        non_finite: &mut u64,
    ) -> bool {
        let nd = nodata.unwrap_or(f64::NAN);
        if bins.is_empty() {
            return code_cells(values, codes, t, nd, non_finite);
        }
        code_and_bin(values, codes, (t, nd), cands, bins, non_finite)
    }

    #[test]
    fn f32_threshold_is_exact_for_every_neighbour() {
        // For thresholds that are and are not f32 values, the f32 comparison must agree
        // with the f64 one on the f32 values around T.
        for t in [0.12f64, 0.12f32 as f64, 0.5, 1.0 / 3.0, -0.0, 1e-40, 3.4e38] {
            let t32 = f32_threshold(t);
            let mut v = (t as f32).next_down().next_down();
            for _ in 0..5 {
                assert_eq!(v >= t32, v as f64 >= t, "t = {t}, v = {v}");
                v = v.next_up();
            }
        }
    }

    #[test]
    fn cells_are_coded_with_nodata_nan_and_inf() {
        // Derived by hand: cells [0.1165, 0.118, 0.12, 0.13] with T = 0.12 -> [0, 0, 1, 1].
        let v = [
            0.1165f32,
            0.118,
            0.12,
            0.13,
            -9999.0,
            f32::NAN,
            f32::INFINITY,
            f32::NEG_INFINITY,
        ];
        let mut k = [9u8; 8];
        let mut nf = 0;
        let binary = code_cells_f32(
            &v,
            &mut k,
            0.12f32 as f64,
            Some(-9999.0),
            (&[], &mut []),
            &mut nf,
        );
        assert_eq!(k, [0, 0, 1, 1, 255, 255, 255, 255]);
        assert!(!binary);
        assert_eq!(nf, 3, "NaN, +inf and -inf");
        let v64: Vec<f64> = v.iter().map(|&x| x as f64).collect();
        let mut k64 = [9u8; 8];
        let mut nf64 = 0;
        code_cells_f64(
            &v64,
            &mut k64,
            0.12f32 as f64,
            Some(-9999.0),
            (&[], &mut []),
            &mut nf64,
        );
        assert_eq!(k64, k);
        assert_eq!(nf64, 3);
        let mut kb = [9u8; 4];
        let kb_binary = code_cells_f32(
            &[0.0, 1.0, -9999.0, 1.0],
            &mut kb,
            0.5,
            Some(-9999.0),
            (&[], &mut []),
            &mut nf,
        );
        assert!(kb_binary);
    }

    #[test]
    fn bins_count_the_candidates_each_value_reaches() {
        // Candidates 0.12 (not an f32 value) and 0.5 (one); `v >= c` as in float64, as the
        // threshold itself is compared; nodata, NaN and inf marked 255. Long enough for
        // several blocks.
        let pattern = [0.1f32, 0.12, 0.12f32.next_up(), 0.5, 0.7, -9999.0, f32::NAN];
        let v: Vec<f32> = pattern.iter().cycle().take(7 * 1000).copied().collect();
        let want_one = |x: f32| -> u8 {
            if x == -9999.0 || !x.is_finite() {
                255
            } else {
                (x as f64 >= 0.12) as u8 + (x as f64 >= 0.5) as u8
            }
        };
        let mut k = vec![0u8; v.len()];
        let mut bins = vec![0u8; v.len()];
        code_cells_f32(
            &v,
            &mut k,
            0.3,
            Some(-9999.0),
            (&[0.12, 0.5], &mut bins),
            &mut 0,
        );
        for (i, &x) in v.iter().enumerate() {
            assert_eq!(bins[i], want_one(x), "cell {i} value {x}");
        }
        let v64: Vec<f64> = v.iter().map(|&x| x as f64).collect();
        let mut bins64 = vec![0u8; v.len()];
        code_cells_f64(
            &v64,
            &mut k,
            0.3,
            Some(-9999.0),
            (&[0.12, 0.5], &mut bins64),
            &mut 0,
        );
        assert_eq!(bins64, bins);
    }

    #[test]
    fn float32_nodata_is_compared_at_float32_precision() {
        // A Float32 band with nodata "0.1": its cells hold 0.1f32 (0.100000001...), which
        // GDAL treats as nodata (the nodata value is cast to the band type; from memory).
        let mut k = [9u8; 2];
        code_cells_f32(&[0.1, 0.9], &mut k, 0.5, Some(0.1), (&[], &mut []), &mut 0);
        assert_eq!(k, [255, 1]);
    }
}
