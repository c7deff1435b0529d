//! `areal gather DIR`: the batch's tables from the species folders present: `batch.csv`,
//! `batch.gpkg` (layer `ranges`: each species' class-1 range in WGS84 lon/lat) and, for the
//! species that share a grid, `richness.tif`. Species come in manifest order from
//! `DIR/.areal-batch/species.csv`; a species is `ok` when its folder holds a run file and no
//! failure is recorded for it, `failed` when its last run failed (with the error line), and
//! `skipped` otherwise (not run yet, e.g. its shard has not finished). Each file is written
//! beside its destination, fsynced and renamed into place.

use super::richness::{same_grid, write_richness};
use super::{durable, read_species_list, read_status, state_dir, Status};
use crate::raster_io::SuitabilityRaster;
use crate::{Error, GridSpec, Result};
use serde_json::Value;
use std::path::{Path, PathBuf};

/// Columns of batch.csv (and of the `ranges` layer of batch.gpkg).
pub const BATCH_COLUMNS: [&str; 15] = [
    "species",
    "status",
    "message",
    "threshold",
    "area_km2_suitable",
    "area_km2_inside_accessible",
    "area_km2_outside_accessible",
    "area_km2_occupied",
    "patches_inside_accessible",
    "patches_outside_accessible",
    "eoo_km2",
    "aoo_km2",
    "seconds",
    "in_richness",
    "range_note",
];

/// What gather wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct GatherReport {
    /// Species with status ok, failed, skipped.
    pub ok: usize,
    /// Failed species.
    pub failed: usize,
    /// Species not run yet.
    pub skipped: usize,
    /// Species counted in richness.tif (0: no richness.tif).
    pub richness_species: usize,
}

fn text(v: Option<&Value>) -> String {
    match v {
        Some(Value::Number(n)) => n.to_string(),
        Some(Value::String(s)) => s.clone(),
        _ => String::new(),
    }
}

fn summary_cells(summary: &Value) -> [String; 9] {
    let g = |p: &str| text(summary.pointer(p));
    [
        g("/threshold/value"),
        g("/area_km2/suitable"),
        g("/area_km2/inside_accessible"),
        g("/area_km2/outside_accessible"),
        g("/area_km2/occupied"),
        g("/patches/inside_accessible"),
        g("/patches/outside_accessible"),
        g("/metrics/eoo_km2"),
        g("/metrics/aoo_km2"),
    ]
}

fn tmp_beside(path: &Path) -> PathBuf {
    let name = path.file_name().unwrap_or_default().to_string_lossy();
    path.with_file_name(format!(".areal-tmp-{}-{name}", std::process::id()))
}

/// Write the batch files of `out` from the species folders present.
pub fn gather(out: &Path) -> Result<GatherReport> {
    let names = read_species_list(out)?;
    let _lock = super::lock::BatchLock::take(&state_dir(out)?, "gather", out)?;
    super::remove_dead_tmp(out);
    let mut rows: Vec<Vec<String>> = Vec::new();
    let mut geoms = Vec::new();
    let mut grids: Vec<(String, GridSpec, PathBuf)> = Vec::new();
    let (mut ok, mut failed, mut skipped) = (0, 0, 0);
    for name in &names {
        let dir = out.join(name);
        let status = read_status(out, name);
        let run_file = dir.join(super::runfile::RUN_FILE);
        let mut row = vec![name.clone()];
        let mut geom = None;
        match status {
            Some(Status::Failed { message, seconds }) => {
                failed += 1;
                row.extend(["failed".to_string(), message]);
                row.extend(std::iter::repeat_n(String::new(), 9));
                row.extend([seconds, String::new(), String::new()]);
            }
            s if run_file.is_file() => {
                ok += 1;
                let seconds = match s {
                    Some(Status::Ok { seconds }) => seconds,
                    _ => String::new(),
                };
                let sp = dir.join("summary.json");
                let summary: Value = std::fs::read(&sp)
                    .ok()
                    .and_then(|b| serde_json::from_slice(&b).ok())
                    .ok_or_else(|| Error::Output {
                        path: sp.clone(),
                        reason: "is missing or not JSON in a finished species folder; run the batch again with --force for this species".into(),
                    })?;
                row.extend(["ok".to_string(), String::new()]);
                row.extend(summary_cells(&summary));
                row.push(seconds);
                let classes = dir.join("classes.tif");
                grids.push((
                    name.clone(),
                    SuitabilityRaster::open(&classes)?.grid().clone(),
                    classes.clone(),
                ));
                let note = match super::ranges::load(out, name) {
                    Ok(g) => {
                        geom = Some(g);
                        String::new()
                    }
                    Err(e) => format!("no geometry: {e}"),
                };
                row.extend([String::new(), note]);
            }
            _ => {
                skipped += 1;
                row.extend(["skipped".to_string(), String::new()]);
                row.extend(std::iter::repeat_n(String::new(), 12));
            }
        }
        rows.push(row);
        geoms.push(geom);
    }
    // The grid shared by the most species (the first such grid on a tie).
    let mut best: Vec<usize> = Vec::new();
    for (i, (_, g, _)) in grids.iter().enumerate() {
        let group: Vec<usize> = (0..grids.len())
            .filter(|&j| same_grid(g, &grids[j].1))
            .collect();
        if group.len() > best.len() && group[0] == i {
            best = group;
        }
    }
    let in_richness: Vec<&str> = best.iter().map(|&j| grids[j].0.as_str()).collect();
    for row in rows.iter_mut() {
        if row[1] == "ok" {
            row[13] = if in_richness.contains(&row[0].as_str()) {
                "yes"
            } else {
                "no"
            }
            .into();
        }
    }
    let csv_path = out.join("batch.csv");
    let tmp = tmp_beside(&csv_path);
    {
        let mut w = csv::Writer::from_path(&tmp).map_err(|e| Error::Output {
            path: tmp.clone(),
            reason: e.to_string(),
        })?;
        let werr = |e: csv::Error| Error::Output {
            path: csv_path.clone(),
            reason: e.to_string(),
        };
        w.write_record(BATCH_COLUMNS).map_err(werr)?;
        for r in &rows {
            w.write_record(r).map_err(werr)?;
        }
        w.flush().map_err(Error::io(&tmp))?;
    }
    let gpkg = out.join("batch.gpkg");
    let gtmp = tmp_beside(&gpkg);
    let _ = std::fs::remove_file(&gtmp);
    crate::vectors::write_table_gpkg(&gtmp, &tmp, "ranges", geoms)?;
    let mut richness_species = 0;
    if best.len() >= 2 {
        let rpath = out.join("richness.tif");
        let rtmp = tmp_beside(&rpath);
        let _ = std::fs::remove_file(&rtmp);
        let files: Vec<PathBuf> = best.iter().map(|&j| grids[j].2.clone()).collect();
        write_richness(&rtmp, &grids[best[0]].1, &files)?;
        durable(&rtmp, &rpath)?;
        richness_species = best.len();
    } else {
        let _ = std::fs::remove_file(out.join("richness.tif"));
    }
    durable(&gtmp, &gpkg)?;
    durable(&tmp, &csv_path)?;
    Ok(GatherReport {
        ok,
        failed,
        skipped,
        richness_species,
    })
}
