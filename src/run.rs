//! `areal range`, orchestrated: inputs -> threshold and M -> the pass (a [`RangeModel`]) ->
//! products (summary, tables, metrics, vectors) -> the run folder, written atomically.
//!
//! Nothing here computes anything itself; each step is a call into its own module, and no
//! product reads back a file the run has written.

use crate::access::{AccessMask, AccessSpec};
use crate::area::CellAreas;
use crate::model::{ModelOptions, RangeModel};
use crate::pass::place::{count_below, place};
use crate::pass::{run_pass, PassInput, RowSink};
use crate::patches::Connectivity;
use crate::progress::ProgressHandle;
use crate::raster_io::SuitabilityRaster;
use crate::records::{read_records, RecordOptions};
use crate::report::{
    build_result, write_csv, BuildInput, PatchRow, RecordRow, SensitivityRow, Summary,
};
use crate::threshold::{omission_threshold, Threshold, ThresholdSpec};
use crate::{Error, Result};
use std::path::Path;

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
    /// The range model's memory budget and spill folder ([`run_range`] spills into the run's
    /// temporary folder).
    pub model: ModelOptions,
    /// Write report.html and map.png ([`run_range`]).
    pub report: bool,
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

/// Compute the range: stream the classes into `sink` and return the summary and tables
/// (without metrics) and the [`RangeModel`] the products read.
pub fn compute_range(
    suitability: &Path,
    records_path: &Path,
    opts: &RangeOptions,
    sink: &mut dyn RowSink,
) -> Result<(RangeResult, RangeModel)> {
    let mut clock = crate::progress::StageClock::new();
    let raster = SuitabilityRaster::open(suitability)?;
    let grid = raster.grid().clone();
    let set = read_records(records_path, &opts.records, &grid.crs_wkt)?;
    let mut warnings = set.warnings.clone();
    let mut placement = place(&set.records, &grid, &raster)?;
    clock.lap("records read and their values sampled");
    let usable: Vec<f64> = placement.placed.iter().filter_map(|p| p.value).collect();
    if usable.is_empty() {
        return Err(Error::NoUsableRecords {
            path: records_path.to_path_buf(),
            reason: format!(
                "none of the {} records lies on a data cell of {} ({} outside the raster, {} on nodata); \
                 check the records' CRS (--records-crs) and the coordinate columns (--lon-col/--lat-col)",
                placement.placed.len(),
                suitability.display(),
                placement.outside,
                placement.on_nodata
            ),
        });
    }
    let threshold_values: Vec<f64> = if opts.keep_duplicates {
        usable
    } else {
        placement.by_cell.values().copied().collect()
    };
    let mut threshold = omission_threshold(&threshold_values, opts.threshold)?;
    // E sensitivity: the rule's T for E = 0, 1, 2, 5, 10 % and the run's own E; every
    // candidate is known before the pass, which counts each cell once against all of them.
    let sens_rules: Vec<(f64, Threshold)> = match opts.threshold {
        ThresholdSpec::Omission(own) => {
            let mut es = vec![0.0, 1.0, 2.0, 5.0, 10.0];
            if !es.contains(&own) {
                es.push(own);
            }
            es.sort_by(f64::total_cmp);
            es.into_iter()
                .map(|e| {
                    omission_threshold(&threshold_values, ThresholdSpec::omission(e)?)
                        .map(|t| (e, t))
                })
                .collect::<Result<_>>()?
        }
        ThresholdSpec::Fixed(_) => Vec::new(),
    };
    let mut cands: Vec<f64> = sens_rules.iter().map(|r| r.1.value).collect();
    cands.sort_by(f64::total_cmp);
    cands.dedup();

    let lonlat: Vec<(f64, f64)> = set.records.iter().map(|r| (r.lon, r.lat)).collect();
    let mut access = AccessMask::build(&grid, &opts.access, &lonlat)?;
    warnings.extend(access.warnings().iter().cloned());
    let mut areas = CellAreas::new(&grid)?;
    clock.lap("accessible area M and cell areas prepared");
    let rows_records = std::mem::take(&mut placement.rows);
    let mut pass =
        |t: f64, access: &mut AccessMask, areas: &mut CellAreas, sink: &mut dyn RowSink| {
            run_pass(
                &raster,
                PassInput {
                    access,
                    areas,
                    t,
                    connectivity: opts.connectivity,
                    rows_records: &rows_records,
                    placed: &mut placement.placed,
                    model: &opts.model,
                    progress: &opts.progress,
                    sensitivity: &cands,
                },
                sink,
            )
        };
    let mut out = pass(threshold.value, &mut access, &mut areas, sink)?;
    clock.lap("classification pass");
    warnings.extend(raster.warnings());
    let binary = out.all_binary;
    if binary {
        if !(threshold.value > 0.0 && threshold.value <= 1.0) {
            // The rule's T does not separate 0 from 1: classify again with 1 = suitable.
            // Sinks are positional, so the second pass replaces the first one's rows.
            drop(out);
            out = pass(1.0, &mut access, &mut areas, sink)?;
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
            records_omitted: count_below(&placement.placed, 1.0),
            ..threshold
        };
    }
    let model = out.model;
    let sensitivity: Vec<SensitivityRow> = if binary {
        Vec::new() // no threshold was applied
    } else {
        sens_rules
            .iter()
            .map(|(e, t)| {
                let k = cands.partition_point(|&c| c < t.value);
                let (all, inside) = out.sensitivity[k];
                SensitivityRow {
                    omission_percent: *e,
                    threshold: t.value,
                    records_dropped: t.records_dropped,
                    area_km2_suitable: all / 1e6,
                    area_km2_inside_accessible: inside / 1e6,
                }
            })
            .collect()
    };
    let mut result = build_result(BuildInput {
        suitability,
        records_path,
        raster: &raster,
        columns: &set.columns,
        opts,
        threshold,
        binary,
        access: &access,
        areas: &areas,
        model: &model,
        placed: placement.placed,
        warnings,
        outside: placement.outside,
        on_nodata: placement.on_nodata,
        occupied_cells: placement.by_cell.len(),
    })?;
    result.summary.sensitivity = sensitivity;
    Ok((result, model))
}

