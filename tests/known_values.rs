//! End to end against outside values: a labelled 6 x 6 grid constructed by hand (patch counts
//! checked with scipy.ndimage.label; areas from the closed-form ellipsoidal cell area of
//! Snyder 1987 eq. 3-12, computed in Python), and a global grid whose patch
//! crosses the antimeridian.

mod common;
use common::*;

// Constructed by hand, labels checked with scipy.ndimage.label; row 0 northernmost.
const GRID: [[u8; 6]; 6] = [
    [1, 1, 0, 0, 0, 1],
    [1, 0, 0, 0, 1, 0],
    [0, 0, 1, 0, 0, 0],
    [0, 1, 0, 1, 1, 0],
    [0, 0, 0, 0, 1, 0],
    [1, 0, 0, 1, 0, 1],
];

fn six_by_six(dir: &std::path::Path, connectivity: &str) -> (serde_json::Value, Vec<f64>) {
    let values: Vec<f32> = GRID
        .iter()
        .flatten()
        .map(|&v| if v == 1 { 0.9 } else { 0.1 })
        .collect();
    let tif = dir.join("s.tif");
    let cell = 1.0 / 120.0;
    write_raster(
        &tif,
        6,
        6,
        [10.0, cell, 0.0, 60.05, 0.0, -cell],
        Some(4326),
        None,
        &values,
    );
    // One record in the north-west patch (cell row 0, col 0).
    let rec = dir.join("r.csv");
    std::fs::write(
        &rec,
        format!("lon,lat\n{},{}\n", 10.0 + cell / 2.0, 60.05 - cell / 2.0),
    )
    .unwrap();
    let out = dir.join(format!("out{connectivity}"));
    let o = run(&[
        "range",
        "--suitability",
        tif.to_str().unwrap(),
        "--records",
        rec.to_str().unwrap(),
        "--threshold",
        "0.5",
        "--connectivity",
        connectivity,
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let (h, rows) = read_csv(&out.join("patches.csv"));
    let ia = col(&h, "area_km2");
    (
        json(&out.join("summary.json")),
        rows.iter().map(|r| r[ia].parse().unwrap()).collect(),
    )
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * b.abs()
}

#[test]
fn eight_connected_patches_of_the_checks_grid() {
    let t = tempfile::tempdir().unwrap();
    let (s, areas) = six_by_six(t.path(), "8");
    // 8-conn areas (Snyder 1987 closed form, computed in Python): [1.293493080, 0.862364745,
    // 3.020599862, 0.431668611] km2.
    let want = [1.293493080, 0.862364745, 3.020599862, 0.431668611];
    assert_eq!(areas.len(), 4);
    for (a, w) in areas.iter().zip(want) {
        assert!((a - w).abs() < 1e-9, "{a} vs {w}");
    }
    assert!(
        close(s["area_km2"]["suitable"].as_f64().unwrap(), 5.608126298),
        "total 5.608126298 km2"
    );
    assert_eq!(s["patches"]["occupied"], 1);
    assert!((s["area_km2"]["occupied"].as_f64().unwrap() - 1.293493080).abs() < 1e-9);
}

#[test]
fn four_connected_patches_of_the_checks_grid() {
    let t = tempfile::tempdir().unwrap();
    let (s, areas) = six_by_six(t.path(), "4");
    // 4-conn areas in scan order (Snyder 1987 closed form, computed in Python).
    let want = [
        1.293493080,
        0.431128335,
        0.431236410,
        0.431344475,
        0.431452530,
        1.294465635,
        0.431668611,
        0.431668611,
        0.431668611,
    ];
    assert_eq!(areas.len(), want.len());
    for (a, w) in areas.iter().zip(want) {
        assert!((a - w).abs() < 1e-9, "{a} vs {w}");
    }
    assert_eq!(s["patches"]["inside_accessible"], 9);
}

#[test]
fn patch_joins_across_the_antimeridian() {
    // A global 1-degree grid; suitable cells in the first and last column of rows 40..42
    // (latitudes 49..47 N) form one patch across 180 degrees.
    let t = tempfile::tempdir().unwrap();
    let (w, h) = (360, 180);
    let mut v = vec![0.1f32; w * h];
    for r in 40..42 {
        v[r * w] = 0.9;
        v[r * w + w - 1] = 0.9;
    }
    let tif = t.path().join("g.tif");
    write_raster(
        &tif,
        w,
        h,
        [-180.0, 1.0, 0.0, 90.0, 0.0, -1.0],
        Some(4326),
        None,
        &v,
    );
    let rec = t.path().join("r.csv");
    std::fs::write(&rec, "lon,lat\n179.5,49.5\n").unwrap();
    let out = t.path().join("out");
    let o = run(&[
        "range",
        "--suitability",
        tif.to_str().unwrap(),
        "--records",
        rec.to_str().unwrap(),
        "--omission",
        "0",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let (hd, rows) = read_csv(&out.join("patches.csv"));
    assert_eq!(rows.len(), 1, "one patch across the antimeridian: {rows:?}");
    let g = |n: &str| rows[0][col(&hd, n)].parse::<f64>().unwrap();
    // Four 1-degree cells: two in 49-50 N and two in 48-49 N. The 1x1 degree cell area at
    // 45-46 N is 8 686.494 956 670 km2 (Snyder 1987 eq. 3-12); here we use the closed form
    // checked against GeographicLib in the area module's tests, recomputed independently:
    let q = |phi: f64| {
        let e2: f64 = 0.0066943799901413165;
        let e = e2.sqrt();
        let s = phi.to_radians().sin();
        (1.0 - e2) * (s / (1.0 - e2 * s * s) + (e * s).atanh() / e)
    };
    let a2 = 6378137.0f64.powi(2) / 2.0 * 1f64.to_radians();
    let want = 2.0 * a2 * (q(50.0) - q(48.0)) / 1e6;
    assert!(
        (g("area_km2") - want).abs() <= 1e-9 * want,
        "{} vs {want}",
        g("area_km2")
    );
    assert_eq!(
        (g("min_lon"), g("max_lon")),
        (179.0, -179.0),
        "box crosses 180"
    );
    assert_eq!((g("min_lat"), g("max_lat")), (48.0, 50.0));
    assert!(
        g("centroid_lon").abs() > 179.9,
        "circular mean at 180, got {}",
        g("centroid_lon")
    );
    assert_eq!(g("records"), 1.0);
}

#[test]
fn projected_equal_area_raster_uses_the_cell_size_and_reports_lonlat() {
    // PROJ via pyproj: a 100 km x 100 km square in LAEA(45N, 10E),
    // x, y in [-50 km, 50 km], has planar (= true) area 10 000 km2 and corners
    // (-50,-50) -> (9.3707744512, 44.5483289527), (+50,-50) -> (10.6292255488, 44.5483289527),
    // (+50,+50) -> (10.6391404787, 45.4481297914), (-50,+50) -> (9.3608595213, 45.4481297914).
    let t = tempfile::tempdir().unwrap();
    let tif = t.path().join("laea.tif");
    {
        use gdal::raster::Buffer;
        use gdal::spatial_ref::SpatialRef;
        let mut ds = gdal::DriverManager::get_driver_by_name("GTiff")
            .unwrap()
            .create_with_band_type::<f32, _>(&tif, 10, 10, 1)
            .unwrap();
        ds.set_geo_transform(&[-50_000.0, 10_000.0, 0.0, 50_000.0, 0.0, -10_000.0])
            .unwrap();
        let srs = SpatialRef::from_proj4(
            "+proj=laea +lat_0=45 +lon_0=10 +x_0=0 +y_0=0 +ellps=WGS84 +units=m +no_defs",
        )
        .unwrap();
        ds.set_spatial_ref(&srs).unwrap();
        let mut band = ds.rasterband(1).unwrap();
        band.write(
            (0, 0),
            (10, 10),
            &mut Buffer::new((10, 10), vec![0.8f32; 100]),
        )
        .unwrap();
    }
    let rec = t.path().join("r.csv");
    std::fs::write(&rec, "decimalLongitude,decimalLatitude\n10.0,45.0\n").unwrap();
    let out = t.path().join("out");
    let o = run(&[
        "range",
        "--suitability",
        tif.to_str().unwrap(),
        "--records",
        rec.to_str().unwrap(),
        "--omission",
        "0",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let s = json(&out.join("summary.json"));
    assert!((s["area_km2"]["suitable"].as_f64().unwrap() - 10_000.0).abs() < 1e-6);
    assert!(
        s["area_method"]
            .as_str()
            .unwrap()
            .to_lowercase()
            .contains("equal"),
        "{}",
        s["area_method"]
    );
    let (h, rows) = read_csv(&out.join("patches.csv"));
    assert_eq!(rows.len(), 1);
    let g = |n: &str| rows[0][col(&h, n)].parse::<f64>().unwrap();
    assert!(
        (g("min_lon") - 9.3608595213).abs() < 1e-6,
        "{}",
        g("min_lon")
    );
    assert!(
        (g("max_lon") - 10.6391404787).abs() < 1e-6,
        "{}",
        g("max_lon")
    );
    assert!(
        (g("min_lat") - 44.5483289527).abs() < 1e-6,
        "{}",
        g("min_lat")
    );
    assert!(
        g("max_lat") > 45.4481297914,
        "the top edge bulges north of its corners"
    );
    // The centroid of the square is the projection centre (10 E, 45 N).
    assert!((g("centroid_lon") - 10.0).abs() < 1e-9 && (g("centroid_lat") - 45.0).abs() < 1e-9);
    assert_eq!(g("records"), 1.0);
}

#[test]
fn binary_raster_skips_thresholding() {
    let t = tempfile::tempdir().unwrap();
    let v: Vec<f32> = (0..100)
        .map(|i| if i % 10 < 4 { 1.0 } else { 0.0 })
        .collect();
    let tif = t.path().join("bin.tif");
    write_raster(
        &tif,
        10,
        10,
        [0.0, 0.1, 0.0, 1.0, 0.0, -0.1],
        Some(4326),
        None,
        &v,
    );
    // Records on a 1 cell and on a 0 cell: the omission rule would give T = 0 (all suitable).
    let rec = t.path().join("r.csv");
    std::fs::write(&rec, "lon,lat\n0.05,0.95\n0.95,0.95\n").unwrap();
    let out = t.path().join("out");
    let o = run(&[
        "range",
        "--suitability",
        tif.to_str().unwrap(),
        "--records",
        rec.to_str().unwrap(),
        "--omission",
        "0",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let s = json(&out.join("summary.json"));
    assert_eq!(s["threshold"]["binary_input"], true);
    assert_eq!(
        s["cells"]["inside_accessible"], 40,
        "only the 1 cells are suitable"
    );
    assert!(s["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w.as_str().unwrap().contains("binary")));
}
