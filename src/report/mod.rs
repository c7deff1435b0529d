//! The run's report: `summary.json` (the contract other tools read), the readable text
//! summary, and the `patches.csv` / `records.csv` tables.
//!
//! Every area is in km2 on the ellipsoid (see `area_method`); every count says what it counts.

mod build;
pub(crate) use build::patch_row;

pub(crate) use build::{build_result, BuildInput};

use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::path::Path;

/// The cautions printed with every result.
pub const CAUTIONS: [&str; 4] = [
    "These areas are model-based estimates: they inherit the errors of the suitability model, the records and the accessible area M.",
    "The tolerated omission E must be chosen before looking at the results; tuning E to reach a wanted area defeats its purpose.",
    "Areas are true areas on the ellipsoid of the raster's CRS, counted cell by cell (a cell is in M when its centre is).",
    "A threat assessment is for the responsible authority and its reviewers; this tool only computes the figures.",
];

/// `summary.json`: the report of one `areal range` run (docs/summary.schema.json).
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct Summary {
    /// Version of areal that wrote it.
    pub areal_version: String,
    /// Input files and the grid.
    pub inputs: InputsReport,
    /// The threshold.
    pub threshold: ThresholdReport,
    /// What happened to the records.
    pub records: RecordsReport,
    /// How M was made.
    pub accessible: AccessReport,
    /// Areas, km2.
    pub area_km2: AreaReport,
    /// Cell counts per class.
    pub cells: CellReport,
    /// Patch counts.
    pub patches: PatchReport,
    /// How areas were computed.
    pub area_method: String,
    /// Repairs, exclusions and other things the user should know.
    pub warnings: Vec<String>,
    /// The usual cautions.
    pub cautions: Vec<String>,
    /// EOO, AOO, criterion B comparison, patch structure and reach (docs/eoo-aoo.md);
    /// null when the metrics were not computed.
    pub metrics: Option<crate::metrics::Metrics>,
    /// Area against the tolerated omission E (0, 1, 2, 5, 10 % and the run's own E), from
    /// the same pass; empty with a fixed threshold or a binary input. For reading only: E is
    /// fixed before looking at the results.
    #[serde(default)]
    pub sensitivity: Vec<SensitivityRow>,
    /// The `areal range` command that reproduces the run, one argument per item: options in a
    /// fixed order, defaults and `--out` left out (shown in the report).
    #[serde(default)]
    pub command_line: Vec<String>,
}

/// One row of `sensitivity`: what the omission rule gives with E = `omission_percent`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, schemars::JsonSchema)]
pub struct SensitivityRow {
    /// E, percent.
    pub omission_percent: f64,
    /// T with that E.
    pub threshold: f64,
    /// k: lowest values dropped.
    pub records_dropped: usize,
    /// Suitable area (classes 1 + 2) at that T, km2.
    pub area_km2_suitable: f64,
    /// Suitable area inside M (class 1) at that T, km2.
    pub area_km2_inside_accessible: f64,
}

/// Inputs and grid.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct InputsReport {
    /// Suitability raster path.
    pub suitability: String,
    /// Records path.
    pub records: String,
    /// Record coordinate columns used.
    pub record_columns: [String; 2],
    /// Raster width (columns).
    pub width: usize,
    /// Raster height (rows).
    pub height: usize,
    /// GDAL geotransform.
    pub geo_transform: [f64; 6],
    /// Raster CRS name.
    pub crs_name: String,
    /// Whether the raster CRS is geographic.
    pub crs_geographic: bool,
    /// Whether the grid spans 360 degrees of longitude (patches join across the antimeridian).
    pub wraps_antimeridian: bool,
    /// Band data type.
    pub data_type: String,
    /// Band nodata value.
    pub nodata: Option<f64>,
}

