//! `areal extent`: EOO and AOO of a records file, optionally with a range raster.
//!
//! Input: a records file (any format [`crate::records::read_records`] takes) and optionally
//! a class raster as written by `areal range` (`classes.tif`: 0 below the threshold,
//! 1 suitable in M, 2 suitable beyond M, 255 nodata). Without a range every record is used.
//! With one, the records are placed on its grid: a record on a class-0 cell counts as below
//! the threshold (the class says its suitability is below T), one outside the raster or on
//! nodata is excluded; the patches are labelled again (true areas as in `areal range`) and
//! the modelled figures, structure, distances and reach are added.

use super::scan::ClassRows;
use super::*;
use crate::area::CellAreas;
use crate::patches::{Connectivity, PatchLabeler};
use crate::raster_io::{class, SuitabilityRaster, STRIP_ROWS};
use crate::records::{read_records, RecordOptions};
use std::collections::BTreeMap;
use std::path::Path;

/// What `areal extent --json` prints.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ExtentReport {
    /// Version of areal.
    pub areal_version: String,
    /// The records file.
    pub records_file: String,
    /// The range raster, if one was given.
    pub range_file: Option<String>,
    /// The metrics (flattened: `eoo_km2`, `aoo_km2`, ... at the top level).
    #[serde(flatten)]
    pub metrics: Metrics,
    /// One row per patch of the range (empty without a range).
    #[serde(skip)]
    pub patches: Vec<(PatchInfo, PatchMetrics)>,
    /// Repairs and skipped rows while reading records.
    pub warnings: Vec<String>,
    /// The usual cautions.
    pub cautions: Vec<String>,
}

/// EOO, AOO and, with `range`, the modelled-range metrics. See the module documentation.
pub fn extent(
    records_path: &Path,
    record_opts: &RecordOptions,
    range: Option<&Path>,
    connectivity: Connectivity,
    opts: &MetricsOptions,
) -> Result<ExtentReport> {
    opts.check()?;
    let cautions = crate::CAUTIONS.iter().map(|s| s.to_string()).collect();
    let Some(range_path) = range else {
        let set = read_records(records_path, record_opts, "")?;
        let recs: Vec<MetricRecord> = set
            .records
            .iter()
            .map(|r| MetricRecord {
                lon: r.lon,
                lat: r.lat,
                usage: RecordUse::Used,
            })
            .collect();
        return Ok(ExtentReport {
            areal_version: env!("CARGO_PKG_VERSION").into(),
            records_file: records_path.display().to_string(),
            range_file: None,
            metrics: records_metrics(records_path, &recs, opts)?,
            patches: Vec::new(),
            warnings: set.warnings,
            cautions,
        });
    };
    let mut raster = SuitabilityRaster::open(range_path)?;
    let grid = raster.grid().clone();
    let set = read_records(records_path, record_opts, &grid.crs_wkt)?;
    let mut warnings = set.warnings.clone();
    let cells: Vec<Option<(usize, usize)>> =
        set.records.iter().map(|r| grid.cell_of(r.x, r.y)).collect();
    let placed: Vec<(usize, usize)> = cells.iter().flatten().copied().collect();
    let values = raster.sample(&placed)?;
    let mut vi = values.into_iter();
    let mut recs = Vec::with_capacity(cells.len());
    let mut rows_records: BTreeMap<usize, Vec<(usize, u64)>> = BTreeMap::new();
    let mut excluded = 0usize;
    for (r, cell) in set.records.iter().zip(&cells) {
        let v = cell.and_then(|_| vi.next().flatten());
        let usage = match v {
            None => RecordUse::Excluded,
            Some(k) if k == class::UNSUITABLE as f64 => RecordUse::BelowThreshold,
            Some(k) if k == class::NODATA as f64 => RecordUse::Excluded,
            Some(_) => RecordUse::Used,
        };
        if usage == RecordUse::Excluded {
            excluded += 1;
        } else if let Some((row, col)) = cell {
            rows_records.entry(*row).or_default().push((*col, 1));
        }
        recs.push(MetricRecord {
            lon: r.lon,
            lat: r.lat,
            usage,
        });
    }
    if excluded > 0 {
        warnings.push(format!(
            "{excluded} record(s) lie outside {} or on its nodata cells and were left out",
            range_path.display()
        ));
    }
    // Label the patches with true areas and record counts, as `areal range` does.
    let mut areas = CellAreas::new(&grid)?;
    let mut labeler = PatchLabeler::new(grid.width, connectivity, grid.wraps_antimeridian());
    let mut strip = Vec::new();
    for y0 in (0..grid.height).step_by(STRIP_ROWS) {
        let n = STRIP_ROWS.min(grid.height - y0);
        raster.read_class_rows(y0, n, &mut strip)?;
        for r in 0..n {
            let row = y0 + r;
            let cls = &strip[r * grid.width..(r + 1) * grid.width];
            let row_areas = areas.row_allow_outside(row)?;
            let empty = Vec::new();
            let rr = rows_records.get(&row).unwrap_or(&empty);
            labeler.push_row(row, cls, &row_areas, rr);
        }
    }
    let patches: Vec<PatchInfo> = labeler
        .finish()
        .iter()
        .map(|p| PatchInfo {
            id: p.id,
            class: p.class,
            cells: p.cells,
            area_km2: p.area_m2 / 1e6,
            records: p.records,
        })
        .collect();
    if let Some(p) = patches.iter().find(|p| !p.area_km2.is_finite()) {
        return Err(Error::UnsupportedRaster {
            path: range_path.to_path_buf(),
            reason: format!(
                "patch {} has cells outside the valid area of the raster's projection, so its true area cannot be measured; set them to nodata or reproject the raster",
                p.id
            ),
        });
    }
    let (metrics, cols) = range_metrics(
        &grid,
        &mut raster,
        range_path,
        connectivity,
        records_path,
        &recs,
        &patches,
        opts,
    )?;
    Ok(ExtentReport {
        areal_version: env!("CARGO_PKG_VERSION").into(),
        records_file: records_path.display().to_string(),
        range_file: Some(range_path.display().to_string()),
        metrics,
        patches: patches.into_iter().zip(cols).collect(),
        warnings,
        cautions,
    })
}
