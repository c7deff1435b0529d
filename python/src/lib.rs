//! Python bindings of areal (PyO3): the whole range run, the threshold rule on arrays and
//! the true cell areas of a grid. The Python wrapper (`areal/__init__.py`) turns the JSON
//! summary into a dict and names the output files; this crate only converts and calls the
//! library, with no computation of its own.

use areal::access::AccessSpec;
use areal::metrics::MetricsOptions;
use areal::patches::Connectivity;
use areal::records::RecordOptions;
use areal::vectors::{VectorCrs, VectorOptions};
use areal::{RangeOptions, ThresholdSpec};
use numpy::{IntoPyArray, PyArray2, PyReadonlyArray1};
use pyo3::exceptions::PyException;
use pyo3::prelude::*;
use std::path::PathBuf;

pyo3::create_exception!(
    _areal,
    ArealError,
    PyException,
    "An areal error: bad input, a bad option, an output problem or a failed computation; \
     the message names the file, record or option and what to do. `.exit_code` is the \
     code the command-line tool would exit with (2 option, 3 input, 4 output, 5 processing)."
);

/// An areal error as an `ArealError` carrying the CLI's exit code.
fn err(py: Python<'_>, e: areal::Error) -> PyErr {
    let pe = ArealError::new_err(e.to_string());
    let _ = pe.value(py).setattr("exit_code", e.exit_code());
    pe
}

/// `areal range`: returns summary.json as a JSON string. Keyword names and meanings are the
/// CLI options'.
#[pyfunction]
#[pyo3(signature = (
    suitability, records, out, *, omission=None, threshold=None, accessible=None,
    buffer_km=None, hull_buffer_km=None, connectivity=8, keep_duplicates=false,
    lon_col=None, lat_col=None, records_crs="EPSG:4326".to_string(), records_layer=None,
    overwrite=false, vectors=false, vector_crs=None, simplify_m=None, aoo_cell_km=2.0,
    min_patch_km2=None, gap_km=None, keep_dropped=false, metrics=true
))]
#[allow(clippy::too_many_arguments)]
fn run_range(
    py: Python<'_>,
    suitability: PathBuf,
    records: PathBuf,
    out: PathBuf,
    omission: Option<f64>,
    threshold: Option<f64>,
    accessible: Option<PathBuf>,
    buffer_km: Option<f64>,
    hull_buffer_km: Option<f64>,
    connectivity: u8,
    keep_duplicates: bool,
    lon_col: Option<String>,
    lat_col: Option<String>,
    records_crs: String,
    records_layer: Option<String>,
    overwrite: bool,
    vectors: bool,
    vector_crs: Option<String>,
    simplify_m: Option<f64>,
    aoo_cell_km: f64,
    min_patch_km2: Option<f64>,
    gap_km: Option<f64>,
    keep_dropped: bool,
    metrics: bool,
) -> PyResult<String> {
    let spec = threshold_spec(omission, threshold).map_err(|e| err(py, e))?;
    let connectivity = match connectivity {
        8 => Connectivity::Eight,
        4 => Connectivity::Four,
        _ => {
            return Err(err(
                py,
                areal::Error::InvalidOption {
                    option: "connectivity",
                    reason: format!("{connectivity}: give 8 or 4"),
                },
            ))
        }
    };
    let metrics = MetricsOptions {
        enabled: metrics,
        aoo_cell_km,
        min_patch_km2,
        gap_km,
        keep_dropped,
    };
    metrics.check().map_err(|e| err(py, e))?;
    let vectors =
        (vectors || vector_crs.is_some() || simplify_m.is_some()).then(|| VectorOptions {
            equal_area: vector_crs.map(|c| {
                if c.eq_ignore_ascii_case("auto") {
                    VectorCrs::Auto
                } else {
                    VectorCrs::Given(c)
                }
            }),
            simplify_m,
            ..Default::default()
        });
    let opts = RangeOptions {
        threshold: spec,
        access: AccessSpec {
            polygon: accessible,
            buffer_km,
            hull_buffer_km,
        },
        connectivity,
        keep_duplicates,
        records: RecordOptions {
            lon_col,
            lat_col,
            crs: records_crs,
            layer: records_layer,
        },
        progress: Default::default(),
        vectors,
        metrics,
        model: Default::default(),
        // report.html and map.png, as every areal range writes them; no command line to record.
        report: true,
    };
    let result = py
        .detach(|| areal::run_range(&suitability, &records, &opts, &out, overwrite))
        .map_err(|e| err(py, e))?;
    Ok(serde_json::to_string(&result.summary).expect("the summary serialises"))
}

