//! The metrics of a range, from its [`RangeModel`]: the records' figures, the occupied
//! modelled range's EOO and AOO, patch structure, edge-to-edge distances and reach.
//!
//! Everything is read from the model's runs and patch list; no class raster is read. The AOO
//! grid of a run is centred on the records used, and the modelled range is counted on the
//! same grid, so the two AOOs compare.

use super::figures::{figures, record_part, RecordPart};
use super::reach::{self, Corners};
use super::structure::{patch_structure, StructureReport};
use super::*;
use crate::model::RangeModel;
use crate::raster_io::class;
use crate::report::RecordStatus;
use crate::RangeResult;
use std::path::Path;

/// Compute the metrics of `result` from its `model` and store them in
/// `result.summary.metrics` and in the metric columns of `result.patches`. Returns each
/// patch's distance to the nearest other class-1 patch (km, in id order), for the vector
/// layers; empty when the metrics are left out.
pub fn add_range_metrics(
    result: &mut RangeResult,
    model: &RangeModel,
    opts: &MetricsOptions,
    with_range_distance: bool,
) -> Result<Vec<Option<f64>>> {
    let records: Vec<MetricRecord> = result
        .records
        .iter()
        .map(|r| MetricRecord {
            lon: r.lon,
            lat: r.lat,
            usage: match r.status {
                RecordStatus::Used => RecordUse::Used,
                RecordStatus::BelowThreshold => RecordUse::BelowThreshold,
                _ => RecordUse::Excluded,
            },
        })
        .collect();
    let usable = records.iter().any(|r| {
        r.usage == RecordUse::Used || (opts.keep_dropped && r.usage == RecordUse::BelowThreshold)
    });
    if !usable {
        // A range run with no record left (e.g. a threshold above every record) still
        // reports its areas; only the record-based metrics are left out, and it says so.
        result.summary.warnings.push(
            "no record is left for EOO and AOO (all are outside the raster, on nodata or below the threshold; \
             --keep-dropped keeps the last): the metrics section is left out"
                .into(),
        );
        return Ok(Vec::new());
    }
    let records_path = std::path::PathBuf::from(&result.summary.inputs.records);
    let (metrics, cols) = metrics_of(model, &records_path, &records, opts, with_range_distance)?;
    let mut to_range = Vec::with_capacity(cols.len());
    for (row, c) in result.patches.iter_mut().zip(cols) {
        row.nearest_patch_km = c.nearest_patch_km;
        row.nearest_occupied_km = c.nearest_occupied_km;
        row.reachable = c.reachable;
        row.reach_jumps = c.reach_jumps;
        to_range.push(c.nearest_range_km);
    }
    result.summary.metrics = Some(metrics);
    Ok(to_range)
}

/// All metrics of a range. Returns the metrics and one [`PatchMetrics`] per patch, in id order
/// (with `nearest_range_km` filled).
pub fn range_metrics(
    model: &RangeModel,
    records_path: &Path,
    records: &[MetricRecord],
    opts: &MetricsOptions,
) -> Result<(Metrics, Vec<PatchMetrics>)> {
    metrics_of(model, records_path, records, opts, true)
}

