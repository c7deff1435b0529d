//! End to end: `areal range --vectors` and `areal polygons`, read back through GDAL.
//!
//! Outside checks: geodesic polygon areas from GeographicLib (geographiclib-rs, Karney 2013)
//! against the cell-area sums of patches.csv (closed form, Snyder 1987 eq. 3-12); GEOS validity
//! through GDAL; RFC 7946 winding (section 3.1.6) and antimeridian cutting (section 3.1.9)
//! checked on the GeoJSON text itself; EPSG:6933 is equal-area on WGS84 (EPSG registry).

mod common;
mod vectors_common;
use common::*;
use vectors_common::*;

use gdal::vector::LayerAccess;

#[test]
fn layers_fields_counts_validity_and_areas_on_a_lonlat_grid() {
    let t = tempfile::tempdir().unwrap();
    let out = regional_run(t.path(), &["--vectors"]);
    let summary = json(&out.join("summary.json"));
    let (ph, prows) = read_csv(&out.join("patches.csv"));
    let (rh, rrows) = read_csv(&out.join("records.csv"));
    let n2 = prows.iter().filter(|r| r[col(&ph, "class")] == "2").count();
    assert!(
        n2 >= 2 && prows.len() >= 8,
        "fixture has class-2 patches and several patches"
    );

    let layers = read_gpkg(&out.join("range.gpkg"));
    let names: Vec<&str> = layers.iter().map(|l| l.name.as_str()).collect();
    assert_eq!(
        names,
        ["range", "patches", "unreachable", "accessible", "records"]
    );
    let by = |n: &str| layers.iter().find(|l| l.name == n).unwrap();
    assert_eq!(by("range").features.len(), 1);
    assert_eq!(by("patches").features.len(), prows.len());
    assert_eq!(by("unreachable").features.len(), n2);
    assert_eq!(by("accessible").features.len(), 1);
    assert_eq!(by("records").features.len(), rrows.len());
    // Every patches.csv column reaches both patch layers; the two centroid columns under
    // names distinct in 10 characters (ESRI Shapefile field-name limit, dBase III).
    for h in &ph {
        let f = match h.as_str() {
            "centroid_lon" => "cen_lon",
            "centroid_lat" => "cen_lat",
            other => other,
        };
        assert!(
            by("patches").fields.iter().any(|x| x == f),
            "patches lacks {f}"
        );
        assert!(
            by("unreachable").fields.iter().any(|x| x == f),
            "unreachable lacks {f}"
        );
    }
    for l in ["patches", "unreachable"] {
        assert!(by(l).fields.contains(&"nearest_range_km".to_string()));
        assert!(!by(l).fields.iter().any(|x| x == "distance_km"));
    }
    for l in &layers {
        let mut short: Vec<String> = l
            .fields
            .iter()
            .map(|n| n.chars().take(10).collect())
            .collect();
        short.sort();
        let n = short.len();
        short.dedup();
        assert_eq!(short.len(), n, "layer {}: {:?}", l.name, l.fields);
    }
    // Boolean fields are OGR booleans (OFSTBoolean) in the GeoPackage.
    {
        let ds = gdal::Dataset::open(out.join("range.gpkg")).unwrap();
        for (layer, field) in [
            ("patches", "reachable"),
            ("records", "dropped_by_threshold"),
        ] {
            let l = ds.layer_by_name(layer).unwrap();
            let i = l.defn().field_index(field).unwrap();
            let sub = unsafe {
                let fd = gdal_sys::OGR_FD_GetFieldDefn(l.defn().c_defn(), i as i32);
                gdal_sys::OGR_Fld_GetSubType(fd)
            };
            assert_eq!(
                sub,
                gdal_sys::OGRFieldSubType::OFSTBoolean,
                "{layer}.{field}"
            );
        }
    }
    for h in &rh {
        assert!(by("records").fields.contains(h), "records lacks {h}");
    }
    for l in &layers {
        for f in &l.features {
            assert!(
                f.valid,
                "invalid geometry in layer {} ({:?})",
                l.name, f.attrs
            );
        }
    }

    // Geodesic area of every patch polygon as written (GeographicLib PolygonArea, every edge
    // a geodesic, nothing densified) = its area_km2 within 1e-6: the vertices added along
    // the parallels make it so.
    let ia = col(&ph, "area_km2");
    for (f, row) in by("patches").features.iter().zip(&prows) {
        assert_eq!(f.attrs["patch_id"], row[col(&ph, "patch_id")]);
        let want: f64 = row[ia].parse().unwrap();
        let got = area_km2_geodesic_as_written(&f.polygons);
        assert!(rel(got, want) < 1e-6, "patch {}: {got} vs {want}", row[0]);
    }
    let inside = summary["area_km2"]["inside_accessible"].as_f64().unwrap();
    let range = &by("range").features[0];
    assert!(rel(area_km2_geodesic_as_written(&range.polygons), inside) < 1e-6);
    assert!(rel(range.attrs["area_km2"].parse().unwrap(), inside) < 1e-12);
    let m = summary["area_km2"]["accessible"].as_f64().unwrap();
    assert!(
        rel(
            area_km2_geodesic_as_written(&by("accessible").features[0].polygons),
            m
        ) < 1e-6
    );

    // records: dropped_by_threshold is exactly the below-threshold status.
    let st = col(&rh, "status");
    for (f, row) in by("records").features.iter().zip(&rrows) {
        let dropped = f.attrs["dropped_by_threshold"] == "1";
        assert_eq!(dropped, row[st] == "below_threshold");
    }
    assert!(rrows.iter().any(|r| r[st] == "below_threshold"));

    // Pixel edges by default: every vertex is a cell corner of the 0.25 degree grid, or a
    // vertex added along a parallel (on a row edge, between two vertices of that parallel).
    for f in &by("patches").features {
        for ring in f.polygons.iter().flatten() {
            let n = ring.len() - 1;
            for (k, &(x, y)) in ring[..n].iter().enumerate() {
                assert!(((50.0 - y) * 4.0 - ((50.0 - y) * 4.0).round()).abs() < 1e-9);
                if ((x - 10.0) * 4.0 - ((x - 10.0) * 4.0).round()).abs() > 1e-9 {
                    let (a, b) = (ring[(k + n - 1) % n], ring[k + 1]);
                    assert!(
                        a.1 == y && b.1 == y && (a.0 - x) * (b.0 - x) < 0.0,
                        "{x} {y}"
                    );
                }
            }
        }
    }

    // nearest_range_km comes from the run's metrics (edge to edge, the definition of
    // nearest_patch_km restricted to class-1 patches); here it is only carried over.
}

