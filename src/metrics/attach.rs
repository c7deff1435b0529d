//! Adding the metrics to a computed range: the `metrics` section of the summary and the
//! metric columns of the patch rows.
//!
//! Input: a [`RangeResult`] from [`crate::compute_range`], its grid, and its class rows again
//! (the `classes.tif` just written, or a [`super::InMemoryClasses`] over a
//! [`crate::MemorySink`]). Record statuses map to [`RecordUse`]: `used` is used,
//! `below_threshold` is dropped by the threshold, anything else is excluded.

use super::scan::ClassRows;
use super::*;
use crate::{GridSpec, RangeOptions, RangeResult};
use std::path::Path;

/// Compute the metrics of `result` and store them in `result.summary.metrics` and in the
/// metric columns of `result.patches`. Does nothing when `opts.metrics.enabled` is false.
pub fn add_range_metrics(
    result: &mut RangeResult,
    grid: &GridSpec,
    classes: &mut dyn ClassRows,
    classes_path: &Path,
    opts: &RangeOptions,
) -> Result<()> {
    if !opts.metrics.enabled {
        return Ok(());
    }
    let records: Vec<MetricRecord> = result
        .records
        .iter()
        .map(|r| MetricRecord {
            lon: r.lon,
            lat: r.lat,
            usage: match r.status {
                "used" => RecordUse::Used,
                "below_threshold" => RecordUse::BelowThreshold,
                _ => RecordUse::Excluded,
            },
        })
        .collect();
    let usable = records.iter().any(|r| {
        r.usage == RecordUse::Used
            || (opts.metrics.keep_dropped && r.usage == RecordUse::BelowThreshold)
    });
    if !usable {
        // A range run with no record left (e.g. a threshold above every record) still
        // reports its areas; only the record-based metrics are left out, and it says so.
        result.summary.warnings.push(
            "no record is left for EOO and AOO (all are outside the raster, on nodata or below the threshold; \
             --keep-dropped keeps the last): the metrics section is left out"
                .into(),
        );
        return Ok(());
    }
    let patches: Vec<PatchInfo> = result
        .patches
        .iter()
        .map(|p| PatchInfo {
            id: p.patch_id,
            class: p.class,
            cells: p.cells,
            area_km2: p.area_km2,
            records: p.records,
        })
        .collect();
    let records_path = std::path::PathBuf::from(&result.summary.inputs.records);
    let (metrics, cols) = range_metrics(
        grid,
        classes,
        classes_path,
        opts.connectivity,
        &records_path,
        &records,
        &patches,
        &opts.metrics,
    )?;
    for (row, c) in result.patches.iter_mut().zip(cols) {
        row.nearest_patch_km = c.nearest_patch_km;
        row.nearest_occupied_km = c.nearest_occupied_km;
        row.reachable = c.reachable;
        row.reach_jumps = c.reach_jumps;
    }
    result.summary.metrics = Some(metrics);
    Ok(())
}
