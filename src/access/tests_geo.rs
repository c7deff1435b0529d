//! Tests of the geodesic parts of M (point buffer, hull buffer) against GeographicLib
//! (geographiclib-rs, Karney 2013): every membership is compared with an Inverse distance
//! computed here, and edge points are placed with Direct.

use super::tests::rows;
use super::*;
use gdal::spatial_ref::{AxisMappingStrategy, CoordTransform, SpatialRef};
use geographiclib_rs::{DirectGeodesic, Geodesic, InverseGeodesic};

fn dist(lat1: f64, lon1: f64, lat2: f64, lon2: f64) -> f64 {
    Geodesic::wgs84().inverse(lat1, lon1, lat2, lon2)
}

/// Per-cell GeographicLib check: is the centre within `d_m` of any record?
fn brute(grid: &GridSpec, recs: &[(f64, f64)], d_m: f64) -> Vec<Vec<bool>> {
    (0..grid.height)
        .map(|r| {
            (0..grid.width)
                .map(|c| {
                    let (x, y) = (grid.col_centre_x(c), grid.row_centre_y(r));
                    recs.iter().any(|&(lon, lat)| dist(y, x, lat, lon) <= d_m)
                })
                .collect()
        })
        .collect()
}

fn buffer(km: f64) -> AccessSpec {
    AccessSpec {
        buffer_km: Some(km),
        ..Default::default()
    }
}

fn hull(km: f64) -> AccessSpec {
    AccessSpec {
        hull_buffer_km: Some(km),
        ..Default::default()
    }
}

/// A 3 x 1 grid of `cell` degrees whose middle cell is centred on (lon, lat).
fn grid_at(lon: f64, lat: f64, cell: f64) -> GridSpec {
    GridSpec::lonlat(3, 1, lon - 1.5 * cell, lat + 0.5 * cell, cell)
}

/// Membership of the middle cell of `grid_at(point)` for `spec`.
fn middle_in(spec: &AccessSpec, recs: &[(f64, f64)], lon: f64, lat: f64) -> bool {
    let g = grid_at(lon, lat, 0.01);
    let mut m = AccessMask::build(&g, spec, recs).unwrap();
    let mut out = vec![false; 3];
    m.fill_row(0, &mut out).unwrap();
    out[1]
}

/// Deterministic pseudo-random numbers in [0, 1) (64-bit LCG, Knuth's MMIX constants).
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

#[test]
fn buffer_edge_cells_at_d_plus_minus_a_thousandth() {
    let rec = (10.0, 45.0);
    let d = 50_000.0;
    let geod = Geodesic::wgs84();
    for azi in [0.0, 37.0, 90.0, 180.0, 250.0, 300.0] {
        for (f, want) in [(1.0 - 0.001, true), (1.0 + 0.001, false)] {
            // GeographicLib Direct places the cell centre at D·f from the record.
            let (lat2, lon2): (f64, f64) = geod.direct(rec.1, rec.0, azi, d * f);
            assert_eq!(
                middle_in(&buffer(50.0), &[rec], lon2, lat2),
                want,
                "azi {azi} f {f}"
            );
        }
    }
}

#[test]
fn buffer_equals_per_cell_geographiclib_on_random_grid() {
    let mut rng = Lcg(7);
    let g = GridSpec::lonlat(70, 45, -3.0, 52.0, 0.07);
    let recs: Vec<(f64, f64)> = (0..12)
        .map(|_| (-4.0 + 7.0 * rng.next(), 48.0 + 5.0 * rng.next()))
        .collect();
    let mut m = AccessMask::build(&g, &buffer(35.0), &recs).unwrap();
    let got = rows(&mut m, &g);
    let want = brute(&g, &recs, 35_000.0);
    assert_eq!(got, want);
    let n = got.iter().flatten().filter(|&&b| b).count();
    assert!(n > 100 && n < 70 * 45, "buffer neither empty nor full: {n}");
}

#[test]
fn buffer_equals_geographiclib_on_coarse_global_grid() {
    // High latitudes, the antimeridian and a large D in one brute-force comparison.
    let g = GridSpec::lonlat(72, 36, -180.0, 90.0, 5.0);
    let recs = [(179.0, 10.0), (-100.0, 84.0), (60.0, -71.0), (0.0, 0.0)];
    let mut m = AccessMask::build(&g, &buffer(900.0), &recs).unwrap();
    assert_eq!(rows(&mut m, &g), brute(&g, &recs, 900_000.0));
}