/// The threshold section.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct ThresholdReport {
    /// T (cells with suitability >= T are suitable).
    pub value: f64,
    /// The rule, in words.
    pub method: String,
    /// The tolerated omission E, percent, when the omission rule was used.
    pub omission_percent: Option<f64>,
    /// n: values the rule saw (one per occupied cell unless duplicates were kept).
    pub records_used: usize,
    /// k: lowest values dropped.
    pub records_dropped: usize,
    /// Record values strictly below T.
    pub records_omitted: usize,
    /// Whether n counts one value per occupied cell (false: every record).
    pub one_value_per_cell: bool,
    /// Whether the raster held only 0 and 1, so thresholding was skipped (1 = suitable).
    pub binary_input: bool,
}

/// The records section.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct RecordsReport {
    /// Records read from the file (after skipped rows).
    pub total: usize,
    /// Records on a data cell of the raster.
    pub usable: usize,
    /// Records outside the raster.
    pub outside_raster: usize,
    /// Records on a nodata cell.
    pub on_nodata: usize,
    /// Distinct cells holding usable records.
    pub occupied_cells: usize,
    /// Records excluded, each with its origin and reason.
    pub excluded: Vec<ExcludedRecord>,
}

/// A record that was excluded.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct ExcludedRecord {
    /// "line 14" or "feature 3".
    pub origin: String,
    /// The record's id, if any.
    pub id: String,
    /// Why.
    pub reason: String,
}

/// The accessible-area section.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct AccessReport {
    /// How M was made.
    pub description: String,
    /// Whether M is the whole raster.
    pub whole_raster: bool,
    /// The M polygon file (`--accessible`), as an absolute path when it could be resolved.
    #[serde(default)]
    pub polygon: Option<String>,
    /// `--buffer-km`.
    #[serde(default)]
    pub buffer_km: Option<f64>,
    /// `--hull-buffer-km`.
    #[serde(default)]
    pub hull_buffer_km: Option<f64>,
}

/// Areas, km2.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct AreaReport {
    /// All suitable cells (classes 1 + 2).
    pub suitable: f64,
    /// Suitable inside M (class 1).
    pub inside_accessible: f64,
    /// Suitable outside M (class 2).
    pub outside_accessible: f64,
    /// Class-1 patches holding at least one record.
    pub occupied: f64,
    /// Data cells below the threshold (class 0).
    pub unsuitable: f64,
    /// Area of M on the raster's data cells.
    pub accessible: f64,
}

/// Cell counts.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct CellReport {
    /// Class 0.
    pub unsuitable: u64,
    /// Class 1.
    pub inside_accessible: u64,
    /// Class 2.
    pub outside_accessible: u64,
    /// Nodata cells.
    pub nodata: u64,
}

/// Patch counts.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct PatchReport {
    /// Class-1 patches.
    pub inside_accessible: usize,
    /// Class-2 patches.
    pub outside_accessible: usize,
    /// Class-1 patches holding at least one record.
    pub occupied: usize,
    /// 8 or 4.
    pub connectivity: u8,
}

/// One row of `patches.csv`.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct PatchRow {
    /// Patch id (scan order of its first cell).
    pub patch_id: u32,
    /// 1 inside M, 2 outside.
    pub class: u8,
    /// Number of cells.
    pub cells: u64,
    /// Area, km2.
    pub area_km2: f64,
    /// Area-weighted centroid of cell centres, WGS84 degrees.
    pub centroid_lon: f64,
    /// Area-weighted centroid of cell centres, WGS84 degrees.
    pub centroid_lat: f64,
    /// Bounding box of the cells (edges), WGS84; min_lon > max_lon when it crosses 180.
    pub min_lon: f64,
    /// Bounding box south edge.
    pub min_lat: f64,
    /// Bounding box east edge.
    pub max_lon: f64,
    /// Bounding box north edge.
    pub max_lat: f64,
    /// Usable records inside the patch.
    pub records: u64,
    /// Edge-to-edge geodesic distance to the nearest other patch, km (empty without metrics).
    pub nearest_patch_km: Option<f64>,
    /// Edge-to-edge geodesic distance to the nearest other occupied patch, km.
    pub nearest_occupied_km: Option<f64>,
    /// Reached from the occupied patches by jumps of at most `--gap-km` (empty without it);
    /// `TRUE`/`FALSE` in the CSV, the Boolean literals R, pandas and GDAL read as Booleans.
    #[serde(serialize_with = "csv_bool")]
    pub reachable: Option<bool>,
    /// Fewest jumps that reach it (0 for occupied patches; empty when unreached).
    pub reach_jumps: Option<u32>,
}

