//! The pass's consumer: the strips in order; M applied, cells counted and measured, rows
//! fed to the model builder.

use super::place::PlacedRecord;
use super::{PassInput, PassOutput, RowSink};
use crate::access::AccessMask;
use crate::area::{CellAreas, RowAreas};
use crate::model::{ModelBuilder, RowM, Totals};
use crate::patches::Neumaier;
use crate::raster_io::{class, RowTally, SuitabilityRaster, Tally};
use crate::{Error, GridSpec, Result};
use std::collections::BTreeMap;

pub(super) struct Consumer {
    width: usize,
    cells: [u64; 4], // 0, 1, 2, nodata
    area_m2: [Neumaier; 3],
    accessible_m2: Neumaier,
    all_binary: bool,
    builder: ModelBuilder,
    connectivity: crate::patches::Connectivity,
    in_m: Vec<bool>,
    rec_counts: Vec<(usize, u64)>,
    /// Sensitivity: area of the data cells reaching exactly b candidates, all and inside M.
    bin_area: Vec<Neumaier>,
    bin_area_m: Vec<Neumaier>,
    candidates: usize,
}

impl Consumer {
    pub(super) fn new(grid: &GridSpec, input: &PassInput<'_>) -> Self {
        Consumer {
            width: grid.width,
            cells: [0; 4],
            area_m2: Default::default(),
            accessible_m2: Neumaier::default(),
            all_binary: true,
            builder: ModelBuilder::new(grid, input.connectivity, input.model),
            connectivity: input.connectivity,
            in_m: vec![false; grid.width],
            rec_counts: Vec::new(),
            bin_area: vec![Neumaier::default(); input.sensitivity.len() + 1],
            bin_area_m: vec![Neumaier::default(); input.sensitivity.len() + 1],
            candidates: input.sensitivity.len(),
        }
    }

