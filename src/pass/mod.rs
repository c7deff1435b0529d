//! The pass: one streaming read of the suitability raster that classifies every cell, writes
//! the class rows and builds the [`RangeModel`].
//!
//! Decoding dominates the cost, so `decode_threads` workers (each with its own GDAL handle)
//! read strips and compare them with T (and, for a record buffer on a lon/lat grid, apply M);
//! the calling thread receives the strips in order, applies M, counts and measures cells,
//! feeds the model builder and hands the rows to the class sink.
//!
//! Memory: a few strips of values and classes, the labeller's two-row state, the per-patch
//! accumulators and the model's runs (spilled beyond its budget). The raster is never held
//! whole.

mod consumer;
pub(crate) mod place;
mod sink;

pub use sink::{MemorySink, RowSink};

use crate::access::AccessMask;
use crate::area::CellAreas;
use crate::model::{ModelOptions, RangeModel};
use crate::patches::Connectivity;
use crate::progress::ProgressHandle;
use crate::raster_io::{StripBuffers, SuitabilityRaster, Tally, STRIP_ROWS};
use crate::{Error, Result};
use consumer::Consumer;
use place::PlacedRecord;
use std::collections::BTreeMap;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::mpsc;
use std::sync::Mutex;

/// What the pass needs besides the raster.
pub(crate) struct PassInput<'a> {
    pub(crate) access: &'a mut AccessMask,
    pub(crate) areas: &'a mut CellAreas,
    /// The threshold.
    pub(crate) t: f64,
    pub(crate) connectivity: Connectivity,
    /// Row -> (col, record index) of the records on data cells.
    pub(crate) rows_records: &'a BTreeMap<usize, Vec<(usize, usize)>>,
    pub(crate) placed: &'a mut [PlacedRecord],
    pub(crate) model: &'a ModelOptions,
    pub(crate) progress: &'a ProgressHandle,
    /// Candidate thresholds for the E sensitivity, ascending (empty: none).
    pub(crate) sensitivity: &'a [f64],
}

/// What the pass yields.
pub(crate) struct PassOutput {
    pub(crate) model: RangeModel,
    /// Every strip held only 0 and 1 (and nodata).
    pub(crate) all_binary: bool,
    /// For each sensitivity candidate: (suitable area, suitable area inside M), m2.
    pub(crate) sensitivity: Vec<(f64, f64)>,
}

/// A decoded strip: 0 below T, 1 suitable, 255 nodata (and, when the workers apply M,
/// 2 suitable beyond M, marked while coding).
struct StripClasses {
    index: usize,
    codes: Vec<u8>,
    /// When the workers applied M: per row, M's half-open column intervals.
    m: Option<Vec<Vec<(usize, usize)>>>,
    binary: bool,
    /// How many sensitivity candidates each cell's value reaches (per cell or per row).
    tally: Tally,
}

