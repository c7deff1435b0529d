//! Modelled AOO of the present range and of each future range under the three dispersal
//! rules, counted by the metrics' run-based AOO (`metrics::aoo_runs::count_rows`: LAEA centred
//! on the records used, quarter-cell bitmap, 16 origins, minimum reported): a grid cell is
//! occupied when the centre of at least one raster cell of the range falls in it.
//!
//! The pass keeps each future's classes 1, 3 and 4 as runs per row ([`FutureRuns`]); the
//! present range is already held as runs. After the pass each range is counted in turn, so
//! memory follows the runs and one bitmap's touched tiles, not the cells.

use super::pass::code;
use super::present::PresentRuns;
use crate::metrics::aoo::{self, AooFigures, AooGrid};
use crate::metrics::aoo_runs::{count_rows, RowRuns, RowVisit};
use crate::{Error, GridSpec, Result};
use std::ops::Range;

/// Largest raster width whose columns fit the packed runs (2^30).
const MAX_WIDTH: usize = 1 << 30;

/// One future's cells of class 1 (stable), 3 and 4 (gains) as runs per row: `(start, end)`
/// with the class index (0 stable, 1 within reach, 2 out of reach) in the top 2 bits of
/// `end`.
pub(crate) struct FutureRuns {
    rows: Vec<Vec<(u32, u32)>>,
}

impl FutureRuns {
    pub(crate) fn new(grid: &GridSpec) -> Result<FutureRuns> {
        if grid.width >= MAX_WIDTH {
            return Err(Error::InvalidOption {
                option: "--future",
                reason: format!(
                    "the raster is {} columns wide; the modelled AOO of the ranges handles fewer than {MAX_WIDTH}; use --no-metrics",
                    grid.width
                ),
            });
        }
        Ok(FutureRuns {
            rows: vec![Vec::new(); grid.height],
        })
    }

    /// Keep the runs of classes 1, 3 and 4 of change row `row`.
    pub(crate) fn take_row(&mut self, row: usize, cls: &[u8]) {
        let out = &mut self.rows[row];
        out.clear();
        let mut c = 0;
        while c < cls.len() {
            let k = cls[c];
            let tag = match k {
                code::STABLE => 0u32,
                code::GAINED_WITHIN => 1,
                code::GAINED_BEYOND => 2,
                _ => {
                    c += 1;
                    continue;
                }
            };
            let s = c;
            while c < cls.len() && cls[c] == k {
                c += 1;
            }
            out.push((s as u32, c as u32 | tag << 30));
        }
        out.shrink_to_fit();
    }

    /// The runs of row `row` whose class index is at most `rule` (0 no dispersal: stable;
    /// 1 limited: stable and within reach; 2 full: every gain too).
    fn runs(&self, row: usize, rule: u32, out: &mut Vec<(u32, u32)>) {
        out.clear();
        out.extend(
            self.rows[row]
                .iter()
                .filter(|&&(_, e)| e >> 30 <= rule)
                .map(|&(s, e)| (s, e & (MAX_WIDTH as u32 - 1))),
        );
    }
}

/// The modelled AOO of the present range and, per future, of its range under no, limited and
/// full dispersal.
pub(crate) struct RangeAoo {
    pub(crate) cell_km: f64,
    pub(crate) present: AooFigures,
    pub(crate) futures: Vec<[AooFigures; 3]>,
}

/// Count every range on the AOO grid centred on `records` ((lon, lat) degrees).
pub(crate) fn count(
    grid: &GridSpec,
    records: &[(f64, f64)],
    cell_km: f64,
    present: &PresentRuns,
    futures: &[FutureRuns],
) -> Result<RangeAoo> {
    let (lon0, lat0) = aoo::centre_of(records);
    let g = AooGrid::new(lon0, lat0, cell_km)?;
    let present_rows = |band: Range<usize>, f: &mut RowVisit| -> Result<()> {
        for r in band {
            if !present.range[r].is_empty() {
                f(r, &present.range[r])?;
            }
        }
        Ok(())
    };
    let mut clock = crate::progress::StageClock::new();
    let present_fig = count_rows(grid, &g, &present_rows as &RowRuns)?;
    clock.lap("change: AOO of the present range");
    let mut out = Vec::with_capacity(futures.len());
    for fr in futures {
        let mut figs = Vec::with_capacity(3);
        for rule in 0..3u32 {
            let rows = |band: Range<usize>, f: &mut RowVisit| -> Result<()> {
                let mut runs = Vec::new();
                for r in band {
                    fr.runs(r, rule, &mut runs);
                    if !runs.is_empty() {
                        f(r, &runs)?;
                    }
                }
                Ok(())
            };
            figs.push(count_rows(grid, &g, &rows as &RowRuns)?);
            clock.lap("change: AOO of a future range");
        }
        let [a, b, c]: [AooFigures; 3] = figs.try_into().expect("three rules");
        out.push([a, b, c]);
    }
    Ok(RangeAoo {
        cell_km,
        present: present_fig,
        futures: out,
    })
}
