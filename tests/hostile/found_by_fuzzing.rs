//! Inputs found by the fuzz tests (tests/fuzz_readers.rs), and their neighbours found while
//! fixing them. Each once hung areal: PROJ 9.1 spends time proportional to |x| on a
//! projected x (6 s at 1e17, endless beyond), and densifying an edge 1e20 units long to about
//! one cell needs endless memory. Each run here is killed, and the test fails, after 60 s.

use super::fixture::*;

#[test]
fn projected_record_at_1e308_is_skipped_with_a_warning_instead_of_hanging() {
    // The fuzzed file, reduced: a tab-separated x/y table in EPSG:3857 whose first x is
    // 1.01e308 (a mutation spliced "1e308" into "1.0"). The second record is the centre of
    // cell (5, 5), lon -2.25, lat 47.25, in spherical Mercator (EPSG Guidance Note 7-2,
    // from memory): x = R·lon, y = R·ln(tan(pi/4 + lat/2)), R = 6378137 m.
    let mut c = Case::new();
    let r = 6_378_137.0f64;
    let (lon, lat) = centre(5, 5);
    let (x, y) = (
        r * lon.to_radians(),
        r * (std::f64::consts::FRAC_PI_4 + lat.to_radians() / 2.0)
            .tan()
            .ln(),
    );
    c.records_text(
        "records.txt",
        format!("x\ty\tgbifID\n1.01e308\t451.0\t7\n{x}\t{y}\t8\n"),
    );
    let o = c.run_within(60, &[], &["--omission", "0", "--records-crs", "EPSG:3857"]);
    let s = c.succeeded(&o);
    assert_eq!(s["records"]["total"], 1);
    assert_eq!(threshold(&s), value(5, 5));
    assert_warned(
        &s,
        &o,
        "line 2: point (1.01e308, 451) cannot be transformed",
    );
}

#[test]
fn projected_polygon_vertex_at_1e20_is_refused_instead_of_hanging() {
    let c = Case::new();
    let m = c.path("m.geojson");
    std::fs::write(
        &m,
        r#"{"type":"FeatureCollection","crs":{"type":"name","properties":{"name":"urn:ogc:def:crs:EPSG::3857"}},
        "features":[{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":
        [[[0,5000000],[500000,5000000],[1e20,5500000],[0,5000000]]]}}]}"#,
    )
    .unwrap();
    let o = c.run_within(
        60,
        &[],
        &["--omission", "0", "--accessible", m.to_str().unwrap()],
    );
    c.refused(
        &o,
        3,
        &[
            "m.geojson",
            "feature 0",
            "vertex (1e20, 5500000) lies beyond 1e10",
        ],
    );
}

#[test]
fn polygon_latitude_beyond_90_is_refused() {
    let c = Case::new();
    let m = c.path("m.geojson");
    std::fs::write(
        &m,
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},
        "geometry":{"type":"Polygon","coordinates":[[[0,45],[5,45],[5,1e20],[0,45]]]}}]}"#,
    )
    .unwrap();
    let o = c.run_within(
        60,
        &[],
        &["--omission", "0", "--accessible", m.to_str().unwrap()],
    );
    c.refused(
        &o,
        3,
        &["m.geojson", "feature 0", "latitude 1e20 is outside -90..90"],
    );
}
