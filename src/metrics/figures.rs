//! Putting the metrics together: the records' figures ([`records_metrics`]); the range's are
//! added from the model in `range.rs`.
//!
//! Inputs and units as in the parent module. The AOO grid of a run is centred on the records
//! used, and the modelled range is counted on the same grid, so the two AOOs compare.

use super::aoo::{self, AooCounter, AooFigures, AooGrid};
use super::eoo::{hull_area, EOO_METHOD};
use super::*;
use std::path::Path;

/// The note for the EOO := AOO rule.
fn eoo_rule_note(hull_km2: f64, aoo_km2: f64) -> String {
    format!(
        "the convex hull ({hull_km2:.3} km2) is smaller than AOO ({aoo_km2:.3} km2), so EOO is reported equal to AOO, as the Guidelines for Using the IUCN Red List Categories and Criteria direct (section 4.9; this rule is quoted from memory, no stored copy of its wording was checked)"
    )
}

/// EOO from `hull_points`, AOO from `aoo`, and the criterion B comparison.
pub(super) fn figures(
    hull_points: &[(f64, f64)],
    aoo: &AooFigures,
    cell_km: f64,
    what: &str,
) -> Figures {
    let hull = hull_area(hull_points);
    let aoo_km2 = aoo.min_km2();
    let mut notes: Vec<String> = hull.note.iter().cloned().collect();
    let mut set = false;
    let eoo = hull.area_km2.map(|a| {
        if a < aoo_km2 {
            set = true;
            notes.push(eoo_rule_note(a, aoo_km2));
            aoo_km2
        } else {
            a
        }
    });
    Figures {
        eoo_km2: eoo,
        eoo_method: EOO_METHOD.into(),
        eoo_hull_km2: hull.area_km2,
        eoo_hull_vertices: hull.vertices,
        eoo_set_to_aoo: set,
        aoo_km2,
        aoo_min_km2: aoo_km2,
        aoo_max_km2: aoo.max_km2(),
        aoo_cell_km: cell_km,
        aoo_cells: aoo.min_cells,
        aoo_origin_km: [aoo.origin_m.0 / 1000.0, aoo.origin_m.1 / 1000.0],
        distinct_points: hull.distinct_points,
        criterion_b: super::criterion_b::compare(eoo, aoo_km2, what),
        notes,
    }
}

/// The records' figures and the grid they were counted on.
pub(super) struct RecordPart {
    pub(super) metrics: Metrics,
    pub(super) grid: AooGrid,
}

pub(super) fn record_part(
    records_path: &Path,
    records: &[MetricRecord],
    opts: &MetricsOptions,
) -> Result<RecordPart> {
    opts.check()?;
    let below = records
        .iter()
        .filter(|r| r.usage == RecordUse::BelowThreshold)
        .count();
    let used: Vec<(f64, f64)> = records
        .iter()
        .filter(|r| match r.usage {
            RecordUse::Used => true,
            RecordUse::BelowThreshold => opts.keep_dropped,
            RecordUse::Excluded => false,
        })
        .filter(|r| r.lon.is_finite() && r.lat.is_finite())
        .map(|r| (r.lon, r.lat))
        .collect();
    if used.is_empty() {
        return Err(Error::NoUsableRecords {
            path: records_path.to_path_buf(),
            reason: "no record is left for EOO and AOO (all are outside the raster, on nodata or below the threshold; --keep-dropped keeps the last)".into(),
        });
    }
    let (lon0, lat0) = aoo::centre_of(&used);
    let grid = AooGrid::new(lon0, lat0, opts.aoo_cell_km)?;
    let ct = grid.transform_from(&crate::crs::wgs84()?)?;
    let (mut xs, mut ys): (Vec<f64>, Vec<f64>) = used.iter().copied().unzip();
    crate::crs::transform_points(&ct, &mut xs, &mut ys, "records to the AOO grid CRS")?;
    let mut counter = AooCounter::new(grid.cell_m);
    for (x, y) in xs.iter().zip(&ys) {
        counter.add(*x, *y);
    }
    let rec = figures(&used, &counter.figures(), opts.aoo_cell_km, "records");
    let w = opts.aoo_cell_km;
    let metrics = Metrics {
        records_used: used.len(),
        records_below_threshold: below,
        keep_dropped: opts.keep_dropped,
        records: rec,
        aoo_grid: AooGridReport {
            crs: grid.proj.clone(),
            cell_km: w,
            origins: format!(
                "16 origins: x and y offsets of 0, {}, {} and {} km (0, 1/4, 1/2, 3/4 of a cell) from the CRS origin; AOO is the minimum over them",
                w / 4.0,
                w / 2.0,
                3.0 * w / 4.0
            ),
        },
        modelled: None,
        structure: None,
        reach: None,
        notes: Vec::new(),
    };
    Ok(RecordPart { metrics, grid })
}

/// EOO and AOO of the records alone.
pub fn records_metrics(
    records_path: &Path,
    records: &[MetricRecord],
    opts: &MetricsOptions,
) -> Result<Metrics> {
    Ok(record_part(records_path, records, opts)?.metrics)
}
