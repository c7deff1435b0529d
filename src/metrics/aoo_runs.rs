//! The modelled AOO from rows of runs: the centre of every cell of the runs, taken to the AOO
//! grid's equal-area CRS and counted there. [`count_runs`] reads the selected patches of a
//! [`RangeModel`]; [`count_rows`] any range given as column runs per row (`areal change`'s
//! present and future ranges).
//!
//! The rows are split into bands that run in parallel (rayon), each with its own transform.
//! Centres are marked row by row in one shared bitmap of quarter cells; when one falls outside
//! it, each band sorts its quarter cells instead and the counters are merged at the end, so
//! the result does not depend on the number of threads.
//!
//! On a lon/lat grid every cell of a row has the same latitude, so the LAEA forward
//! projection (Snyder 1987, USGS PP 1395, eqs. 24-2, 24-3, 24-10 to 24-14; ellipsoidal) needs
//! only the sine and cosine of each cell's longitude difference: the row's authalic latitude
//! terms are computed once. The result agrees with PROJ's `laea` to well under a millimetre
//! (checked in the tests), far below the quarter cell (500 m for the 2 km grid) the counter
//! resolves. On projected grids each cell centre goes through PROJ.

use super::aoo::{AooCounter, AooFigures, AooGrid};
use super::aoo_bitmap::QuarterBitmap;
use crate::model::{RangeModel, Run};
use crate::{GridSpec, Result};
use rayon::prelude::*;
use std::ops::Range;

/// Rows per parallel band.
const BAND_ROWS: usize = 512;

/// A range as column runs per row: `for_band(rows, f)` calls `f(row, runs)` for the rows in
/// `rows`, in order, with half-open column runs `start..end` sorted by column (rows without
/// runs may be left out). Called from several threads at once, one band each.
pub(crate) type RowRuns<'a> = dyn Fn(Range<usize>, &mut RowVisit) -> Result<()> + Sync + 'a;

/// What [`RowRuns`] calls for each row: `(row, runs)`.
pub(crate) type RowVisit<'a> = dyn FnMut(usize, &[(u32, u32)]) -> Result<()> + 'a;

/// What a band does with the projected centres of each row.
type CentreRow<'a, S> = dyn Fn(&mut S, &[(f64, f64)]) + Sync + 'a;

/// The AOO figures of the centres of the cells of the patches `keep` selects (by id), whose
/// boundary corners are `extent_pts` (WGS84 lon/lat, for the bitmap's extent).
pub(crate) fn count_runs(
    model: &RangeModel,
    aoo: &AooGrid,
    keep: &(dyn Fn(u32) -> bool + Sync),
    extent_pts: &[(f64, f64)],
) -> Result<AooFigures> {
    let rows = |band: Range<usize>, f: &mut RowVisit| {
        let mut kept = Vec::new();
        model.for_rows(band, &mut |row, runs: &[Run]| {
            kept.clear();
            kept.extend(
                runs.iter()
                    .filter(|r| keep(r.patch))
                    .map(|r| (r.start, r.end)),
            );
            if kept.is_empty() {
                return Ok(());
            }
            f(row, &kept)
        })
    };
    let bitmap = extent_bitmap(aoo, extent_pts, aoo.cell_m / 4.0)?;
    count_with(model.grid(), aoo, &rows, bitmap)
}

/// The AOO figures of the centres of the cells of `rows` on `grid`, marked in a bitmap over
/// the whole LAEA disk (only the tiles the range touches take memory; no extent needed).
pub(crate) fn count_rows(grid: &GridSpec, aoo: &AooGrid, rows: &RowRuns) -> Result<AooFigures> {
    let bitmap = QuarterBitmap::whole_disk(
        aoo.cell_m / 4.0,
        super::laea::disk_half_widths(aoo.spec().centre.1),
    );
    count_with(grid, aoo, rows, bitmap)
}

