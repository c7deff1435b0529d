//! Occurrence records: read points from a delimited text file or a GDAL point layer and
//! put them into the raster's CRS and into WGS84 longitude/latitude.
//!
//! Contract:
//! - Input: a CSV/TSV file (chosen by the extension `.csv`, `.tsv`, `.txt`, or by looking at
//!   the first bytes of a file with another extension) or any vector file GDAL opens
//!   (GeoJSON, GeoPackage, Shapefile, ...) holding Point or MultiPoint geometries.
//! - CSV coordinates are in `RecordOptions::crs` (default EPSG:4326, x = longitude,
//!   y = latitude, degrees). A layer's own CRS wins over the option; a layer without one
//!   falls back to the option, with a warning.
//! - Every `SpatialRef` made here uses the traditional GIS axis order (x = easting or
//!   longitude), whatever the CRS definition says.
//! - With a geographic records CRS in degrees: latitudes outside -90..90 are an error
//!   (usually swapped columns); longitudes in (180, 360] are shifted by -360 with one warning;
//!   longitudes outside -180..360 are an error.
//! - Output: `Record::x/y` in the raster CRS (`raster_crs_wkt`; an empty string means WGS84
//!   longitude/latitude), `Record::lon/lat` in WGS84 degrees with lon in [-180, 180].
//! - Rows with blank or non-numeric coordinates, null or empty geometries and points that
//!   cannot be transformed are skipped, each with a warning naming its line or feature.
//!   A file with no usable record at all is an error.

mod delimited;
mod layer;
mod reproject;
#[cfg(test)]
mod tests;
#[cfg(test)]
mod tests_layer;

use crate::{Error, Result};
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
            crs: DEFAULT_CRS.into(),
            layer: None,
        }
    }
}

/// The records CRS assumed when none is given.
const DEFAULT_CRS: &str = "EPSG:4326";

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
///
/// `raster_crs_wkt` is the raster's CRS as WKT (or any definition GDAL accepts); an empty
/// string means WGS84 longitude/latitude. See the module documentation for the rules.
///
/// ```no_run
/// use areal::records::{read_records, RecordOptions};
/// # fn main() -> areal::Result<()> {
/// let set = read_records("occurrences.csv".as_ref(), &RecordOptions::default(), "")?;
/// for w in &set.warnings { eprintln!("{w}"); }
/// println!("{} records from columns {:?}", set.records.len(), set.columns);
/// # Ok(()) }
/// ```
pub fn read_records(path: &Path, opts: &RecordOptions, raster_crs_wkt: &str) -> Result<RecordSet> {
    if !path.is_file() {
        return Err(Error::MissingInput {
            path: path.to_path_buf(),
            what: "records file",
        });
    }
    let mut raw = if is_delimited(path)? {
        delimited::read(path, opts)?
    } else {
        layer::read(path, opts)?
    };
    if raw.points.is_empty() {
        return Err(no_usable(path, raw.rows, &raw.warnings));
    }
    if reproject::is_geographic_degrees(&raw.srs) {
        check_geographic(path, &mut raw)?;
    }
    let to = reproject::Reprojector::new(&raw.srs, raster_crs_wkt, raw.crs_label.as_str())?;
    let mut records = Vec::with_capacity(raw.points.len());
    for p in raw.points {
        match to.point(p.x, p.y) {
            Some((x, y, lon, lat)) => records.push(Record {
                origin: p.origin,
                id: p.id,
                x,
                y,
                lon,
                lat,
            }),
            None => raw.warnings.push(format!(
                "{} {}: point ({}, {}) cannot be transformed from the records CRS to the \
                 raster CRS or to WGS84; record skipped",
                path.display(),
                p.origin,
                short(p.x),
                short(p.y)
            )),
        }
    }
    if records.is_empty() {
        return Err(no_usable(path, raw.rows, &raw.warnings));
    }
    Ok(RecordSet {
        path: path.to_path_buf(),
        records,
        columns: raw.columns,
        warnings: raw.warnings,
    })
}