#[test]
fn geojson_is_rfc7946_lonlat_ccw_and_rounded() {
    let t = tempfile::tempdir().unwrap();
    let out = regional_run(t.path(), &["--vectors"]);
    let (ph, prows) = read_csv(&out.join("patches.csv"));
    for name in ["range", "patches", "unreachable", "accessible", "records"] {
        let path = out.join(format!("{name}.geojson"));
        let text = std::fs::read_to_string(&path).unwrap();
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert_eq!(v["type"], "FeatureCollection");
        // RFC 7946 section 4: no "crs" member.
        assert!(v.get("crs").is_none(), "{name} has a crs member");
        for f in v["features"].as_array().unwrap() {
            for poly in polygons_of_geojson(&f["geometry"]) {
                check_winding(&poly, name);
            }
        }
        assert_decimals_at_most(&text, areal::vectors::GEOJSON_DECIMALS, name);
    }
    // Boolean fields are JSON booleans (RFC 8259 true/false), not 0/1.
    let v = json(&out.join("records.geojson"));
    for f in v["features"].as_array().unwrap() {
        assert!(f["properties"]["dropped_by_threshold"].is_boolean(), "{f}");
    }
    let v = json(&out.join("patches.geojson"));
    let feats = v["features"].as_array().unwrap();
    assert_eq!(feats.len(), prows.len());
    let ia = col(&ph, "area_km2");
    for (f, row) in feats.iter().zip(&prows) {
        assert_eq!(f["properties"]["patch_id"].to_string(), row[0]);
        let want: f64 = row[ia].parse().unwrap();
        let got = area_km2_geodesic_as_written(&polygons_of_geojson(&f["geometry"]));
        // 9 decimals move a 0.25 degree cell's edge by < 5e-10 degree: < 1e-8 relative.
        assert!(rel(got, want) < 1e-6, "patch {}: {got} vs {want}", row[0]);
    }
}

