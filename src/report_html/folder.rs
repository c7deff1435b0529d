//! `areal report DIR`: the report of a finished run folder, rebuilt from its files.
//!
//! The folder must hold `classes.tif`, `summary.json`, `records.csv` and `patches.csv` of one
//! run. Before anything is written, the files are checked against each other: the grid of
//! classes.tif against summary.json, the cell counts and true areas of each class recounted
//! from classes.tif (within 1e-9 relative), the record and patch counts, and M rebuilt from
//! the run's M options as summary.json records them. Any disagreement is an error naming the
//! file, and nothing is written. `classes.tif` is read strip by strip into runs.

use super::runs::ClassRuns;
use super::{MapRecord, PatchInfo, ReportData};
use crate::access::{AccessMask, AccessSpec};
use crate::area::{CellAreas, RowAreas};
use crate::raster_io::{class, SuitabilityRaster, STRIP_ROWS};
use crate::{Error, Result};
use serde_json::Value;
use std::path::{Path, PathBuf};

fn bad(path: &Path, reason: String) -> Error {
    Error::Records {
        path: path.to_path_buf(),
        reason,
    }
}

/// Read a run folder, check it, and write `report.html` and `map.png` into it.
/// Returns the paths written.
pub fn run_report(dir: &Path) -> Result<Vec<PathBuf>> {
    if !dir.is_dir() {
        return Err(Error::MissingInput {
            path: dir.to_path_buf(),
            what: "run folder (the --out folder of an earlier areal range)",
        });
    }
    for name in ["classes.tif", "summary.json", "records.csv", "patches.csv"] {
        let p = dir.join(name);
        if !p.is_file() {
            return Err(bad(
                &p,
                format!(
                    "is missing, so {} is not the folder of an areal range run; give the --out folder of a run",
                    dir.display()
                ),
            ));
        }
    }
    let summary_path = dir.join("summary.json");
    let text = std::fs::read_to_string(&summary_path).map_err(Error::input_io(&summary_path))?;
    let summary: Value = serde_json::from_str(&text).map_err(|e| {
        bad(
            &summary_path,
            format!("is not valid JSON ({e}); give the summary.json areal wrote"),
        )
    })?;
    let classes_path = dir.join("classes.tif");
    let raster = SuitabilityRaster::open(&classes_path)?;
    let grid = raster.grid().clone();
    let num = |p: &str| {
        summary.pointer(p).and_then(Value::as_f64).ok_or_else(|| {
            bad(
                &summary_path,
                format!("has no number at {p}; give the summary.json areal wrote"),
            )
        })
    };
    if num("/inputs/width")? as usize != grid.width
        || num("/inputs/height")? as usize != grid.height
    {
        return Err(bad(
            &summary_path,
            format!(
                "describes a {} x {} grid but {} is {} x {}; the files come from different runs",
                num("/inputs/width")?,
                num("/inputs/height")?,
                classes_path.display(),
                grid.width,
                grid.height
            ),
        ));
    }
    // Classes into runs, recounting cells and true areas per class.
    let mut runs = ClassRuns::new(grid.width);
    let mut areas = CellAreas::new(&grid)?;
    let mut cells = [0u64; 4];
    let mut area_m2 = [0f64; 3];
    let mut buf = Vec::new();
    let mut codes = vec![0u8; grid.width];
    for y0 in (0..grid.height).step_by(STRIP_ROWS) {
        let rows = STRIP_ROWS.min(grid.height - y0);
        raster.read_rows(y0, rows, &mut buf)?;
        for (r, line) in buf.chunks_exact(grid.width).enumerate() {
            let row_areas = areas.row_allow_outside(y0 + r)?;
            let mut sums = [0f64; 3];
            for (c, &v) in line.iter().enumerate() {
                let k = if raster.is_data(v) {
                    v
                } else {
                    class::NODATA as f64
                };
                let k = match k {
                    0.0 => 0u8,
                    1.0 => 1,
                    2.0 => 2,
                    255.0 => class::NODATA,
                    _ => {
                        return Err(Error::UnsupportedRaster {
                            path: classes_path.clone(),
                            reason: format!("holds the value {k} at row {}, column {c}, not a class code (0, 1, 2, 255); give the classes.tif areal wrote", y0 + r),
                        })
                    }
                };
                codes[c] = k;
                if k == class::NODATA {
                    cells[3] += 1;
                } else {
                    cells[k as usize] += 1;
                    sums[k as usize] += match &row_areas {
                        RowAreas::Uniform(a) => *a,
                        RowAreas::PerCell(v) => v[c],
                    };
                }
            }
            for k in 0..3 {
                area_m2[k] += sums[k];
            }
            runs.push_row(&codes);
        }
    }
    for (k, key) in [
        "unsuitable",
        "inside_accessible",
        "outside_accessible",
        "nodata",
    ]
    .iter()
    .enumerate()
    {
        let want = num(&format!("/cells/{key}"))?;
        if want != cells[k] as f64 {
            return Err(bad(
                &summary_path,
                format!("says {want} cells for cells.{key}, but {} holds {}; summary.json was changed or comes from another run", classes_path.display(), cells[k]),
            ));
        }
    }
    for (k, key) in ["unsuitable", "inside_accessible", "outside_accessible"]
        .iter()
        .enumerate()
    {
        let want = num(&format!("/area_km2/{key}"))?;
        let got = area_m2[k] / 1e6;
        if (want - got).abs() > 1e-9 * want.abs().max(got.abs()).max(1e-300) {
            return Err(bad(
                &summary_path,
                format!("says {want} km2 for area_km2.{key}, but the cells of {} measure {got} km2; summary.json was changed or comes from another run", classes_path.display()),
            ));
        }
    }
    let records = read_records(&dir.join("records.csv"))?;
    if num("/records/total")? as usize != records.len() {
        return Err(bad(
            &summary_path,
            format!(
                "counts {} records but records.csv holds {}; the files come from different runs",
                num("/records/total")?,
                records.len()
            ),
        ));
    }
    let patches = read_patches(&dir.join("patches.csv"))?;
    for (k, key) in [(1u8, "inside_accessible"), (2, "outside_accessible")] {
        let n = patches.iter().filter(|p| p.class == k).count();
        if num(&format!("/patches/{key}"))? as usize != n {
            return Err(bad(
                &summary_path,
                format!("counts {} patches for patches.{key} but patches.csv holds {n}; the files come from different runs", num(&format!("/patches/{key}"))?),
            ));
        }
    }
    // M, rebuilt from the options the run recorded.
    let whole = summary
        .pointer("/accessible/whole_raster")
        .and_then(Value::as_bool)
        .unwrap_or(false);
    let spec = AccessSpec {
        polygon: summary
            .pointer("/accessible/polygon")
            .and_then(Value::as_str)
            .map(PathBuf::from),
        buffer_km: summary
            .pointer("/accessible/buffer_km")
            .and_then(Value::as_f64),
        hull_buffer_km: summary
            .pointer("/accessible/hull_buffer_km")
            .and_then(Value::as_f64),
    };
    let description = summary
        .pointer("/accessible/description")
        .and_then(Value::as_str)
        .unwrap_or("");
    if !whole && spec == AccessSpec::default() {
        return Err(bad(
            &summary_path,
            format!("records M as \"{description}\" but not the options that made it (written by an older areal); run areal range again"),
        ));
    }
    let lonlat: Vec<(f64, f64)> = records.iter().map(|r| (r.lon, r.lat)).collect();
    let check = AccessMask::build(&grid, &spec, &lonlat)?;
    if check.description() != description {
        return Err(bad(
            &summary_path,
            format!("records M as \"{description}\", but its M options now give \"{}\"; was the M file changed?", check.description()),
        ));
    }
    let data = ReportData {
        summary,
        records,
        patches,
        grid: grid.clone(),
    };
    let runs_ref = &runs;
    let mut factory = || -> Result<Option<Box<dyn super::image::AccessRows + '_>>> {
        if whole {
            Ok(None)
        } else {
            Ok(Some(Box::new(super::image::RebuiltAccess {
                mask: AccessMask::build(&grid, &spec, &lonlat)?,
                classes: runs_ref,
            })))
        }
    };
    let files = super::render(&data, &runs, &mut factory)?;
    write_files(dir, &files)
}

