//! `areal range`: the whole job in one streaming pass over the suitability raster.
//!
//! 1. records are read, reprojected and placed on the grid; their cells are sampled;
//! 2. the threshold is computed from those values;
//! 3. one pass over the raster in row strips classifies each cell (0 below threshold,
//!    1 suitable in M, 2 suitable beyond M, 255 nodata), writes the strip to the class
//!    sink, measures areas and feeds the streaming patch labeller.
//!
//! Memory: one strip of values and classes, the labeller's two-row state and per-patch
//! accumulators. The raster is never held whole.

use crate::access::{AccessMask, AccessSpec, RowFiller};
use crate::area::CellAreas;
use crate::area::RowAreas;
use crate::patches::{Connectivity, Patch, PatchLabeler};
use crate::raster_io::{class, StripBuffers, SuitabilityRaster, STRIP_ROWS};
use crate::records::{read_records, Record, RecordOptions};
use crate::report::*;
use crate::threshold::{omission_threshold, Threshold, ThresholdSpec};
use crate::{Error, GridSpec, Result};
use gdal::spatial_ref::{AxisMappingStrategy, CoordTransform, SpatialRef};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::mpsc;
use std::sync::Mutex;

/// Everything `areal range` needs besides the files.
#[derive(Debug, Clone)]
pub struct RangeOptions {
    /// How the threshold is set.
    pub threshold: ThresholdSpec,
    /// How M is made.
    pub access: AccessSpec,
    /// Patch connectivity.
    pub connectivity: Connectivity,
    /// Count every record in the threshold rule, not one value per occupied cell.
    pub keep_duplicates: bool,
    /// How records are read.
    pub records: RecordOptions,
    /// Where to report progress (none by default).
    pub progress: ProgressHandle,
    /// Also write the vector outputs (`--vectors`): range.gpkg and GeoJSON files.
    pub vectors: Option<crate::vectors::VectorOptions>,
    /// EOO, AOO, patch structure and reach (computed by [`run_range`]).
    pub metrics: crate::metrics::MetricsOptions,
    /// Write report.html and map.png ([`run_range`]).
    pub report: bool,
    /// The command line, recorded in summary.json and shown in the report.
    pub command_line: Vec<String>,
}

/// Receives progress of the long stages. Implementations must be cheap: `advance` is
/// called once per strip.
pub trait Progress: Send + Sync {
    /// A stage starts with `total` units of work.
    fn start(&self, stage: &str, total: u64);
    /// `n` more units are done.
    fn advance(&self, n: u64);
    /// The stage is over.
    fn finish(&self);
}

/// An optional, shareable [`Progress`].
#[derive(Clone, Default)]
pub struct ProgressHandle(pub Option<std::sync::Arc<dyn Progress>>);

impl std::fmt::Debug for ProgressHandle {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(if self.0.is_some() {
            "ProgressHandle(Some)"
        } else {
            "ProgressHandle(None)"
        })
    }
}

impl ProgressHandle {
    fn start(&self, stage: &str, total: u64) {
        if let Some(p) = &self.0 {
            p.start(stage, total);
        }
    }
    fn advance(&self, n: u64) {
        if let Some(p) = &self.0 {
            p.advance(n);
        }
    }
    fn finish(&self) {
        if let Some(p) = &self.0 {
            p.finish();
        }
    }
}

/// Where class rows go during the pass.
pub trait RowSink {
    /// Receive whole rows starting at `y0`. A later call for the same rows replaces them.
    /// Returns the buffer for reuse.
    fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<Vec<u8>>;
}

impl RowSink for crate::raster_io::ClassWriter {
    fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<Vec<u8>> {
        crate::raster_io::ClassWriter::write_rows(self, y0, rows)
    }
}

/// Collects every class row in memory (for tests and small grids).
#[derive(Debug, Default)]
pub struct MemorySink {
    width: usize,
    /// Class rows, row-major.
    pub classes: Vec<u8>,
}

