//! Occurrence records. OWNER: records helper. Interface below is fixed; fill in the bodies.

use crate::Result;
use std::path::{Path, PathBuf};

/// Options for reading records.
#[derive(Debug, Clone)]
pub struct RecordOptions {
    /// Column holding longitude (or x); auto-detected when `None`.
    pub lon_col: Option<String>,
    /// Column holding latitude (or y); auto-detected when `None`.
    pub lat_col: Option<String>,
    /// CRS of the coordinates in a CSV file (any string GDAL's SetFromUserInput takes). Default "EPSG:4326".
    pub crs: String,
    /// Layer name for multi-layer vector files; first layer when `None`.
    pub layer: Option<String>,
}

impl Default for RecordOptions {
    fn default() -> Self {
        RecordOptions {
            lon_col: None,
            lat_col: None,
            crs: "EPSG:4326".into(),
            layer: None,
        }
    }
}

/// One occurrence record.
#[derive(Debug, Clone, PartialEq)]
pub struct Record {
    /// Where it came from: "line 14" for CSV (1-based file line, header is line 1), "feature 3" for vector layers.
    pub origin: String,
    /// The record's own id if the file has an `id`/`occurrenceID`/`gbifID` column, else empty.
    pub id: String,
    /// Coordinates in the raster's CRS.
    pub x: f64,
    /// Coordinates in the raster's CRS.
    pub y: f64,
    /// WGS84 longitude, degrees, in [-180, 180].
    pub lon: f64,
    /// WGS84 latitude, degrees.
    pub lat: f64,
}

/// The records of one file, reprojected.
#[derive(Debug, Clone)]
pub struct RecordSet {
    /// The file read.
    pub path: PathBuf,
    /// The usable records, in file order.
    pub records: Vec<Record>,
    /// The columns used, e.g. ("decimalLongitude", "decimalLatitude"), or ("geometry", "geometry").
    pub columns: (String, String),
    /// Notes on repairs and skipped rows, one line each, naming the line.
    pub warnings: Vec<String>,
}

/// Read records from a CSV or a GDAL point layer, reproject them to `raster_crs_wkt`.
pub fn read_records(
    _path: &Path,
    _opts: &RecordOptions,
    _raster_crs_wkt: &str,
) -> Result<RecordSet> {
    todo!()
}
