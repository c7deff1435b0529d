//! `areal change`: range change between the present and one or more future suitability
//! rasters, under no, limited and full dispersal (docs/change.md).
//!
//! 1. The present run is `areal range` itself ([`compute_range`]): T from the records, M,
//!    classes.tif, patches, metrics. Its class rows are kept as runs on their way to
//!    classes.tif ([`present::TeeSink`]), so the present raster is decoded once.
//! 2. Every future raster must share the present grid (size, geotransform, CRS).
//! 3. One pass streams all futures in lockstep ([`pass`]), codes each cell against the
//!    present range with the same T, decides "within reach" ([`reach`]) for gains, and writes
//!    change.tif per future (and agreement.tif with several).
//! 4. summary.json gains the `change` section ([`report`]); change.csv lists the patches.

mod occupancy;
mod pass;
mod present;
mod reach;
mod report;
mod report_files;
#[cfg(test)]
mod tests;

pub use pass::code;
pub use report::{ChangeAoo, ChangePatchRow, ChangeReport};

use crate::raster_io::{ClassWriter, SuitabilityRaster};
use crate::report::{write_csv, RecordStatus};
use crate::styles::ClassStyle;
use crate::{compute_range, Error, GridSpec, RangeOptions, RangeResult, Result, RowSink, Summary};
use gdal::spatial_ref::SpatialRef;
use serde::Serialize;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// Most future rasters in one run.
pub const MAX_FUTURES: usize = 20;

/// Options of `areal change` besides the files.
#[derive(Debug, Clone)]
pub struct ChangeOptions {
    /// The present run's options (threshold, M, connectivity, records, metrics).
    pub range: RangeOptions,
    /// Dispersal distance, km (finite, >= 0); None: every gain is out of reach.
    pub dispersal_km: Option<f64>,
}

/// summary.json of a change run: the present run's sections plus `change`.
#[derive(Debug, Clone, Serialize)]
pub struct ChangeSummary {
    /// The present run, as `areal range` reports it.
    #[serde(flatten)]
    pub present: Summary,
    /// The change against the single future (null with several; see `changes`).
    pub change: Option<ChangeReport>,
    /// With several futures: one report per future, in the order given.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub changes: Vec<ChangeReport>,
    /// With several futures: what agreement.tif holds.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub agreement: Option<String>,
}

/// What a change run produced.
#[derive(Debug, Clone)]
pub struct ChangeResult {
    /// summary.json.
    pub summary: ChangeSummary,
    /// The present run's rows (patches.csv, records.csv).
    pub present: RangeResult,
}

/// Our own palette: pale stone unsuitable, dark green stable, brick red lost, sky blue
/// gained within reach, lilac gained beyond reach (nodata transparent).
pub const CHANGE_STYLES: [ClassStyle; 5] = [
    ClassStyle {
        value: 0,
        name: code::NAMES[0],
        rgba: [233, 230, 222, 255],
    },
    ClassStyle {
        value: 1,
        name: code::NAMES[1],
        rgba: [38, 110, 62, 255],
    },
    ClassStyle {
        value: 2,
        name: code::NAMES[2],
        rgba: [186, 64, 47, 255],
    },
    ClassStyle {
        value: 3,
        name: code::NAMES[3],
        rgba: [79, 160, 214, 255],
    },
    ClassStyle {
        value: 4,
        name: code::NAMES[4],
        rgba: [176, 146, 206, 255],
    },
];

/// Refuse a dispersal distance that cannot be used.
pub fn check_dispersal(d: Option<f64>) -> Result<()> {
    match d {
        Some(d) if !(d.is_finite() && d >= 0.0) => Err(Error::InvalidOption {
            option: "--dispersal-km",
            reason: format!("{d} is not a usable distance; give a finite number of km >= 0"),
        }),
        _ => Ok(()),
    }
}

