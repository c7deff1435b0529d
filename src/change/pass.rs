//! The change pass: every future raster streamed in lockstep, strip by strip, against the
//! present range held as runs.
//!
//! Workers (one GDAL handle per future each) decode a strip of every future, threshold it
//! with T, and code each cell against the present state: 0 unsuitable at both dates,
//! 1 stable, 2 lost, 3 gained within reach, 4 gained out of reach, 255 nodata at either date.
//! Within reach is asked only for rows that hold a gain. The calling thread receives the
//! strips in order, measures areas, feeds one labeller per future, counts agreement and
//! writes the rows.

use super::occupancy::FutureRuns;
use super::present::PresentRuns;
use super::reach::ReachSpec;
use crate::area::{CellAreas, RowAreas};
use crate::model::RangeModel;
use crate::pass::decode_threads;
use crate::patches::Neumaier as Sum;
use crate::patches::{Connectivity, Patch, PatchLabeler};
use crate::raster_io::{class, StripBuffers, SuitabilityRaster, STRIP_ROWS};
use crate::{Error, GridSpec, ProgressHandle, Result, RowSink};
use std::collections::BTreeMap;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{mpsc, Arc};

/// Change classes.
pub mod code {
    /// Unsuitable at both dates (or suitable now but outside the present range, and unsuitable later).
    pub const UNSUITABLE: u8 = 0;
    /// Present range, suitable in the future.
    pub const STABLE: u8 = 1;
    /// Present range, unsuitable in the future.
    pub const LOST: u8 = 2;
    /// Suitable in the future, outside the present range, within D of it.
    pub const GAINED_WITHIN: u8 = 3;
    /// Suitable in the future, outside the present range, farther than D (or no D given).
    pub const GAINED_BEYOND: u8 = 4;
    /// Nodata at either date.
    pub const NODATA: u8 = 255;
    /// Category names, index = class value.
    pub const NAMES: [&str; 5] = [
        "unsuitable at both dates",
        "stable: present range, still suitable",
        "lost: present range, no longer suitable",
        "gained within dispersal reach",
        "gained beyond dispersal reach",
    ];
}

/// Sums of one future.
#[derive(Debug, Default, Clone)]
pub(crate) struct FutureTotals {
    /// Cells of classes 0..=4, then nodata.
    pub(crate) cells: [u64; 6],
    /// Area of classes 0..=4, m2.
    pub(crate) area_m2: [Sum; 5],
    /// Area of classes 3 and 4 inside M, m2.
    pub(crate) gained_in_m_m2: [Sum; 2],
    pub(crate) patches: Vec<Patch>,
    /// Every data cell of the future raster was 0 or 1.
    pub(crate) binary: bool,
}

/// What the pass needs.
pub(crate) struct PassInput<'a> {
    pub(crate) grid: &'a GridSpec,
    pub(crate) present: &'a Arc<PresentRuns>,
    pub(crate) futures: &'a [SuitabilityRaster],
    pub(crate) t: f64,
    pub(crate) reach: Option<&'a ReachSpec>,
    /// The present run's model: M as runs.
    pub(crate) model: &'a RangeModel,
    /// M is the whole raster.
    pub(crate) whole: bool,
    pub(crate) connectivity: Connectivity,
    pub(crate) progress: &'a ProgressHandle,
}

struct Strip {
    index: usize,
    /// Per future: the strip's change codes.
    codes: Vec<Vec<u8>>,
    binary: Vec<bool>,
}

/// The present state and a future's 0/1/255 code give the change class (gains as 4).
#[inline]
fn change_code(present: u8, future: u8) -> u8 {
    match (present, future) {
        (class::NODATA, _) | (_, class::NODATA) => code::NODATA,
        (1, 1) => code::STABLE,
        (1, _) => code::LOST,
        (_, 1) => code::GAINED_BEYOND,
        _ => code::UNSUITABLE,
    }
}

/// Worker side of one strip.
#[allow(clippy::too_many_arguments)]
fn work_strip(
    inp: &WorkerShared<'_>,
    readers: &[crate::raster_io::StripReader],
    bufs: &mut StripBuffers,
    reach: &mut Option<super::reach::ReachWorker>,
    i: usize,
) -> Result<Strip> {
    let w = inp.width;
    let y0 = i * STRIP_ROWS;
    let rows = STRIP_ROWS.min(inp.height - y0);
    let mut codes = Vec::with_capacity(readers.len());
    let mut binary = Vec::with_capacity(readers.len());
    for rd in readers {
        let mut c = Vec::new();
        binary.push(rd.classify_rows(y0, rows, inp.t, bufs, &mut c)?);
        codes.push(c);
    }
    let (mut pres, mut want, mut near) = (vec![0u8; w], vec![false; w], vec![false; w]);
    for r in 0..rows {
        inp.present.fill_row(y0 + r, &mut pres);
        want.iter_mut().for_each(|v| *v = false);
        for c in codes.iter_mut() {
            for ((k, &p), g) in c[r * w..(r + 1) * w].iter_mut().zip(&pres).zip(&mut want) {
                *k = change_code(p, *k);
                *g |= *k == code::GAINED_BEYOND;
            }
        }
        if !want.iter().any(|&g| g) {
            continue;
        }
        if let Some(rw) = reach.as_mut() {
            rw.fill_row(y0 + r, &want, &mut near);
            for c in codes.iter_mut() {
                for ((k, &n), &g) in c[r * w..(r + 1) * w].iter_mut().zip(&near).zip(&want) {
                    if g && n && *k == code::GAINED_BEYOND {
                        *k = code::GAINED_WITHIN;
                    }
                }
            }
        }
    }
    Ok(Strip {
        index: i,
        codes,
        binary,
    })
}