/// [`range_metrics`], with the distance to the nearest class-1 patch only when asked (it is
/// for the vector layers).
fn metrics_of(
    model: &RangeModel,
    records_path: &Path,
    records: &[MetricRecord],
    opts: &MetricsOptions,
    with_range_distance: bool,
) -> Result<(Metrics, Vec<PatchMetrics>)> {
    let mut clock = crate::progress::StageClock::new();
    let RecordPart {
        mut metrics,
        grid: aoo_grid,
    } = record_part(records_path, records, opts)?;
    let patches = model.patches();
    let n = patches.len();
    let occupied: Vec<bool> = patches
        .iter()
        .map(|p| p.class == class::INSIDE && p.records > 0)
        .collect();
    let n_occ = occupied.iter().filter(|&&o| o).count();
    let area_km2 = |i: usize| patches[i].area_m2 / 1e6;
    // The boundary corners of every patch, once: the hull's points and the distances.
    let c = Corners::from_model(model)?;
    clock.lap("boundary corners");

    // The modelled figures and the distances between patches are independent: they run
    // side by side (the distances on their own thread; both also spread over the cores), so
    // the serial parts of one fill the cores the other leaves idle.
    let mut modelled = || -> Result<()> {
        if n_occ == 0 {
            metrics.notes.push(
                "no class-1 patch holds a record, so there is no occupied modelled range (no modelled EOO or AOO)".into(),
            );
            return Ok(());
        }
        let cell_km = opts.aoo_cell_km;
        let hull_pts = c.lonlat_of(|p| occupied[p]);
        let aoo_fig = super::aoo_runs::count_runs(
            model,
            &aoo_grid,
            &|id| occupied[id as usize - 1],
            &hull_pts,
        )?;
        let mut fig = figures(&hull_pts, &aoo_fig, cell_km, "occupied modelled range");
        let (occ_area, occ_cells) = (0..n).filter(|&i| occupied[i]).fold((0.0, 0u64), |a, i| {
            (a.0 + area_km2(i), a.1 + patches[i].cells)
        });
        let mean_cell = occ_area / occ_cells.max(1) as f64;
        if mean_cell > cell_km * cell_km {
            fig.notes.push(format!(
                "the raster's cells (about {mean_cell:.3} km2) are larger than the AOO cells ({:.3} km2): each raster cell marks only the grid cell holding its centre, so the modelled AOO understates the occupied area; use a finer raster for the modelled AOO",
                cell_km * cell_km
            ));
        }
        metrics.modelled = Some(ModelledFigures {
            occupied_patches: n_occ,
            aoo_rule: "a grid cell is occupied when the centre of at least one raster cell of an occupied class-1 patch (class 1 holding records) falls inside it".into(),
            eoo_points: "the boundary corners of the occupied class-1 patches".into(),
            figures: fig,
        });
        Ok(())
    };
    let distances = || {
        let any = |_: usize| true;
        let occ = |p: usize| occupied[p];
        let inside = |p: usize| patches[p].class == class::INSIDE;
        let mut targets: Vec<reach::Target> = vec![&any, &occ];
        if with_range_distance {
            targets.push(&inside);
        }
        let mut near = reach::nearest_many(&c, &targets).into_iter();
        let mut next = || near.next().unwrap_or_else(|| vec![None; n]);
        (next(), next(), next())
    };
    let (done, (near, near_occ, near_range)) = std::thread::scope(|scope| {
        let far = scope.spawn(distances);
        let done = modelled();
        (
            done,
            far.join().expect("the distance search does not panic"),
        )
    });
    done?;
    clock.lap("modelled AOO and hull, with the nearest patches beside them");
    let jumps = opts.gap_km.map(|g| reach::reach(&c, |p| occupied[p], g));
    clock.lap("reach");
    let cols: Vec<PatchMetrics> = (0..n)
        .map(|p| PatchMetrics {
            nearest_patch_km: near[p],
            nearest_occupied_km: near_occ[p],
            nearest_range_km: near_range[p],
            reachable: jumps.as_ref().map(|j| j[p].is_some()),
            reach_jumps: jumps.as_ref().and_then(|j| j[p]),
        })
        .collect();
    if let (Some(g), Some(j)) = (opts.gap_km, &jumps) {
        let sum = |f: &dyn Fn(usize) -> bool| -> f64 {
            (0..n).filter(|&p| f(p)).map(area_km2).sum::<f64>() + 0.0
        };
        let reached = j.iter().filter(|x| x.is_some()).count();
        metrics.reach = Some(ReachReport {
            gap_km: g,
            reachable_patches: reached,
            reachable_km2: sum(&|p| j[p].is_some()),
            reachable_outside_accessible_km2: sum(&|p| {
                j[p].is_some() && patches[p].class == class::OUTSIDE
            }),
            unreachable_patches: n - reached,
            unreachable_km2: sum(&|p| j[p].is_none()),
            rule: "starting from the occupied class-1 patches, a suitable patch (inside or beyond M) is reached when it lies within the gap of a reached patch, edge to edge (geodesic between the nearest corners of their boundary cells); jumps repeat".into(),
        });
        if n_occ == 0 {
            metrics
                .notes
                .push("no occupied patch, so no patch is reachable".into());
        }
    }
    let areas = |f: &dyn Fn(usize) -> bool| -> Vec<f64> {
        (0..n).filter(|&i| f(i)).map(area_km2).collect()
    };
    metrics.structure = Some(StructureReport {
        inside_accessible: patch_structure(
            &areas(&|i| patches[i].class == class::INSIDE),
            opts.min_patch_km2,
        ),
        suitable: patch_structure(&areas(&|_| true), opts.min_patch_km2),
    });
    Ok((metrics, cols))
}

/// Each patch's distance (km) to the nearest other class-1 patch, edge to edge, in id order.
pub(crate) fn nearest_range_km(model: &RangeModel) -> Result<Vec<Option<f64>>> {
    let c = Corners::from_model(model)?;
    let patches = model.patches();
    Ok(reach::nearest(&c, |p| patches[p].class == class::INSIDE))
}