#[test]
fn buffer_crosses_the_antimeridian() {
    let g = GridSpec::lonlat(3600, 1800, -180.0, 90.0, 0.1);
    let rec = (179.9, 0.0);
    let mut m = AccessMask::build(&g, &buffer(30.0), &[rec]).unwrap();
    for row in 895..905 {
        let mut out = vec![false; g.width];
        m.fill_row(row, &mut out).unwrap();
        for (c, &v) in out.iter().enumerate() {
            let s = dist(g.row_centre_y(row), g.col_centre_x(c), rec.1, rec.0);
            assert_eq!(v, s <= 30_000.0, "row {row} col {c}");
        }
        if row == 899 {
            // Centre (-179.95, 0.05) is about 17 km from the record, across 180°.
            assert!(out[0] && out[1]);
        }
    }
}

#[test]
fn buffer_around_the_pole_covers_whole_rows() {
    let g = GridSpec::lonlat(720, 8, -180.0, 90.0, 0.5);
    for rec in [(30.0, 89.9), (0.0, 90.0)] {
        let mut m = AccessMask::build(&g, &buffer(50.0), &[rec]).unwrap();
        let got = rows(&mut m, &g);
        assert_eq!(got, brute(&g, &[rec], 50_000.0), "record {rec:?}");
        // Row 0 (lat 89.75) is at most ~0.35° of arc (< 40 km) from (30, 89.9): all in.
        assert!(got[0].iter().all(|&b| b));
        assert!(got[2].iter().all(|&b| !b));
    }
}

#[test]
fn buffer_on_projected_grid_matches_geographiclib() {
    // A 60 x 40 grid of 5 km cells in ETRS89-LAEA (EPSG:3035).
    let mut laea = SpatialRef::from_epsg(3035).unwrap();
    laea.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let mut wgs = SpatialRef::from_epsg(4326).unwrap();
    wgs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let g = GridSpec {
        width: 60,
        height: 40,
        geo_transform: [4_000_000.0, 5000.0, 0.0, 3_000_000.0, 0.0, -5000.0],
        crs_wkt: laea.to_wkt().unwrap(),
        geographic: false,
    };
    let ct = CoordTransform::new(&laea, &wgs).unwrap();
    let (mut xs, mut ys) = (
        vec![4_100_000.0, 4_200_000.0],
        vec![2_900_000.0, 2_850_000.0],
    );
    ct.transform_coords(&mut xs, &mut ys, &mut []).unwrap();
    let recs: Vec<(f64, f64)> = xs.iter().copied().zip(ys.iter().copied()).collect();
    let mut m = AccessMask::build(&g, &buffer(40.0), &recs).unwrap();
    let got = rows(&mut m, &g);
    for (r, cells) in got.iter().enumerate() {
        let mut lon: Vec<f64> = (0..g.width).map(|c| g.col_centre_x(c)).collect();
        let mut lat = vec![g.row_centre_y(r); g.width];
        ct.transform_coords(&mut lon, &mut lat, &mut []).unwrap();
        for (c, &v) in cells.iter().enumerate() {
            let want = recs
                .iter()
                .any(|&(x, y)| dist(lat[c], lon[c], y, x) <= 40_000.0);
            assert_eq!(v, want, "row {r} col {c}");
        }
    }
    assert!(got.iter().flatten().any(|&b| b));
}

#[test]
fn hull_of_triangle_inside_and_outside() {
    let recs = [(0.0, 0.0), (10.0, 0.0), (5.0, 10.0), (5.0, 3.0)];
    let spec = hull(0.0);
    // Inside by construction (well within the triangle), outside beyond each side.
    assert!(middle_in(&spec, &recs, 5.0, 4.0));
    assert!(middle_in(&spec, &recs, 2.0, 1.0));
    assert!(!middle_in(&spec, &recs, 5.0, -0.5));
    assert!(!middle_in(&spec, &recs, 5.0, 10.5));
    assert!(!middle_in(&spec, &recs, 1.0, 5.0));
    let g = GridSpec::lonlat(4, 4, 0.0, 1.0, 1.0);
    let m = AccessMask::build(&g, &spec, &recs).unwrap();
    assert!(
        m.description()
            .contains("convex hull (3 vertices) of 4 records"),
        "{}",
        m.description()
    );
}

