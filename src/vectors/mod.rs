//! GIS-ready vector outputs of a run: `range.gpkg` and RFC 7946 GeoJSON files.
//!
//! Input: the range as rows of runs with their patch ids, and M as runs (`source.rs`), with the
//! run's patch and record tables. Layers (GeoPackage layer = GeoJSON file name):
//! - `range`: the class-1 cells (suitable inside M) as one multipolygon, with `area_km2`
//!   (= summary `area_km2.inside_accessible`), `cells` and `patches`;
//! - `patches`: one multipolygon per class-1 and class-2 patch with the patch table's fields
//!   (same `patch_id`; field names in `tables.rs`);
//! - `unreachable`: the class-2 patches, same fields (`nearest_range_km`: edge to edge to the
//!   nearest class-1 patch);
//! - `accessible`: M as used: the data cells whose centre is in M, with `area_km2` (= summary
//!   `area_km2.accessible`), `cells` and M's description;
//! - `records`: points with the record table's fields and `dropped_by_threshold`.
//!
//! Polygons are traced from the runs (`trace.rs`): pixel-edge boundaries, vertices on cell
//! corners. On lon/lat grids vertices are added along parallels so that geodesic areas match
//! the cell areas (`parallels.rs`). CRS: `range.gpkg` is in the raster's CRS; the GeoJSON files
//! are WGS84 lon/lat, cut at the antimeridian, exterior rings counter-clockwise,
//! [`GEOJSON_DECIMALS`] decimals; `range-equal-area.gpkg` (optional) is in an equal-area CRS
//! ([`VectorCrs`]).
//!
//! Memory: the edges of the patches still open while tracing, then the polygons (8 bytes a
//! vertex, and the geometries of one output CRS at a time); nothing grows with the cells.
//! See docs/vectors.md.

mod batch_layer;
mod equal_area;
#[cfg(test)]
mod gdal_ref;
mod geojson;
mod inputs;
mod layers;
mod lonlat;
mod parallels;
#[cfg(test)]
mod parallels_tests;
mod polygonize;
mod shapes;
mod source;
mod tables;
#[cfg(test)]
mod tests;
mod trace;
#[cfg(test)]
mod trace_tests;
mod write;

pub use batch_layer::{range_lonlat, write_table_gpkg};
pub use equal_area::VectorCrs;
pub use layers::PreparedVectors;
pub use write::GEOJSON_DECIMALS;

use crate::access::AccessSpec;
use crate::model::RangeModel;
use crate::patches::Connectivity;
use crate::report::{PatchRow, RecordRow, Summary};
use crate::{Error, Result};
use std::path::{Path, PathBuf};

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
#[derive(Debug, Clone, PartialEq, Default)]
pub struct VectorOptions {
    /// Also write `range-equal-area.gpkg` in this CRS.
    pub equal_area: Option<VectorCrs>,
    /// Simplify boundaries with this tolerance in metres (topology-preserving); off when None.
    pub simplify_m: Option<f64>,
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

/// The tables of a run in memory, as `areal range` made them.
#[derive(Debug, Clone, Copy)]
pub struct RunRows<'a> {
    /// patches.csv rows, in id order.
    pub patches: &'a [PatchRow],
    /// Per patch (index id - 1): the edge-to-edge distance to the nearest class-1 patch, km,
    /// from the metrics; empty when they were not computed.
    pub nearest_range_km: &'a [Option<f64>],
    /// records.csv rows.
    pub records: &'a [RecordRow],
    /// The summary.
    pub summary: &'a Summary,
}

/// Write the vector outputs of a run into `out_dir`, from its model and tables in memory.
pub fn write_vectors(
    model: &RangeModel,
    rows: &RunRows<'_>,
    out_dir: &Path,
    opts: &VectorOptions,
) -> Result<VectorReport> {
    write_prepared_vectors(prepare_vectors(model, opts, out_dir)?, rows, out_dir, opts)
}

/// The first half of [`write_vectors`], from the model alone (no table): the polygons traced
/// and encoded for each file (`out_dir` names the files in errors). `areal range` runs it
/// while the metrics are computed.
pub fn prepare_vectors(
    model: &RangeModel,
    opts: &VectorOptions,
    out_dir: &Path,
) -> Result<PreparedVectors> {
    check_options(opts)?;
    layers::prepare(model, opts, out_dir)
}

/// The second half of [`write_vectors`]: the files of `prep` with the run's tables.
pub fn write_prepared_vectors(
    prep: PreparedVectors,
    rows: &RunRows<'_>,
    out_dir: &Path,
    opts: &VectorOptions,
) -> Result<VectorReport> {
    let tables = layers::RunTables {
        patches: tables::patch_table(rows.patches, rows.nearest_range_km),
        records: Some(tables::record_table(rows.records)),
        facts: inputs::SummaryFacts::of(rows.summary),
    };
    layers::write(prep, &tables, opts, out_dir, out_dir)
}

fn check_options(opts: &VectorOptions) -> Result<()> {
    if let Some(t) = opts.simplify_m {
        if !(t.is_finite() && t > 0.0) {
            return Err(Error::InvalidOption {
                option: "--simplify-m",
                reason: format!("{t} is not a usable tolerance; give a number of metres > 0"),
            });
        }
    }
    Ok(())
}

/// The connectivity of a run: summary.json's, or `given` (which must agree with it).
pub(crate) fn connectivity_of(
    summary: Option<Connectivity>,
    given: Option<Connectivity>,
    summary_path: &Path,
) -> Result<Connectivity> {
    match (summary, given) {
        (Some(a), Some(b)) if a != b => Err(Error::InvalidOption {
            option: "--connectivity",
            reason: format!(
                "the run was labelled with {}-neighbour patches ({}); leave --connectivity out or give {}",
                n_of(a),
                summary_path.display(),
                n_of(a)
            ),
        }),
        (Some(a), _) | (None, Some(a)) => Ok(a),
        (None, None) => Err(Error::InvalidOption {
            option: "--connectivity",
            reason: format!(
                "{} does not say how patches were connected; give --connectivity 8 or 4 as in the run",
                summary_path.display()
            ),
        }),
    }
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
    let run_dir: PathBuf = crate::output::parent_folder(classes).to_path_buf();
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
    check_options(opts)?;
    let classes = run_dir.join("classes.tif");
    if !classes.exists() {
        return Err(Error::MissingInput {
            path: classes,
            what: "classes.tif of an areal run",
        });
    }
    let (model, tables) = inputs::read_run(&classes, access, connectivity)?;
    let report = layers::build_and_write(&model, &tables, opts, tmp, &classes)?;
    dir.commit()?;
    Ok(report)
}
