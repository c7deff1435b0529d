//! Unit tests of the vector step's parts. Sources are named beside each check.

use super::crs::{choose, VectorCrs};
use super::distance::unreachable_distances_km;
use super::inputs::{Kind, Table, Value};
use super::lonlat::{split_at, unwrap_ring, ToLonLat};
use super::polygonize::{is_valid_quiet, polygonize_labels};
use crate::patches::{label_grid, Connectivity};
use crate::GridSpec;
use gdal::vector::ToGdal;
use geo::Area;
use geo_types::{polygon, MultiPolygon};
use std::path::Path;

fn wgs84_grid(width: usize, height: usize, west: f64, north: f64, cell: f64) -> GridSpec {
    let mut g = GridSpec::lonlat(width, height, west, north, cell);
    g.crs_wkt = super::lonlat::wgs84().unwrap().to_wkt().unwrap();
    g
}

#[test]
fn polygonize_gives_valid_pixel_edge_polygons_with_holes_and_corner_touches() {
    // 1 1 1 0 0
    // 1 0 1 0 0
    // 1 1 1 0 0
    // 0 0 0 1 0     (3,3) touches (2,2) at a corner: one 8-connected patch.
    // 0 0 0 0 1
    #[rustfmt::skip]
    let g = [1u8,1,1,0,0, 1,0,1,0,0, 1,1,1,0,0, 0,0,0,1,0, 0,0,0,0,1];
    let grid = wgs84_grid(5, 5, 10.0, 50.0, 1.0);
    let (mut labels, patches) = label_grid(&g, 5, Connectivity::Eight, false);
    assert_eq!(patches.len(), 1);
    let shapes =
        polygonize_labels(&mut labels, &grid, Connectivity::Eight, 1, Path::new("t")).unwrap();
    let mp = &shapes[0];
    // Constructed by hand [DER]: a ring of 8 cells with a 1-cell hole, plus two single cells
    // meeting it at corners, so planar area in square degrees = 10 cells, one hole.
    assert!((mp.unsigned_area() - 10.0).abs() < 1e-12, "{mp:?}");
    assert_eq!(mp.0.iter().map(|p| p.interiors().len()).sum::<usize>(), 1);
    assert!(
        is_valid_quiet(&mp.to_gdal().unwrap()),
        "GEOS validity through GDAL"
    );
    assert!(
        mp.0.len() >= 2,
        "corner touches make separate parts: {mp:?}"
    );
    for p in &mp.0 {
        for c in p
            .exterior()
            .0
            .iter()
            .chain(p.interiors().iter().flat_map(|h| h.0.iter()))
        {
            assert_eq!(c.x, c.x.round(), "vertex off the cell corners");
            assert_eq!(c.y, c.y.round(), "vertex off the cell corners");
        }
    }
    // With 4-connectivity the same cells are three patches.
    let (mut labels, patches) = label_grid(&g, 5, Connectivity::Four, false);
    assert_eq!(patches.len(), 3);
    let shapes =
        polygonize_labels(&mut labels, &grid, Connectivity::Four, 3, Path::new("t")).unwrap();
    let areas: Vec<f64> = shapes.iter().map(|m| m.unsigned_area()).collect();
    assert_eq!(areas, [8.0, 1.0, 1.0]);
}

#[test]
fn split_at_the_antimeridian_keeps_area_and_sides() {
    let ctx = Path::new("t");
    let mp = MultiPolygon(vec![polygon![
        (x: 170.0, y: 0.0), (x: 190.0, y: 0.0), (x: 190.0, y: 5.0), (x: 170.0, y: 5.0), (x: 170.0, y: 0.0)
    ]]);
    let cut = split_at(&mp, 0.0, ctx).unwrap();
    assert_eq!(cut.0.len(), 2);
    let mut parts: Vec<(f64, f64, f64)> = cut
        .0
        .iter()
        .map(|p| {
            let xs: Vec<f64> = p.exterior().0.iter().map(|c| c.x).collect();
            let lo = xs.iter().cloned().fold(f64::MAX, f64::min);
            let hi = xs.iter().cloned().fold(f64::MIN, f64::max);
            (lo, hi, p.unsigned_area())
        })
        .collect();
    parts.sort_by(|a, b| a.0.total_cmp(&b.0));
    // RFC 7946 section 3.1.9: one part ends at -180, the other at 180.
    assert_eq!(parts, [(-180.0, -170.0, 50.0), (170.0, 180.0, 50.0)]);
    // Centred on 180 there is nothing to cut.
    assert_eq!(split_at(&mp, 180.0, ctx).unwrap(), mp);
    // Entirely beyond 180: shifted by a whole turn.
    let far = MultiPolygon(vec![polygon![
        (x: 200.0, y: 0.0), (x: 201.0, y: 0.0), (x: 201.0, y: 1.0), (x: 200.0, y: 0.0)
    ]]);
    let s = split_at(&far, 0.0, ctx).unwrap();
    assert_eq!(s.0[0].exterior().0[0].x, -160.0);
}

#[test]
fn parts_meeting_after_the_shift_are_merged() {
    // A grid from 0 to 360: a patch across Greenwich arrives as [358, 360] and [0, 2].
    let mp = MultiPolygon(vec![
        polygon![(x: 358.0, y: 0.0), (x: 360.0, y: 0.0), (x: 360.0, y: 1.0), (x: 358.0, y: 1.0), (x: 358.0, y: 0.0)],
        polygon![(x: 0.0, y: 0.0), (x: 2.0, y: 0.0), (x: 2.0, y: 1.0), (x: 0.0, y: 1.0), (x: 0.0, y: 0.0)],
    ]);
    let out = split_at(&mp, 0.0, Path::new("t")).unwrap();
    assert_eq!(out.0.len(), 1, "{out:?}");
    assert!((out.unsigned_area() - 4.0).abs() < 1e-12);
    assert!(is_valid_quiet(&out.to_gdal().unwrap()));
}

