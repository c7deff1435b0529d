//! The modelled AOO from the model's runs: the centre of every cell of the selected patches,
//! taken to the AOO grid's equal-area CRS and counted there.
//!
//! The rows are split into bands that run in parallel (rayon), each with its own transform
//! and counter; the counters' quarter cells are merged at the end, so the result does not
//! depend on the number of threads.
//!
//! On a lon/lat grid every cell of a row has the same latitude, so the LAEA forward
//! projection (Snyder 1987, USGS PP 1395, eqs. 24-2, 24-3, 24-10 to 24-14; ellipsoidal) needs
//! only the sine and cosine of each cell's longitude difference: the row's authalic latitude
//! terms are computed once. The result agrees with PROJ's `laea` to well under a millimetre
//! (checked in the tests), far below the quarter cell (500 m for the 2 km grid) the counter
//! resolves. On projected grids each cell centre goes through PROJ.

use super::aoo::{AooCounter, AooGrid};
use crate::model::{RangeModel, Run};
use crate::Result;
use rayon::prelude::*;

/// Rows per parallel band.
const BAND_ROWS: usize = 512;

/// Count the centres of the cells of the patches `keep` selects (by id).
pub(crate) fn count_runs(
    model: &RangeModel,
    aoo: &AooGrid,
    keep: &(dyn Fn(u32) -> bool + Sync),
) -> Result<AooCounter> {
    let grid = model.grid();
    let h = grid.height;
    let bands: Vec<std::ops::Range<usize>> = (0..h)
        .step_by(BAND_ROWS)
        .map(|r| r..(r + BAND_ROWS).min(h))
        .collect();
    let (spec, cell_m) = (aoo.spec(), aoo.cell_m);
    let counters: Vec<AooCounter> = bands
        .into_par_iter()
        .map(|band| -> Result<AooCounter> {
            let mut counter = AooCounter::new(cell_m);
            let mut project = spec.projector(grid)?;
            let (mut xs, mut ys) = (Vec::new(), Vec::new());
            model.for_rows(band, &mut |row, runs: &[Run]| {
                xs.clear();
                ys.clear();
                for r in runs.iter().filter(|r| keep(r.patch)) {
                    for c in r.start..r.end {
                        xs.push(c);
                    }
                }
                if xs.is_empty() {
                    return Ok(());
                }
                project.row(row, &xs, &mut ys)?;
                for &(x, y) in ys.iter() {
                    counter.add(x, y);
                }
                Ok(())
            })?;
            Ok(counter)
        })
        .collect::<Result<_>>()?;
    let mut all = AooCounter::new(aoo.cell_m);
    for c in counters {
        all.merge(c);
    }
    Ok(all)
}
