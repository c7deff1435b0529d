//! classes.tif described for GIS, read back through GDAL: the class names in the GeoTIFF's
//! own metadata, the raster attribute table in the sidecar (cells and areas equal to the
//! summary's), the QGIS styles beside the outputs.

mod common;
use common::*;
use gdal::{Dataset, Metadata};
use std::ffi::CStr;

fn demo_run(dir: &std::path::Path, vectors: bool) -> (std::path::PathBuf, serde_json::Value) {
    let out = dir.join("out");
    let (s, r, a) = (
        demo("suitability.tif"),
        demo("records.csv"),
        demo("accessible.geojson"),
    );
    let mut args = vec![
        "range",
        "--suitability",
        s.to_str().unwrap(),
        "--records",
        r.to_str().unwrap(),
        "--omission",
        "5",
        "--accessible",
        a.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ];
    if vectors {
        args.push("--vectors");
    }
    let o = run(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    let summary = json(&out.join("summary.json"));
    (out, summary)
}

#[test]
fn class_names_travel_inside_the_geotiff() {
    let t = tempfile::tempdir().unwrap();
    let (out, _) = demo_run(t.path(), false);
    // Copy the .tif alone: the names must survive without the .aux.xml sidecar.
    let lone = t.path().join("lone.tif");
    std::fs::copy(out.join("classes.tif"), &lone).unwrap();
    let ds = Dataset::open(&lone).unwrap();
    let band = ds.rasterband(1).unwrap();
    assert_eq!(
        band.metadata_item("CLASS_1", "").as_deref(),
        Some("suitable, accessible (in M)")
    );
    assert_eq!(
        band.metadata_item("CLASS_255", "").as_deref(),
        Some("nodata")
    );
    assert!(!t.path().join("lone.tif.aux.xml").exists());
}

#[test]
fn attribute_table_holds_the_summary_cells_and_areas() {
    let t = tempfile::tempdir().unwrap();
    let (out, s) = demo_run(t.path(), false);
    let ds = Dataset::open(out.join("classes.tif")).unwrap();
    let band = ds.rasterband(1).unwrap();
    // SAFETY: the RAT belongs to the band, which lives until the end of this block.
    unsafe {
        let rat = gdal_sys::GDALGetDefaultRAT(band.c_rasterband());
        assert!(!rat.is_null(), "no raster attribute table");
        assert_eq!(gdal_sys::GDALRATGetRowCount(rat), 3);
        let col = |name: &str| {
            (0..gdal_sys::GDALRATGetColumnCount(rat))
                .find(|&i| {
                    CStr::from_ptr(gdal_sys::GDALRATGetNameOfCol(rat, i)).to_str() == Ok(name)
                })
                .unwrap_or_else(|| panic!("no column {name}"))
        };
        let (value, name, cells, area) = (col("value"), col("name"), col("cells"), col("area_km2"));
        let keys = ["unsuitable", "inside_accessible", "outside_accessible"];
        for (row, key) in keys.iter().enumerate() {
            let r = row as i32;
            assert_eq!(gdal_sys::GDALRATGetValueAsInt(rat, r, value), row as i32);
            let n = CStr::from_ptr(gdal_sys::GDALRATGetValueAsString(rat, r, name));
            assert_eq!(n.to_str().unwrap(), areal::class::NAMES[row]);
            assert_eq!(
                gdal_sys::GDALRATGetValueAsDouble(rat, r, cells),
                s["cells"][key].as_u64().unwrap() as f64
            );
            let want = s["area_km2"][key].as_f64().unwrap();
            let got = gdal_sys::GDALRATGetValueAsDouble(rat, r, area);
            assert!((got - want).abs() <= 1e-9 * want, "{key}: {got} vs {want}");
        }
    }
    // The cells per class in the table are the cells in the raster.
    let (_, _, v) = read_u8(&out.join("classes.tif"));
    assert_eq!(
        v.iter().filter(|&&c| c == 2).count() as u64,
        s["cells"]["outside_accessible"].as_u64().unwrap()
    );
}

#[test]
fn qgis_styles_sit_beside_the_outputs() {
    let t = tempfile::tempdir().unwrap();
    let (out, _) = demo_run(t.path(), true);
    let q = std::fs::read_to_string(out.join("classes.qml")).unwrap();
    assert_eq!(q.matches("<paletteEntry ").count(), 3);
    for (v, colour) in [(0, "#dddddd"), (1, "#009e73"), (2, "#e69f00")] {
        assert!(
            q.contains(&format!("value=\"{v}\" color=\"{colour}\"")),
            "{v}"
        );
    }
    // The palette in the QML is the GeoTIFF's colour table.
    let ds = Dataset::open(out.join("classes.tif")).unwrap();
    let band = ds.rasterband(1).unwrap();
    let ct = band.color_table().unwrap();
    let c1 = ct.entry_as_rgb(1).unwrap();
    assert_eq!((c1.r, c1.g, c1.b), (0, 158, 115));
    for layer in ["range", "patches", "unreachable", "accessible", "records"] {
        let s = std::fs::read_to_string(out.join(format!("{layer}.qml"))).unwrap();
        assert!(s.contains("<renderer-v2 "), "{layer}");
    }
    let p = std::fs::read_to_string(out.join("patches.qml")).unwrap();
    assert!(p.contains("attr=\"class\"") && p.matches("<category ").count() == 2);
}
