//! End to end on the bundled demo: the report's numbers agree with the files written,
//! and with values read back independently through GDAL.

mod common;
use common::*;
use gdal::Dataset;

fn run_demo(dir: &std::path::Path) -> serde_json::Value {
    let out = dir.join("out");
    let o = areal()
        .args(demo_range(&["--out", out.to_str().unwrap()]))
        .output()
        .unwrap();
    assert!(o.status.success(), "demo failed: {}", stderr(&o));
    json(&out.join("summary.json"))
}

#[test]
fn inside_plus_outside_is_the_suitable_total() {
    let t = tempfile::tempdir().unwrap();
    let s = run_demo(t.path());
    let a = &s["area_km2"];
    let (inside, outside, suitable) = (
        a["inside_accessible"].as_f64().unwrap(),
        a["outside_accessible"].as_f64().unwrap(),
        a["suitable"].as_f64().unwrap(),
    );
    assert!(
        inside > 0.0 && outside > 0.0,
        "the demo has suitable land on both sides of M"
    );
    assert!((inside + outside - suitable).abs() <= 1e-9 * suitable);
    // Patch areas per class add up to the class areas (patches.csv vs summary.json).
    let (h, rows) = read_csv(&t.path().join("out/patches.csv"));
    let (ic, ia) = (col(&h, "class"), col(&h, "area_km2"));
    for (class, total) in [("1", inside), ("2", outside)] {
        let sum: f64 = rows
            .iter()
            .filter(|r| r[ic] == class)
            .map(|r| r[ia].parse::<f64>().unwrap())
            .sum();
        assert!(
            (sum - total).abs() <= 1e-9 * total,
            "class {class}: {sum} vs {total}"
        );
    }
    assert_eq!(
        rows.iter().filter(|r| r[ic] == "1").count() as u64,
        s["patches"]["inside_accessible"].as_u64().unwrap()
    );
}

#[test]
fn every_record_cell_has_the_class_the_report_says() {
    let t = tempfile::tempdir().unwrap();
    let s = run_demo(t.path());
    let (w, _h, classes) = read_u8(&t.path().join("out/classes.tif"));
    let (hdr, rows) = read_csv(&t.path().join("out/records.csv"));
    let (ir, ic, icl, ist) = (
        col(&hdr, "row"),
        col(&hdr, "col"),
        col(&hdr, "class"),
        col(&hdr, "status"),
    );
    let mut checked = 0;
    for r in &rows {
        if r[ir].is_empty() {
            assert_eq!(r[ist], "outside_raster");
            continue;
        }
        let (row, c): (usize, usize) = (r[ir].parse().unwrap(), r[ic].parse().unwrap());
        assert_eq!(classes[row * w + c].to_string(), r[icl], "record {r:?}");
        checked += 1;
    }
    assert!(checked >= 40);
    assert_eq!(
        s["records"]["outside_raster"], 1,
        "the demo has one record outside the raster"
    );
    assert_eq!(s["records"]["total"].as_u64().unwrap() as usize, rows.len());
}

#[test]
fn threshold_matches_values_sampled_independently() {
    // The rule of docs/threshold.md applied to values sampled here through GDAL at each
    // record's coordinates (one value per occupied cell).
    let t = tempfile::tempdir().unwrap();
    let s = run_demo(t.path());
    let ds = Dataset::open(demo("suitability.tif")).unwrap();
    let gt = ds.geo_transform().unwrap();
    let band = ds.rasterband(1).unwrap();
    let (w, h) = band.size();
    let (hdr, rows) = read_csv(&demo("records.csv"));
    let (ix, iy) = (col(&hdr, "decimalLongitude"), col(&hdr, "decimalLatitude"));
    let mut cells = std::collections::BTreeMap::new();
    for r in &rows {
        let (x, y): (f64, f64) = (r[ix].parse().unwrap(), r[iy].parse().unwrap());
        let c = ((x - gt[0]) / gt[1]).floor();
        let rr = ((y - gt[3]) / gt[5]).floor();
        if c < 0.0 || rr < 0.0 || c >= w as f64 || rr >= h as f64 {
            continue;
        }
        let v = band
            .read_as::<f64>((c as isize, rr as isize), (1, 1), (1, 1), None)
            .unwrap()
            .data()[0];
        if v != -9999.0 {
            cells.insert((rr as i64, c as i64), v);
        }
    }
    let mut v: Vec<f64> = cells.values().copied().collect();
    v.sort_by(f64::total_cmp);
    let k = v.len() * 5 / 100;
    assert_eq!(
        s["threshold"]["records_used"].as_u64().unwrap() as usize,
        v.len()
    );
    assert_eq!(
        s["threshold"]["records_dropped"].as_u64().unwrap() as usize,
        k
    );
    assert_eq!(s["threshold"]["value"].as_f64().unwrap(), v[k]);
    assert!(k >= 2, "the demo's erroneous records are dropped");
}

#[test]
fn classes_tif_is_gis_ready() {
    let t = tempfile::tempdir().unwrap();
    run_demo(t.path());
    let ds = Dataset::open(t.path().join("out/classes.tif")).unwrap();
    let src = Dataset::open(demo("suitability.tif")).unwrap();
    assert_eq!(ds.geo_transform().unwrap(), src.geo_transform().unwrap());
    assert_eq!(ds.spatial_ref().unwrap().auth_code().unwrap(), 4326);
    let band = ds.rasterband(1).unwrap();
    assert_eq!(band.no_data_value(), Some(255.0));
    assert_eq!(band.block_size(), (256, 256), "tiled");
    assert!(band.color_table().is_some());
    let md = ds.metadata_item("COMPRESSION", "IMAGE_STRUCTURE");
    assert_eq!(md.as_deref(), Some("ZSTD"));
    // Category names (GDALGetRasterCategoryNames).
    let names = unsafe { gdal_sys::GDALGetRasterCategoryNames(band.c_rasterband()) };
    assert!(!names.is_null());
    let first = unsafe { std::ffi::CStr::from_ptr(*names.add(1)) }
        .to_string_lossy()
        .into_owned();
    assert!(first.contains("accessible"), "{first}");
}
use gdal::Metadata;

#[test]
fn bare_folder_names_work_relative_to_the_working_folder() {
    // `--out run` (a bare name, whose parent is the empty path) and `areal polygons
    // --classes classes.tif` from inside the run folder: both used to fail after writing,
    // with exit code 4. The tables must equal those of a run given absolute paths.
    let tmp = tempfile::tempdir().unwrap();
    run_demo(tmp.path());
    let o = areal()
        .current_dir(tmp.path())
        .args(demo_range(&["--out", "run"]))
        .output()
        .unwrap();
    assert!(o.status.success(), "bare --out failed: {}", stderr(&o));
    let read = |p: std::path::PathBuf| std::fs::read(p).unwrap();
    let run_dir = tmp.path().join("run");
    assert_eq!(
        read(run_dir.join("patches.csv")),
        read(tmp.path().join("out/patches.csv"))
    );
    let o = areal()
        .current_dir(&run_dir)
        .args(["polygons", "--classes", "classes.tif", "--out", "vec"])
        .args(["--accessible", demo("accessible.geojson").to_str().unwrap()])
        .output()
        .unwrap();
    assert!(o.status.success(), "bare --classes failed: {}", stderr(&o));
    let gj: serde_json::Value =
        serde_json::from_slice(&read(run_dir.join("vec/patches.geojson"))).unwrap();
    let (_, rows) = read_csv(&run_dir.join("patches.csv"));
    assert_eq!(gj["features"].as_array().unwrap().len(), rows.len());
}
