//! Vector-layer records and reprojection, checked against published projection formulas.

use super::tests::write;
use super::*;
use gdal::spatial_ref::SpatialRef;
use gdal::vector::{
    Feature, Geometry, LayerAccess, LayerOptions, OGRFieldType, OGRwkbGeometryType,
};
use gdal::DriverManager;
use tempfile::TempDir;

/// WGS84 semi-major axis and first eccentricity squared: NIMA TR8350.2 (2000); e² agrees with
/// S. Humerfelt, "How WGS 84 defines the Earth" (2000), and with GeographicLib.
const A: f64 = 6_378_137.0;
const E2: f64 = 0.006_694_379_990_141_316_5;

/// Web Mercator (EPSG:3857) forward: x = a·λ, y = a·ln tan(π/4 + φ/2) on the sphere of
/// radius a. EPSG Guidance Note 7-2, method 1024 "Popular Visualisation Pseudo Mercator"
/// (from memory).
fn web_mercator(lon: f64, lat: f64) -> (f64, f64) {
    let (l, p) = (lon.to_radians(), lat.to_radians());
    (
        A * l,
        A * (std::f64::consts::FRAC_PI_4 + p / 2.0).tan().ln(),
    )
}

/// EPSG:6933 (ellipsoidal Lambert cylindrical equal-area, standard parallel 30°):
/// x = a·k0·λ, y = a·q/(2·k0), k0 = cos φs / sqrt(1 − e² sin² φs),
/// q = (1 − e²)[sin φ/(1 − e² sin² φ) − 1/(2e) ln((1 − e sin φ)/(1 + e sin φ))].
/// Snyder 1987, Map Projections: A Working Manual, eqs. 3-12 and 10-15/10-16 (from memory).
fn ease2(lon: f64, lat: f64) -> (f64, f64) {
    let e = E2.sqrt();
    let s30 = 30f64.to_radians().sin();
    let k0 = 30f64.to_radians().cos() / (1.0 - E2 * s30 * s30).sqrt();
    let s = lat.to_radians().sin();
    let q = (1.0 - E2)
        * (s / (1.0 - E2 * s * s) - (1.0 / (2.0 * e)) * ((1.0 - e * s) / (1.0 + e * s)).ln());
    (A * k0 * lon.to_radians(), A * q / (2.0 * k0))
}

fn wkt(epsg: u32) -> String {
    SpatialRef::from_epsg(epsg).unwrap().to_wkt().unwrap()
}

#[test]
fn csv_reprojected_to_ease2() {
    let dir = TempDir::new().unwrap();
    let p = write(
        &dir,
        "r.csv",
        "decimalLongitude,decimalLatitude\n2.35,48.85\n-3.70,40.42\n",
    );
    let set = read_records(&p, &RecordOptions::default(), &wkt(6933)).unwrap();
    for (r, (lon, lat)) in set.records.iter().zip([(2.35, 48.85), (-3.70, 40.42)]) {
        let (x, y) = ease2(lon, lat);
        assert!(
            (r.x - x).abs() < 1e-3 && (r.y - y).abs() < 1e-3,
            "{r:?} vs ({x}, {y})"
        );
        assert!((r.lon - lon).abs() < 1e-12 && (r.lat - lat).abs() < 1e-12);
    }
    // GDAL-NOTES.md (d): Paris at x = 2.27e5, y = 5.52e6 (a swapped axis order gives 4.71e6, 3.0e5).
    let paris = &set.records[0];
    assert!((paris.x / 2.27e5 - 1.0).abs() < 0.005 && (paris.y / 5.52e6 - 1.0).abs() < 0.005);
}

#[test]
fn raster_crs_in_lat_lon_axis_order_still_gives_x_lon() {
    // EPSG:4326's WKT declares latitude first; x must still be the longitude (GDAL-NOTES.md (d)).
    let dir = TempDir::new().unwrap();
    let p = write(&dir, "r.csv", "lon,lat\n2.35,48.85\n");
    let r = &read_records(&p, &RecordOptions::default(), &wkt(4326))
        .unwrap()
        .records[0];
    assert!(
        (r.x - 2.35).abs() < 1e-12 && (r.y - 48.85).abs() < 1e-12,
        "{r:?}"
    );
}