#[test]
fn a_ring_around_a_pole_is_detected() {
    let mut around = vec![0.0, 90.0, 180.0, 270.0, 360.0];
    assert!(unwrap_ring(&mut around, 0.0).is_err());
    let mut across = vec![179.0, -179.0, -179.0, 179.0, 179.0];
    unwrap_ring(&mut across, 0.0).unwrap();
    assert_eq!(across, [179.0, 181.0, 181.0, 179.0, 179.0]);
}

#[test]
fn unreachable_distance_matches_published_geodesics() {
    // Row 0 centred on the equator: class 1 at column 0, a class-2 patch at columns 5-6.
    // CHECKS.md section 3 [DER]: along the equator s = a * dlon = 111 319.490 793 m a degree.
    let grid = wgs84_grid(8, 1, 0.0, 0.5, 1.0);
    let classes = [1u8, 0, 0, 0, 0, 2, 2, 0];
    let (labels, patches) = label_grid(&classes, 8, Connectivity::Eight, false);
    let ll = ToLonLat::new(&grid).unwrap();
    let d = unreachable_distances_km(&classes, &labels, &grid, false, patches.len(), &ll);
    assert_eq!(d[0], None, "class-1 patch has no distance");
    assert!(
        (d[1].unwrap() - 6_378_137.0 * 5f64.to_radians() / 1000.0).abs() < 1e-9,
        "{d:?}"
    );

    // CHECKS.md section 3 [REF]: (60, 0) -> (60, 1) is 55 799.470 393 m; touching cells are one
    // centre spacing apart.
    let grid = wgs84_grid(3, 1, -0.5, 60.5, 1.0);
    let classes = [1u8, 2, 0];
    let (labels, patches) = label_grid(&classes, 3, Connectivity::Eight, false);
    let d = unreachable_distances_km(&classes, &labels, &grid, false, patches.len(), &ll);
    assert!((d[1].unwrap() - 55.799_470_393).abs() < 1e-9, "{d:?}");

    // Across the antimeridian on a wrapping grid: columns 0 and 359 are 1 degree apart.
    let grid = wgs84_grid(360, 1, -180.0, 0.5, 1.0);
    let mut classes = vec![0u8; 360];
    classes[0] = 1;
    classes[357] = 2;
    let (labels, patches) = label_grid(&classes, 360, Connectivity::Eight, true);
    let ll = ToLonLat::new(&grid).unwrap();
    let d = unreachable_distances_km(&classes, &labels, &grid, true, patches.len(), &ll);
    assert!(
        (d[1].unwrap() - 6_378_137.0 * 3f64.to_radians() / 1000.0).abs() < 1e-9,
        "{d:?}"
    );
    // No class-1 cell: no distance.
    let none = unreachable_distances_km(
        &[2, 0, 2],
        &[1, 0, 2],
        &wgs84_grid(3, 1, 0.0, 0.5, 1.0),
        false,
        2,
        &ll,
    );
    assert_eq!(none, [None, None]);
}

#[test]
fn csv_columns_are_typed_from_their_values() {
    let t = tempfile::tempdir().unwrap();
    let p = t.path().join("t.csv");
    std::fs::write(&p, "a,b,c,d\n1,2.5,x,\n-3,4.0,y,\n").unwrap();
    let tab = Table::read_csv(&p).unwrap();
    assert_eq!(tab.kinds, [Kind::Int, Kind::Real, Kind::Text, Kind::Text]);
    assert_eq!(
        tab.rows[1],
        [
            Value::Int(-3),
            Value::Real(4.0),
            Value::Text("y".into()),
            Value::Null
        ]
    );
    assert!(tab.col("zz", &p).unwrap_err().to_string().contains("zz"));
}

#[test]
fn equal_area_choice() {
    // Global extent: EPSG:6933 (CHECKS.md section 6: Lambert cylindrical equal-area, ellipsoidal).
    let g = wgs84_grid(360, 180, -180.0, 90.0, 1.0);
    let t = choose(&VectorCrs::Auto, &g).unwrap();
    assert!(t.label.starts_with("EPSG:6933"));
    assert_eq!(t.srs.auth_code().unwrap(), 6933);
    // Regional: LAEA centred on the extent (10..14 E, 44..46 N).
    let g = wgs84_grid(4, 2, 10.0, 46.0, 1.0);
    let t = choose(&VectorCrs::Auto, &g).unwrap();
    let p4 = t.srs.to_proj4().unwrap();
    assert!(
        p4.contains("+proj=laea") && p4.contains("+lat_0=45") && p4.contains("+lon_0=12"),
        "{p4}"
    );
    assert_eq!(t.centre_lon, 12.0);
    // A given equal-area CRS keeps its central meridian (EPSG:3035: lon_0 = 10, CHECKS.md
    // section 6); Web Mercator is refused.
    let t = choose(&VectorCrs::Given("EPSG:3035".into()), &g).unwrap();
    assert_eq!(t.centre_lon, 10.0);
    let e = choose(&VectorCrs::Given("EPSG:3857".into()), &g)
        .err()
        .unwrap()
        .to_string();
    assert!(
        e.contains("--vector-crs") && e.contains("equal-area"),
        "{e}"
    );
    let e = choose(&VectorCrs::Given("no such crs".into()), &g)
        .err()
        .unwrap()
        .to_string();
    assert!(e.contains("--vector-crs"), "{e}");
}