/// Count in `bitmap` when every centre falls in it; else by sorted quarter cells per band.
fn count_with(
    grid: &GridSpec,
    aoo: &AooGrid,
    rows: &RowRuns,
    bitmap: Option<QuarterBitmap>,
) -> Result<AooFigures> {
    if let Some(bitmap) = bitmap {
        let all_in = std::sync::atomic::AtomicBool::new(true);
        for_band_centres(
            grid,
            aoo,
            rows,
            &|| (),
            &|_, pts| {
                if !bitmap.set_all(pts) {
                    all_in.store(false, std::sync::atomic::Ordering::Relaxed);
                }
            },
            &|_| (),
        )?;
        if all_in.into_inner() {
            let counter = AooCounter::new(aoo.cell_m);
            return Ok(counter.figures_of(bitmap.per_origin()));
        }
    }
    // The sorted quarter cells, per band, merged.
    let counters = std::sync::Mutex::new(Vec::new());
    let cell_m = aoo.cell_m;
    for_band_centres(
        grid,
        aoo,
        rows,
        &|| AooCounter::new(cell_m),
        &|c, pts| {
            for &(x, y) in pts {
                c.add(x, y);
            }
        },
        &|c| counters.lock().expect("no thread panicked").push(c),
    )?;
    let mut all = AooCounter::new(aoo.cell_m);
    for c in counters.into_inner().expect("no thread panicked") {
        all.merge(c);
    }
    Ok(all.figures())
}

/// The bitmap over the extent of `pts` in the AOO CRS, with a margin of two quarter cells.
fn extent_bitmap(aoo: &AooGrid, pts: &[(f64, f64)], q: f64) -> Result<Option<QuarterBitmap>> {
    if pts.is_empty() {
        return Ok(None);
    }
    // The closed form where it applies (the margin, and the fallback to sorted keys for a
    // centre outside, absorb its sub-millimetre difference from PROJ); else PROJ.
    let (xs, ys) = match super::laea::project_points(aoo.spec().centre, pts) {
        Some(v) => v,
        None => {
            let ct = aoo.transform_from(&crate::crs::wgs84()?)?;
            let (mut xs, mut ys): (Vec<f64>, Vec<f64>) = pts.iter().copied().unzip();
            let what = "range extent to the AOO grid CRS";
            if crate::crs::transform_points(&ct, &mut xs, &mut ys, what).is_err() {
                return Ok(None);
            }
            (xs, ys)
        }
    };
    let fold = |v: &[f64]| {
        v.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |m, &x| {
            (m.0.min(x), m.1.max(x))
        })
    };
    let ((x0, x1), (y0, y1)) = (fold(&xs), fold(&ys));
    let m = 2.0 * q;
    Ok(QuarterBitmap::new(q, (x0 - m, x1 + m), (y0 - m, y1 + m)))
}

/// Per row band (in parallel): `start()` a state, `row(state, centres)` for the projected
/// centres of each row's cells, then `done(state)`.
fn for_band_centres<S>(
    grid: &GridSpec,
    aoo: &AooGrid,
    rows: &RowRuns,
    start: &(dyn Fn() -> S + Sync),
    row_fn: &CentreRow<'_, S>,
    done: &(dyn Fn(S) + Sync),
) -> Result<()> {
    let h = grid.height;
    let bands: Vec<Range<usize>> = (0..h)
        .step_by(BAND_ROWS)
        .map(|r| r..(r + BAND_ROWS).min(h))
        .collect();
    let spec = aoo.spec();
    bands.into_par_iter().try_for_each(|band| -> Result<()> {
        let mut project = spec.projector(grid)?;
        let mut pts = Vec::new();
        let mut state = start();
        rows(band, &mut |row, runs: &[(u32, u32)]| {
            if runs.iter().all(|&(a, b)| a >= b) {
                return Ok(());
            }
            project.row(row, runs, &mut pts)?;
            row_fn(&mut state, &pts);
            Ok(())
        })?;
        done(state);
        Ok(())
    })
}