#[test]
fn hull_buffer_reaches_d_beyond_edge_and_vertex() {
    let recs = [(0.0, 0.0), (10.0, 0.0), (5.0, 10.0)];
    let d = 100_000.0;
    let geod = Geodesic::wgs84();
    // South of the equator edge (an ellipsoid geodesic): the nearest hull point is the
    // foot on the equator, so Direct due south from it gives the distance to the hull.
    // Beyond the vertex (10, 0) towards azimuth 135 the vertex itself is the nearest point.
    for (lat0, lon0, azi) in [(0.0, 5.0, 180.0), (0.0, 10.0, 135.0)] {
        for (f, want) in [(1.0 - 0.001, true), (1.0 + 0.001, false)] {
            let (lat2, lon2): (f64, f64) = geod.direct(lat0, lon0, azi, d * f);
            assert_eq!(
                middle_in(&hull(100.0), &recs, lon2, lat2),
                want,
                "{lon0} {azi} {f}"
            );
            let s = dist(lat2, lon2, lat0, lon0);
            assert!((s - d * f).abs() < 1e-6);
        }
    }
    // Rows of a grid over the hull: the hull part equals interior-or-within-D of the edges
    // (checked here only where GeographicLib says a cell centre is within D of a vertex).
    let g = GridSpec::lonlat(30, 30, -2.0, 12.0, 0.5);
    let mut m = AccessMask::build(&g, &hull(100.0), &recs).unwrap();
    let got = rows(&mut m, &g);
    let near_vertex = brute(&g, &recs, d);
    for (a, b) in got.iter().flatten().zip(near_vertex.iter().flatten()) {
        assert!(
            *a || !*b,
            "a cell within D of a record must be in the hull buffer"
        );
    }
}

