//! Hostile accessible-area polygons.

use super::fixture::*;
use geo::Contains;
use geo_types::{coord, Point, Polygon};

fn feature_collection(geometries: &[&str], crs: Option<&str>) -> String {
    let crs = crs.map_or(String::new(), |c| {
        format!(r#""crs":{{"type":"name","properties":{{"name":"{c}"}}}},"#)
    });
    let features: Vec<String> = geometries
        .iter()
        .map(|g| format!(r#"{{"type":"Feature","properties":{{}},"geometry":{g}}}"#))
        .collect();
    format!(
        r#"{{"type":"FeatureCollection",{crs}"features":[{}]}}"#,
        features.join(",")
    )
}

fn polygon_json(ring: &[(f64, f64)]) -> String {
    let pts: Vec<String> = ring.iter().map(|(x, y)| format!("[{x},{y}]")).collect();
    format!(
        r#"{{"type":"Polygon","coordinates":[[{}]]}}"#,
        pts.join(",")
    )
}

/// Write M and run with every data cell suitable, so inside_accessible counts M's cells.
fn run_with_m(c: &Case, name: &str, text: &str) -> Outcome {
    let m = c.path(name);
    std::fs::write(&m, text).unwrap();
    c.run(&["--threshold", "-1", "--accessible", m.to_str().unwrap()])
}

#[test]
fn self_intersecting_polygon_is_repaired_with_make_valid_and_warned() {
    let c = Case::new();
    // A bow tie: edges A-B and C-D cross at X = (0, 45.1).
    let (a, b, cc, d) = ((-4.0, 41.0), (4.0, 49.2), (4.0, 41.0), (-4.0, 49.2));
    let text = feature_collection(&[&polygon_json(&[a, b, cc, d, a])], None);
    let o = run_with_m(&c, "m.geojson", &text);
    let s = c.succeeded(&o);
    // Expected: the centres inside the two triangles of the repaired bow tie, counted with
    // geo's point-in-polygon (independent of areal's scanline). No centre lies on an edge
    // (the edge slopes are 1.025 and centres sit on a 0.25 lattice offset).
    let x = (0.0, 45.1);
    let tri = |p: [(f64, f64); 3]| {
        Polygon::new(
            p.iter()
                .chain(std::iter::once(&p[0]))
                .map(|&(x, y)| coord! {x: x, y: y})
                .collect::<Vec<_>>()
                .into(),
            vec![],
        )
    };
    let (t1, t2) = (tri([a, x, d]), tri([x, b, cc]));
    let mut expected = 0u64;
    for r in 0..N {
        for col in 0..N {
            let p = Point::from(centre(r, col));
            if t1.contains(&p) || t2.contains(&p) {
                expected += 1;
            }
        }
    }
    assert!(expected > 50, "the bow tie covers many cells");
    assert_eq!(s["cells"]["inside_accessible"], expected);
    assert_warned(&s, &o, "feature 0 was an invalid polygon");
    assert_warned(&s, &o, "repaired with GEOS make_valid");
}

#[test]
fn polygon_not_overlapping_the_raster_is_refused() {
    let c = Case::new();
    let ring = [(100.0, 10.0), (101.0, 10.0), (101.0, 11.0), (100.0, 10.0)];
    let o = run_with_m(
        &c,
        "m.geojson",
        &feature_collection(&[&polygon_json(&ring)], None),
    );
    c.refused(&o, 3, &["m.geojson", "do not overlap the raster"]);
}

/// Rectangle lon -2.1..1.9, lat 42.1..47.9: cell centres -1.75..1.75 (8 columns) and
/// 42.25..47.75 (12 rows) are inside, 96 cells.
const RECT: (f64, f64, f64, f64) = (-2.1, 42.1, 1.9, 47.9);

#[test]
fn polygon_in_web_mercator_is_reprojected_and_gives_the_lonlat_cells() {
    let c = Case::new();
    // Spherical (pseudo) Mercator, EPSG:3857: x = R·lon, y = R·ln(tan(pi/4 + lat/2)),
    // R = 6378137 m (EPSG Guidance Note 7-2, method 1024; formula from memory). Meridians
    // and parallels stay straight, so the rectangle is the same set of points.
    let r = 6_378_137.0f64;
    let merc = |lon: f64, lat: f64| {
        (
            r * lon.to_radians(),
            r * (std::f64::consts::FRAC_PI_4 + lat.to_radians() / 2.0)
                .tan()
                .ln(),
        )
    };
    let (w, s0, e, n) = RECT;
    let ring: Vec<(f64, f64)> = [(w, s0), (e, s0), (e, n), (w, n), (w, s0)]
        .iter()
        .map(|&(lon, lat)| merc(lon, lat))
        .collect();
    let text = feature_collection(&[&polygon_json(&ring)], Some("urn:ogc:def:crs:EPSG::3857"));
    let s = c.succeeded(&run_with_m(&c, "m3857.geojson", &text));
    assert_eq!(s["cells"]["inside_accessible"], 96);
}

#[test]
fn polygon_without_crs_is_refused_naming_the_layer() {
    use gdal::vector::{Geometry, LayerAccess, LayerOptions, OGRwkbGeometryType};
    let c = Case::new();
    let shp = c.path("m.shp");
    {
        let mut ds = gdal::DriverManager::get_driver_by_name("ESRI Shapefile")
            .unwrap()
            .create_vector_only(&shp)
            .unwrap();
        let mut layer = ds
            .create_layer(LayerOptions {
                name: "m",
                srs: None,
                ty: OGRwkbGeometryType::wkbPolygon,
                options: None,
            })
            .unwrap();
        let g = Geometry::from_wkt("POLYGON ((-2 42, 2 42, 2 48, -2 48, -2 42))").unwrap();
        layer.create_feature(g).unwrap();
    }
    assert!(!c.path("m.prj").exists());
    let o = c.run(&["--threshold", "-1", "--accessible", shp.to_str().unwrap()]);
    c.refused(&o, 3, &["m.shp", "layer 'm' has no CRS", "ogr2ogr -a_srs"]);
}

/// A global raster of 10-degree cells (36 x 18), every cell 0.5, one record at (175, 5).
fn global_case() -> Case {
    let c = Case::new();
    write_typed(
        &c.suitability,
        36,
        18,
        [-180.0, 10.0, 0.0, 90.0, 0.0, -10.0],
        Some(4326),
        None,
        &vec![0.5f32; 36 * 18],
        &[],
    );
    std::fs::write(&c.records, "lon,lat\n175,5\n").unwrap();
    c
}

#[test]
fn polygon_across_the_antimeridian_written_beyond_180_covers_both_sides() {
    let c = global_case();
    // Lon 160..200, lat -10..10: centres 165, 175, 185 (= -175), 195 (= -165) x 5, -5.
    let ring = [
        (160.0, -10.0),
        (200.0, -10.0),
        (200.0, 10.0),
        (160.0, 10.0),
        (160.0, -10.0),
    ];
    let o = run_with_m(
        &c,
        "m.geojson",
        &feature_collection(&[&polygon_json(&ring)], None),
    );
    let s = c.succeeded(&o);
    assert_eq!(s["cells"]["inside_accessible"], 8);
    assert_eq!(s["cells"]["outside_accessible"], 36 * 18 - 8);
    // The eight cells form one patch across the seam.
    assert_eq!(s["patches"]["inside_accessible"], 1);
}

#[test]
fn polygon_split_at_the_antimeridian_as_rfc7946_covers_both_sides() {
    let c = global_case();
    let east = [
        (160.0, -10.0),
        (180.0, -10.0),
        (180.0, 10.0),
        (160.0, 10.0),
        (160.0, -10.0),
    ];
    let west = [
        (-180.0, -10.0),
        (-160.0, -10.0),
        (-160.0, 10.0),
        (-180.0, 10.0),
        (-180.0, -10.0),
    ];
    let text = feature_collection(&[&polygon_json(&east), &polygon_json(&west)], None);
    let s = c.succeeded(&run_with_m(&c, "m.geojson", &text));
    assert_eq!(s["cells"]["inside_accessible"], 8);
    assert_eq!(s["patches"]["inside_accessible"], 1);
}

#[test]
fn polygon_jumping_across_the_antimeridian_is_refused_with_a_hint() {
    let c = global_case();
    // Written as 160 -> -160: read literally this is the band -160..160, the wrong side.
    let ring = [
        (160.0, -10.0),
        (-160.0, -10.0),
        (-160.0, 10.0),
        (160.0, 10.0),
        (160.0, -10.0),
    ];
    let o = run_with_m(
        &c,
        "m.geojson",
        &feature_collection(&[&polygon_json(&ring)], None),
    );
    c.refused(
        &o,
        3,
        &[
            "m.geojson",
            "feature 0",
            "more than 180 degrees",
            "antimeridian",
        ],
    );
}

#[test]
fn polar_band_with_edges_from_minus_180_to_180_is_accepted() {
    let c = global_case();
    // Lat 60..90 all round: edges from -180 to 180 are meant, not a seam jump.
    let ring = [
        (-180.0, 60.0),
        (180.0, 60.0),
        (180.0, 90.0),
        (-180.0, 90.0),
        (-180.0, 60.0),
    ];
    let s = c.succeeded(&run_with_m(
        &c,
        "m.geojson",
        &feature_collection(&[&polygon_json(&ring)], None),
    ));
    assert_eq!(s["cells"]["inside_accessible"], 3 * 36);
}

#[test]
fn point_layer_given_as_accessible_polygon_is_refused_naming_the_feature() {
    let c = Case::new();
    let text = feature_collection(&[r#"{"type":"Point","coordinates":[0,45]}"#], None);
    let o = run_with_m(&c, "m.geojson", &text);
    c.refused(
        &o,
        3,
        &["m.geojson", "feature 0", "is a Point, not a polygon"],
    );
}

#[test]
fn empty_polygon_layer_is_refused() {
    let c = Case::new();
    let o = run_with_m(&c, "m.geojson", &feature_collection(&[], None));
    c.refused(&o, 3, &["m.geojson", "holds no polygon"]);
}

#[test]
fn malformed_polygon_file_is_refused_naming_it() {
    let c = Case::new();
    let o = run_with_m(
        &c,
        "m.geojson",
        r#"{"type":"FeatureCollection","features":[{"#,
    );
    c.refused(&o, 3, &["m.geojson"]);
}

#[test]
fn missing_polygon_file_is_refused_naming_it() {
    let c = Case::new();
    let o = c.run(&[
        "--omission",
        "0",
        "--accessible",
        c.path("nope.gpkg").to_str().unwrap(),
    ]);
    c.refused(
        &o,
        3,
        &["nope.gpkg: accessible-area polygon file not found"],
    );
}

#[test]
fn polygon_part_at_absurd_longitudes_is_dropped_by_make_valid_with_a_warning() {
    let c = global_case();
    // A good part and a far part at lon 1e20 (GEOS finds the far ring degenerate); M is
    // the good part alone.
    let good = [
        (160.0, -10.0),
        (200.0, -10.0),
        (200.0, 10.0),
        (160.0, 10.0),
        (160.0, -10.0),
    ];
    let far = [
        (1e20, -10.0),
        (1.00001e20, -10.0),
        (1.00001e20, 10.0),
        (1e20, 10.0),
        (1e20, -10.0),
    ];
    let text = format!(
        r#"{{"type":"FeatureCollection","features":[{{"type":"Feature","properties":{{}},"geometry":{{"type":"MultiPolygon","coordinates":[[{}],[{}]]}}}}]}}"#,
        polygon_json(&good)
            .split("[[")
            .nth(1)
            .map(|s| format!("[{}", s.trim_end_matches("]}")))
            .unwrap(),
        polygon_json(&far)
            .split("[[")
            .nth(1)
            .map(|s| format!("[{}", s.trim_end_matches("]}")))
            .unwrap(),
    );
    let o = run_with_m(&c, "m.geojson", &text);
    let s = c.succeeded(&o);
    assert_eq!(s["cells"]["inside_accessible"], 8);
    assert_warned(&s, &o, "repaired with GEOS make_valid");
}