struct WorkerShared<'a> {
    width: usize,
    height: usize,
    t: f64,
    present: &'a PresentRuns,
}

/// Run the pass. `sinks[f]` receives future f's change rows, `agreement` the per-cell count of
/// futures whose range (limited dispersal, or full without D) holds the cell, `future_runs[f]`
/// future f's range as runs (for the modelled AOO), `thumbs[f]` its decimated map (report).
pub(crate) fn run_pass(
    inp: PassInput<'_>,
    sinks: &mut [&mut dyn RowSink],
    mut agreement: Option<&mut dyn RowSink>,
    mut future_runs: Option<&mut [FutureRuns]>,
    mut thumbs: Option<&mut [crate::report_html::change::ChangeThumb]>,
) -> Result<Vec<FutureTotals>> {
    let grid = inp.grid;
    let (w, h) = (grid.width, grid.height);
    let nf = inp.futures.len();
    let n_strips = h.div_ceil(STRIP_ROWS);
    let threads = decode_threads().min(n_strips).max(1);
    let next = AtomicUsize::new(0);
    let whole = inp.whole;
    let dispersal = inp.reach.is_some();
    let shared = WorkerShared {
        width: w,
        height: h,
        t: inp.t,
        present: inp.present,
    };
    let specs: Vec<_> = inp.futures.iter().map(|f| f.reader_spec()).collect();
    let (tx, rx) = mpsc::sync_channel::<Result<Strip>>(2 * threads);
    let mut areas = CellAreas::new(grid)?;
    std::thread::scope(|scope| {
        for _ in 0..threads {
            let tx = tx.clone();
            let (next, shared, specs) = (&next, &shared, &specs);
            let reach = inp.reach;
            scope.spawn(move || {
                let setup = || -> Result<_> {
                    let readers = specs.iter().map(|s| s.open()).collect::<Result<Vec<_>>>()?;
                    let reach = reach.map(|r| r.worker()).transpose()?;
                    Ok((readers, reach))
                };
                let (readers, mut reach) = match setup() {
                    Ok(x) => x,
                    Err(e) => {
                        let _ = tx.send(Err(e));
                        return;
                    }
                };
                let mut bufs = StripBuffers::default();
                loop {
                    let i = next.fetch_add(1, Ordering::Relaxed);
                    if i >= n_strips {
                        return;
                    }
                    let out = work_strip(shared, &readers, &mut bufs, &mut reach, i);
                    let failed = out.is_err();
                    if tx.send(out).is_err() || failed {
                        return;
                    }
                }
            });
        }
        drop(tx);
        let mut totals: Vec<FutureTotals> = (0..nf)
            .map(|_| FutureTotals {
                binary: true,
                ..Default::default()
            })
            .collect();
        let mut labelers: Vec<PatchLabeler> = (0..nf)
            .map(|_| PatchLabeler::new(w, inp.connectivity, grid.wraps_antimeridian()))
            .collect();
        let mut in_m = vec![false; w];
        let mut pres = vec![0u8; w];
        let mut agree_rows: Vec<u8> = Vec::new();
        if let Some(p) = &inp.progress.0 {
            p.start("comparing the futures with the present range", h as u64);
        }
        let mut pending: BTreeMap<usize, Strip> = BTreeMap::new();
        let mut expect = 0;
        for msg in rx {
            let strip = msg?;
            pending.insert(strip.index, strip);
            while let Some(mut strip) = pending.remove(&expect) {
                let y0 = expect * STRIP_ROWS;
                let rows = STRIP_ROWS.min(h - y0);
                agree_rows.clear();
                agree_rows.resize(rows * w, 0);
                for (f, b) in strip.binary.iter().enumerate() {
                    totals[f].binary &= b;
                }
                for r in 0..rows {
                    let row = y0 + r;
                    let row_areas = areas.row_allow_outside(row)?;
                    let gains = strip.codes.iter().any(|c| {
                        c[r * w..(r + 1) * w]
                            .iter()
                            .any(|&k| k == code::GAINED_WITHIN || k == code::GAINED_BEYOND)
                    });
                    let m_row: Option<&[bool]> = if whole || !gains {
                        None
                    } else {
                        in_m.iter_mut().for_each(|v| *v = false);
                        for &(a, b) in inp.model.m_row(row) {
                            in_m[a as usize..b as usize]
                                .iter_mut()
                                .for_each(|v| *v = true);
                        }
                        Some(&in_m)
                    };
                    let agree = &mut agree_rows[r * w..(r + 1) * w];
                    for f in 0..nf {
                        let cls = &mut strip.codes[f][r * w..(r + 1) * w];
                        measure_row(
                            cls,
                            m_row,
                            whole,
                            &row_areas,
                            &mut totals[f],
                            row,
                            &inp.futures[f],
                        )?;
                        labelers[f].push_row(row, cls, &row_areas, &[]);
                        for (a, &k) in agree.iter_mut().zip(cls.iter()) {
                            let in_range = k == code::STABLE
                                || k == code::GAINED_WITHIN
                                || (!dispersal && k == code::GAINED_BEYOND);
                            *a += in_range as u8;
                        }
                    }
                    inp.present.fill_row(row, &mut pres);
                    for (a, &p) in agree.iter_mut().zip(&pres) {
                        if p == class::NODATA {
                            *a = class::NODATA;
                        }
                    }
                    if let Some(runs) = future_runs.as_deref_mut() {
                        for (fr, c) in runs.iter_mut().zip(&strip.codes) {
                            fr.take_row(row, &c[r * w..(r + 1) * w]);
                        }
                    }
                }
                if let Some(t) = thumbs.as_deref_mut() {
                    for (th, c) in t.iter_mut().zip(&strip.codes) {
                        th.add_rows(y0, c);
                    }
                }
                for (f, sink) in sinks.iter_mut().enumerate() {
                    sink.write_rows(y0, std::mem::take(&mut strip.codes[f]))?;
                }
                if let Some(a) = agreement.as_deref_mut() {
                    agree_rows = a.write_rows(y0, std::mem::take(&mut agree_rows))?;
                }
                if let Some(p) = &inp.progress.0 {
                    p.advance(rows as u64);
                }
                expect += 1;
            }
        }
        if expect != n_strips {
            return Err(Error::UnsupportedRaster {
                path: inp.futures[0].path().to_path_buf(),
                reason: format!("only {expect} of {n_strips} strips could be read"),
            });
        }
        if let Some(p) = &inp.progress.0 {
            p.finish();
        }
        for (t, l) in totals.iter_mut().zip(labelers) {
            t.patches = l.finish();
        }
        Ok(totals)
    })
}