#[test]
fn degenerate_hulls_buffer_points_and_segments() {
    let geod = Geodesic::wgs84();
    // Two records: a segment on the equator; beyond its end the end point is nearest.
    let recs = [(0.0, 0.0), (4.0, 0.0)];
    for (f, want) in [(1.0 - 0.001, true), (1.0 + 0.001, false)] {
        let (lat2, lon2): (f64, f64) = geod.direct(0.0, 4.0, 90.0, 20_000.0 * f);
        assert_eq!(middle_in(&hull(20.0), &recs, lon2, lat2), want);
        let (lat3, lon3): (f64, f64) = geod.direct(0.0, 2.0, 0.0, 20_000.0 * f);
        assert_eq!(middle_in(&hull(20.0), &recs, lon3, lat3), want);
    }
    // Three collinear records on the equator behave as the segment.
    let three = [(0.0, 0.0), (1.0, 0.0), (4.0, 0.0)];
    let (lat3, lon3): (f64, f64) = geod.direct(0.0, 2.0, 180.0, 19_980.0);
    assert!(middle_in(&hull(20.0), &three, lon3, lat3));
    // A single place: the hull buffer is the point buffer.
    let one = [(3.0, 3.0), (3.0, 3.0)];
    let g = GridSpec::lonlat(20, 20, 2.5, 3.5, 0.05);
    let mut m = AccessMask::build(&g, &hull(15.0), &one).unwrap();
    assert_eq!(rows(&mut m, &g), brute(&g, &one[..1], 15_000.0));
    // No area and no buffer: refused, naming the option.
    let g = GridSpec::lonlat(4, 4, 0.0, 1.0, 1.0);
    let e = AccessMask::build(&g, &hull(0.0), &recs).err().unwrap();
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
fn hull_wider_than_a_hemisphere_is_refused() {
    let recs = [(0.0, 0.0), (120.0, 0.0), (-120.0, 0.0), (0.0, 60.0)];
    let g = GridSpec::lonlat(4, 4, 0.0, 1.0, 1.0);
    let e = AccessMask::build(&g, &hull(10.0), &recs).err().unwrap();
    assert!(e.to_string().contains("hemisphere"), "{e}");
}

#[test]
fn hull_interior_matches_spherical_trigonometry() {
    // Hull of (0,0), (10,0), (0,10): sides on the equator, the meridian 0 and the great
    // circle through (10E, 0) and (0, 10N). By Napier's rules that circle has
    // tan φ = sin(10° - λ) / cos 10° (node at 10E, inclination i with tan i = 1/cos 10°;
    // derived by hand). Inside: λ > 0, φ > 0 and below the circle.
    let recs = [(0.0, 0.0), (10.0, 0.0), (0.0, 10.0)];
    let g = GridSpec::lonlat(130, 130, -0.5, 12.5, 0.1);
    let mut m = AccessMask::build(&g, &hull(0.0), &recs).unwrap();
    let got = rows(&mut m, &g);
    let mut n_in = 0;
    for (r, cells) in got.iter().enumerate() {
        for (c, &v) in cells.iter().enumerate() {
            let (lon, lat) = (g.col_centre_x(c), g.row_centre_y(r));
            let t = (10.0 - lon).to_radians().sin() / 10f64.to_radians().cos();
            let margin = lat.to_radians().tan() - t;
            if margin.abs() < 1e-9 || lon.abs() < 1e-9 || lat.abs() < 1e-9 {
                continue;
            }
            let want = lon > 0.0 && lat > 0.0 && margin < 0.0;
            assert_eq!(v, want, "row {r} col {c} ({lon}, {lat})");
            n_in += want as usize;
        }
    }
    assert!(n_in > 4000, "{n_in}");
}

/// A grid in EPSG:3857 with `n x n` cells of `cell` metres, north-west corner (x0, y0).
fn mercator_grid(n: usize, x0: f64, y0: f64, cell: f64) -> (GridSpec, CoordTransform) {
    let mut merc = SpatialRef::from_epsg(3857).unwrap();
    merc.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let mut wgs = SpatialRef::from_epsg(4326).unwrap();
    wgs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let g = GridSpec {
        width: n,
        height: n,
        geo_transform: [x0, cell, 0.0, y0, 0.0, -cell],
        crs_wkt: merc.to_wkt().unwrap(),
        geographic: false,
    };
    (g, CoordTransform::new(&merc, &wgs).unwrap())
}

#[test]
fn hull_and_polygon_on_projected_grid() {
    // EPSG:3857 x = R·λ (EPSG Guidance Note 7-2), so x = R·λ in radians.
    let r = 6_378_137.0f64;
    let (g, ct) = mercator_grid(100, -r * 1f64.to_radians(), 1_400_000.0, 15_000.0);
    // Same triangle and hand-derived great-circle side as hull_interior_matches_spherical_trigonometry.
    let recs = [(0.0, 0.0), (10.0, 0.0), (0.0, 10.0)];
    let mut m = AccessMask::build(&g, &hull(0.0), &recs).unwrap();
    let got = rows(&mut m, &g);
    let mut n_in = 0;
    for (row, cells) in got.iter().enumerate() {
        let mut lon: Vec<f64> = (0..g.width).map(|c| g.col_centre_x(c)).collect();
        let mut lat = vec![g.row_centre_y(row); g.width];
        ct.transform_coords(&mut lon, &mut lat, &mut []).unwrap();
        for (c, &v) in cells.iter().enumerate() {
            let t = (10.0 - lon[c]).to_radians().sin() / 10f64.to_radians().cos();
            let margin = lat[c].to_radians().tan() - t;
            if margin.abs() < 1e-9 || lon[c].abs() < 1e-9 || lat[c].abs() < 1e-9 {
                continue;
            }
            let want = lon[c] > 0.0 && lat[c] > 0.0 && margin < 0.0;
            assert_eq!(v, want, "row {row} col {c}");
            n_in += want as usize;
        }
    }
    assert!(n_in > 1000, "{n_in}");

    // A lon/lat polygon (GeoJSON, EPSG:4326) on the Mercator grid: the square lon 2..8,
    // lat 1..7 is the rectangle x in R·(2°..8°), y in R·ln tan(π/4 + φ/2) for φ = 1°..7°.
    let dir = tempfile::TempDir::new().unwrap();
    let p = super::tests::geojson(
        &dir,
        "sq.geojson",
        &[r#"{"type":"Polygon","coordinates":[[[2,1],[8,1],[8,7],[2,7],[2,1]]]}"#],
    );
    let spec = AccessSpec {
        polygon: Some(p),
        ..Default::default()
    };
    let mut m = AccessMask::build(&g, &spec, &[]).unwrap();
    let y = |lat: f64| {
        r * (std::f64::consts::FRAC_PI_4 + lat.to_radians() / 2.0)
            .tan()
            .ln()
    };
    let x = |lon: f64| r * lon.to_radians();
    let nx = (0..g.width)
        .filter(|&c| (x(2.0)..x(8.0)).contains(&g.col_centre_x(c)))
        .count();
    let ny = (0..g.height)
        .filter(|&rw| (y(1.0)..y(7.0)).contains(&g.row_centre_y(rw)))
        .count();
    let n = rows(&mut m, &g).iter().flatten().filter(|&&b| b).count();
    assert_eq!(n, nx * ny);
    assert!(nx * ny > 100);
}
