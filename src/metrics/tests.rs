//! EOO, AOO, criterion B and patch-structure checks. Each check names its source.

use super::aoo::{centre_of, AooCounter};
use super::criterion_b::*;
use super::*;
use std::path::Path;

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

fn used(points: &[(f64, f64)]) -> Vec<MetricRecord> {
    points
        .iter()
        .map(|&(lon, lat)| MetricRecord {
            lon,
            lat,
            usage: RecordUse::Used,
        })
        .collect()
}

// --- criterion B ----------------------------------------------------------------------

// The thresholds as published: IUCN (2001; 2nd ed. 2012) Red List Categories and Criteria,
// version 3.1, criterion B1 (EOO) and B2 (AOO). CR and EN confirmed against a stored copy,
// VU quoted from memory.
#[test]
fn criterion_b_thresholds_are_the_published_ones() {
    let eoo: Vec<(&str, f64)> = EOO_THRESHOLDS
        .iter()
        .map(|t| (t.category, t.below_km2))
        .collect();
    assert_eq!(
        eoo,
        [
            ("Critically Endangered", 100.0),
            ("Endangered", 5_000.0),
            ("Vulnerable", 20_000.0)
        ]
    );
    let aoo: Vec<(&str, f64)> = AOO_THRESHOLDS
        .iter()
        .map(|t| (t.category, t.below_km2))
        .collect();
    assert_eq!(
        aoo,
        [
            ("Critically Endangered", 10.0),
            ("Endangered", 500.0),
            ("Vulnerable", 2_000.0)
        ]
    );
}

// The thresholds are strict "less than" (IUCN Red List Categories and Criteria v3.1, B1 and
// B2 read "estimated to be less than"; wording confirmed against a stored copy).
#[test]
fn criterion_b_comparison_is_strict_and_worded_as_below_a_threshold() {
    assert_eq!(
        below_threshold_for(99.9, &EOO_THRESHOLDS),
        Some("Critically Endangered")
    );
    assert_eq!(
        below_threshold_for(100.0, &EOO_THRESHOLDS),
        Some("Endangered")
    );
    assert_eq!(
        below_threshold_for(19_999.0, &EOO_THRESHOLDS),
        Some("Vulnerable")
    );
    assert_eq!(below_threshold_for(20_000.0, &EOO_THRESHOLDS), None);
    assert_eq!(
        below_threshold_for(9.99, &AOO_THRESHOLDS),
        Some("Critically Endangered")
    );
    assert_eq!(
        below_threshold_for(10.0, &AOO_THRESHOLDS),
        Some("Endangered")
    );
    assert_eq!(below_threshold_for(2_000.0, &AOO_THRESHOLDS), None);
    let c = compare(Some(4_000.0), 12.0, "records");
    assert_eq!(c.eoo_below_threshold_for.as_deref(), Some("Endangered"));
    assert_eq!(c.aoo_below_threshold_for.as_deref(), Some("Endangered"));
    assert!(
        c.statements[0].contains("below the threshold for Endangered"),
        "{:?}",
        c.statements
    );
    assert!(c.statements[0].contains("4,000 km2") && c.statements[0].contains("5,000 km2"));
    let all = c.statements.join(" ") + &c.caution;
    assert!(!all.to_lowercase().contains("listed as"), "{all}");
    assert!(c.caution.contains("(a)") && c.caution.contains("authority"));
}

#[test]
fn km2_formatting() {
    // Worked by hand.
    assert_eq!(fmt_km2(12_713.025_3), "12,713");
    assert_eq!(fmt_km2(232.0), "232");
    assert_eq!(fmt_km2(0.04), "0.0");
    assert_eq!(fmt_km2(1234.56), "1,234.6");
    assert_eq!(fmt_km2(1_000_000.0), "1,000,000");
}

// --- EOO ------------------------------------------------------------------------------