/// Count and measure one row of one future. `m_row`: M of the row (None when M is the whole
/// raster or the row has no gain).
#[allow(clippy::too_many_arguments)]
fn measure_row(
    cls: &[u8],
    m_row: Option<&[bool]>,
    whole: bool,
    row_areas: &RowAreas,
    t: &mut FutureTotals,
    row: usize,
    future: &SuitabilityRaster,
) -> Result<()> {
    // counts[0..=4] classes, [5] nodata, [6..=7] gains 3, 4 in M.
    let mut counts = [0u64; 8];
    let mut sums = [0f64; 7];
    for (c, k) in cls.iter().enumerate() {
        let gain = *k == code::GAINED_WITHIN || *k == code::GAINED_BEYOND;
        let in_m = gain && (whole || m_row.is_some_and(|m| m[c]));
        if *k == code::NODATA {
            counts[5] += 1;
            continue;
        }
        let i = *k as usize;
        counts[i] += 1;
        let gi = (in_m as usize) * (i + 3); // 6 or 7 for gains in M, else 0
        if gi > 0 {
            counts[gi] += 1;
        }
        if let RowAreas::PerCell(v) = row_areas {
            let a = v[c];
            if !a.is_finite() {
                return Err(Error::UnsupportedRaster {
                    path: future.path().to_path_buf(),
                    reason: format!(
                        "the data cell at row {row}, column {c} lies outside the valid area of the raster's \
                         projection, so its true area cannot be measured; set it to nodata or reproject the raster"
                    ),
                });
            }
            sums[i] += a;
            if gi > 0 {
                sums[gi - 1] += a;
            }
        }
    }
    for (c, n) in t.cells.iter_mut().zip(&counts[..6]) {
        *c += n;
    }
    match row_areas {
        RowAreas::Uniform(a) => {
            for (s, n) in t.area_m2.iter_mut().zip(&counts[..5]) {
                s.add(*n as f64 * a);
            }
            t.gained_in_m_m2[0].add(counts[6] as f64 * a);
            t.gained_in_m_m2[1].add(counts[7] as f64 * a);
        }
        RowAreas::PerCell(_) => {
            for (s, x) in t.area_m2.iter_mut().zip(&sums[..5]) {
                s.add(*x);
            }
            t.gained_in_m_m2[0].add(sums[5]);
            t.gained_in_m_m2[1].add(sums[6]);
        }
    }
    Ok(())
}