impl MemorySink {
    /// A sink for a grid `width` columns wide.
    pub fn new(width: usize) -> Self {
        MemorySink {
            width,
            classes: Vec::new(),
        }
    }
}

impl RowSink for MemorySink {
    fn write_rows(&mut self, y0: usize, rows: Vec<u8>) -> Result<Vec<u8>> {
        let start = y0 * self.width;
        if self.classes.len() < start + rows.len() {
            self.classes.resize(start + rows.len(), class::NODATA);
        }
        self.classes[start..start + rows.len()].copy_from_slice(&rows);
        Ok(rows)
    }
}

/// The result of a range computation.
#[derive(Debug, Clone)]
pub struct RangeResult {
    /// The summary (summary.json).
    pub summary: Summary,
    /// One row per patch (patches.csv).
    pub patches: Vec<PatchRow>,
    /// One row per record (records.csv).
    pub records: Vec<RecordRow>,
}

struct PlacedRecord {
    rec: Record,
    cell: Option<(usize, usize)>,
    value: Option<f64>,
    class: Option<u8>,
}

/// Neumaier-compensated sum.
#[derive(Debug, Default, Clone, Copy)]
struct Sum {
    s: f64,
    c: f64,
}
impl Sum {
    fn add(&mut self, x: f64) {
        let t = self.s + x;
        if self.s.abs() >= x.abs() {
            self.c += (self.s - t) + x;
        } else {
            self.c += (x - t) + self.s;
        }
        self.s = t;
    }
    fn get(&self) -> f64 {
        self.s + self.c
    }
}

#[derive(Default)]
struct PassTotals {
    cells: [u64; 4], // 0, 1, 2, nodata
    area_m2: [Sum; 3],
    accessible_m2: Sum,
    all_binary: bool,
    patches: Vec<Patch>,
}