// 4-vertex geodesic polygons, GeographicLib PolygonArea values (computed with
// GeographicLib-Python 2.1; Karney 2013).
const GL4_EQUATOR_1DEG_KM2: f64 = 12_308.778_361;
const GL4_45N_1DEG_KM2: f64 = 8_686.379_302;
const GL4_89N_POLE_KM2: f64 = 108.861_155_869;

#[test]
fn eoo_of_a_square_with_inner_points_is_the_geodesic_square() {
    // Corners plus inner points: the hull is the square, its area GeographicLib's.
    let pts = [
        (0.0, 0.0),
        (1.0, 0.0),
        (1.0, 1.0),
        (0.0, 1.0),
        (0.5, 0.5),
        (0.2, 0.7),
        (0.9, 0.1),
    ];
    let h = hull_area(&pts);
    assert_eq!(h.vertices, 4);
    assert!(
        rel(h.area_km2.unwrap(), GL4_EQUATOR_1DEG_KM2) < 1e-9,
        "{h:?}"
    );
    let h45 = hull_area(&[
        (10.0, 45.0),
        (11.0, 45.0),
        (11.0, 46.0),
        (10.0, 46.0),
        (10.5, 45.5),
    ]);
    assert!(
        rel(h45.area_km2.unwrap(), GL4_45N_1DEG_KM2) < 1e-9,
        "{h45:?}"
    );
}

#[test]
fn eoo_across_the_antimeridian() {
    // The same 1-degree square as at lon 0..1, moved to 179.5E..179.5W: area does not depend
    // on longitude (GeographicLib value above). A raw lon/lat hull would span 359 degrees.
    let pts = [
        (179.5, 0.0),
        (-179.5, 0.0),
        (-179.5, 1.0),
        (179.5, 1.0),
        (180.0, 0.5),
    ];
    let h = hull_area(&pts);
    assert!(
        rel(h.area_km2.unwrap(), GL4_EQUATOR_1DEG_KM2) < 1e-9,
        "{h:?}"
    );
}

#[test]
fn eoo_touching_and_around_a_pole() {
    // 89N..90N by 1 degree: the two pole corners are one point (GeographicLib-Python 2.1).
    let h = hull_area(&[(0.0, 89.0), (1.0, 89.0), (1.0, 90.0), (0.0, 90.0)]);
    assert_eq!(h.distinct_points, 3);
    assert!(rel(h.area_km2.unwrap(), GL4_89N_POLE_KM2) < 1e-9, "{h:?}");
    // A ring of points at 85N round the pole: the hull holds the pole. Source: GeographicLib
    // PolygonArea (geographiclib-rs) of the 12 ring points, which are all hull vertices; a
    // hull built in raw lon/lat would be a band, not a cap.
    let ring: Vec<(f64, f64)> = (0..12).map(|k| (-180.0 + 30.0 * k as f64, 85.0)).collect();
    let mut pts = ring.clone();
    pts.push((0.0, 89.0));
    let h = hull_area(&pts);
    assert_eq!(h.vertices, 12);
    let direct = geodesic_polygon_area_km2(&ring);
    assert!(rel(h.area_km2.unwrap(), direct) < 1e-12);
    // And it is a little less than the cap north of 85N on WGS84, π a² (q_p - q(85°)) =
    // 979,155.2 km2 (Snyder 1987 eq. 3-12), and more than 95 % of it
    // (an inscribed 12-gon keeps (12/2π)·sin(2π/12) = 95.5 % of a small circle's area; derived
    // by hand).
    assert!((0.95 * 979_155.2..979_155.2).contains(&direct), "{direct}");
}