/// Write map.png and report.html into `dir`, each through a temporary name and a rename.
pub fn write_files(dir: &Path, files: &super::ReportFiles) -> Result<Vec<PathBuf>> {
    let mut done = Vec::new();
    let items: [(&str, &[u8]); 2] = [
        ("map.png", &files.map_png),
        ("report.html", files.html.as_bytes()),
    ];
    let mut tmps = Vec::new();
    for (name, bytes) in items {
        let tmp = dir.join(format!(".{name}.areal-tmp-{}", std::process::id()));
        if let Err(e) = std::fs::write(&tmp, bytes) {
            for t in &tmps {
                let _ = std::fs::remove_file(t);
            }
            let _ = std::fs::remove_file(&tmp);
            return Err(Error::Io {
                path: dir.join(name),
                source: e,
            });
        }
        tmps.push(tmp);
    }
    for ((name, _), tmp) in items.iter().zip(&tmps) {
        let dest = dir.join(name);
        std::fs::rename(tmp, &dest).map_err(Error::io(&dest))?;
        done.push(dest);
    }
    Ok(done)
}

fn read_csv(path: &Path) -> Result<(csv::StringRecord, Vec<csv::StringRecord>)> {
    let mut r = csv::Reader::from_path(path)
        .map_err(|e| bad(path, format!("cannot be read as CSV: {e}")))?;
    let head = r
        .headers()
        .map_err(|e| bad(path, format!("has no CSV header: {e}")))?
        .clone();
    let rows = r
        .records()
        .collect::<std::result::Result<Vec<_>, _>>()
        .map_err(|e| bad(path, format!("is not the CSV areal wrote: {e}")))?;
    Ok((head, rows))
}