/// Compute the range and stream the classes into `sink`.
pub fn compute_range(
    suitability: &Path,
    records_path: &Path,
    opts: &RangeOptions,
    sink: &mut dyn RowSink,
) -> Result<RangeResult> {
    let raster = SuitabilityRaster::open(suitability)?;
    let grid = raster.grid().clone();
    let set = read_records(records_path, &opts.records, &grid.crs_wkt)?;
    let mut warnings = set.warnings.clone();

    // Place and sample.
    let mut placed: Vec<PlacedRecord> = set
        .records
        .iter()
        .map(|r| PlacedRecord {
            rec: r.clone(),
            cell: grid.cell_of(r.x, r.y),
            value: None,
            class: None,
        })
        .collect();
    let cells: Vec<(usize, usize)> = placed.iter().filter_map(|p| p.cell).collect();
    let values = raster.sample(&cells)?;
    let mut vi = values.into_iter();
    for p in placed.iter_mut().filter(|p| p.cell.is_some()) {
        p.value = vi.next().flatten();
    }
    let outside = placed.iter().filter(|p| p.cell.is_none()).count();
    let on_nodata = placed
        .iter()
        .filter(|p| p.cell.is_some() && p.value.is_none())
        .count();
    let usable: Vec<&PlacedRecord> = placed.iter().filter(|p| p.value.is_some()).collect();
    if usable.is_empty() {
        return Err(Error::NoUsableRecords {
            path: records_path.to_path_buf(),
            reason: format!(
                "none of the {} records lies on a data cell of {} ({outside} outside the raster, {on_nodata} on nodata); \
                 check the records' CRS (--records-crs) and the coordinate columns (--lon-col/--lat-col)",
                placed.len(),
                suitability.display()
            ),
        });
    }
    let mut by_cell: BTreeMap<(usize, usize), f64> = BTreeMap::new();
    for p in &usable {
        by_cell.insert(p.cell.unwrap(), p.value.unwrap());
    }
    let threshold_values: Vec<f64> = if opts.keep_duplicates {
        usable.iter().map(|p| p.value.unwrap()).collect()
    } else {
        by_cell.values().copied().collect()
    };
    let mut threshold = omission_threshold(&threshold_values, opts.threshold)?;

    // Records per row, for patch record counts and record classes.
    let mut rows_records: BTreeMap<usize, Vec<(usize, usize)>> = BTreeMap::new(); // row -> (col, index)
    for (i, p) in placed.iter().enumerate() {
        if let (Some((r, c)), Some(_)) = (p.cell, p.value) {
            rows_records.entry(r).or_default().push((c, i));
        }
    }

    let lonlat: Vec<(f64, f64)> = set.records.iter().map(|r| (r.lon, r.lat)).collect();
    let mut access = AccessMask::build(&grid, &opts.access, &lonlat)?;
    warnings.extend(access.warnings().iter().cloned());
    let mut areas = CellAreas::new(&grid)?;

    let mut totals = classify_pass(
        &raster,
        &mut access,
        &mut areas,
        threshold.value,
        &opts.connectivity,
        &rows_records,
        &mut placed,
        sink,
        &opts.progress,
    )?;
    warnings.extend(raster.warnings());
    let binary = totals.all_binary;
    if binary {
        if !(threshold.value > 0.0 && threshold.value <= 1.0) {
            // The rule's T does not separate 0 from 1: classify again with 1 = suitable.
            // Sinks are positional, so the second pass replaces the first one's rows.
            totals = classify_pass(
                &raster,
                &mut access,
                &mut areas,
                1.0,
                &opts.connectivity,
                &rows_records,
                &mut placed,
                sink,
                &opts.progress,
            )?;
        }
        let ignored = match opts.threshold {
            ThresholdSpec::Omission(e) => format!("--omission {e}"),
            ThresholdSpec::Fixed(v) => format!("--threshold {v}"),
        };
        warnings.push(format!(
            "{} holds only 0 and 1: treated as a binary range (1 = suitable), thresholding skipped ({ignored} not used)",
            suitability.display()
        ));
        threshold = Threshold {
            value: 1.0,
            method: "binary input: thresholding skipped, cells with value 1 are suitable".into(),
            records_dropped: 0,
            records_omitted: usable_count_below(&placed, 1.0),
            ..threshold
        };
    }
    build_result(BuildInput {
        suitability,
        records_path,
        raster: &raster,
        columns: &set.columns,
        opts,
        threshold,
        binary,
        access: &access,
        areas: &areas,
        totals,
        placed,
        warnings,
        outside,
        on_nodata,
        occupied_cells: by_cell.len(),
    })
}

fn usable_count_below(placed: &[PlacedRecord], t: f64) -> usize {
    placed
        .iter()
        .filter(|p| p.value.is_some_and(|v| v < t))
        .count()
}

