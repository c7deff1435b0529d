//! End to end, continued from tests/vectors.rs: `--vectors` on regional, global, projected and
//! spilled runs, and `areal polygons` refusing a patch table of another run.
//!
//! Outside checks as in tests/vectors.rs: geodesic polygon areas from GeographicLib
//! (geographiclib-rs, Karney 2013) against the cell-area sums of patches.csv; RFC 7946
//! antimeridian cutting (section 3.1.9); PROJ for the equal-area CRSs.

mod common;
mod vectors_common;
use common::*;
use vectors_common::*;

use gdal::vector::LayerAccess;

#[test]
fn regional_equal_area_is_laea_centred_on_the_data() {
    let t = tempfile::tempdir().unwrap();
    let out = regional_run(t.path(), &["--vectors", "--vector-crs"]);
    let ds = gdal::Dataset::open(out.join("range-equal-area.gpkg")).unwrap();
    let layer = ds.layer_by_name("patches").unwrap();
    let proj4 = layer.spatial_ref().unwrap().to_proj4().unwrap();
    // Grid extent 10..22 E, 40..50 N: centre (16, 45).
    assert!(
        proj4.contains("+proj=laea") && proj4.contains("+lat_0=45") && proj4.contains("+lon_0=16"),
        "{proj4}"
    );
    let (ph, prows) = read_csv(&out.join("patches.csv"));
    let lay = read_gpkg(&out.join("range-equal-area.gpkg"));
    for (f, row) in lay[1].features.iter().zip(&prows) {
        let want: f64 = row[col(&ph, "area_km2")].parse().unwrap();
        // Vertices at every cell corner, straight between them in LAEA: the chord error is
        // ~1e-5 on 100 km edges (GeographicLib with PROJ), far less on 0.25 degree cells.
        assert!(rel(planar_km2(&f.polygons), want) < 1e-4, "{}", row[0]);
        assert!(f.valid);
    }
    let o = areal()
        .args(regional_args(
            t.path(),
            &t.path().join("merc"),
            &["--vector-crs", "EPSG:3857"],
        ))
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("equal-area"), "{}", stderr(&o));
}

#[test]
fn global_patch_across_the_antimeridian() {
    for west in [-180.0, 0.0] {
        let t = tempfile::tempdir().unwrap();
        let out = global_run(t.path(), west);
        let (ph, prows) = read_csv(&out.join("patches.csv"));
        let ia = col(&ph, "area_km2");
        let v = json(&out.join("patches.geojson"));
        let feats = v["features"].as_array().unwrap();
        assert_eq!(feats.len(), prows.len());
        let mut crossing = 0;
        for (f, row) in feats.iter().zip(&prows) {
            let polys = polygons_of_geojson(&f["geometry"]);
            let xs: Vec<f64> = polys.iter().flatten().flatten().map(|p| p.0).collect();
            assert!(
                xs.iter().all(|x| (-180.0..=180.0).contains(x)),
                "west {west}: lon out of range"
            );
            let (lo, hi) = xs
                .iter()
                .fold((f64::MAX, f64::MIN), |a, &x| (a.0.min(x), a.1.max(x)));
            if lo == -180.0 && hi == 180.0 {
                crossing += 1;
                // RFC 7946 3.1.9: a MultiPolygon with parts on both sides of the antimeridian.
                assert_eq!(f["geometry"]["type"], "MultiPolygon");
                assert!(
                    polys.iter().all(|p| {
                        let e = &p[0];
                        e.iter().all(|q| q.0 >= 0.0) || e.iter().all(|q| q.0 <= 0.0)
                    }),
                    "a part still crosses 180"
                );
            }
            for p in &polys {
                check_winding(p, "patches");
            }
            let want: f64 = row[ia].parse().unwrap();
            assert!(
                rel(area_km2_geodesic_as_written(&polys), want) < 1e-6,
                "west {west}, patch {}",
                row[0]
            );
        }
        assert_eq!(crossing, 1, "west {west}: one patch crosses 180");
        // Global extent: the equal-area file is EPSG:6933 (EPSG registry: CEA), whose cells
        // are exact rectangles, so the planar area of each patch is its true area.
        let lay = read_gpkg(&out.join("range-equal-area.gpkg"));
        for (f, row) in lay[1].features.iter().zip(&prows) {
            let want: f64 = row[ia].parse().unwrap();
            assert!(
                rel(planar_km2(&f.polygons), want) < 1e-9,
                "6933 patch {}",
                row[0]
            );
            assert!(f.valid, "6933 patch {} invalid", row[0]);
        }
        let native = read_gpkg(&out.join("range.gpkg"));
        for f in native.iter().flat_map(|l| &l.features) {
            assert!(f.valid);
        }
    }
}

