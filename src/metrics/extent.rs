//! `areal extent`: EOO and AOO of a records file, optionally with a range raster.
//!
//! Input: a records file (any format [`crate::records::read_records`] takes) and optionally
//! a class raster as written by `areal range` (`classes.tif`: 0 below the threshold,
//! 1 suitable in M, 2 suitable beyond M, 255 nodata). Without a range every record is used.
//! With one, the records are placed on its grid: a record on a class-0 cell counts as below
//! the threshold (the class says its suitability is below T), one outside the raster or on
//! nodata is excluded; the range model is rebuilt from the raster through the same labeller
//! (true areas as in `areal range`) and the modelled figures, structure, distances and reach
//! are added.

use super::*;
use crate::model::RangeModel;
use crate::patches::Connectivity;
use crate::raster_io::{class, SuitabilityRaster};
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
    let raster = SuitabilityRaster::open(range_path)?;
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
    drop(raster);
    let model = RangeModel::from_class_raster(range_path, connectivity, &rows_records, None)?;
    let patches: Vec<PatchInfo> = model
        .patches()
        .iter()
        .map(|p| PatchInfo {
            id: p.id,
            class: p.class,
            cells: p.cells,
            area_km2: p.area_m2 / 1e6,
            records: p.records,
        })
        .collect();
    let (metrics, cols) = range_metrics(&model, records_path, &recs, opts)?;
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