/// One streaming pass: classify, measure, label, write.
///
/// Decoding dominates the cost, so `decode_threads` workers (each with its own GDAL
/// handle) read strips and compare them with T; the calling thread receives the strips
/// in order and applies M, measures areas, feeds the labeller and writes the classes.
#[allow(clippy::too_many_arguments)]
fn classify_pass(
    raster: &SuitabilityRaster,
    access: &mut AccessMask,
    areas: &mut CellAreas,
    t: f64,
    connectivity: &Connectivity,
    rows_records: &BTreeMap<usize, Vec<(usize, usize)>>,
    placed: &mut [PlacedRecord],
    sink: &mut dyn RowSink,
    progress: &ProgressHandle,
) -> Result<PassTotals> {
    let grid = raster.grid();
    let (w, h) = (grid.width, grid.height);
    let n_strips = h.div_ceil(STRIP_ROWS);
    let threads = decode_threads().min(n_strips).max(1);
    let next = AtomicUsize::new(0);
    // Strip buffers go round between the workers and the consumer: fresh pages cost
    // more to touch than the work done on them.
    let pool: Mutex<Vec<Vec<u8>>> = Mutex::new(Vec::new());
    // A record buffer on a lon/lat grid is the costly M: the workers apply it themselves.
    let filler = access.row_filler();
    let prefilled = filler.is_some();
    let (tx, rx) = mpsc::sync_channel::<Result<StripClasses>>(2 * threads);
    std::thread::scope(|scope| {
        for _ in 0..threads {
            let tx = tx.clone();
            let next = &next;
            let pool = &pool;
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
                    let mut codes = pool
                        .lock()
                        .map(|mut p| p.pop())
                        .ok()
                        .flatten()
                        .unwrap_or_default();
                    let i = next.fetch_add(1, Ordering::Relaxed);
                    if i >= n_strips {
                        return;
                    }
                    let y0 = i * STRIP_ROWS;
                    let rows = STRIP_ROWS.min(h - y0);
                    let out = reader
                        .classify_rows(y0, rows, t, &mut bufs, &mut codes)
                        .map(|coded| {
                            if let Some(f) = filler.as_mut() {
                                apply_m_in_worker(f, y0, w, &mut codes);
                            }
                            coded
                        })
                        .map(|binary| StripClasses {
                            index: i,
                            codes,
                            binary,
                        });
                    let failed = out.is_err();
                    if tx.send(out).is_err() || failed {
                        return; // the consumer stopped, or this worker failed
                    }
                }
            });
        }
        drop(tx);
        let mut consumer = Consumer {
            width: w,
            totals: PassTotals {
                all_binary: true,
                ..Default::default()
            },
            labeler: PatchLabeler::new(w, *connectivity, grid.wraps_antimeridian()),
            in_m: vec![false; w],
            rec_counts: Vec::new(),
            prefilled,
        };
        progress.start("classifying, labelling and writing rows", h as u64);
        let mut pending: BTreeMap<usize, StripClasses> = BTreeMap::new();
        let mut expect = 0;
        // `rx` is moved in: an early return drops it, so workers blocked on a full
        // channel get an error instead of waiting forever for the scope to end.
        for msg in rx {
            let strip = msg?;
            pending.insert(strip.index, strip);
            while let Some(strip) = pending.remove(&expect) {
                let y0 = expect * STRIP_ROWS;
                let classes =
                    consumer.strip(y0, strip, access, areas, rows_records, placed, raster)?;
                let spent = sink.write_rows(y0, classes)?;
                if let Ok(mut p) = pool.lock() {
                    p.push(spent);
                }
                progress.advance(strip_rows(y0, h) as u64);
                expect += 1;
            }
        }
        if expect != n_strips {
            return Err(Error::UnsupportedRaster {
                path: raster.path().to_path_buf(),
                reason: format!("only {expect} of {n_strips} strips could be read"),
            });
        }
        progress.finish();
        let mut totals = consumer.totals;
        totals.patches = consumer.labeler.finish();
        Ok(totals)
    })
}

fn strip_rows(y0: usize, h: usize) -> usize {
    STRIP_ROWS.min(h - y0)
}

/// Worker threads for decoding: the machine's cores (at least 1), or `AREAL_THREADS`.
fn decode_threads() -> usize {
    std::env::var("AREAL_THREADS")
        .ok()
        .and_then(|v| v.parse().ok())
        .filter(|&n: &usize| n > 0)
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
}

/// Worker code for a cell below the threshold but inside M (only between worker and consumer).
const UNSUITABLE_IN_M: u8 = 3;

/// Apply M in a worker: codes 0/1 become 0 (below T, outside M), 3 (below T, in M),
/// 1 (suitable, in M) or 2 (suitable, beyond M); 255 stays.
fn apply_m_in_worker(filler: &mut RowFiller, y0: usize, w: usize, codes: &mut [u8]) {
    let mut in_m = vec![false; w];
    for (r, row) in codes.chunks_mut(w).enumerate() {
        filler.fill_row(y0 + r, &mut in_m);
        for (k, &m) in row.iter_mut().zip(&in_m) {
            let m = m as u8;
            *k = match *k {
                class::NODATA => class::NODATA,
                1 => 2 - m,
                _ => UNSUITABLE_IN_M * m,
            };
        }
    }
}