    /// Apply M (unless the workers did: `m_rows`, M's column intervals per row), measure,
    /// label; returns the finished class rows.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn strip(
        &mut self,
        y0: usize,
        codes: Vec<u8>,
        binary: bool,
        m_rows: Option<&[Vec<(usize, usize)>]>,
        tally: &Tally,
        access: &mut AccessMask,
        areas: &mut CellAreas,
        rows_records: &BTreeMap<usize, Vec<(usize, usize)>>,
        placed: &mut [PlacedRecord],
        raster: &SuitabilityRaster,
        sink: &mut dyn RowSink,
    ) -> Result<Vec<u8>> {
        let w = self.width;
        let mut classes = codes;
        self.all_binary &= binary;
        let whole = access.is_whole_raster();
        for (r, cls) in classes.chunks_mut(w).enumerate() {
            let row = y0 + r;
            let row_areas = areas.row_allow_outside(row)?;
            // Per-cell membership only where a per-cell sum needs it.
            let per_cell =
                matches!(row_areas, RowAreas::PerCell(_)) || matches!(tally, Tally::Bins(_));
            let iv = m_rows.map(|m| m[r].as_slice());
            match iv {
                Some(iv) if per_cell => crate::access::fill_from_intervals(iv, &mut self.in_m),
                Some(_) => {}
                None if whole => {}
                None => {
                    access.fill_row(row, &mut self.in_m)?;
                    // Suitable cells outside M become class 2 (branch-free, so it vectorises).
                    for (k, &m) in cls.iter_mut().zip(&self.in_m) {
                        *k += (*k == class::INSIDE) as u8 & (m as u8 ^ 1);
                    }
                }
            }
            let in_m = std::mem::take(&mut self.in_m);
            let m = match iv {
                _ if whole => RowM::Whole,
                Some(iv) if !per_cell => RowM::Intervals(iv),
                _ => RowM::Cells(&in_m),
            };
            self.measure(row, cls, &row_areas, &m, raster)?;
            match tally {
                Tally::Bins(bins) => self.measure_bins(&bins[r * w..(r + 1) * w], &row_areas, &m),
                Tally::Rows(counts) => self.measure_row_counts(counts, r, &row_areas)?,
                Tally::None => {}
            }
            self.rec_counts.clear();
            if let Some(list) = rows_records.get(&row) {
                for &(c, i) in list {
                    placed[i].class = Some(cls[c]);
                    self.rec_counts.push((c, 1));
                }
            }
            self.builder
                .push_row(row, cls, &row_areas, &self.rec_counts, m)?;
            self.in_m = in_m;
            sink.row_ready(row, cls); // while the row is in cache
        }
        Ok(classes)
    }

    /// Count the row's cells per class and add their areas.
    fn measure(
        &mut self,
        row: usize,
        cls: &[u8],
        row_areas: &RowAreas,
        m: &RowM<'_>,
        raster: &SuitabilityRaster,
    ) -> Result<()> {
        let w = self.width;
        let (n0, n1, nd) = (
            count_eq(cls, 0),
            count_eq(cls, 1),
            count_eq(cls, class::NODATA),
        );
        let counts = [n0, n1, w as u64 - n0 - n1 - nd, nd];
        let m_cells = match m {
            RowM::Whole => w as u64 - nd,
            _ => count_in_m(cls, m, |k| k != class::NODATA),
        };
        for (total, n) in self.cells.iter_mut().zip(counts) {
            *total += n;
        }
        match row_areas {
            RowAreas::Uniform(a) => {
                for (sum, n) in self.area_m2.iter_mut().zip(counts) {
                    sum.add(n as f64 * a);
                }
                self.accessible_m2.add(m_cells as f64 * a);
            }
            RowAreas::PerCell(v) => {
                let m_of = m;
                let mut sums = [0f64; 3];
                let mut m = 0f64;
                for (c, &k) in cls.iter().enumerate() {
                    if k == class::NODATA {
                        continue;
                    }
                    let a = v[c];
                    if !a.is_finite() {
                        return Err(Error::UnsupportedRaster {
                            path: raster.path().to_path_buf(),
                            reason: format!(
                                "the data cell at row {row}, column {c} lies outside the valid area of the raster's \
                                 projection, so its true area cannot be measured; set it to nodata or reproject the raster"
                            ),
                        });
                    }
                    sums[k as usize] += a;
                    if m_of.contains(c) {
                        m += a;
                    }
                }
                for (sum, s) in self.area_m2.iter_mut().zip(sums) {
                    sum.add(s);
                }
                self.accessible_m2.add(m);
            }
        }
        Ok(())
    }

    /// Add the row's data cells to the sensitivity sums by how many candidates they reach.
    fn measure_bins(&mut self, bins: &[u8], row_areas: &RowAreas, m: &RowM<'_>) {
        let n = self.candidates + 1;
        match row_areas {
            RowAreas::Uniform(a) => {
                for b in 0..n {
                    let all = count_eq(bins, b as u8);
                    let inside = match m {
                        RowM::Whole => all,
                        _ => count_in_m(bins, m, |x| x == b as u8),
                    };
                    self.bin_area[b].add(all as f64 * a);
                    self.bin_area_m[b].add(inside as f64 * a);
                }
            }
            RowAreas::PerCell(v) => {
                let (mut all, mut inside) = (vec![0f64; n], vec![0f64; n]);
                for (c, &b) in bins.iter().enumerate() {
                    if b != class::NODATA {
                        all[b as usize] += v[c];
                        if m.contains(c) {
                            inside[b as usize] += v[c];
                        }
                    }
                }
                for b in 0..n {
                    self.bin_area[b].add(all[b]);
                    self.bin_area_m[b].add(inside[b]);
                }
            }
        }
    }

    /// Add row `r`'s per-row counts (from the workers) to the sensitivity sums, in the bins
    /// and order of [`Consumer::measure_bins`] (the same sums, bit for bit).
    fn measure_row_counts(
        &mut self,
        counts: &RowTally,
        r: usize,
        row_areas: &RowAreas,
    ) -> Result<()> {
        let RowAreas::Uniform(a) = row_areas else {
            return Err(Error::Processing {
                what: "E sensitivity".into(),
                reason: "per-row counts met a row whose cells differ in area".into(),
            });
        };
        let (ge, ge_m) = counts.row(r);
        // Bin b holds the cells reaching exactly b candidates: those reaching b, less those
        // reaching b + 1 (bin 0 is never summed).
        let exactly = |ge: &[u32], b: usize| ge[b - 1] - ge.get(b).copied().unwrap_or(0);
        for b in 1..=self.candidates {
            self.bin_area[b].add(exactly(ge, b) as f64 * a);
            self.bin_area_m[b].add(exactly(ge_m, b) as f64 * a);
        }
        Ok(())
    }

    pub(super) fn finish(self, grid: &GridSpec) -> Result<PassOutput> {
        // A cell is suitable at candidate k (0-based) when it reaches more than k of them.
        let sensitivity = (0..self.candidates)
            .map(|k| {
                let sum = |v: &[Neumaier]| {
                    let mut s = Neumaier::default();
                    for x in &v[k + 1..] {
                        s.merge(x);
                    }
                    s.value()
                };
                (sum(&self.bin_area), sum(&self.bin_area_m))
            })
            .collect();
        let totals = Totals {
            cells_unsuitable: self.cells[0],
            cells_inside: self.cells[1],
            cells_outside: self.cells[2],
            cells_nodata: self.cells[3],
            area_m2_unsuitable: self.area_m2[0].value(),
            area_m2_inside: self.area_m2[1].value(),
            area_m2_outside: self.area_m2[2].value(),
            area_m2_accessible: self.accessible_m2.value(),
        };
        Ok(PassOutput {
            model: self.builder.finish(grid, self.connectivity, totals)?,
            all_binary: self.all_binary,
            sensitivity,
        })
    }
}