#[test]
fn projected_grid_lonlat_outputs_keep_the_true_areas() {
    // EPSG:3035 (ETRS89-LAEA Europe, natural origin 52 N 10 E at x 4 321 000, y 3 210 000:
    // EPSG registry), 1 km cells around the origin.
    let t = tempfile::tempdir().unwrap();
    let (w, h) = (30usize, 20usize);
    let mut v = vec![0.1f32; w * h];
    for r in 4..16 {
        for c in 5..25 {
            if !((8..11).contains(&r) && (10..14).contains(&c)) {
                v[r * w + c] = 0.9;
            }
        }
    }
    v[w + 28] = 0.9;
    let tif = t.path().join("p.tif");
    write_raster(
        &tif,
        w,
        h,
        [4_306_000.0, 1000.0, 0.0, 3_220_000.0, 0.0, -1000.0],
        Some(3035),
        None,
        &v,
    );
    let rec = t.path().join("r.csv");
    std::fs::write(&rec, "lon,lat\n10.0,52.0\n").unwrap();
    let out = t.path().join("out");
    let o = run(&[
        "range",
        "--suitability",
        tif.to_str().unwrap(),
        "--records",
        rec.to_str().unwrap(),
        "--threshold",
        "0.5",
        "--buffer-km",
        "8",
        "--out",
        out.to_str().unwrap(),
        "--vectors",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let (ph, prows) = read_csv(&out.join("patches.csv"));
    assert!(
        prows.len() >= 3,
        "a patch cut by the buffer, and the lone cell"
    );
    let v = json(&out.join("patches.geojson"));
    for (f, row) in v["features"].as_array().unwrap().iter().zip(&prows) {
        let polys = polygons_of_geojson(&f["geometry"]);
        for p in &polys {
            check_winding(p, "patches");
        }
        // Vertices every 1 km along the LAEA edges, geodesic between them: GeographicLib
        // with PROJ gives +3.5e-9 for 1 km segments on a LAEA square; 9 decimals move 1 km edges by
        // < 0.06 mm, below 1e-7 relative.
        let want: f64 = row[col(&ph, "area_km2")].parse().unwrap();
        let got = area_km2_geodesic(&polys);
        assert!(rel(got, want) < 1e-6, "patch {}: {got} vs {want}", row[0]);
    }
    let native = read_gpkg(&out.join("range.gpkg"));
    let recs = &native[4].features;
    let (x, y) = recs[0].point.unwrap();
    // The record at the natural origin lands on (4 321 000, 3 210 000).
    assert!(
        (x - 4_321_000.0).abs() < 1e-3 && (y - 3_210_000.0).abs() < 1e-3,
        "{x} {y}"
    );
    let range = &native[0].features[0];
    let inside = json(&out.join("summary.json"))["area_km2"]["inside_accessible"]
        .as_f64()
        .unwrap();
    // EPSG:3035 is equal-area: the planar area of the native polygons is the true area.
    assert!(rel(planar_km2(&range.polygons), inside) < 1e-12);
}

#[test]
fn a_spilled_model_gives_the_same_vector_files() {
    // AREAL_MODEL_BUDGET_MB=0 sends every run of the range model to its spill file; the
    // vectors read the runs back from there and must write the same files byte for byte.
    let t = tempfile::tempdir().unwrap();
    let mem = regional_run(&t.path().join("mem"), &["--vectors"]);
    let dir = t.path().join("spill");
    std::fs::create_dir_all(&dir).unwrap();
    let out = dir.join("out");
    let o = areal()
        .args(regional_args(&dir, &out, &["--vectors"]))
        .env("AREAL_MODEL_BUDGET_MB", "0")
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    for n in ["range", "patches", "unreachable", "accessible", "records"] {
        assert!(
            std::fs::read(mem.join(format!("{n}.geojson"))).unwrap()
                == std::fs::read(out.join(format!("{n}.geojson"))).unwrap(),
            "{n}.geojson differs"
        );
    }
    let (a, b) = (
        read_gpkg(&mem.join("range.gpkg")),
        read_gpkg(&out.join("range.gpkg")),
    );
    for (la, lb) in a.iter().zip(&b) {
        for (fa, fb) in la.features.iter().zip(&lb.features) {
            assert_eq!(fa.polygons, fb.polygons, "layer {}", la.name);
        }
    }
}

#[test]
fn polygons_refuses_a_patch_table_of_another_run() {
    let t = tempfile::tempdir().unwrap();
    let plain = t.path().join("plain");
    let o = areal()
        .args(regional_args(t.path(), &plain, &[]))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    // Drop the last patch row: the table no longer describes the raster's patches.
    let p = plain.join("patches.csv");
    let text = std::fs::read_to_string(&p).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    std::fs::write(&p, lines[..lines.len() - 1].join("\n") + "\n").unwrap();
    let vout = t.path().join("vec");
    let o = run(&[
        "polygons",
        "--classes",
        plain.join("classes.tif").to_str().unwrap(),
        "--accessible",
        t.path().join("m.geojson").to_str().unwrap(),
        "--out",
        vout.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(3), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("patches.csv") && stderr(&o).contains("rows for"),
        "{}",
        stderr(&o)
    );
    assert!(!vout.exists());
}