/// Refuse a future raster whose grid differs from the present one, naming both and what differs.
fn check_same_grid(present: &Path, p: &GridSpec, future: &Path, f: &GridSpec) -> Result<()> {
    let mismatch = |what: String| {
        Error::UnsupportedRaster {
        path: future.to_path_buf(),
        reason: format!(
            "is not on the grid of the present raster {}: {what}; resample one of them onto the other's grid (e.g. gdalwarp -te/-tr/-t_srs) and run again",
            present.display()
        ),
    }
    };
    if (p.width, p.height) != (f.width, f.height) {
        return Err(mismatch(format!(
            "size {} x {} here, {} x {} there",
            f.width, f.height, p.width, p.height
        )));
    }
    let tol = 1e-9 * p.dx().max(p.dy());
    if p.geo_transform
        .iter()
        .zip(&f.geo_transform)
        .any(|(a, b)| (a - b).abs() > tol)
    {
        return Err(mismatch(format!(
            "geotransform {:?} here, {:?} there",
            f.geo_transform, p.geo_transform
        )));
    }
    let srs = |g: &GridSpec, path: &Path| {
        crate::crs::from_wkt(&g.crs_wkt).map_err(Error::gdal(path, "reading the CRS"))
    };
    let (sp, sf) = (srs(p, present)?, srs(f, future)?);
    if sp != sf {
        let name = |s: &SpatialRef| s.name().unwrap_or_else(|| "unnamed CRS".into());
        return Err(mismatch(format!(
            "CRS {} here, {} there",
            name(&sf),
            name(&sp)
        )));
    }
    Ok(())
}

/// Subfolder names of the futures: file stems, which must differ.
fn future_names(futures: &[PathBuf]) -> Result<Vec<String>> {
    let mut names: Vec<String> = Vec::new();
    for f in futures {
        let stem = f
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default();
        if stem.is_empty() || stem.starts_with('.') {
            return Err(Error::InvalidOption {
                option: "--future",
                reason: format!(
                    "{}: the file name cannot name an output folder; rename the file",
                    f.display()
                ),
            });
        }
        if names.contains(&stem) {
            return Err(Error::InvalidOption {
                option: "--future",
                reason: format!(
                    "{}: another future file has the same name ({stem}), and each future gets a folder named after its file; rename one of them",
                    f.display()
                ),
            });
        }
        names.push(stem);
    }
    Ok(names)
}

/// Records of the metrics' AOO grid centre: used ones (and those below T with keep_dropped).
fn aoo_records(r: &RangeResult, keep_dropped: bool) -> Vec<(f64, f64)> {
    r.records
        .iter()
        .filter(|x| {
            x.status == RecordStatus::Used
                || (keep_dropped && x.status == RecordStatus::BelowThreshold)
        })
        .filter(|x| x.lon.is_finite() && x.lat.is_finite())
        .map(|x| (x.lon, x.lat))
        .collect()
}

