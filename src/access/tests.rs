//! Tests of M: polygon files, options and composition. Geodesic parts: tests_geo.rs.

use super::*;
use gdal::spatial_ref::{AxisMappingStrategy, SpatialRef};
use gdal::vector::{Feature, Geometry, LayerAccess, LayerOptions, OGRwkbGeometryType};
use gdal::DriverManager;
use geo::Contains;
use geo_types::{Coord, Point};
use std::path::Path;
use tempfile::TempDir;

/// Write a GeoJSON FeatureCollection with the given geometry objects.
pub(super) fn geojson(dir: &TempDir, name: &str, geometries: &[&str]) -> PathBuf {
    let feats: Vec<String> = geometries
        .iter()
        .map(|g| format!(r#"{{"type":"Feature","properties":{{}},"geometry":{g}}}"#))
        .collect();
    let text = format!(
        r#"{{"type":"FeatureCollection","features":[{}]}}"#,
        feats.join(",")
    );
    let path = dir.path().join(name);
    std::fs::write(&path, text).unwrap();
    path
}

/// Write a vector file with `driver`, one layer in `srs` (None: no CRS), features from WKT.
fn vector_file(path: &Path, driver: &str, srs: Option<&SpatialRef>, wkts: &[&str]) {
    let mut ds = DriverManager::get_driver_by_name(driver)
        .unwrap()
        .create_vector_only(path)
        .unwrap();
    let layer = ds
        .create_layer(LayerOptions {
            name: "m",
            srs,
            ty: OGRwkbGeometryType::wkbPolygon,
            options: None,
        })
        .unwrap();
    for w in wkts {
        let mut f = Feature::new(layer.defn()).unwrap();
        f.set_geometry(Geometry::from_wkt(w).unwrap()).unwrap();
        f.create(&layer).unwrap();
    }
}

pub(super) fn rows(mask: &mut AccessMask, grid: &GridSpec) -> Vec<Vec<bool>> {
    (0..grid.height)
        .map(|r| {
            let mut out = vec![false; grid.width];
            mask.fill_row(r, &mut out).unwrap();
            out
        })
        .collect()
}

fn count(rows: &[Vec<bool>]) -> usize {
    rows.iter().flatten().filter(|&&b| b).count()
}

fn polygon_spec(path: PathBuf) -> AccessSpec {
    AccessSpec {
        polygon: Some(path),
        ..Default::default()
    }
}

#[test]
fn whole_raster_without_options() {
    let g = GridSpec::lonlat(7, 3, 0.0, 3.0, 1.0);
    let mut m = AccessMask::build(&g, &AccessSpec::default(), &[]).unwrap();
    assert!(m.is_whole_raster());
    assert!(m.description().contains("whole raster"));
    assert_eq!(count(&rows(&mut m, &g)), 21);
}

#[test]
fn polygon_with_hole_counts_centres() {
    let dir = TempDir::new().unwrap();
    let p = geojson(
        &dir,
        "hole.geojson",
        &[
            r#"{"type":"Polygon","coordinates":[[[1,1],[9,1],[9,9],[1,9],[1,1]],[[3,3],[3,6],[6,6],[6,3],[3,3]]]}"#,
        ],
    );
    let g = GridSpec::lonlat(10, 10, 0.0, 10.0, 1.0);
    let mut m = AccessMask::build(&g, &polygon_spec(p), &[]).unwrap();
    let r = rows(&mut m, &g);
    // By hand: centres 1.5..8.5 in x and y inside the shell (8 x 8 = 64), minus the hole's
    // centres 3.5..5.5 (3 x 3 = 9).
    assert_eq!(count(&r), 64 - 9);
    // Cell (row 5, col 4) has centre (4.5, 4.5), inside the hole.
    assert!(!r[5][4]);
    assert!(r[5][1]);
    assert_eq!(m.description(), "polygon hole.geojson (1 polygon)");
    assert_eq!(m.polygons().unwrap().0[0].interiors().len(), 1);
}

#[test]
fn multipolygon_and_several_features_are_ored() {
    let dir = TempDir::new().unwrap();
    let p = geojson(
        &dir,
        "multi.geojson",
        &[
            r#"{"type":"MultiPolygon","coordinates":[[[[0,0],[2,0],[2,2],[0,2],[0,0]]],[[[5,5],[8,5],[8,7],[5,7],[5,5]]]]}"#,
            // Overlaps the first square on centre (1.5, 1.5).
            r#"{"type":"Polygon","coordinates":[[[1,1],[3,1],[3,3],[1,3],[1,1]]]}"#,
        ],
    );
    let g = GridSpec::lonlat(10, 10, 0.0, 10.0, 1.0);
    let mut m = AccessMask::build(&g, &polygon_spec(p), &[]).unwrap();
    // By hand: 2x2 + 3x2 + 2x2 cells, one shared: 4 + 6 + 4 - 1.
    assert_eq!(count(&rows(&mut m, &g)), 13);
    assert!(m.description().contains("(3 polygons)"));
}

#[test]
fn vertex_on_scanline_counts_once() {
    let dir = TempDir::new().unwrap();
    // Left side has a vertex at (2, 5.5), exactly on the centre of row 4 (y = 5.5); the
    // top and bottom apexes (5, 8.5) and (5, 1.5) also sit on row centres.
    let p = geojson(
        &dir,
        "v.geojson",
        &[
            r#"{"type":"Polygon","coordinates":[[[1,1],[5,1.5],[8,1],[8,9],[5,8.5],[1,9],[2,5.5],[1,1]]]}"#,
        ],
    );
    let g = GridSpec::lonlat(10, 10, 0.0, 10.0, 1.0);
    let mut m = AccessMask::build(&g, &polygon_spec(p), &[]).unwrap();
    let r = rows(&mut m, &g);
    // By hand: on row 4 the polygon runs from x = 2 to x = 8: centres 2.5..7.5.
    assert_eq!(r[4].iter().filter(|&&b| b).count(), 6);
    // Against geo's point-in-polygon for every centre (none lies on the boundary).
    let poly = &m.polygons().unwrap().0[0].clone();
    for (row, cells) in r.iter().enumerate() {
        for (col, &v) in cells.iter().enumerate() {
            let c = Point(Coord {
                x: g.col_centre_x(col),
                y: g.row_centre_y(row),
            });
            assert_eq!(v, poly.contains(&c), "row {row} col {col}");
        }
    }
}

#[test]
fn polygon_in_web_mercator_is_reprojected() {
    let dir = TempDir::new().unwrap();
    // EPSG:3857 forward formulas (EPSG Guidance Note 7-2, "Popular Visualisation
    // Pseudo-Mercator"): x = R·λ, y = R·ln tan(π/4 + φ/2), R = 6378137 m.
    let r = 6_378_137.0f64;
    let x = |lon: f64| r * lon.to_radians();
    let y = |lat: f64| {
        r * (std::f64::consts::FRAC_PI_4 + lat.to_radians() / 2.0)
            .tan()
            .ln()
    };
    let wkt = format!(
        "POLYGON (({a} {c}, {b} {c}, {b} {d}, {a} {d}, {a} {c}))",
        a = x(2.0),
        b = x(8.0),
        c = y(41.0),
        d = y(47.0)
    );
    let mut srs = SpatialRef::from_epsg(3857).unwrap();
    srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let path = dir.path().join("m.gpkg");
    vector_file(&path, "GPKG", Some(&srs), &[&wkt]);
    let g = GridSpec::lonlat(10, 10, 0.0, 50.0, 1.0);
    let mut m = AccessMask::build(&g, &polygon_spec(path), &[]).unwrap();
    let rws = rows(&mut m, &g);
    // The square is lon 2..8, lat 41..47: centres 2.5..7.5 by 41.5..46.5 (6 x 6).
    assert_eq!(count(&rws), 36);
    assert!(rws[3][2] && !rws[3][8] && !rws[9][5]); // (2.5, 46.5) in; (8.5, ..), (.., 40.5) out
}

#[test]
fn invalid_polygon_is_repaired_with_warning() {
    let dir = TempDir::new().unwrap();
    let p = geojson(
        &dir,
        "bow.geojson",
        &[r#"{"type":"Polygon","coordinates":[[[0,0],[10,10],[0,10],[10,0],[0,0]]]}"#],
    );
    // Centres at x = c + 0.75, y = 9.5 - r: never on a diagonal |x-5| = |y-5|.
    let g = GridSpec::lonlat(9, 10, 0.25, 10.0, 1.0);
    let mut m = AccessMask::build(&g, &polygon_spec(p), &[]).unwrap();
    assert!(m.warnings().iter().any(|w| w.contains("make_valid")));
    let r = rows(&mut m, &g);
    // The bow tie repairs to two triangles meeting at (5, 5): |x - 5| < |y - 5| (by hand).
    for (row, cells) in r.iter().enumerate() {
        for (col, &v) in cells.iter().enumerate() {
            let (x, y) = (g.col_centre_x(col), g.row_centre_y(row));
            assert_eq!(v, (x - 5.0).abs() < (y - 5.0).abs(), "row {row} col {col}");
        }
    }
}

#[test]
fn polygon_errors_name_the_problem() {
    let dir = TempDir::new().unwrap();
    let g = GridSpec::lonlat(10, 10, 0.0, 10.0, 1.0);
    let missing = dir.path().join("nope.gpkg");
    let e = AccessMask::build(&g, &polygon_spec(missing), &[])
        .err()
        .unwrap();
    assert!(matches!(e, Error::MissingInput { .. }), "{e}");

    let lines = geojson(
        &dir,
        "l.geojson",
        &[r#"{"type":"LineString","coordinates":[[1,1],[2,2]]}"#],
    );
    let e = AccessMask::build(&g, &polygon_spec(lines), &[])
        .err()
        .unwrap();
    let s = e.to_string();
    assert!(
        matches!(e, Error::Accessible { .. })
            && s.contains("Line String")
            && s.contains("feature 0"),
        "{s}"
    );

    let far = geojson(
        &dir,
        "far.geojson",
        &[r#"{"type":"Polygon","coordinates":[[[50,50],[51,50],[51,51],[50,50]]]}"#],
    );
    let s = AccessMask::build(&g, &polygon_spec(far), &[])
        .err()
        .unwrap()
        .to_string();
    assert!(
        s.contains("far.geojson") && s.contains("do not overlap"),
        "{s}"
    );

    let nocrs = dir.path().join("nocrs.shp");
    vector_file(
        &nocrs,
        "ESRI Shapefile",
        None,
        &["POLYGON ((1 1, 2 1, 2 2, 1 1))"],
    );
    let e = AccessMask::build(&g, &polygon_spec(nocrs), &[])
        .err()
        .unwrap();
    let s = e.to_string();
    assert!(
        matches!(e, Error::Accessible { .. }) && s.contains("no CRS") && s.contains("assign"),
        "{s}"
    );
}

#[test]
fn polygon_on_global_grid_wraps_past_180() {
    let dir = TempDir::new().unwrap();
    // Lon 178..182 written past the antimeridian; on a -180..180 grid it covers
    // centres 178.5, 179.5, -179.5, -178.5 (by hand).
    let p = geojson(
        &dir,
        "w.geojson",
        &[r#"{"type":"Polygon","coordinates":[[[178,0],[182,0],[182,1],[178,1],[178,0]]]}"#],
    );
    let g = GridSpec::lonlat(360, 180, -180.0, 90.0, 1.0);
    let mut m = AccessMask::build(&g, &polygon_spec(p), &[]).unwrap();
    let mut out = vec![false; 360];
    m.fill_row(89, &mut out).unwrap(); // centre lat 0.5
    let on: Vec<usize> = (0..360).filter(|&c| out[c]).collect();
    assert_eq!(on, vec![0, 1, 358, 359]);
}

#[test]
fn bad_distances_name_their_option() {
    let g = GridSpec::lonlat(4, 4, 0.0, 4.0, 1.0);
    for d in [0.0, -3.0, f64::NAN, f64::INFINITY] {
        let spec = AccessSpec {
            buffer_km: Some(d),
            ..Default::default()
        };
        let e = AccessMask::build(&g, &spec, &[(1.0, 1.0)]).err().unwrap();
        assert!(
            matches!(
                e,
                Error::InvalidOption {
                    option: "--buffer-km",
                    ..
                }
            ),
            "{e}"
        );
    }
    let spec = AccessSpec {
        hull_buffer_km: Some(-1.0),
        ..Default::default()
    };
    let e = AccessMask::build(&g, &spec, &[(1.0, 1.0), (2.0, 1.0), (1.0, 2.0)])
        .err()
        .unwrap();
    assert!(
        matches!(
            e,
            Error::InvalidOption {
                option: "--hull-buffer-km",
                ..
            }
        ),
        "{e}"
    );
}

#[test]
fn polygon_intersected_with_buffer() {
    use geographiclib_rs::{Geodesic, InverseGeodesic};
    let dir = TempDir::new().unwrap();
    let p = geojson(
        &dir,
        "half.geojson",
        &[r#"{"type":"Polygon","coordinates":[[[10,40],[11,40],[11,42],[10,42],[10,40]]]}"#],
    );
    let g = GridSpec::lonlat(40, 40, 9.0, 42.0, 0.05);
    let rec = (10.6, 41.0);
    let spec = AccessSpec {
        polygon: Some(p),
        buffer_km: Some(40.0),
        ..Default::default()
    };
    let mut m = AccessMask::build(&g, &spec, &[rec]).unwrap();
    assert_eq!(
        m.description(),
        "polygon half.geojson (1 polygon) intersected with a 40 km geodesic buffer around 1 record"
    );
    let geod = Geodesic::wgs84();
    let r = rows(&mut m, &g);
    for (row, cells) in r.iter().enumerate() {
        for (col, &v) in cells.iter().enumerate() {
            let (x, y) = (g.col_centre_x(col), g.row_centre_y(row));
            // GeographicLib distance (geographiclib-rs) and the square, by hand.
            let s: f64 = geod.inverse(y, x, rec.1, rec.0);
            let in_square = (10.0..11.0).contains(&x) && (40.0..42.0).contains(&y);
            assert_eq!(v, in_square && s <= 40_000.0, "row {row} col {col}");
        }
    }
}