/// A point as read, in the records CRS, before any check or reprojection.
#[derive(Debug)]
struct RawPoint {
    origin: String,
    id: String,
    x: f64,
    y: f64,
}

/// What a reader hands back: points in `srs`, plus what it noticed on the way.
struct RawRecords {
    points: Vec<RawPoint>,
    /// Rows (CSV) or features (layers) seen, for the "no usable records" message.
    rows: usize,
    columns: (String, String),
    warnings: Vec<String>,
    /// The CRS of `x`/`y`, traditional GIS axis order.
    srs: gdal::spatial_ref::SpatialRef,
    /// Where that CRS came from, for error messages ("--records-crs", "layer CRS").
    crs_label: String,
    /// How to fix a latitude outside -90..90, for the error message.
    swap_hint: &'static str,
}

/// Extensions read as delimited text without looking inside.
const DELIMITED_EXT: [&str; 3] = ["csv", "tsv", "txt"];
/// Extensions always handed to GDAL.
const VECTOR_EXT: [&str; 10] = [
    "geojson", "json", "gpkg", "shp", "fgb", "kml", "gml", "gpx", "sqlite", "zip",
];

/// Decide between the delimited-text reader and GDAL: by extension, else by the first bytes.
fn is_delimited(path: &Path) -> Result<bool> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
        .unwrap_or_default();
    if DELIMITED_EXT.contains(&ext.as_str()) {
        return Ok(true);
    }
    if VECTOR_EXT.contains(&ext.as_str()) {
        return Ok(false);
    }
    use std::io::Read;
    let mut head = Vec::with_capacity(4096);
    std::fs::File::open(path)
        .and_then(|f| f.take(4096).read_to_end(&mut head))
        .map_err(Error::input_io(path))?;
    Ok(delimited::looks_delimited(&head))
}

/// Range checks and the 0..360 repair for degrees in a geographic records CRS.
fn check_geographic(path: &Path, raw: &mut RawRecords) -> Result<()> {
    let mut shifted = 0usize;
    let mut first_shifted = String::new();
    for p in &mut raw.points {
        if !(-90.0..=90.0).contains(&p.y) {
            return Err(Error::Records {
                path: path.to_path_buf(),
                reason: format!(
                    "{}: latitude {} is outside -90..90; {}",
                    p.origin, p.y, raw.swap_hint
                ),
            });
        }
        if !(-180.0..=360.0).contains(&p.x) {
            return Err(Error::Records {
                path: path.to_path_buf(),
                reason: format!(
                    "{}: longitude {} is outside -180..360; check the longitude column and \
                     the records CRS",
                    p.origin, p.x
                ),
            });
        }
        if p.x > 180.0 {
            p.x -= 360.0;
            if shifted == 0 {
                first_shifted = p.origin.clone();
            }
            shifted += 1;
        }
    }
    if shifted > 0 {
        raw.warnings.push(format!(
            "{}: {shifted} longitude(s) in 180..360 shifted by -360 degrees into -180..180 \
             (first at {first_shifted})",
            path.display()
        ));
    }
    Ok(())
}

/// A coordinate for a message: as written, or in exponent form when huge (1.01e308).
fn short(v: f64) -> String {
    if v.abs() >= 1e15 {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

/// The error for a file that yields no usable record.
fn no_usable(path: &Path, rows: usize, warnings: &[String]) -> Error {
    if rows == 0 {
        return Error::Records {
            path: path.to_path_buf(),
            reason: "no records: the file has no data rows or features".into(),
        };
    }
    let reason = {
        let first = warnings
            .iter()
            .find(|w| w.contains("skipped"))
            .map(|w| format!("; first: {w}"))
            .unwrap_or_default();
        format!("no usable records: all {rows} rows/features were skipped{first}")
    };
    Error::NoUsableRecords {
        path: path.to_path_buf(),
        reason,
    }
}