fn threshold_spec(omission: Option<f64>, threshold: Option<f64>) -> areal::Result<ThresholdSpec> {
    match (omission, threshold) {
        (Some(e), None) => ThresholdSpec::omission(e),
        (None, Some(v)) => ThresholdSpec::fixed(v),
        _ => Err(areal::Error::InvalidOption {
            option: "omission",
            reason: "give exactly one of omission=E (percent) and threshold=V".into(),
        }),
    }
}

/// The threshold rule on an array of record values: (T, method, n, k, omitted).
#[pyfunction]
#[pyo3(signature = (values, *, omission=None, threshold=None))]
fn omission_threshold(
    py: Python<'_>,
    values: PyReadonlyArray1<'_, f64>,
    omission: Option<f64>,
    threshold: Option<f64>,
) -> PyResult<(f64, String, usize, usize, usize)> {
    let spec = threshold_spec(omission, threshold).map_err(|e| err(py, e))?;
    let v = values.as_array().to_vec();
    let t = areal::omission_threshold(&v, spec).map_err(|e| err(py, e))?;
    Ok((
        t.value,
        t.method,
        t.records_used,
        t.records_dropped,
        t.records_omitted,
    ))
}

/// True area of every cell of a grid, km2, as a (height, width) array; plus the method in
/// words. `transform` is GDAL's geotransform; `crs` an EPSG code, WKT or PROJ string.
#[pyfunction]
fn cell_areas_km2<'py>(
    py: Python<'py>,
    width: usize,
    height: usize,
    transform: [f64; 6],
    crs: &str,
) -> PyResult<(Bound<'py, PyArray2<f64>>, String)> {
    let grid = areal::GridSpec::with_crs(width, height, transform, crs).map_err(|e| err(py, e))?;
    let mut areas = areal::area::CellAreas::new(&grid).map_err(|e| err(py, e))?;
    let mut out = Vec::with_capacity(width * height);
    for row in 0..height {
        let r = areas.row_allow_outside(row).map_err(|e| err(py, e))?;
        out.extend((0..width).map(|c| r.get(c) / 1e6));
    }
    let arr = numpy::ndarray::Array2::from_shape_vec((height, width), out)
        .expect("height x width values");
    Ok((arr.into_pyarray(py), areas.describe()))
}

/// The grid of a raster file: (width, height, geotransform, CRS WKT), as areal reads it.
#[pyfunction]
fn raster_grid(py: Python<'_>, path: PathBuf) -> PyResult<(usize, usize, [f64; 6], String)> {
    let g = areal::GridSpec::of_raster(&path).map_err(|e| err(py, e))?;
    Ok((g.width, g.height, g.geo_transform, g.crs_wkt.clone()))
}

/// The compiled part of the `areal` Python package.
#[pymodule]
fn _areal(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add("ArealError", m.py().get_type::<ArealError>())?;
    m.add("__version__", env!("CARGO_PKG_VERSION"))?;
    m.add_function(wrap_pyfunction!(run_range, m)?)?;
    m.add_function(wrap_pyfunction!(omission_threshold, m)?)?;
    m.add_function(wrap_pyfunction!(cell_areas_km2, m)?)?;
    m.add_function(wrap_pyfunction!(raster_grid, m)?)?;
    Ok(())
}