/// A decoded strip: 0 below T, 1 suitable, 255 nodata (and, when the workers apply M,
/// the codes of [`apply_m_in_worker`]).
struct StripClasses {
    index: usize,
    codes: Vec<u8>,
    binary: bool,
}

struct Consumer {
    width: usize,
    totals: PassTotals,
    labeler: PatchLabeler,
    in_m: Vec<bool>,
    rec_counts: Vec<(usize, u64)>,
    /// The workers applied M already (codes 0..=3, see [`apply_m_in_worker`]).
    prefilled: bool,
}

impl Consumer {
    /// Apply M, measure, label; returns the finished class rows.
    #[allow(clippy::too_many_arguments)]
    fn strip(
        &mut self,
        y0: usize,
        strip: StripClasses,
        access: &mut AccessMask,
        areas: &mut CellAreas,
        rows_records: &BTreeMap<usize, Vec<(usize, usize)>>,
        placed: &mut [PlacedRecord],
        raster: &SuitabilityRaster,
    ) -> Result<Vec<u8>> {
        let w = self.width;
        let mut classes = strip.codes;
        self.totals.all_binary &= strip.binary;
        let whole = access.is_whole_raster();
        for (r, cls) in classes.chunks_mut(w).enumerate() {
            let row = y0 + r;
            if self.prefilled {
                // Codes from the workers: 3 = below threshold in M, back to 0.
                for (k, m) in cls.iter_mut().zip(self.in_m.iter_mut()) {
                    *m = (*k == class::INSIDE) | (*k == UNSUITABLE_IN_M);
                    *k -= (*k == UNSUITABLE_IN_M) as u8 * UNSUITABLE_IN_M;
                }
            } else if !whole {
                access.fill_row(row, &mut self.in_m)?;
                // Suitable cells outside M become class 2 (branch-free so the loops vectorise).
                for (k, &m) in cls.iter_mut().zip(&self.in_m) {
                    *k += (*k == class::INSIDE) as u8 & (m as u8 ^ 1);
                }
            }
            let row_areas = areas.row_allow_outside(row)?;
            // u32 sums widen less than u64 counts in the vector loops (a row has < 2^32 cells).
            let count = |v: u8| cls.iter().map(|&k| (k == v) as u32).sum::<u32>() as u64;
            let (n0, n1, nd) = (count(0), count(1), count(class::NODATA));
            let counts = [n0, n1, w as u64 - n0 - n1 - nd, nd];
            let m_cells = if whole {
                w as u64 - nd
            } else {
                cls.iter()
                    .zip(&self.in_m)
                    .map(|(&k, &m)| (m as u32) & (k != class::NODATA) as u32)
                    .sum::<u32>() as u64
            };
            for k in 0..4 {
                self.totals.cells[k] += counts[k];
            }
            match &row_areas {
                RowAreas::Uniform(a) => {
                    for k in 0..3 {
                        self.totals.area_m2[k].add(counts[k] as f64 * a);
                    }
                    self.totals.accessible_m2.add(m_cells as f64 * a);
                }
                RowAreas::PerCell(v) => {
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
                        if whole || self.in_m[c] {
                            m += a;
                        }
                    }
                    for k in 0..3 {
                        self.totals.area_m2[k].add(sums[k]);
                    }
                    self.totals.accessible_m2.add(m);
                }
            }
            self.rec_counts.clear();
            if let Some(list) = rows_records.get(&row) {
                for &(c, i) in list {
                    placed[i].class = Some(cls[c]);
                    self.rec_counts.push((c, 1));
                }
            }
            self.labeler
                .push_row(row, cls, &row_areas, &self.rec_counts);
        }
        Ok(classes)
    }
}

