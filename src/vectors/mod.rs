//! GIS-ready vector outputs of a run: `range.gpkg` and RFC 7946 GeoJSON files.
//!
//! Inputs: a folder holding a run's `classes.tif`, `patches.csv`, `summary.json` and (if
//! present) `records.csv`, plus the M options of the run (to rebuild M exactly as the classes
//! used it). Layers (GeoPackage layer = GeoJSON file name):
//! - `range`: the class-1 cells (suitable inside M) as one multipolygon, with `area_km2`
//!   (= summary `area_km2.inside_accessible`), `cells` and `patches`;
//! - `patches`: one multipolygon per class-1 and class-2 patch with every column of
//!   patches.csv (same `patch_id`);
//! - `unreachable`: the class-2 patches with `distance_km` to the nearest class-1 cell
//!   ([`distance`] gives the definition);
//! - `accessible`: M as used: the data cells whose centre is in M, with `area_km2` (= summary
//!   `area_km2.accessible`), `cells` and M's description;
//! - `records`: points with every column of records.csv and `dropped_by_threshold`.
//!
//! CRS: `range.gpkg` is in the raster's CRS with pixel-edge boundaries (vertices exactly on
//! cell corners); the GeoJSON files are WGS84 lon/lat, cut at the antimeridian, exterior rings
//! counter-clockwise, [`GEOJSON_DECIMALS`] decimals; `range-equal-area.gpkg` (optional) is
//! in an equal-area CRS ([`VectorCrs`]).
//!
//! Memory: the class grid (1 byte a cell) and one label grid (4 bytes a cell) are held whole;
//! grids above [`VectorOptions::max_cells`] are refused before anything is read. See
//! docs/vectors.md.

mod crs;
mod distance;
mod inputs;
mod layers;
mod lonlat;
mod polygonize;
#[cfg(test)]
mod tests;
mod write;

pub use crs::VectorCrs;
pub use write::GEOJSON_DECIMALS;

use crate::access::AccessSpec;
use crate::patches::Connectivity;
use crate::{Error, Result};
use std::path::{Path, PathBuf};

/// Largest grid (cells) the vector step accepts by default: 100 million cells, about 0.5 GB
/// for the class and label grids, and up to about 2 GB while labelling one huge patch.
pub const DEFAULT_MAX_CELLS: u64 = 100_000_000;

/// The file names the vector step writes.
pub const VECTOR_NAMES: [&str; 7] = [
    "range.gpkg",
    "range.geojson",
    "patches.geojson",
    "unreachable.geojson",
    "accessible.geojson",
    "records.geojson",
    "range-equal-area.gpkg",
];

/// Options of the vector step (`--vectors`, `--vector-crs`, `--simplify-m`).
#[derive(Debug, Clone, PartialEq)]
pub struct VectorOptions {
    /// Also write `range-equal-area.gpkg` in this CRS.
    pub equal_area: Option<VectorCrs>,
    /// Simplify boundaries with this tolerance in metres (topology-preserving); off when None.
    pub simplify_m: Option<f64>,
    /// Refuse grids with more cells than this.
    pub max_cells: u64,
}

impl Default for VectorOptions {
    fn default() -> Self {
        VectorOptions {
            equal_area: None,
            simplify_m: None,
            max_cells: DEFAULT_MAX_CELLS,
        }
    }
}

/// What the vector step wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct VectorReport {
    /// File names written (inside the output folder).
    pub files: Vec<String>,
    /// Features of the `patches` layer.
    pub patches: usize,
    /// Features of the `unreachable` layer.
    pub unreachable: usize,
    /// Features of the `records` layer (0 without records.csv).
    pub records: usize,
    /// The equal-area CRS used, when one was asked for.
    pub equal_area_crs: Option<String>,
}

/// Write the vector outputs of the run in `run_dir` into `out_dir`.
///
/// `access` must be the M options of that run (checked against summary.json and the classes);
/// `connectivity` overrides summary.json's when given (it must agree with the patches).
pub fn write_vectors(
    run_dir: &Path,
    out_dir: &Path,
    access: &AccessSpec,
    connectivity: Option<Connectivity>,
    opts: &VectorOptions,
) -> Result<VectorReport> {
    if let Some(t) = opts.simplify_m {
        if !(t.is_finite() && t > 0.0) {
            return Err(Error::InvalidOption {
                option: "--simplify-m",
                reason: format!("{t} is not a usable tolerance; give a number of metres > 0"),
            });
        }
    }
    let classes = run_dir.join("classes.tif");
    if !classes.exists() {
        return Err(Error::MissingInput {
            path: classes,
            what: "classes.tif of an areal run",
        });
    }
    let run = inputs::read_run(&classes, opts.max_cells)?;
    let conn = match (run.summary.connectivity, connectivity) {
        (Some(a), Some(b)) if a != b => {
            return Err(Error::InvalidOption {
                option: "--connectivity",
                reason: format!(
                    "the run was labelled with {}-neighbour patches ({}); leave --connectivity out or give {}",
                    n_of(a),
                    run_dir.join("summary.json").display(),
                    n_of(a)
                ),
            })
        }
        (Some(a), _) | (None, Some(a)) => a,
        (None, None) => {
            return Err(Error::InvalidOption {
                option: "--connectivity",
                reason: format!(
                    "{} does not say how patches were connected; give --connectivity 8 or 4 as in the run",
                    run_dir.join("summary.json").display()
                ),
            })
        }
    };
    layers::build_and_write(run, conn, access, opts, out_dir)
}

fn n_of(c: Connectivity) -> u8 {
    match c {
        Connectivity::Eight => 8,
        Connectivity::Four => 4,
    }
}

/// `areal polygons`: the vector outputs of an earlier run whose `classes.tif` is `classes`,
/// written atomically into the new folder `out` (replaced only with `overwrite`).
pub fn run_polygons(
    classes: &Path,
    access: &AccessSpec,
    connectivity: Option<Connectivity>,
    opts: &VectorOptions,
    out: &Path,
    overwrite: bool,
) -> Result<VectorReport> {
    let run_dir: PathBuf = match classes.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    if classes.file_name().is_some_and(|n| n != "classes.tif") {
        return Err(Error::InvalidOption {
            option: "--classes",
            reason: format!(
                "{} is not named classes.tif; give the classes.tif of an areal run (its patches.csv and summary.json sit beside it)",
                classes.display()
            ),
        });
    }
    let mut inputs: Vec<&Path> = vec![classes];
    if let Some(p) = &access.polygon {
        inputs.push(p);
    }
    let dir = crate::output::OutputDir::prepare(out, overwrite, &inputs)?;
    let tmp = dir.file("x");
    let tmp = tmp.parent().expect("the temporary folder has a parent");
    let report = write_vectors(&run_dir, tmp, access, connectivity, opts)?;
    dir.commit()?;
    Ok(report)
}
