//! Unit tests of the vector step's parts. Sources are named beside each check.

use super::equal_area::{choose, VectorCrs};
use super::inputs::{Kind, Value};
use super::lonlat::{split_at, unwrap_ring};
use super::polygonize::is_valid_quiet;
use super::tables::{read_table, PATCH_FIELDS};
use crate::GridSpec;
use gdal::vector::ToGdal;
use geo::Area;
use geo_types::{polygon, MultiPolygon};
use std::path::Path;

fn wgs84_grid(width: usize, height: usize, west: f64, north: f64, cell: f64) -> GridSpec {
    let mut g = GridSpec::lonlat(width, height, west, north, cell);
    g.crs_wkt = crate::crs::wgs84().unwrap().to_wkt().unwrap();
    g
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
fn earlier_tables_are_read_into_the_layer_schema() {
    let t = tempfile::tempdir().unwrap();
    let p = t.path().join("patches.csv");
    // An older run's table: no nearest_range_km column; reachable as patches.csv writes it.
    std::fs::write(
        &p,
        "patch_id,class,cells,area_km2,centroid_lon,centroid_lat,min_lon,min_lat,max_lon,max_lat,records,nearest_patch_km,nearest_occupied_km,reachable,reach_jumps\n\
         1,1,3,2.5,10.5,45.5,10,45,11,46,2,,,TRUE,0\n",
    )
    .unwrap();
    let tab = read_table(&p, &PATCH_FIELDS).unwrap();
    let at = |n: &str| tab.names.iter().position(|x| x == n).unwrap();
    assert_eq!(tab.rows[0][at("cen_lon")], Value::Real(10.5));
    assert_eq!(tab.rows[0][at("nearest_range_km")], Value::Null);
    assert_eq!(tab.rows[0][at("reachable")], Value::Bool(true));
    assert_eq!(tab.kinds[at("reachable")], Kind::Bool);
    assert_eq!(tab.rows[0][at("cells")], Value::Int(3));
    std::fs::write(&p, "patch_id,cells\n1,many\n").unwrap();
    let e = read_table(&p, &PATCH_FIELDS).unwrap_err().to_string();
    assert!(
        e.contains("patches.csv") && e.contains("line 2") && e.contains("cells"),
        "{e}"
    );
}

#[test]
fn equal_area_choice() {
    // Global extent: EPSG:6933 (EPSG registry WKT: Lambert cylindrical equal-area, ellipsoidal).
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
    // A given equal-area CRS keeps its central meridian (EPSG:3035: lon_0 = 10, EPSG
    // registry); Web Mercator is refused.
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
    // The suggested CRS must be one the option accepts, not a geographic one.
    assert!(e.contains("EPSG:6933") && !e.contains("EPSG:4326"), "{e}");
    assert!(choose(&VectorCrs::Given("EPSG:6933".into()), &g).is_ok());
}