/// One streaming pass: classify, measure, label, write.
pub(crate) fn run_pass(
    raster: &SuitabilityRaster,
    input: PassInput<'_>,
    sink: &mut dyn RowSink,
) -> Result<PassOutput> {
    let grid = raster.grid();
    let h = grid.height;
    let n_strips = h.div_ceil(STRIP_ROWS);
    let threads = decode_threads().min(n_strips).max(1);
    let next = AtomicUsize::new(0);
    // Strip buffers go round between the workers and the consumer: fresh pages cost
    // more to touch than the work done on them.
    let pool: Mutex<Vec<Vec<u8>>> = Mutex::new(Vec::new());
    let tally_pool: Mutex<Vec<Tally>> = Mutex::new(Vec::new());
    // The workers apply M themselves when they can (a polygon alone, or a record buffer
    // alone on a lon/lat grid), as column intervals per row.
    let filler = input.access.row_filler();
    let prefilled = filler.is_some();
    let t = input.t;
    let cands = input.sensitivity;
    // The sensitivity counted per row in the workers when every cell of a row has one area
    // and the workers know M; else per cell, summed by the consumer.
    let per_row = input.areas.per_row() && (prefilled || input.access.is_whole_raster());
    let new_tally = move || match (cands.is_empty(), per_row) {
        (true, _) => Tally::None,
        (false, true) => Tally::Rows(Default::default()),
        (false, false) => Tally::Bins(Vec::new()),
    };
    let (tx, rx) = mpsc::sync_channel::<Result<StripClasses>>(2 * threads);
    std::thread::scope(|scope| {
        for _ in 0..threads {
            let tx = tx.clone();
            let next = &next;
            let pool = &pool;
            let tally_pool = &tally_pool;
            let spec = raster.reader_spec();
            let mut filler = filler.clone();
            scope.spawn(move || {
                let reader = match spec.open() {
                    Ok(r) => r,
                    Err(e) => {
                        let _ = tx.send(Err(e));
                        return;
                    }
                };
                let mut bufs = StripBuffers::default();
                loop {
                    let mut codes = take(pool);
                    let i = next.fetch_add(1, Ordering::Relaxed);
                    if i >= n_strips {
                        return;
                    }
                    let y0 = i * STRIP_ROWS;
                    let rows = STRIP_ROWS.min(h - y0);
                    let mut tally = take_tally(tally_pool, new_tally);
                    let m = filler.as_mut().map(|f| {
                        let mut m_rows = vec![Vec::new(); rows];
                        for (r, iv) in m_rows.iter_mut().enumerate() {
                            f.row_intervals(y0 + r, iv);
                        }
                        m_rows
                    });
                    let out = reader
                        .classify_and_tally(
                            y0,
                            rows,
                            t,
                            cands,
                            &mut bufs,
                            &mut codes,
                            &mut tally,
                            m.as_deref(),
                        )
                        .map(|binary| {
                            // The workers' M is applied while coding (suitable beyond M: 2).
                            StripClasses {
                                index: i,
                                codes,
                                m,
                                binary,
                                tally,
                            }
                        });
                    let failed = out.is_err();
                    if tx.send(out).is_err() || failed {
                        return; // the consumer stopped, or this worker failed
                    }
                }
            });
        }
        drop(tx);
        let mut consumer = Consumer::new(grid, &input);
        input
            .progress
            .start("classifying, labelling and writing rows", h as u64);
        let mut pending: BTreeMap<usize, StripClasses> = BTreeMap::new();
        let mut expect = 0;
        // `rx` is moved in: an early return drops it, so workers blocked on a full
        // channel get an error instead of waiting forever for the scope to end.
        for msg in rx {
            let strip = msg?;
            pending.insert(strip.index, strip);
            while let Some(strip) = pending.remove(&expect) {
                let y0 = expect * STRIP_ROWS;
                let classes = consumer.strip(
                    y0,
                    strip.codes,
                    strip.binary,
                    strip.m.as_deref(),
                    &strip.tally,
                    input.access,
                    input.areas,
                    input.rows_records,
                    input.placed,
                    raster,
                    sink,
                )?;
                let spent = sink.write_rows(y0, classes)?;
                give(&pool, spent);
                if let Ok(mut p) = tally_pool.lock() {
                    p.push(strip.tally);
                }
                input.progress.advance(STRIP_ROWS.min(h - y0) as u64);
                expect += 1;
            }
        }
        if expect != n_strips {
            return Err(Error::UnsupportedRaster {
                path: raster.path().to_path_buf(),
                reason: format!("only {expect} of {n_strips} strips could be read"),
            });
        }
        input.progress.finish();
        consumer.finish(grid)
    })
}

/// A buffer from `pool` (a new one when it is empty).
fn take(pool: &Mutex<Vec<Vec<u8>>>) -> Vec<u8> {
    pool.lock()
        .ok()
        .and_then(|mut p| p.pop())
        .unwrap_or_default()
}

/// A tally from `pool` (a new one when it is empty).
fn take_tally(pool: &Mutex<Vec<Tally>>, new: impl Fn() -> Tally) -> Tally {
    pool.lock()
        .ok()
        .and_then(|mut p| p.pop())
        .unwrap_or_else(new)
}

/// A buffer back to `pool` for the next strip.
fn give(pool: &Mutex<Vec<Vec<u8>>>, buf: Vec<u8>) {
    if let Ok(mut p) = pool.lock() {
        p.push(buf);
    }
}

/// Worker threads for decoding: the machine's cores (at least 1), or `AREAL_THREADS`.
pub(crate) fn decode_threads() -> usize {
    std::env::var("AREAL_THREADS")
        .ok()
        .and_then(|v| v.parse().ok())
        .filter(|&n: &usize| n > 0)
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
}