#[test]
fn eoo_degenerate_sets() {
    // Derived by hand: fewer than 3 distinct points, or points on one great circle, have no area.
    let two = hull_area(&[(10.0, 45.0), (10.0, 45.0), (10.1, 45.0)]);
    assert_eq!((two.area_km2, two.distinct_points), (Some(0.0), 2));
    assert!(two.note.unwrap().contains("fewer than 3"));
    let line = hull_area(&[(0.0, 0.0), (1.0, 0.0), (2.0, 0.0)]);
    assert_eq!(line.area_km2, Some(0.0));
    assert!(line.note.unwrap().contains("great circle"));
    // Not in one hemisphere: no hull on the sphere (the six axis points).
    let wide = hull_area(&[
        (0.0, 0.0),
        (90.0, 0.0),
        (180.0, 0.0),
        (-90.0, 0.0),
        (0.0, 90.0),
        (0.0, -90.0),
    ]);
    assert_eq!(wide.area_km2, None);
}

// --- AOO ------------------------------------------------------------------------------

#[test]
fn aoo_counts_hand_placed_points_in_known_cells() {
    // Projected metres, 2 km cells, origin (0, 0): cells worked by hand.
    let mut c = AooCounter::new(2000.0);
    for (x, y) in [
        (300.0, 300.0),     // cell (0, 0)
        (1700.0, 1900.0),   // cell (0, 0)
        (-300.0, 300.0),    // cell (-1, 0)
        (300.0, -300.0),    // cell (0, -1)
        (-300.0, -300.0),   // cell (-1, -1)
        (-1700.0, -1900.0), // cell (-1, -1)
        (4100.0, 0.0),      // cell (2, 0)
    ] {
        c.add(x, y);
    }
    let per = c.per_origin();
    assert_eq!(per[0], 5); // origin (0, 0)
                           // Origin (1 km, 1 km) (ox index 2, oy index 2): lines at -1, 1, 3, 5 km:
                           // (0.3,0.3) (-0.3,0.3) (0.3,-0.3) (-0.3,-0.3) share cell (-1,-1); (1.7,1.9) is (0,0);
                           // (-1.7,-1.9) is (-2,-2); (4.1,0) is (1,-1): 4 cells.
    assert_eq!(per[2 * 4 + 2], 4);
    let f = c.figures();
    assert_eq!(f.min_cells, *per.iter().min().unwrap());
    assert_eq!(f.max_cells, *per.iter().max().unwrap());
    assert_eq!(f.min_km2(), f.min_cells as f64 * 4.0);
}

#[test]
fn aoo_grid_origin_minimisation_with_a_known_answer() {
    // Four records 200 m apart round the LAEA centre (45N, 10E): at origin (0, 0) the grid
    // lines x = 0 and y = 0 split them into 4 cells (16 km2); at origin (0.5 km, 0.5 km) they
    // share one cell (4 km2), the first origin that does (by hand). Records are placed with
    // PROJ's inverse LAEA (through GDAL), the outside reference for the projection.
    use gdal::spatial_ref::{CoordTransform, SpatialRef};
    let laea = crate::crs::traditional(
        SpatialRef::from_proj4("+proj=laea +lat_0=45 +lon_0=10 +datum=WGS84 +units=m +no_defs")
            .unwrap(),
    );
    let ct = CoordTransform::new(&laea, &crate::crs::wgs84().unwrap()).unwrap();
    let mut xs = [-100.0, 100.0, 100.0, -100.0];
    let mut ys = [-100.0, -100.0, 100.0, 100.0];
    ct.transform_coords(&mut xs, &mut ys, &mut []).unwrap();
    let pts: Vec<(f64, f64)> = xs.iter().copied().zip(ys.iter().copied()).collect();
    assert_eq!(centre_of(&pts), (10.0, 45.0));
    let m = records_metrics(Path::new("r.csv"), &used(&pts), &MetricsOptions::default()).unwrap();
    assert_eq!(m.records.aoo_km2, 4.0);
    assert_eq!(m.records.aoo_min_km2, 4.0);
    assert_eq!(m.records.aoo_max_km2, 16.0);
    assert_eq!(m.records.aoo_origin_km, [0.5, 0.5]);
    assert!(
        m.aoo_grid.crs.contains("+lat_0=45.00 +lon_0=10.00"),
        "{}",
        m.aoo_grid.crs
    );
    // The hull (200 m square, 0.04 km2) is smaller than AOO: EOO := AOO (Guidelines for
    // Using the IUCN Red List Categories and Criteria §4.9; wording found in a secondary copy).
    let hull = m.records.eoo_hull_km2.unwrap();
    assert!(rel(hull, 0.04) < 1e-3, "{hull}");
    assert!(m.records.eoo_set_to_aoo);
    assert_eq!(m.records.eoo_km2, Some(4.0));
    // A 1 km cell: the 4 records are 200 m apart, so between 1 and 4 cells of 1 km2.
    let opts = MetricsOptions {
        aoo_cell_km: 1.0,
        ..Default::default()
    };
    let m1 = records_metrics(Path::new("r.csv"), &used(&pts), &opts).unwrap();
    assert_eq!((m1.records.aoo_min_km2, m1.records.aoo_max_km2), (1.0, 4.0));
}