struct BuildInput<'a> {
    suitability: &'a Path,
    records_path: &'a Path,
    raster: &'a SuitabilityRaster,
    columns: &'a (String, String),
    opts: &'a RangeOptions,
    threshold: Threshold,
    binary: bool,
    access: &'a AccessMask,
    areas: &'a CellAreas,
    totals: PassTotals,
    placed: Vec<PlacedRecord>,
    warnings: Vec<String>,
    outside: usize,
    on_nodata: usize,
    occupied_cells: usize,
}

fn build_result(b: BuildInput<'_>) -> Result<RangeResult> {
    let grid = b.raster.grid();
    let km2 = |s: &Sum| s.get() / 1e6;
    let to_lonlat = LonLat::new(grid)?;
    let patches: Vec<PatchRow> = b
        .totals
        .patches
        .iter()
        .map(|p| to_lonlat.patch_row(grid, p))
        .collect::<Result<_>>()?;
    let occupied: Vec<&PatchRow> = patches
        .iter()
        .filter(|p| p.class == class::INSIDE && p.records > 0)
        .collect();
    let mut excluded = Vec::new();
    let mut records = Vec::with_capacity(b.placed.len());
    for p in &b.placed {
        let status = match (p.cell, p.value) {
            (None, _) => "outside_raster",
            (Some(_), None) => "on_nodata",
            (Some(_), Some(v)) if v < b.threshold.value => "below_threshold",
            _ => "used",
        };
        if matches!(status, "outside_raster" | "on_nodata") {
            excluded.push(ExcludedRecord {
                origin: p.rec.origin.clone(),
                id: p.rec.id.clone(),
                reason: if status == "outside_raster" {
                    "outside the raster"
                } else {
                    "on a nodata cell"
                }
                .into(),
            });
        }
        records.push(RecordRow {
            origin: p.rec.origin.clone(),
            id: p.rec.id.clone(),
            lon: p.rec.lon,
            lat: p.rec.lat,
            row: p.cell.map(|c| c.0),
            col: p.cell.map(|c| c.1),
            suitability: p.value,
            class: p.class.or(p.cell.map(|_| class::NODATA)),
            status,
        });
    }
    let mut warnings = b.warnings;
    if b.outside > 0 {
        warnings.push(format!(
            "{} record(s) lie outside the raster and were excluded (see records.excluded)",
            b.outside
        ));
    }
    if b.on_nodata > 0 {
        warnings.push(format!(
            "{} record(s) lie on nodata cells and were excluded (see records.excluded)",
            b.on_nodata
        ));
    }
    if b.access.is_whole_raster() {
        warnings.push("no accessible area given (--accessible, --buffer-km, --hull-buffer-km): the whole raster counts as M".into());
    }
    let t = &b.totals;
    let srs = SpatialRef::from_wkt(&grid.crs_wkt)
        .map_err(Error::gdal(b.suitability, "reading the CRS"))?;
    let summary = Summary {
        areal_version: env!("CARGO_PKG_VERSION").into(),
        inputs: InputsReport {
            suitability: b.suitability.display().to_string(),
            records: b.records_path.display().to_string(),
            record_columns: [b.columns.0.clone(), b.columns.1.clone()],
            width: grid.width,
            height: grid.height,
            geo_transform: grid.geo_transform,
            crs_name: srs.name().unwrap_or_else(|| "unnamed CRS".into()),
            crs_geographic: grid.geographic,
            wraps_antimeridian: grid.wraps_antimeridian(),
            data_type: b.raster.data_type().into(),
            nodata: b.raster.nodata(),
        },
        threshold: ThresholdReport {
            value: b.threshold.value,
            method: b.threshold.method.clone(),
            omission_percent: match b.opts.threshold {
                ThresholdSpec::Omission(e) if !b.binary => Some(e),
                _ => None,
            },
            records_used: b.threshold.records_used,
            records_dropped: b.threshold.records_dropped,
            records_omitted: b.threshold.records_omitted,
            one_value_per_cell: !b.opts.keep_duplicates,
            binary_input: b.binary,
        },
        records: RecordsReport {
            total: b.placed.len(),
            usable: b.placed.len() - b.outside - b.on_nodata,
            outside_raster: b.outside,
            on_nodata: b.on_nodata,
            occupied_cells: b.occupied_cells,
            excluded,
        },
        accessible: AccessReport {
            description: b.access.description(),
            whole_raster: b.access.is_whole_raster(),
            polygon: b.opts.access.polygon.as_ref().map(|p| {
                std::fs::canonicalize(p)
                    .unwrap_or_else(|_| p.clone())
                    .display()
                    .to_string()
            }),
            buffer_km: b.opts.access.buffer_km,
            hull_buffer_km: b.opts.access.hull_buffer_km,
        },
        area_km2: AreaReport {
            suitable: (t.area_m2[1].get() + t.area_m2[2].get()) / 1e6,
            inside_accessible: km2(&t.area_m2[1]),
            outside_accessible: km2(&t.area_m2[2]),
            occupied: occupied.iter().map(|p| p.area_km2).sum(),
            unsuitable: km2(&t.area_m2[0]),
            accessible: km2(&t.accessible_m2),
        },
        cells: CellReport {
            unsuitable: t.cells[0],
            inside_accessible: t.cells[1],
            outside_accessible: t.cells[2],
            nodata: t.cells[3],
        },
        patches: PatchReport {
            inside_accessible: patches.iter().filter(|p| p.class == class::INSIDE).count(),
            outside_accessible: patches.iter().filter(|p| p.class == class::OUTSIDE).count(),
            occupied: occupied.len(),
            connectivity: match b.opts.connectivity {
                Connectivity::Eight => 8,
                Connectivity::Four => 4,
            },
        },
        area_method: b.areas.describe(),
        warnings,
        cautions: CAUTIONS.iter().map(|s| s.to_string()).collect(),
        metrics: None,
        sensitivity: Vec::new(),
        command_line: b.opts.command_line.clone(),
    };
    let mut summary = summary;
    crate::review::review(&mut summary);
    Ok(RangeResult {
        summary,
        patches,
        records,
    })
}