/// Run `areal range`: compute and write classes.tif, patches.csv, records.csv,
/// summary.json (and the vector files with `opts.vectors`) into `out` atomically.
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
    let mut clock = crate::progress::StageClock::new();
    let dir = crate::output::OutputDir::prepare(out, overwrite, &inputs)?;
    // Open the raster once up front so a bad raster fails before anything is created.
    let grid = SuitabilityRaster::open(suitability)?.grid().clone();
    let hashes = crate::batch::runfile::InputHashes::start(suitability, records, opts);
    let mut writer = crate::raster_io::ClassWriter::create(&dir.file("classes.tif"), &grid)?;
    let mut opts_here = opts.clone();
    if opts_here.model.spill_dir.is_none() {
        opts_here.model.spill_dir = Some(dir.file(""));
    }
    // The map needs nodata, which the model does not hold: keep its runs as the rows pass.
    let (mut result, model, nodata) = if opts.report {
        let mut tee = crate::report_html::runs::NodataTee::new(&mut writer, grid.width);
        let (r, m) = compute_range(suitability, records, &opts_here, &mut tee)?;
        (r, m, Some(tee.runs))
    } else {
        let (r, m) = compute_range(suitability, records, &opts_here, &mut writer)?;
        (r, m, None)
    };
    crate::styles::describe_classes(writer.dataset(), &dir.file("classes.tif"), &result.summary)?;
    writer.close()?;
    clock.lap("pass");
    // The vector step's polygons need the model alone: trace and encode them on a second
    // thread while the metrics run (they leave a core idle part of the time).
    let run_dir = dir.file("");
    // The report's map needs no metrics either: drawn beside them too.
    let (to_range, prepared, drawn) = std::thread::scope(|s| -> Result<_> {
        let prep = opts
            .vectors
            .as_ref()
            .map(|v| s.spawn(|| crate::vectors::prepare_vectors(&model, v, &run_dir)));
        let draw = nodata.as_ref().map(|nodata| {
            let before = crate::report_html::ReportData::from_result(&result, model.grid());
            let model = &model;
            s.spawn(move || crate::report_html::draw_run_map(&before, model, nodata))
        });
        let mut to_range = Vec::new();
        if opts.metrics.enabled {
            to_range = crate::metrics::add_range_metrics(
                &mut result,
                &model,
                &opts.metrics,
                opts.vectors.is_some(),
            )?;
            clock.lap("metrics");
        }
        let prepared = prep.map(|h| h.join().unwrap_or_else(|p| std::panic::resume_unwind(p)));
        let drawn = draw.map(|h| h.join().unwrap_or_else(|p| std::panic::resume_unwind(p)));
        Ok((to_range, prepared.transpose()?, drawn.transpose()?))
    })?;
    write_csv(&dir.file("patches.csv"), &result.patches)?;
    write_csv(&dir.file("records.csv"), &result.records)?;
    let json = serde_json::to_string_pretty(&result.summary).expect("summary serialises");
    crate::output::write_text(&dir.file("summary.json"), &(json + "\n"))?;
    if let Some(drawn) = drawn {
        crate::report_html::write_run_report(&dir, &result, &model, drawn)?;
    }
    if let (Some(v), Some(prep)) = (&opts.vectors, prepared) {
        let rows = crate::vectors::RunRows {
            patches: &result.patches,
            nearest_range_km: &to_range,
            records: &result.records,
            summary: &result.summary,
        };
        crate::vectors::write_prepared_vectors(prep, &rows, &run_dir, v)?;
        crate::styles::write_layer_styles(&run_dir)?;
    }
    drop(model); // removes its spill file before the folder is committed
    hashes.write(&dir.file(""), opts)?;
    dir.commit()?;
    clock.lap("tables and commit");
    Ok(result)
}