/// One row of `records.csv`.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct RecordRow {
    /// "line 14" or "feature 3".
    pub origin: String,
    /// The record's id, if any.
    pub id: String,
    /// WGS84 longitude.
    pub lon: f64,
    /// WGS84 latitude.
    pub lat: f64,
    /// Raster row, empty when outside.
    pub row: Option<usize>,
    /// Raster column, empty when outside.
    pub col: Option<usize>,
    /// Suitability of its cell, empty when outside or nodata.
    pub suitability: Option<f64>,
    /// Class of its cell (0, 1, 2, 255), empty when outside.
    pub class: Option<u8>,
    /// used, below_threshold, outside_raster or on_nodata.
    pub status: RecordStatus,
}

/// Where a record stands after the pass.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RecordStatus {
    /// On a cell at or above the threshold.
    Used,
    /// On a data cell below the threshold: dropped by it.
    BelowThreshold,
    /// Outside the raster: excluded.
    OutsideRaster,
    /// On a nodata cell: excluded.
    OnNodata,
}

impl RecordStatus {
    /// The word written in records.csv.
    pub fn as_str(self) -> &'static str {
        match self {
            RecordStatus::Used => "used",
            RecordStatus::BelowThreshold => "below_threshold",
            RecordStatus::OutsideRaster => "outside_raster",
            RecordStatus::OnNodata => "on_nodata",
        }
    }

    /// Whether the record is excluded from everything (outside the raster or on nodata).
    pub fn excluded(self) -> bool {
        matches!(self, RecordStatus::OutsideRaster | RecordStatus::OnNodata)
    }
}

/// A Boolean CSV cell: `TRUE`, `FALSE`, or empty when unknown (R's `read.csv`, pandas and
/// GDAL's CSV driver with type detection all read these as Booleans; `true`/`false` would be
/// text to R).
fn csv_bool<S: serde::Serializer>(v: &Option<bool>, s: S) -> std::result::Result<S::Ok, S::Error> {
    match v {
        Some(true) => s.serialize_str("TRUE"),
        Some(false) => s.serialize_str("FALSE"),
        None => s.serialize_none(),
    }
}