#[test]
fn csv_in_web_mercator_comes_back_to_lon_lat() {
    let dir = TempDir::new().unwrap();
    let pts = [(2.35, 48.85), (-70.25, -33.5), (179.9, 10.0)];
    let mut text = String::from("x,y\n");
    for (lon, lat) in pts {
        let (x, y) = web_mercator(lon, lat);
        text.push_str(&format!("{x:.4},{y:.4}\n"));
    }
    let p = write(&dir, "merc.csv", &text);
    let opts = RecordOptions {
        crs: "EPSG:3857".into(),
        ..Default::default()
    };
    let set = read_records(&p, &opts, "").unwrap();
    assert_eq!(set.records.len(), 3);
    for (r, (lon, lat)) in set.records.iter().zip(pts) {
        // 1e-4 m in the file is about 1e-9 degrees.
        assert!(
            (r.lon - lon).abs() < 1e-8 && (r.lat - lat).abs() < 1e-8,
            "{r:?} vs ({lon}, {lat})"
        );
        assert_eq!((r.x, r.y), (r.lon, r.lat));
    }
    // Projected records: x/y are not range-checked as degrees, no 0..360 warning.
    assert!(set.warnings.is_empty(), "{:?}", set.warnings);
}

#[test]
fn untransformable_point_is_skipped_with_its_line() {
    // The antipode of a Lambert azimuthal equal-area centre has no image (Snyder 1987, p. 185,
    // from memory: the antipode maps to a circle, not a point).
    let dir = TempDir::new().unwrap();
    let p = write(&dir, "r.csv", "lon,lat\n10,45\n-180,-45\n11,46\n");
    let laea = "+proj=laea +lat_0=45 +lon_0=0 +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs";
    let set = read_records(&p, &RecordOptions::default(), laea).unwrap();
    let origins: Vec<&str> = set.records.iter().map(|r| r.origin.as_str()).collect();
    assert_eq!(origins, ["line 2", "line 4"]);
    assert_eq!(set.warnings.len(), 1, "{:?}", set.warnings);
    assert!(set.warnings[0].contains("r.csv line 3: point (-180, -45) cannot be transformed"));
}

#[test]
fn geojson_with_declared_crs_and_multipoints() {
    let dir = TempDir::new().unwrap();
    let (x1, y1) = web_mercator(2.35, 48.85);
    let (x2, y2) = web_mercator(-3.70, 40.42);
    let text = format!(
        r#"{{"type":"FeatureCollection",
 "crs":{{"type":"name","properties":{{"name":"urn:ogc:def:crs:EPSG::3857"}}}},
 "features":[
  {{"type":"Feature","properties":{{"id":"p1"}},"geometry":{{"type":"Point","coordinates":[{x1},{y1}]}}}},
  {{"type":"Feature","properties":{{"id":"p2"}},"geometry":null}},
  {{"type":"Feature","properties":{{"id":"p3"}},"geometry":{{"type":"MultiPoint","coordinates":[[{x2},{y2}],[{x1},{y1}]]}}}}
 ]}}"#
    );
    let p = write(&dir, "r.geojson", &text);
    let set = read_records(&p, &RecordOptions::default(), "").unwrap();
    assert_eq!(set.columns, ("geometry".into(), "geometry".into()));
    let got: Vec<(&str, &str)> = set
        .records
        .iter()
        .map(|r| (r.origin.as_str(), r.id.as_str()))
        .collect();
    assert_eq!(
        got,
        [
            ("feature 0", "p1"),
            ("feature 2 point 1", "p3"),
            ("feature 2 point 2", "p3")
        ]
    );
    for (r, (lon, lat)) in set
        .records
        .iter()
        .zip([(2.35, 48.85), (-3.70, 40.42), (2.35, 48.85)])
    {
        assert!(
            (r.lon - lon).abs() < 1e-9 && (r.lat - lat).abs() < 1e-9,
            "{r:?}"
        );
    }
    assert_eq!(set.warnings.len(), 1, "{:?}", set.warnings);
    assert!(set.warnings[0].contains("feature 1: no geometry; record skipped"));
}