/// Cells equal to `b`, counted as in [`count_if`].
fn count_eq(bins: &[u8], b: u8) -> u64 {
    count_if(bins, |x| x == b)
}

/// Cells satisfying `keep`: byte counters over runs of 255 cells (a compare and a byte add
/// per cell, which the compiler vectorises), widened once per run.
fn count_if(cells: &[u8], keep: impl Fn(u8) -> bool) -> u64 {
    cells
        .chunks(255)
        .map(|c| c.iter().fold(0u8, |n, &x| n + keep(x) as u8) as u64)
        .sum()
}

/// Cells satisfying `keep` inside M, whatever form the row's M takes (none when unknown).
fn count_in_m(cells: &[u8], m: &RowM<'_>, keep: impl Fn(u8) -> bool + Copy) -> u64 {
    match m {
        RowM::Whole => count_if(cells, keep),
        RowM::Cells(in_m) => count_in(cells, in_m, keep),
        RowM::Intervals(iv) => iv.iter().map(|&(a, b)| count_if(&cells[a..b], keep)).sum(),
        RowM::Unknown => 0,
    }
}

/// Cells satisfying `keep` whose `in_m` is set, counted as in [`count_if`].
fn count_in(cells: &[u8], in_m: &[bool], keep: impl Fn(u8) -> bool) -> u64 {
    cells
        .chunks(255)
        .zip(in_m.chunks(255))
        .map(|(c, m)| {
            c.iter()
                .zip(m)
                .fold(0u8, |n, (&x, &m)| n + (keep(x) & m) as u8) as u64
        })
        .sum()
}

#[cfg(test)]
mod tests {
    use crate::model::RowM;

    // Against a plain per-cell count (no outside source: two ways of counting the same cells).
    #[test]
    fn bin_counts_equal_a_plain_count() {
        let mut s = 7u64;
        let bins: Vec<u8> = (0..10_007)
            .map(|_| {
                s = s.wrapping_mul(6364136223846793005).wrapping_add(1);
                [0u8, 1, 2, 3, 4, 5, 6, 255][(s >> 61) as usize]
            })
            .collect();
        let in_m: Vec<bool> = (0..bins.len()).map(|i| i % 3 != 0).collect();
        let iv = [(0usize, 1usize), (17, 4000), (4001, 10_007)];
        let in_iv = |i: usize| iv.iter().any(|&(a, b)| a <= i && i < b);
        for b in [0u8, 1, 2, 3, 4, 5, 6, 255] {
            let plain = bins.iter().filter(|&&k| k == b).count() as u64;
            let plain_in = bins
                .iter()
                .zip(&in_m)
                .filter(|&(&k, &m)| k == b && m)
                .count() as u64;
            let plain_iv = (0..bins.len())
                .filter(|&i| bins[i] == b && in_iv(i))
                .count() as u64;
            assert!(plain > 1000, "every value occurs");
            assert_eq!(super::count_eq(&bins, b), plain);
            let m = RowM::Cells(&in_m);
            assert_eq!(super::count_in_m(&bins, &m, |x| x == b), plain_in);
            let m = RowM::Intervals(&iv);
            assert_eq!(super::count_in_m(&bins, &m, |x| x == b), plain_iv);
            assert_eq!(super::count_in_m(&bins, &RowM::Whole, |x| x == b), plain);
        }
    }
}