/// The JSON Schema (draft 2020-12) of `summary.json`, generated from [`Summary`] and the
/// sections `areal change` adds ([`crate::change::ChangeReport`]: `change`, `changes`,
/// `agreement`; absent from an `areal range` run); the committed copy is
/// docs/summary.schema.json (`areal schema` prints it).
pub fn summary_schema() -> String {
    let mut gen = schemars::SchemaGenerator::default();
    let change = gen.subschema_for::<Option<crate::change::ChangeReport>>();
    let changes = gen.subschema_for::<Vec<crate::change::ChangeReport>>();
    let mut schema = gen.root_schema_for::<Summary>();
    // Every key of the change section is always written (null where it does not apply): all
    // are required, nullable ones included.
    if let Some(defs) = schema.get_mut("$defs").and_then(|d| d.as_object_mut()) {
        for (name, def) in defs.iter_mut() {
            let ours = ["Change", "DispersalRules", "PerClass", "PatchCounts"];
            if !ours.iter().any(|p| name.starts_with(p)) {
                continue;
            }
            let keys: Vec<serde_json::Value> = def
                .get("properties")
                .and_then(|p| p.as_object())
                .map(|p| p.keys().map(|k| k.as_str().into()).collect())
                .unwrap_or_default();
            if let Some(d) = def.as_object_mut() {
                d.insert("required".into(), keys.into());
            }
        }
    }
    let props = schema
        .ensure_object()
        .get_mut("properties")
        .and_then(|p| p.as_object_mut())
        .expect("Summary has properties");
    let described = |mut s: schemars::Schema, text: &str| {
        s.insert("description".into(), text.into());
        s
    };
    props.insert(
        "change".into(),
        described(change, "`areal change` with one future: the change from the present range to that future's (null with several futures; see `changes`). Absent from `areal range`.").into(),
    );
    props.insert(
        "changes".into(),
        described(changes, "`areal change` with several futures: one change section per future, in the order given.").into(),
    );
    props.insert(
        "agreement".into(),
        serde_json::json!({"type": "string", "description": "`areal change` with several futures: what agreement.tif holds."}),
    );
    serde_json::to_string_pretty(&schema).expect("the schema serialises") + "\n"
}

/// Write rows as CSV with a header.
pub(crate) fn write_csv<T: Serialize>(path: &Path, rows: &[T]) -> Result<()> {
    let fail = |e: csv::Error| Error::Output {
        path: path.to_path_buf(),
        reason: format!("writing CSV: {e}"),
    };
    let mut w = csv::Writer::from_path(path).map_err(fail)?;
    for r in rows {
        w.serialize(r).map_err(fail)?;
    }
    w.flush().map_err(Error::io(path))
}

impl Summary {
    /// The readable summary printed on stdout.
    pub fn to_text(&self) -> String {
        let a = &self.area_km2;
        let t = &self.threshold;
        let r = &self.records;
        let p = &self.patches;
        let mut s = String::new();
        let mut line = |l: String| {
            s.push_str(&l);
            s.push('\n');
        };
        line(format!(
            "areal {}: range from {}",
            self.areal_version, self.inputs.suitability
        ));
        line(format!(
            "  grid            {} x {} cells, {}{}",
            self.inputs.width,
            self.inputs.height,
            self.inputs.crs_name,
            if self.inputs.wraps_antimeridian {
                " (global, wraps at 180)"
            } else {
                ""
            }
        ));
        line(format!(
            "  records         {} read, {} usable in {} cells, {} outside the raster, {} on nodata",
            r.total, r.usable, r.occupied_cells, r.outside_raster, r.on_nodata
        ));
        if t.binary_input {
            line("  threshold       binary input: thresholding skipped (1 = suitable)".into());
        } else {
            line(format!("  threshold       T = {} ({})", t.value, t.method));
            line(format!(
                "                  n = {} values, k = {} dropped, {} below T",
                t.records_used, t.records_dropped, t.records_omitted
            ));
        }
        line(format!("  accessible M    {}", self.accessible.description));
        line(format!("  suitable        {:>14.3} km2", a.suitable));
        line(format!(
            "    inside M      {:>14.3} km2 in {} patch(es)",
            a.inside_accessible, p.inside_accessible
        ));
        line(format!(
            "    beyond M      {:>14.3} km2 in {} patch(es)",
            a.outside_accessible, p.outside_accessible
        ));
        line(format!(
            "  occupied        {:>14.3} km2 in {} patch(es) holding records",
            a.occupied, p.occupied
        ));
        line(format!("  area method     {}", self.area_method));
        line(format!("  connectivity    {}-neighbour", p.connectivity));
        if let Some(m) = &self.metrics {
            for l in m.text_lines() {
                line(l);
            }
        }
        for w in &self.warnings {
            line(format!("  warning: {w}"));
        }
        line("  cautions:".into());
        for c in &self.cautions {
            line(format!("    - {c}"));
        }
        s
    }
}