/// Pixel positions to WGS84 lon/lat.
struct LonLat {
    to_wgs84: Option<CoordTransform>,
}

impl LonLat {
    fn new(grid: &GridSpec) -> Result<Self> {
        if grid.geographic {
            return Ok(LonLat { to_wgs84: None });
        }
        let crs_err = |e: gdal::errors::GdalError| Error::Crs {
            what: "raster CRS".into(),
            reason: e.to_string(),
        };
        let mut src = SpatialRef::from_wkt(&grid.crs_wkt).map_err(crs_err)?;
        src.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
        let mut dst = SpatialRef::from_epsg(4326).map_err(crs_err)?;
        dst.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
        Ok(LonLat {
            to_wgs84: Some(CoordTransform::new(&src, &dst).map_err(crs_err)?),
        })
    }

    fn point(&self, x: f64, y: f64) -> Result<(f64, f64)> {
        match &self.to_wgs84 {
            None => Ok((normalise_lon(x), y)),
            Some(ct) => {
                let (mut xs, mut ys) = ([x], [y]);
                ct.transform_coords(&mut xs, &mut ys, &mut [])
                    .map_err(|e| Error::Crs {
                        what: "raster CRS".into(),
                        reason: format!("to WGS84: {e}"),
                    })?;
                Ok((xs[0], ys[0]))
            }
        }
    }