fn column(path: &Path, head: &csv::StringRecord, name: &str) -> Result<usize> {
    head.iter().position(|h| h == name).ok_or_else(|| {
        bad(
            path,
            format!("has no column {name}; give the file areal wrote"),
        )
    })
}

fn field<T: std::str::FromStr>(
    path: &Path,
    row: &csv::StringRecord,
    i: usize,
    line: usize,
) -> Result<Option<T>> {
    let s = row.get(i).unwrap_or("");
    if s.is_empty() {
        return Ok(None);
    }
    s.parse().map(Some).map_err(|_| {
        bad(
            path,
            format!(
                "line {}: \"{s}\" is not a number; give the file areal wrote",
                line + 2
            ),
        )
    })
}

fn read_records(path: &Path) -> Result<Vec<MapRecord>> {
    let (head, rows) = read_csv(path)?;
    let [lon, lat, row, col, suit, status] =
        ["lon", "lat", "row", "col", "suitability", "status"].map(|n| column(path, &head, n));
    let (lon, lat, row, col, suit, status) = (lon?, lat?, row?, col?, suit?, status?);
    rows.iter()
        .enumerate()
        .map(|(i, r)| {
            Ok(MapRecord {
                lon: field(path, r, lon, i)?.unwrap_or(f64::NAN),
                lat: field(path, r, lat, i)?.unwrap_or(f64::NAN),
                cell: field::<usize>(path, r, row, i)?.zip(field::<usize>(path, r, col, i)?),
                suitability: field(path, r, suit, i)?,
                status: r.get(status).unwrap_or("").to_string(),
            })
        })
        .collect()
}

fn read_patches(path: &Path) -> Result<Vec<PatchInfo>> {
    let (head, rows) = read_csv(path)?;
    let [class, area, reachable, jumps] =
        ["class", "area_km2", "reachable", "reach_jumps"].map(|n| column(path, &head, n));
    let (class, area, reachable, jumps) = (class?, area?, reachable?, jumps?);
    rows.iter()
        .enumerate()
        .map(|(i, r)| {
            Ok(PatchInfo {
                class: field(path, r, class, i)?.unwrap_or(0),
                area_km2: field(path, r, area, i)?.unwrap_or(f64::NAN),
                reachable: match r.get(reachable).unwrap_or("") {
                    "" => None,
                    "TRUE" | "true" => Some(true),
                    "FALSE" | "false" => Some(false),
                    v => {
                        return Err(bad(
                            path,
                            format!("line {}: reachable is \"{v}\", not TRUE or FALSE; give the file areal wrote", i + 2),
                        ))
                    }
                },
                reach_jumps: field(path, r, jumps, i)?,
            })
        })
        .collect()
}