/// Run `areal change` into `out` (atomically).
pub fn run_change(
    present_path: &Path,
    futures: &[PathBuf],
    records: &Path,
    opts: &ChangeOptions,
    out: &Path,
    overwrite: bool,
) -> Result<ChangeResult> {
    check_dispersal(opts.dispersal_km)?;
    opts.range.metrics.check()?;
    if futures.is_empty() || futures.len() > MAX_FUTURES {
        return Err(Error::InvalidOption {
            option: "--future",
            reason: format!(
                "{} future rasters given; give 1 to {MAX_FUTURES}",
                futures.len()
            ),
        });
    }
    let names = future_names(futures)?;
    let present_raster = SuitabilityRaster::open(present_path)?;
    let grid = present_raster.grid().clone();
    drop(present_raster);
    let future_rasters: Vec<SuitabilityRaster> = futures
        .iter()
        .map(|f| SuitabilityRaster::open(f))
        .collect::<Result<_>>()?;
    for (f, r) in futures.iter().zip(&future_rasters) {
        check_same_grid(present_path, &grid, f, r.grid())?;
    }
    let mut inputs: Vec<&Path> = vec![present_path, records];
    inputs.extend(futures.iter().map(|f| f.as_path()));
    if let Some(p) = &opts.range.access.polygon {
        inputs.push(p);
    }
    let dir = crate::output::OutputDir::prepare(out, overwrite, &inputs)?;
    let mut clock = crate::progress::StageClock::new();

    // 1. The present run, its class rows kept as runs on their way to classes.tif.
    let classes_path = dir.file("classes.tif");
    let mut writer = ClassWriter::create(&classes_path, &grid)?;
    // The report's map needs the present nodata, which the model does not hold.
    let mut nodata_tee = crate::report_html::runs::NodataTee::new(&mut writer, grid.width);
    let mut tee = present::TeeSink {
        inner: &mut nodata_tee,
        runs: present::PresentRuns::new(grid.width, grid.height),
    };
    let mut range_opts = opts.range.clone();
    if range_opts.model.spill_dir.is_none() {
        range_opts.model.spill_dir = Some(dir.file(""));
    }
    let (mut result, model) = compute_range(present_path, records, &range_opts, &mut tee)?;
    let present_runs = Arc::new(tee.runs);
    let present_nodata = nodata_tee.runs;
    crate::styles::describe_classes(writer.dataset(), &classes_path, &result.summary)?;
    writer.close()?;
    clock.lap("change: present pass");
    let t = result.summary.threshold.value;
    let whole = result.summary.accessible.whole_raster;

    // 2. The futures, in lockstep.
    let several = futures.len() > 1;
    let mut change_paths = Vec::new();
    for name in &names {
        let p = if several {
            let sub = dir.file(name);
            std::fs::create_dir(&sub).map_err(|e| Error::Io {
                path: sub.clone(),
                source: e,
            })?;
            sub.join("change.tif")
        } else {
            dir.file("change.tif")
        };
        change_paths.push(p);
    }
    let mut writers: Vec<ClassWriter> = change_paths
        .iter()
        .map(|p| ClassWriter::create_styled(p, &grid, "range change class", &CHANGE_STYLES))
        .collect::<Result<_>>()?;
    let mut agreement = if several {
        Some(ClassWriter::create_styled(
            &dir.file("agreement.tif"),
            &grid,
            "number of futures whose range holds the cell",
            &[],
        )?)
    } else {
        None
    };
    let reach = opts
        .dispersal_km
        .map(|d| reach::ReachSpec::new(&grid, present_runs.clone(), d))
        .transpose()?;
    // The futures' ranges as runs, for their modelled AOO (with the metrics and a record used).
    let aoo_recs = aoo_records(&result, opts.range.metrics.keep_dropped);
    let mut future_runs = if opts.range.metrics.enabled && !aoo_recs.is_empty() {
        Some(
            (0..futures.len())
                .map(|_| occupancy::FutureRuns::new(&grid))
                .collect::<Result<Vec<_>>>()?,
        )
    } else {
        None
    };
    let mut thumbs = opts.range.report.then(|| {
        (0..futures.len())
            .map(|_| crate::report_html::change::ChangeThumb::new(grid.width, grid.height))
            .collect::<Vec<_>>()
    });
    // The present run's metrics read only the model: they run on their own thread while the
    // futures stream (the pass leaves a core partly idle on its consumer thread).
    let (totals, metrics_done) = std::thread::scope(|scope| {
        let metrics = opts.range.metrics.enabled.then(|| {
            let (result, model) = (&mut result, &model);
            scope.spawn(move || {
                crate::metrics::add_range_metrics(result, model, &opts.range.metrics, false)
                    .map(|_| ())
            })
        });
        let mut sinks: Vec<&mut dyn RowSink> =
            writers.iter_mut().map(|w| w as &mut dyn RowSink).collect();
        let totals = pass::run_pass(
            pass::PassInput {
                grid: &grid,
                present: &present_runs,
                futures: &future_rasters,
                t,
                reach: reach.as_ref(),
                model: &model,
                whole,
                connectivity: opts.range.connectivity,
                progress: &opts.range.progress,
            },
            &mut sinks,
            agreement.as_mut().map(|a| a as &mut dyn RowSink),
            future_runs.as_deref_mut(),
            thumbs.as_deref_mut(),
        );
        let done = metrics.map(|h| h.join().unwrap_or_else(|p| std::panic::resume_unwind(p)));
        (totals, done)
    });
    let totals = totals?;
    metrics_done.transpose()?;
    clock.lap("change: futures pass and present metrics");
    for w in writers {
        w.close_with_overviews()?;
    }
    if let Some(a) = agreement {
        a.close_with_overviews()?;
    }
    clock.lap("change: change.tif overviews");

    // 3. Reports.
    let present_km2 = result.summary.area_km2.inside_accessible;
    let aoo_note = (opts.range.metrics.enabled && aoo_recs.is_empty()).then(|| {
        "modelled AOO of the present and future ranges left out: no record is used, so the AOO grid has no centre".to_string()
    });
    let counted = future_runs
        .map(|fr| {
            occupancy::count(
                &grid,
                &aoo_recs,
                opts.range.metrics.aoo_cell_km,
                &present_runs,
                &fr,
            )
        })
        .transpose()?;
    clock.lap("change: modelled AOO of the ranges");
    let mut aoo_figs = counted.map(|o| {
        let present = o.present.min_km2();
        let cell_km = o.cell_km;
        o.futures
            .iter()
            .map(|[a, b, c]| {
                let r = report::DispersalRules {
                    no_dispersal: a.min_km2(),
                    limited_dispersal: b.min_km2(),
                    full_dispersal: c.min_km2(),
                };
                ChangeAoo {
                    cell_km,
                    present_range: present,
                    percent_change: report::DispersalRules {
                        no_dispersal: report::percent(r.no_dispersal, present),
                        limited_dispersal: report::percent(r.limited_dispersal, present),
                        full_dispersal: report::percent(r.full_dispersal, present),
                    },
                    future_range: r,
                    rule: "the AOO grid of the metrics (LAEA centred on the records used, minimum over 16 origins); a grid cell is occupied when the centre of a raster cell of the range falls in it (all of the range, not only the occupied patches)".into(),
                }
            })
            .collect::<Vec<_>>()
    });
    let mut reports = Vec::new();
    for (k, tot) in totals.iter().enumerate() {
        let aoo = aoo_figs.as_mut().map(|v| v[k].clone());
        let mut rep = report::build(
            futures[k].display().to_string(),
            several.then(|| names[k].clone()),
            t,
            opts.dispersal_km,
            present_km2,
            tot,
            aoo,
        );
        rep.warnings.extend(future_rasters[k].warnings());
        if tot.binary != result.summary.threshold.binary_input && tot.cells.iter().sum::<u64>() > 0
        {
            rep.warnings.push(format!(
                "{} is {} but the present raster is {}: check that both are on the same scale",
                futures[k].display(),
                if tot.binary {
                    "binary (0/1)"
                } else {
                    "continuous"
                },
                if result.summary.threshold.binary_input {
                    "binary"
                } else {
                    "continuous"
                }
            ));
        }
        if let Some(n) = &aoo_note {
            rep.notes.push(n.clone());
        }
        let rows = report::patch_rows(&grid, tot)?;
        let csv = change_paths[k].with_file_name("change.csv");
        write_csv(&csv, &rows)?;
        if several {
            // The folder's summary.json: the present run's sections and this future's change.
            let sub = ChangeSummary {
                present: result.summary.clone(),
                change: Some(rep.clone()),
                changes: Vec::new(),
                agreement: None,
            };
            let text = serde_json::to_string_pretty(&sub).expect("summary serialises");
            crate::output::write_text(
                &change_paths[k].with_file_name("summary.json"),
                &(text + "\n"),
            )?;
        }
        reports.push(rep);
    }
    let mut present_summary = result.summary.clone();
    for r in &reports {
        for w in &r.warnings {
            present_summary.warnings.push(format!("{}: {w}", r.future));
        }
    }
    let summary = ChangeSummary {
        present: present_summary,
        change: (!several).then(|| reports[0].clone()),
        agreement: several.then(|| {
            let rule = if opts.dispersal_km.is_some() { "limited dispersal (stable + gained within reach)" } else { "full dispersal (stable + every gain; no --dispersal-km)" };
            format!("agreement.tif: per cell, the number of the {} futures whose future range under {rule} holds the cell; 255 where the present raster has no data", futures.len())
        }),
        changes: if several { reports } else { Vec::new() },
    };
    write_csv(&dir.file("patches.csv"), &result.patches)?;
    write_csv(&dir.file("records.csv"), &result.records)?;
    let json = serde_json::to_string_pretty(&summary).expect("summary serialises");
    crate::output::write_text(&dir.file("summary.json"), &(json + "\n"))?;
    if let Some(thumbs) = &thumbs {
        let written = serde_json::to_value(&summary).expect("summary serialises");
        let maps: Vec<PathBuf> = change_paths
            .iter()
            .map(|p| p.with_file_name("change-map.png"))
            .collect();
        report_files::write(
            &dir,
            &result,
            &model,
            &present_nodata,
            written,
            thumbs,
            &maps,
        )?;
    }
    drop(model); // removes its spill file before the folder is committed
    dir.commit()?;
    clock.lap("change: reports and commit");
    Ok(ChangeResult {
        summary,
        present: result,
    })
}