#[test]
fn standalone_polygons_rebuilds_the_same_layers_and_checks_m() {
    let t = tempfile::tempdir().unwrap();
    let with = regional_run(t.path(), &["--vectors"]);
    let plain = t.path().join("plain");
    let o = areal()
        .args(regional_args(t.path(), &plain, &[]))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        !plain.join("range.gpkg").exists(),
        "no vectors without --vectors"
    );
    let classes = plain.join("classes.tif");
    let m = t.path().join("m.geojson");

    // Without the run's M options: refused, naming the options.
    let vout = t.path().join("vec");
    let o = run(&[
        "polygons",
        "--classes",
        classes.to_str().unwrap(),
        "--out",
        vout.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("--accessible"), "{}", stderr(&o));
    assert!(!vout.exists());
    // A different M: refused.
    let o = run(&[
        "polygons",
        "--classes",
        classes.to_str().unwrap(),
        "--accessible",
        m.to_str().unwrap(),
        "--buffer-km",
        "50",
        "--out",
        vout.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    // The wrong connectivity: refused.
    let o = run(&[
        "polygons",
        "--classes",
        classes.to_str().unwrap(),
        "--accessible",
        m.to_str().unwrap(),
        "--connectivity",
        "4",
        "--out",
        vout.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));

    let o = run(&[
        "polygons",
        "--classes",
        classes.to_str().unwrap(),
        "--accessible",
        m.to_str().unwrap(),
        "--out",
        vout.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let a = read_gpkg(&with.join("range.gpkg"));
    let b = read_gpkg(&vout.join("range.gpkg"));
    assert_eq!(a.len(), b.len());
    for (la, lb) in a.iter().zip(&b) {
        assert_eq!(la.name, lb.name);
        assert_eq!(la.features.len(), lb.features.len());
        for (fa, fb) in la.features.iter().zip(&lb.features) {
            assert_eq!(fa.polygons, fb.polygons, "layer {}", la.name);
            assert_eq!(fa.attrs, fb.attrs, "layer {}", la.name);
        }
    }
    for n in ["range", "patches", "unreachable", "accessible", "records"] {
        assert_eq!(
            std::fs::read(with.join(format!("{n}.geojson"))).unwrap(),
            std::fs::read(vout.join(format!("{n}.geojson"))).unwrap(),
            "{n}.geojson differs"
        );
    }
}

#[test]
fn simplify_is_off_by_default_and_keeps_valid_geometry() {
    let t = tempfile::tempdir().unwrap();
    let out = regional_run(t.path(), &["--vectors", "--simplify-m", "30000"]);
    let simple = read_gpkg(&out.join("range.gpkg"));
    let full = read_gpkg(&regional_run(&t.path().join("b"), &["--vectors"]).join("range.gpkg"));
    let count = |ls: &[GpkgLayer]| -> usize {
        ls[1]
            .features
            .iter()
            .flat_map(|f| f.polygons.iter().flatten())
            .map(|r| r.len())
            .sum()
    };
    assert!(
        count(&simple) < count(&full),
        "{} vs {}",
        count(&simple),
        count(&full)
    );
    for l in &simple {
        for f in &l.features {
            assert!(f.valid, "{}", l.name);
        }
    }
    let o = areal()
        .args(regional_args(
            t.path(),
            &t.path().join("bad"),
            &["--simplify-m", "-1"],
        ))
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("--simplify-m"));
}