/// A GeoPackage with a point layer "occ" (EPSG:4326, one null geometry) and a line layer "tracks".
fn gpkg(dir: &TempDir) -> PathBuf {
    let path = dir.path().join("r.gpkg");
    let mut ds = DriverManager::get_driver_by_name("GPKG")
        .unwrap()
        .create_vector_only(&path)
        .unwrap();
    let srs = SpatialRef::from_epsg(4326).unwrap();
    let add = |ds: &mut gdal::Dataset, name: &str, ty, wkts: &[Option<&str>]| {
        let layer = ds
            .create_layer(LayerOptions {
                name,
                srs: Some(&srs),
                ty,
                options: None,
            })
            .unwrap();
        layer
            .create_defn_fields(&[("occurrenceID", OGRFieldType::OFTString)])
            .unwrap();
        let defn = layer.defn();
        let i = defn.field_index("occurrenceID").unwrap();
        for (k, w) in wkts.iter().enumerate() {
            let mut f = Feature::new(defn).unwrap();
            if let Some(w) = w {
                f.set_geometry(Geometry::from_wkt(w).unwrap()).unwrap();
            }
            f.set_field_string(i, &format!("o{k}")).unwrap();
            f.create(&layer).unwrap();
        }
    };
    add(
        &mut ds,
        "occ",
        OGRwkbGeometryType::wkbPoint,
        &[Some("POINT (2.35 48.85)"), None, Some("POINT (190 10)")],
    );
    add(
        &mut ds,
        "tracks",
        OGRwkbGeometryType::wkbLineString,
        &[Some("LINESTRING (0 0, 1 1)")],
    );
    ds.close().unwrap();
    path
}

#[test]
fn geopackage_point_layer_to_ease2() {
    let dir = TempDir::new().unwrap();
    let path = gpkg(&dir);
    let set = read_records(&path, &RecordOptions::default(), &wkt(6933)).unwrap();
    assert_eq!(set.records.len(), 2);
    let (r0, r1) = (&set.records[0], &set.records[1]);
    assert_eq!((r0.origin.as_str(), r0.id.as_str()), ("feature 1", "o0"));
    let (x, y) = ease2(2.35, 48.85);
    assert!((r0.x - x).abs() < 1e-3 && (r0.y - y).abs() < 1e-3, "{r0:?}");
    // 190 E is shifted to -170 before projecting.
    let (x, _) = ease2(-170.0, 10.0);
    assert!(
        (r1.x - x).abs() < 1e-3 && (r1.lon + 170.0).abs() < 1e-12,
        "{r1:?}"
    );
    assert_eq!(set.warnings.len(), 2, "{:?}", set.warnings);
    assert!(set.warnings[0].contains("feature 2: no geometry; record skipped"));
    assert!(
        set.warnings[1].contains("1 longitude(s) in 180..360")
            && set.warnings[1].contains("feature 3")
    );
}

#[test]
fn non_point_layer_is_refused_naming_the_feature() {
    let dir = TempDir::new().unwrap();
    let path = gpkg(&dir);
    let opts = RecordOptions {
        layer: Some("tracks".into()),
        ..Default::default()
    };
    let e = read_records(&path, &opts, "").unwrap_err();
    assert!(matches!(e, Error::Records { .. }));
    let msg = e.to_string();
    assert!(
        msg.contains("feature 1 of layer 'tracks' is a LINESTRING"),
        "{msg}"
    );
    assert!(msg.contains("Point or MultiPoint"), "{msg}");
    let opts = RecordOptions {
        layer: Some("nope".into()),
        ..Default::default()
    };
    let e = read_records(&path, &opts, "").unwrap_err();
    assert!(
        matches!(
            e,
            Error::InvalidOption {
                option: "--records-layer",
                ..
            }
        ),
        "{e}"
    );
    assert!(e.to_string().contains("layers found: occ, tracks"), "{e}");
}

#[test]
fn layer_without_crs_uses_records_crs_with_a_warning() {
    let dir = TempDir::new().unwrap();
    let path = dir.path().join("r.shp");
    {
        let mut ds = DriverManager::get_driver_by_name("ESRI Shapefile")
            .unwrap()
            .create_vector_only(&path)
            .unwrap();
        let layer = ds
            .create_layer(LayerOptions {
                name: "r",
                srs: None,
                ty: OGRwkbGeometryType::wkbPoint,
                options: None,
            })
            .unwrap();
        let (x, y) = web_mercator(-70.25, -33.5);
        let mut f = Feature::new(layer.defn()).unwrap();
        f.set_geometry(Geometry::from_wkt(&format!("POINT ({x} {y})")).unwrap())
            .unwrap();
        f.create(&layer).unwrap();
    }
    let opts = RecordOptions {
        crs: "EPSG:3857".into(),
        ..Default::default()
    };
    let set = read_records(&path, &opts, "").unwrap();
    let r = &set.records[0];
    assert!(
        (r.lon + 70.25).abs() < 1e-9 && (r.lat + 33.5).abs() < 1e-9,
        "{r:?}"
    );
    assert!(
        set.warnings[0].contains("has no CRS; assuming --records-crs EPSG:3857"),
        "{:?}",
        set.warnings
    );
}