#[test]
fn single_record_and_dropped_records() {
    // One record: hull area 0, EOO := AOO = one 2 km cell (derived by hand from
    // Guidelines §4.9).
    let m = records_metrics(
        Path::new("r.csv"),
        &used(&[(5.0, 5.0)]),
        &MetricsOptions::default(),
    )
    .unwrap();
    assert_eq!(m.records.eoo_hull_km2, Some(0.0));
    assert_eq!(m.records.eoo_km2, Some(4.0));
    assert_eq!(m.records.aoo_km2, 4.0);
    assert!(m.records.notes.iter().any(|n| n.contains("fewer than 3")));
    // Below-threshold records are left out unless kept.
    let mut recs = used(&[(5.0, 5.0)]);
    recs.push(MetricRecord {
        lon: 6.0,
        lat: 5.0,
        usage: RecordUse::BelowThreshold,
    });
    recs.push(MetricRecord {
        lon: 7.0,
        lat: 5.0,
        usage: RecordUse::Excluded,
    });
    let m = records_metrics(Path::new("r.csv"), &recs, &MetricsOptions::default()).unwrap();
    assert_eq!((m.records_used, m.records_below_threshold), (1, 1));
    let keep = MetricsOptions {
        keep_dropped: true,
        ..Default::default()
    };
    let m = records_metrics(Path::new("r.csv"), &recs, &keep).unwrap();
    assert_eq!((m.records_used, m.records.aoo_km2), (2, 8.0));
}

#[test]
fn bad_metric_options_name_the_option() {
    for (opts, name) in [
        (
            MetricsOptions {
                aoo_cell_km: 0.0,
                ..Default::default()
            },
            "--aoo-cell-km",
        ),
        (
            MetricsOptions {
                gap_km: Some(-1.0),
                ..Default::default()
            },
            "--gap-km",
        ),
        (
            MetricsOptions {
                min_patch_km2: Some(f64::NAN),
                ..Default::default()
            },
            "--min-patch-km2",
        ),
    ] {
        let e = opts.check().unwrap_err();
        assert!(e.to_string().starts_with(name), "{e}");
    }
}

// --- structure ------------------------------------------------------------------------

#[test]
fn patch_structure_worked_example() {
    // Derived by hand: areas 1, 2, 3, 10; Σa = 16, Σa² = 114, weighted mean 7.125;
    // below 2.5 km2: the 1 and the 2, share 3/16.
    let s = patch_structure(&[1.0, 2.0, 3.0, 10.0], Some(2.5));
    assert_eq!((s.patches, s.total_km2, s.largest_km2), (4, 16.0, 10.0));
    assert_eq!(s.area_weighted_mean_km2, 7.125);
    assert_eq!(
        (s.patches_below_min, s.share_below_min),
        (Some(2), Some(0.1875))
    );
    let none = patch_structure(&[], None);
    assert_eq!(
        (none.patches, none.largest_km2, none.share_below_min),
        (0, 0.0, None)
    );
}
