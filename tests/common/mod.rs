//! Helpers for end-to-end tests: write small rasters and record files into a temp folder,
//! run the real `areal` binary.
#![allow(dead_code)]

use gdal::raster::{Buffer, RasterCreationOptions};
use gdal::spatial_ref::SpatialRef;
use gdal::{Dataset, DriverManager};
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// Write a float32 GeoTIFF. `crs`: an EPSG code, or None for no CRS.
pub fn write_raster(
    path: &Path,
    w: usize,
    h: usize,
    gt: [f64; 6],
    epsg: Option<u32>,
    nodata: Option<f64>,
    values: &[f32],
) {
    assert_eq!(values.len(), w * h);
    let opts = RasterCreationOptions::from_iter(["COMPRESS=DEFLATE"]);
    let mut ds = DriverManager::get_driver_by_name("GTiff")
        .unwrap()
        .create_with_band_type_with_options::<f32, _>(path, w, h, 1, &opts)
        .unwrap();
    ds.set_geo_transform(&gt).unwrap();
    if let Some(code) = epsg {
        ds.set_spatial_ref(&SpatialRef::from_epsg(code).unwrap())
            .unwrap();
    }
    let mut band = ds.rasterband(1).unwrap();
    if let Some(nd) = nodata {
        band.set_no_data_value(Some(nd)).unwrap();
    }
    band.write((0, 0), (w, h), &mut Buffer::new((w, h), values.to_vec()))
        .unwrap();
    ds.close().unwrap();
}

/// The areal binary built by cargo for these tests.
pub fn areal() -> Command {
    Command::new(env!("CARGO_BIN_EXE_areal"))
}

/// Run areal with args; returns the output.
pub fn run(args: &[&str]) -> Output {
    areal().args(args).output().expect("areal runs")
}

/// `areal range` on the demo: its raster, records, E = 5 % and its M, then `extra`.
pub fn demo_range(extra: &[&str]) -> Vec<String> {
    let path = |name: &str| demo(name).to_str().unwrap().to_string();
    let mut args: Vec<String> = vec![
        "range".into(),
        "--suitability".into(),
        path("suitability.tif"),
        "--records".into(),
        path("records.csv"),
        "--omission".into(),
        "5".into(),
        "--accessible".into(),
        path("accessible.geojson"),
    ];
    args.extend(extra.iter().map(|s| s.to_string()));
    args
}

/// The repository's demo-data folder.
pub fn demo(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-data")
        .join(name)
}

/// Read a whole uint8 band.
pub fn read_u8(path: &Path) -> (usize, usize, Vec<u8>) {
    let ds = Dataset::open(path).unwrap();
    let band = ds.rasterband(1).unwrap();
    let (w, h) = band.size();
    let buf = band.read_as::<u8>((0, 0), (w, h), (w, h), None).unwrap();
    (w, h, buf.data().to_vec())
}

/// Parse a CSV file into header and rows of strings.
pub fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let header = r.headers().unwrap().iter().map(String::from).collect();
    let rows = r
        .records()
        .map(|rec| rec.unwrap().iter().map(String::from).collect())
        .collect();
    (header, rows)
}

/// Column index by name.
pub fn col(header: &[String], name: &str) -> usize {
    header
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("column {name} missing in {header:?}"))
}

pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Parse a JSON file. Every `summary.json` read this way from outside the repository (the
/// runs the tests write into temporary folders) is first validated against the committed
/// schema, docs/summary.schema.json (with the jsonschema crate), so every summary the test
/// suite writes and reads is checked.
pub fn json(path: &Path) -> serde_json::Value {
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    // Summaries the tests write (in temporary folders), not committed reference files.
    let committed = path.starts_with(env!("CARGO_MANIFEST_DIR"));
    if path.file_name().is_some_and(|n| n == "summary.json") && !committed {
        let errors = schema_errors(&v);
        assert!(
            errors.is_empty(),
            "{} does not validate against docs/summary.schema.json: {errors:?}",
            path.display()
        );
    }
    v
}

/// The committed schema of summary.json.
pub fn summary_schema() -> serde_json::Value {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/summary.schema.json");
    serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap()
}

/// Validation errors of `summary` against docs/summary.schema.json (empty when valid).
pub fn schema_errors(summary: &serde_json::Value) -> Vec<String> {
    static VALIDATOR: std::sync::OnceLock<jsonschema::Validator> = std::sync::OnceLock::new();
    let v = VALIDATOR.get_or_init(|| {
        jsonschema::validator_for(&summary_schema()).expect("docs/summary.schema.json is a schema")
    });
    v.iter_errors(summary)
        .map(|e| format!("{} at {}", e, e.instance_path))
        .collect()
}