    fn patch_row(&self, grid: &GridSpec, p: &Patch) -> Result<PatchRow> {
        let gt = grid.geo_transform;
        let px = |col: f64, row: f64| (gt[0] + col * gt[1], gt[3] + row * gt[5]);
        let (cx, cy) = px(p.centroid_col, p.centroid_row);
        let (centroid_lon, centroid_lat) = self.point(cx, cy)?;
        let last_col = (p.col_start + p.col_len - 1) % grid.width;
        let (x0, y_top) = px(p.col_start as f64, p.row_min as f64);
        let (x1, y_bot) = px(last_col as f64 + 1.0, p.row_max as f64 + 1.0);
        let (min_lon, min_lat, max_lon, max_lat) = match &self.to_wgs84 {
            None => {
                let (mut w, mut e) = (normalise_lon(x0), normalise_lon(x1));
                if p.col_len >= grid.width && grid.wraps_antimeridian() {
                    (w, e) = (-180.0, 180.0);
                } else if e == -180.0 {
                    e = 180.0;
                }
                (w, y_bot, e, y_top)
            }
            Some(ct) => {
                let b = ct
                    .transform_bounds(&[x0, y_bot, x1, y_top], 21)
                    .map_err(|e| Error::Crs {
                        what: "raster CRS".into(),
                        reason: format!("patch box to WGS84: {e}"),
                    })?;
                (b[0], b[1], b[2], b[3])
            }
        };
        Ok(PatchRow {
            patch_id: p.id,
            class: p.class,
            cells: p.cells,
            area_km2: p.area_m2 / 1e6,
            centroid_lon,
            centroid_lat,
            min_lon,
            min_lat,
            max_lon,
            max_lat,
            records: p.records,
            nearest_patch_km: None,
            nearest_occupied_km: None,
            reachable: None,
            reach_jumps: None,
        })
    }
}

/// Longitude into [-180, 180).
pub(crate) fn normalise_lon(lon: f64) -> f64 {
    let l = (lon + 180.0).rem_euclid(360.0) - 180.0;
    if l >= 180.0 {
        l - 360.0
    } else {
        l
    }
}

/// Run `areal range`: compute and write classes.tif, patches.csv, records.csv and
/// summary.json into `out` atomically.
pub fn run_range(
    suitability: &Path,
    records: &Path,
    opts: &RangeOptions,
    out: &Path,
    overwrite: bool,
) -> Result<RangeResult> {
    let mut inputs: Vec<&Path> = vec![suitability, records];
    if let Some(p) = &opts.access.polygon {
        inputs.push(p);
    }
    let dir = crate::output::OutputDir::prepare(out, overwrite, &inputs)?;
    // Open the raster once up front so a bad raster fails before anything is created.
    let grid = SuitabilityRaster::open(suitability)?.grid().clone();
    let classes_path: PathBuf = dir.file("classes.tif");
    let mut writer = crate::raster_io::ClassWriter::create(&classes_path, &grid)?;
    // The map is drawn from the class rows as the pass writes them, kept as runs.
    let (mut result, class_runs) = if opts.report {
        let mut tee = crate::report_html::runs::RunsTee::new(&mut writer, grid.width);
        let r = compute_range(suitability, records, opts, &mut tee)?;
        (r, Some(tee.runs))
    } else {
        (
            compute_range(suitability, records, opts, &mut writer)?,
            None,
        )
    };
    writer.close()?;
    if opts.metrics.enabled {
        let mut classes = SuitabilityRaster::open(&classes_path)?;
        crate::metrics::add_range_metrics(&mut result, &grid, &mut classes, &classes_path, opts)?;
    }
    write_csv(&dir.file("patches.csv"), &result.patches)?;
    write_csv(&dir.file("records.csv"), &result.records)?;
    let json = serde_json::to_string_pretty(&result.summary).expect("summary serialises");
    crate::output::write_text(&dir.file("summary.json"), &(json + "\n"))?;
    if let Some(runs) = &class_runs {
        crate::report_html::write_run_report(&dir, &result, &grid, runs, &opts.access)?;
    }
    if let Some(v) = &opts.vectors {
        let run_dir = classes_path
            .parent()
            .expect("classes.tif is inside the output folder");
        crate::vectors::write_vectors(run_dir, run_dir, &opts.access, None, v)?;
    }
    dir.commit()?;
    Ok(result)
}
