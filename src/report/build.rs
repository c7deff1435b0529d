//! From the range model and the placed records to the summary and the two tables.

use super::*;
use crate::access::AccessMask;
use crate::area::CellAreas;
use crate::crs::LonLat;
use crate::grid::normalise_lon;
use crate::model::RangeModel;
use crate::pass::place::PlacedRecord;
use crate::patches::{Connectivity, Patch};
use crate::raster_io::{class, SuitabilityRaster};
use crate::threshold::{Threshold, ThresholdSpec};
use crate::{GridSpec, RangeOptions, RangeResult};

/// What the summary and tables are made from.
pub(crate) struct BuildInput<'a> {
    pub(crate) suitability: &'a Path,
    pub(crate) records_path: &'a Path,
    pub(crate) raster: &'a SuitabilityRaster,
    pub(crate) columns: &'a (String, String),
    pub(crate) opts: &'a RangeOptions,
    pub(crate) threshold: Threshold,
    pub(crate) binary: bool,
    pub(crate) access: &'a AccessMask,
    pub(crate) areas: &'a CellAreas,
    pub(crate) model: &'a RangeModel,
    pub(crate) placed: Vec<PlacedRecord>,
    pub(crate) warnings: Vec<String>,
    pub(crate) outside: usize,
    pub(crate) on_nodata: usize,
    pub(crate) occupied_cells: usize,
}

/// The summary, the patch rows and the record rows of a range.
pub(crate) fn build_result(b: BuildInput<'_>) -> Result<RangeResult> {
    let grid = b.raster.grid();
    let to_lonlat = LonLat::new(grid)?;
    let patches: Vec<PatchRow> = b
        .model
        .patches()
        .iter()
        .map(|p| patch_row(&to_lonlat, grid, p))
        .collect::<Result<_>>()?;
    let occupied: Vec<&PatchRow> = patches
        .iter()
        .filter(|p| p.class == class::INSIDE && p.records > 0)
        .collect();
    let mut excluded = Vec::new();
    let mut records = Vec::with_capacity(b.placed.len());
    for p in &b.placed {
        let status = p.status(b.threshold.value);
        if status.excluded() {
            excluded.push(ExcludedRecord {
                origin: p.rec.origin.clone(),
                id: p.rec.id.clone(),
                reason: if status == RecordStatus::OutsideRaster {
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
    let t = b.model.totals();
    let srs = crate::crs::from_wkt(&grid.crs_wkt)
        .map_err(Error::gdal(b.suitability, "reading the CRS"))?;
    let mut summary = Summary {
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
            suitable: (t.area_m2_inside + t.area_m2_outside) / 1e6,
            inside_accessible: t.area_m2_inside / 1e6,
            outside_accessible: t.area_m2_outside / 1e6,
            occupied: occupied.iter().map(|p| p.area_km2).sum(),
            unsuitable: t.area_m2_unsuitable / 1e6,
            accessible: t.area_m2_accessible / 1e6,
        },
        cells: CellReport {
            unsuitable: t.cells_unsuitable,
            inside_accessible: t.cells_inside,
            outside_accessible: t.cells_outside,
            nodata: t.cells_nodata,
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
        command_line: canonical_command(b.suitability, b.records_path, b.opts),
    };
    crate::review::review(&mut summary);
    Ok(RangeResult {
        summary,
        patches,
        records,
    })
}

/// A patch's table row: its pixel-space statistics in WGS84 lon/lat.
pub(crate) fn patch_row(to: &LonLat, grid: &GridSpec, p: &Patch) -> Result<PatchRow> {
    let gt = grid.geo_transform;
    let px = |col: f64, row: f64| (gt[0] + col * gt[1], gt[3] + row * gt[5]);
    let (cx, cy) = px(p.centroid_col, p.centroid_row);
    let (centroid_lon, centroid_lat) = to.point(cx, cy)?;
    let last_col = (p.col_start + p.col_len - 1) % grid.width;
    let (x0, y_top) = px(p.col_start as f64, p.row_min as f64);
    let (x1, y_bot) = px(last_col as f64 + 1.0, p.row_max as f64 + 1.0);
    let (min_lon, min_lat, max_lon, max_lat) = match to.transform() {
        None => {
            let (mut w, mut e) = (normalise_lon(x0), normalise_lon(x1));
            if p.col_len >= grid.width && grid.wraps_antimeridian() {
                (w, e) = (-180.0, 180.0);
            } else if e == -180.0 {
                e = 180.0; // the eastern edge of a box that ends on the antimeridian
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

/// The `areal range` command that reproduces the run, options in a fixed order with their
/// values as the run file records them (defaults and `--out` left out), so that identical runs
/// have identical summaries however they were started (a shell, a batch, `areal rerun`).
fn canonical_command(suitability: &Path, records: &Path, opts: &RangeOptions) -> Vec<String> {
    let mut cmd: Vec<String> = ["areal", "range", "--suitability"]
        .into_iter()
        .map(String::from)
        .collect();
    cmd.push(suitability.display().to_string());
    cmd.push("--records".into());
    cmd.push(records.display().to_string());
    for (k, v) in crate::batch::settings::from_range_options(opts) {
        let flag = format!("--{}", k.replace('_', "-"));
        match v.as_str() {
            "" | "false" => {}
            "true" => cmd.push(flag),
            _ if k == "aoo_cell_km" && v == "2" => {}
            _ if k == "connectivity" && v == "8" => {}
            _ if k == "records_crs" && v == "EPSG:4326" => {}
            _ => {
                cmd.push(flag);
                cmd.push(v);
            }
        }
    }
    cmd
}
