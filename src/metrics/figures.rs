//! Putting the metrics together: records alone ([`records_metrics`]) and records with a
//! class raster and its patches ([`range_metrics`]).
//!
//! Inputs and units as in the parent module. The AOO grid of a run is centred on the records
//! used, and the modelled range is counted on the same grid, so the two AOOs compare.

use super::aoo::{self, AooCounter, AooFigures, AooGrid};
use super::eoo::{hull_area, EOO_METHOD};
use super::reach::{self, Corners};
use super::scan::{self, ClassRows};
use super::structure::{patch_structure, StructureReport};
use super::*;
use crate::patches::Connectivity;
use crate::GridSpec;
use gdal::spatial_ref::SpatialRef;
use std::path::Path;

/// The note for the EOO := AOO rule.
fn eoo_rule_note(hull_km2: f64, aoo_km2: f64) -> String {
    format!(
        "the convex hull ({hull_km2:.3} km2) is smaller than AOO ({aoo_km2:.3} km2), so EOO is reported equal to AOO, as the Guidelines for Using the IUCN Red List Categories and Criteria direct (section 4.9; this rule is quoted from memory, no stored copy of its wording was checked)"
    )
}

/// EOO from `hull_points`, AOO from `aoo`, and the criterion B comparison.
fn figures(hull_points: &[(f64, f64)], aoo: &AooFigures, cell_km: f64, what: &str) -> Figures {
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
struct RecordPart {
    metrics: Metrics,
    grid: AooGrid,
}

fn record_part(
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
    let ct = grid.transform_from(&aoo::wgs84()?)?;
    let (mut xs, mut ys): (Vec<f64>, Vec<f64>) = used.iter().copied().unzip();
    aoo::transform(&ct, &mut xs, &mut ys, "records to the AOO grid CRS")?;
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

/// The grid's CRS (WGS84 lon/lat when it carries none), x = lon / easting.
pub(crate) fn grid_srs(grid: &GridSpec) -> Result<SpatialRef> {
    if grid.crs_wkt.trim().is_empty() {
        return aoo::wgs84();
    }
    Ok(aoo::traditional(
        SpatialRef::from_wkt(&grid.crs_wkt).map_err(|e| Error::Crs {
            what: "range raster CRS".into(),
            reason: e.to_string(),
        })?,
    ))
}

/// All metrics of a range: the records' figures, the occupied modelled range's, patch
/// structure, distances and reach. `classes` must hold the classes the `patches` were
/// labelled from (with `connectivity`); `source` names it in errors. Returns the metrics and
/// one [`PatchMetrics`] per patch, in the order of `patches`.
#[allow(clippy::too_many_arguments)]
pub fn range_metrics(
    grid: &GridSpec,
    classes: &mut dyn ClassRows,
    source: &Path,
    connectivity: Connectivity,
    records_path: &Path,
    records: &[MetricRecord],
    patches: &[PatchInfo],
    opts: &MetricsOptions,
) -> Result<(Metrics, Vec<PatchMetrics>)> {
    let RecordPart {
        mut metrics,
        grid: aoo_grid,
    } = record_part(records_path, records, opts)?;
    let wrap = grid.wraps_antimeridian();
    let sc = scan::scan(classes, grid.width, grid.height, wrap, connectivity, source)?;
    check_patches(&sc, patches, source)?;
    let n = patches.len();
    let occupied: Vec<bool> = patches.iter().map(PatchInfo::occupied).collect();
    let n_occ = occupied.iter().filter(|&&o| o).count();
    let srs = grid_srs(grid)?;
    let gt = grid.geo_transform;

    // Modelled AOO: centres of the cells of occupied patches.
    let ct = aoo_grid.transform_from(&srs)?;
    let mut counter = AooCounter::new(aoo_grid.cell_m);
    let (mut xs, mut ys) = (Vec::new(), Vec::new());
    let flush = |xs: &mut Vec<f64>, ys: &mut Vec<f64>, counter: &mut AooCounter| -> Result<()> {
        aoo::transform(&ct, xs, ys, "range cells to the AOO grid CRS")?;
        for (x, y) in xs.iter().zip(ys.iter()) {
            counter.add(*x, *y);
        }
        xs.clear();
        ys.clear();
        Ok(())
    };
    for (run, &pid) in sc.runs.iter().zip(&sc.run_patch) {
        if !occupied[pid as usize - 1] {
            continue;
        }
        let y = gt[3] + (run.row as f64 + 0.5) * gt[5];
        for c in run.start..run.end {
            xs.push(gt[0] + (c as f64 + 0.5) * gt[1]);
            ys.push(y);
        }
        if xs.len() >= 65_536 {
            flush(&mut xs, &mut ys, &mut counter)?;
        }
    }
    flush(&mut xs, &mut ys, &mut counter)?;

    // Corners of boundary cells, per patch, as (patch index, lat, lon).
    let corners = boundary_corners(grid, &srs, &sc.boundary)?;
    let occ_pts: Vec<(f64, f64)> = corners
        .iter()
        .filter(|c| occupied[c.0 as usize])
        .map(|c| (c.2, c.1))
        .collect();
    if n_occ > 0 {
        let cell_km = opts.aoo_cell_km;
        let mut fig = figures(
            &occ_pts,
            &counter.figures(),
            cell_km,
            "occupied modelled range",
        );
        let (occ_area, occ_cells) = patches
            .iter()
            .filter(|p| p.occupied())
            .fold((0.0, 0u64), |a, p| (a.0 + p.area_km2, a.1 + p.cells));
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
            eoo_points: "the corners of the boundary cells of the occupied class-1 patches".into(),
            figures: fig,
        });
    } else {
        metrics.notes.push(
            "no class-1 patch holds a record, so there is no occupied modelled range (no modelled EOO or AOO)".into(),
        );
    }

    let c = Corners::new(&corners, n);
    let near = reach::nearest(&c, |_| true);
    let near_occ = reach::nearest(&c, |p| occupied[p]);
    let jumps = opts.gap_km.map(|g| reach::reach(&c, |p| occupied[p], g));
    let cols: Vec<PatchMetrics> = (0..n)
        .map(|p| PatchMetrics {
            nearest_patch_km: near[p],
            nearest_occupied_km: near_occ[p],
            reachable: jumps.as_ref().map(|j| j[p].is_some()),
            reach_jumps: jumps.as_ref().and_then(|j| j[p]),
        })
        .collect();
    if let (Some(g), Some(j)) = (opts.gap_km, &jumps) {
        let sum = |f: &dyn Fn(usize) -> bool| -> f64 {
            (0..n)
                .filter(|&p| f(p))
                .map(|p| patches[p].area_km2)
                .sum::<f64>()
                + 0.0
        };
        let reached = j.iter().filter(|x| x.is_some()).count();
        metrics.reach = Some(ReachReport {
            gap_km: g,
            reachable_patches: reached,
            reachable_km2: sum(&|p| j[p].is_some()),
            reachable_outside_accessible_km2: sum(&|p| {
                j[p].is_some() && patches[p].class == crate::raster_io::class::OUTSIDE
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
    let areas = |f: &dyn Fn(&PatchInfo) -> bool| -> Vec<f64> {
        patches
            .iter()
            .filter(|p| f(p))
            .map(|p| p.area_km2)
            .collect()
    };
    metrics.structure = Some(StructureReport {
        inside_accessible: patch_structure(
            &areas(&|p| p.class == crate::raster_io::class::INSIDE),
            opts.min_patch_km2,
        ),
        suitable: patch_structure(&areas(&|_| true), opts.min_patch_km2),
    });
    Ok((metrics, cols))
}

/// The scan must find the same patches as the patch list.
fn check_patches(sc: &scan::Scan, patches: &[PatchInfo], source: &Path) -> Result<()> {
    let mismatch = |what: String| {
        Error::UnsupportedRaster {
        path: source.to_path_buf(),
        reason: format!("the class raster does not match its patch list ({what}); give the classes.tif of the same run and the same --connectivity"),
    }
    };
    if sc.patches != patches.len() {
        return Err(mismatch(format!(
            "{} patches in the raster, {} in the list",
            sc.patches,
            patches.len()
        )));
    }
    let mut cells = vec![0u64; patches.len()];
    for (run, &pid) in sc.runs.iter().zip(&sc.run_patch) {
        let p = &patches[pid as usize - 1];
        if p.id != pid || p.class != run.class {
            return Err(mismatch(format!("patch {pid} differs")));
        }
        cells[pid as usize - 1] += (run.end - run.start) as u64;
    }
    for (p, c) in patches.iter().zip(cells) {
        if p.cells != c {
            return Err(mismatch(format!(
                "patch {} has {c} cells, the list says {}",
                p.id, p.cells
            )));
        }
    }
    Ok(())
}

/// Distinct corners of boundary cells as (patch index, lat, lon), sorted by patch index.
fn boundary_corners(
    grid: &GridSpec,
    srs: &SpatialRef,
    boundary: &[(u32, u32, u32)],
) -> Result<Vec<(u32, f64, f64)>> {
    let w = grid.width as u32;
    let wrap = grid.wraps_antimeridian();
    let mut keys: Vec<(u32, u32, u32)> = Vec::with_capacity(boundary.len() * 4);
    for &(r, c, pid) in boundary {
        for (dr, dc) in [(0, 0), (0, 1), (1, 0), (1, 1)] {
            let mut col = c + dc;
            if wrap && col == w {
                col = 0;
            }
            keys.push((pid - 1, r + dr, col));
        }
    }
    keys.sort_unstable();
    keys.dedup();
    let gt = grid.geo_transform;
    let mut xs: Vec<f64> = keys.iter().map(|k| gt[0] + k.2 as f64 * gt[1]).collect();
    let mut ys: Vec<f64> = keys.iter().map(|k| gt[3] + k.1 as f64 * gt[5]).collect();
    if grid.geographic {
        for x in xs.iter_mut() {
            *x = crate::pipeline::normalise_lon(*x);
        }
        for y in ys.iter_mut() {
            *y = y.clamp(-90.0, 90.0);
        }
    } else {
        let ct = gdal::spatial_ref::CoordTransform::new(srs, &aoo::wgs84()?).map_err(|e| {
            Error::Crs {
                what: "range raster CRS".into(),
                reason: format!("to WGS84: {e}"),
            }
        })?;
        for (cx, cy) in xs.chunks_mut(65_536).zip(ys.chunks_mut(65_536)) {
            aoo::transform(&ct, cx, cy, "range raster cell corners to WGS84")?;
        }
    }
    Ok(keys
        .iter()
        .zip(xs.iter().zip(&ys))
        .map(|(k, (&lon, &lat))| (k.0, lat, lon))
        .collect())
}
