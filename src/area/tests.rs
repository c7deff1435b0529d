//! Tests of the area module. Check values are published (NIMA TR8350.2; Humerfelt 2000), computed
//! with GeographicLib, PROJ (pyproj) or scipy outside the project, or computed here with
//! GeographicLib (geographiclib-rs, Karney 2013); each test names its source.

use super::*;
use crate::Error;
use gdal::spatial_ref::AxisMappingStrategy;
use geographiclib_rs::{Geodesic, PolygonArea, Winding};

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

/// Neumaier-compensated sum.
fn fsum(values: impl IntoIterator<Item = f64>) -> f64 {
    let (mut s, mut c) = (0.0f64, 0.0f64);
    for v in values {
        let t = s + v;
        c += if s.abs() >= v.abs() {
            (s - t) + v
        } else {
            (v - t) + s
        };
        s = t;
    }
    s + c
}

/// Reference area of the lon/lat cell [lat1, lat2] x [0, dlon] from GeographicLib: a geodesic
/// polygon with each parallel edge split into n and 2n segments, Richardson-extrapolated
/// (error ∝ 1/n², common practice, no source).
fn gl_cell_area(geod: &Geodesic, lat1: f64, lat2: f64, dlon: f64, n: usize) -> f64 {
    let poly = |n: usize| {
        let mut pa = PolygonArea::new(geod, Winding::CounterClockwise);
        for i in 0..=n {
            pa.add_point(lat1, dlon * i as f64 / n as f64);
        }
        for i in (0..=n).rev() {
            pa.add_point(lat2, dlon * i as f64 / n as f64);
        }
        pa.compute(true).1.abs()
    };
    (4.0 * poly(2 * n) - poly(n)) / 3.0
}

/// WKT2 of a CRS definition (EPSG:n, ESRI:n or a PROJ string). WKT2 because WKT1 drops the
/// "(Spherical)" of EPSG methods 9834 and 1027 (and GDAL 3.6 has no WKT1 for Equal Earth).
fn wkt_of(def: &str) -> String {
    let srs = SpatialRef::from_definition(def).unwrap();
    let opts: gdal::cpl::CslStringList = ["FORMAT=WKT2_2019"].into_iter().collect();
    let mut p: *mut std::ffi::c_char = std::ptr::null_mut();
    // SAFETY: valid handle; GDAL allocates the string, freed with VSIFree below.
    unsafe {
        let rv = gdal_sys::OSRExportToWktEx(
            srs.to_c_hsrs(),
            &mut p,
            opts.as_ptr() as *const *const std::ffi::c_char,
        );
        assert_eq!(rv, gdal_sys::OGRErr::OGRERR_NONE);
        let s = std::ffi::CStr::from_ptr(p).to_string_lossy().into_owned();
        gdal_sys::VSIFree(p.cast());
        s
    }
}

fn projected_grid(def: &str, w: usize, h: usize, x0: f64, y0: f64, cell: f64) -> GridSpec {
    GridSpec {
        width: w,
        height: h,
        geo_transform: [x0, cell, 0.0, y0, 0.0, -cell],
        crs_wkt: wkt_of(def),
        geographic: false,
    }
}

/// Projected y of geodetic latitude `lat` at longitude `lon` in CRS `def`.
fn forward(def: &str, lon: f64, lat: f64) -> (f64, f64) {
    let mut g = SpatialRef::from_epsg(4326).unwrap();
    g.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let mut p = SpatialRef::from_definition(def).unwrap();
    p.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let ct = gdal::spatial_ref::CoordTransform::new(&g, &p).unwrap();
    let (mut x, mut y) = ([lon], [lat]);
    ct.transform_coords(&mut x, &mut y, &mut []).unwrap();
    (x[0], y[0])
}

fn all_rows(ca: &mut CellAreas, w: usize, h: usize) -> Vec<f64> {
    let mut v = Vec::new();
    for r in 0..h {
        let row = ca.row(r).unwrap();
        v.extend((0..w).map(|c| row.get(c)));
    }
    v
}

// ---------------------------------------------------------------- the q function and constants

#[test]
fn wgs84_constants_match_checks() {
    let e = Ellipsoid::WGS84;
    // Computed with GeographicLib; published in NIMA TR8350.2 and Humerfelt 2000.
    assert!((e.e2() - 0.0066943799901413165).abs() < 1e-15);
    assert!((e.b() - 6_356_752.314245179).abs() < 1e-9);
    assert!(rel(e.q_p(), 1.9955310875028367) < 1e-14);
    assert!((e.authalic_radius() - 6_371_007.180918474).abs() < 1e-6);
    assert!(rel(e.surface_area_m2(), 510_065_621_724_088.5) < 1e-12);
    // GeographicLib's own ellipsoid area (area0 = 4πc²).
    assert!(rel(e.surface_area_m2(), Geodesic::wgs84().area()) < 1e-14);
}

#[test]
fn authalic_q_matches_checks() {
    // q(φ) of Snyder 1987 eq. 3-12, evaluated in Python outside the project.
    for (deg, q) in [
        (1.0, 0.03467119392384121),
        (45.0, 1.4078903877254445),
        (46.0, 1.432359009785473),
        (89.0, 1.9952244255291443),
    ] {
        assert!(rel(authalic_q(f64::to_radians(deg)), q) < 1e-14, "q({deg})");
        assert!(
            rel(authalic_q(f64::to_radians(-deg)), -q) < 1e-14,
            "q(-{deg})"
        );
    }
    // The difference formula agrees with the plain difference where cancellation is mild.
    let e = Ellipsoid::WGS84;
    let (p1, p2) = (45f64.to_radians(), 46f64.to_radians());
    assert!(rel(e.q_diff(p1, p2), authalic_q(p2) - authalic_q(p1)) < 1e-13);
}

#[test]
fn sphere_limit_is_the_spherical_zone() {
    // On a sphere q = 2 sinφ, so the cell area is R²·Δλ·(sinφ2 − sinφ1) (Archimedes' zone;
    // textbook geometry, from memory).
    let s = Ellipsoid {
        a: 6_371_000.0,
        f: 0.0,
    };
    let a = lonlat_cell_area_m2_on(&s, 10.0, 20.0, 30.0);
    let want = 6_371_000f64.powi(2)
        * 30f64.to_radians()
        * (20f64.to_radians().sin() - 10f64.to_radians().sin());
    assert!(rel(a, want) < 1e-14);
}

// ---------------------------------------------------------------- lon/lat cells

/// Snyder 1987 eq. 3-12 closed form, computed outside the project and confirmed by scipy `quad`,
/// PROJ's EPSG:6933 and densified GeographicLib polygons.
const CELLS: &[(f64, f64, f64, f64)] = &[
    (0.0, 1.0, 1.0, 12_308_463_893.975),
    (45.0, 46.0, 1.0, 8_686_494_956.670),
    (89.0, 90.0, 1.0, 108_866_681.636),
    (0.0, 1.0 / 120.0, 1.0 / 120.0, 854_796.669_240),
    (-1.0 / 240.0, 1.0 / 240.0, 1.0 / 120.0, 854_796.671_440),
    (60.0, 60.0 + 1.0 / 120.0, 1.0 / 120.0, 431_668.611_289),
    (0.0, 1.0 / 24.0, 1.0 / 24.0, 21_369_914.971_19),
    (60.0, 60.0 + 1.0 / 24.0, 1.0 / 24.0, 10_786_313.003_03),
];

#[test]
fn cell_areas_match_checks_values() {
    for &(s, n, d, want) in CELLS {
        let got = lonlat_cell_area_m2(s, n, d);
        assert!(
            rel(got, want) < 1e-11,
            "cell {s}..{n} x {d}: {got} vs {want}"
        );
        // Order of the latitudes and the sign of dlon do not matter.
        assert_eq!(lonlat_cell_area_m2(n, s, -d), got);
        // Southern hemisphere by symmetry.
        assert!(rel(lonlat_cell_area_m2(-n, -s, d), got) < 1e-13);
    }
}

#[test]
fn cell_areas_match_densified_geographiclib() {
    let geod = Geodesic::wgs84();
    for &(s, n, d, _) in CELLS {
        let want = gl_cell_area(&geod, s, n, d, 1000);
        let got = lonlat_cell_area_m2(s, n, d);
        // Densified GeographicLib agrees with the closed form to <= 8e-11; we ask 1e-9.
        assert!(
            rel(got, want) < 1e-9,
            "cell {s}..{n} x {d}: {got} vs GL {want}"
        );
    }
}

#[test]
fn wrong_answer_detectors_are_not_matched() {
    // Wrong-answer detectors (computed in Python against the Snyder 1987 closed form): each
    // approximation differs from the exact value by the amount below, so a correct
    // implementation is that far from it.
    let rq = Ellipsoid::WGS84.authalic_radius();
    let a = Ellipsoid::WGS84.a;
    for (s, n, d, sph_diff, cosmid_diff) in [
        (0.0, 1.0, 1.0, 0.00449, 0.00675),
        (45.0, 46.0, 1.0, -0.00234, -0.00009),
        (89.0, 90.0, 1.0, -0.00891, -0.00668),
        (60.0, 60.0 + 1.0 / 120.0, 1.0 / 120.0, -0.00557, -0.00335),
    ] {
        let exact = lonlat_cell_area_m2(s, n, d);
        let sph =
            rq * rq * f64::to_radians(d) * (f64::to_radians(n).sin() - f64::to_radians(s).sin());
        let cosmid = (a * std::f64::consts::PI / 180.0).powi(2)
            * d
            * (n - s)
            * f64::to_radians(0.5 * (s + n)).cos();
        let (r1, r2) = (sph / exact - 1.0, cosmid / exact - 1.0);
        assert!(
            (r1 - sph_diff).abs() < 0.1 * sph_diff.abs(),
            "sphere {s}: {r1}"
        );
        assert!(
            (r2 - cosmid_diff).abs() < 0.1 * cosmid_diff.abs(),
            "cos-mid {s}: {r2}"
        );
    }
}

#[test]
fn global_one_degree_grid_sums_to_the_ellipsoid() {
    let g = GridSpec::lonlat(360, 180, -180.0, 90.0, 1.0);
    let mut ca = CellAreas::new(&g).unwrap();
    assert_eq!(ca.method(), &AreaMethod::EllipsoidAuthalic);
    let total = fsum(all_rows(&mut ca, 360, 180));
    // 510 065 621.724 km² (Humerfelt 2000); GeographicLib area0 gives 510 065 621 724 088.5 m².
    assert!(rel(total, 510_065_621_724_088.5) < 1e-12, "{total}");
    assert!(rel(total, 510_065_621.724e6) < 1e-9);
    assert!(ca.describe().contains("Snyder 1987"));
}

#[test]
fn geographic_grid_from_wkt_uses_the_crs_ellipsoid() {
    // A lonlat grid without WKT and the same grid with EPSG:4326's WKT agree
    // (Snyder 1987 closed form).
    let mut g = GridSpec::lonlat(4, 2, 0.0, 46.0, 1.0);
    let mut bare = CellAreas::new(&g).unwrap();
    g.crs_wkt = wkt_of("EPSG:4326");
    let mut wkt = CellAreas::new(&g).unwrap();
    for ca in [&mut bare, &mut wkt] {
        assert!(rel(ca.row(0).unwrap().get(3), 8_686_494_956.670) < 1e-11);
    }
    // ETRS89 (EPSG:4258) is on GRS 1980, 1/f = 298.257222101 (from memory).
    g.crs_wkt = wkt_of("EPSG:4258");
    let grs = CellAreas::new(&g).unwrap();
    assert!(rel(1.0 / grs.ellipsoid().f, 298.257_222_101) < 1e-12);
    assert!(grs.describe().contains("ETRS89"));
}

#[test]
fn bad_geographic_grids_are_refused() {
    let over_pole = GridSpec::lonlat(10, 10, 0.0, 95.0, 1.0);
    assert!(matches!(CellAreas::new(&over_pole), Err(Error::Crs { .. })));
    let too_wide = GridSpec::lonlat(361, 1, -180.0, 1.0, 1.0);
    assert!(matches!(CellAreas::new(&too_wide), Err(Error::Crs { .. })));
    let mut no_crs = GridSpec::lonlat(1, 1, 0.0, 1.0, 1000.0);
    no_crs.geographic = false;
    assert!(matches!(CellAreas::new(&no_crs), Err(Error::Crs { .. })));
    let mut garbage = GridSpec::lonlat(1, 1, 0.0, 1.0, 1.0);
    garbage.crs_wkt = "GEOGCS[nonsense".into();
    assert!(matches!(CellAreas::new(&garbage), Err(Error::Crs { .. })));
    let mut mismatch = GridSpec::lonlat(1, 1, 0.0, 1.0, 1.0);
    mismatch.crs_wkt = wkt_of("EPSG:3857");
    assert!(matches!(CellAreas::new(&mismatch), Err(Error::Crs { .. })));
    let g = GridSpec::lonlat(2, 2, 0.0, 1.0, 1.0);
    assert!(CellAreas::new(&g).unwrap().row(2).is_err());
}

// ---------------------------------------------------------------- projected CRSs

const LAEA_45_10: &str =
    "+proj=laea +lat_0=45 +lon_0=10 +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs";

#[test]
fn method_detection_for_known_crss() {
    // EPSG registry and PROJ docs: 6933 CEA, 3035 LAEA, 8857 Equal Earth (PROJ PR #1101), LAEA
    // strings are ellipsoidal equal-area in PROJ; ESRI:54009 Mollweide is spherical-only (not
    // equal-area on WGS 84); EPSG:3857 is conformal. Spherical figures: CEA R=6371228 (EASE-Grid
    // v1, EPSG:3410) and Mollweide on a sphere are equal-area on that sphere (PROJ's spherical
    // formulas, from memory).
    let equal_area = [
        ("EPSG:6933", "Lambert Cylindrical Equal Area"),
        ("EPSG:3035", "Lambert Azimuthal Equal Area"),
        ("EPSG:8857", "Equal Earth"),
        (LAEA_45_10, "Lambert Azimuthal Equal Area"),
        (
            "+proj=aea +lat_1=20 +lat_2=60 +ellps=GRS80",
            "Albers Equal Area",
        ),
        ("+proj=sinu +datum=WGS84", "Sinusoidal"),
        (
            "+proj=cea +lat_ts=30 +R=6371228",
            "Lambert Cylindrical Equal Area (Spherical)",
        ),
        ("+proj=moll +R=6371000", "Mollweide"),
    ];
    for (def, name) in equal_area {
        let g = projected_grid(def, 2, 2, 0.0, 1e5, 1000.0);
        let mut ca = CellAreas::new(&g).unwrap();
        assert_eq!(
            ca.method(),
            &AreaMethod::EqualAreaProjection {
                projection: name.into()
            },
            "{def}"
        );
        assert_eq!(ca.row(1).unwrap(), RowAreas::Uniform(1e6), "{def}");
        // PROJ itself must agree that the method is equal-area on this figure: the corner method
        // (which trusts nothing) gives the nominal area back to the method's ~1e-8.
        let mut co = CellAreas::new_projected_corners(&g).unwrap();
        for a in all_rows(&mut co, 2, 2) {
            assert!(rel(a, 1e6) < 1e-8, "{def}: corner area {a}");
        }
    }
    let corners = [
        ("ESRI:54009", "Mollweide"),
        ("EPSG:3857", "Popular Visualisation Pseudo Mercator"),
        // LAEA (Spherical), EPSG method 1027, on the Clarke 1866 ellipsoid.
        ("EPSG:9311", "Lambert Azimuthal Equal Area (Spherical)"),
    ];
    for (def, name) in corners {
        let g = projected_grid(def, 2, 2, 0.0, 1e5, 1000.0);
        let ca = CellAreas::new(&g).unwrap();
        assert_eq!(
            ca.method(),
            &AreaMethod::ProjectedCorners {
                projection: name.into()
            },
            "{def}"
        );
        assert!(ca.describe().contains("not equal-area"));
    }
    // Near the origin of ESRI:54009 (equator) Mollweide's projected/true is 1.006738
    // (computed with PROJ via pyproj, 1° cell at 0°), so the corner areas must not be nominal.
    let g = projected_grid("ESRI:54009", 2, 2, 0.0, 1e5, 1000.0);
    let mut ca = CellAreas::new(&g).unwrap();
    let ratio = 1e6 / ca.row(0).unwrap().get(0);
    assert!((ratio - 1.006738).abs() < 1e-4, "{ratio}");
}

#[test]
fn laea_square_is_uniform_and_corners_agree() {
    // 100 km square in LAEA(45N, 10E) as 10 x 10 cells of 10 km (PROJ +proj=laea).
    let g = projected_grid(LAEA_45_10, 10, 10, -50_000.0, 50_000.0, 10_000.0);
    let mut ea = CellAreas::new(&g).unwrap();
    assert_eq!(ea.row(4).unwrap(), RowAreas::Uniform(1e8));
    assert!(ea.describe().contains("Lambert Azimuthal Equal Area"));
    // The corner method on the same grid must give the planar areas back, since LAEA is
    // equal-area on WGS 84 (GeographicLib with PROJ: 10 000.000 005 km² for the square with
    // 1000 points per edge, 10 000.003 077 km² with 10).
    let mut co = CellAreas::new_projected_corners(&g).unwrap();
    let cells = all_rows(&mut co, 10, 10);
    let worst = cells.iter().map(|a| rel(*a, 1e8)).fold(0.0, f64::max);
    assert!(worst < 3e-8, "worst cell {worst}");
    let total = fsum(cells);
    // 50 segments per side of the square: the GeographicLib error 3.07e-5/n² gives 1.2e-8.
    assert!(rel(total, 1e10) < 2e-8, "{total}");
    // The same grid with its CRS as WKT1 (GDAL's default export) is detected the same way.
    let mut g1 = g.clone();
    g1.crs_wkt = SpatialRef::from_proj4(LAEA_45_10)
        .unwrap()
        .to_wkt()
        .unwrap();
    assert_eq!(CellAreas::new(&g1).unwrap().method(), ea.method());
}

#[test]
fn laea_corners_transform_to_the_checks_lonlat() {
    // PROJ (pyproj) output: corners of the 100 km square in LAEA(45N, 10E).
    let g = projected_grid(LAEA_45_10, 1, 1, -50_000.0, 50_000.0, 100_000.0);
    let srs = SpatialRef::from_wkt(&g.crs_wkt).unwrap();
    let c = corners::Corners::new(&g, &srs, &Ellipsoid::WGS84).unwrap();
    let mut x = [-50_000.0, 50_000.0, 50_000.0, -50_000.0];
    let mut y = [-50_000.0, -50_000.0, 50_000.0, 50_000.0];
    let ok = c.to_lonlat(&mut x, &mut y);
    let want = [
        (9.3707744512, 44.5483289527),
        (10.6292255488, 44.5483289527),
        (10.6391404787, 45.4481297914),
        (9.3608595213, 45.4481297914),
    ];
    for i in 0..4 {
        assert!(ok[i]);
        assert!(
            (x[i] - want[i].0).abs() < 1e-9 && (y[i] - want[i].1).abs() < 1e-9,
            "{i}"
        );
    }
}

/// Geodetic latitude of Web Mercator northing y: φ = 2·atan(exp(y/a)) − π/2 (spherical Mercator
/// inverse, Snyder 1987 eq. 7-4, from memory; EPSG:3857 applies it to WGS 84 latitudes).
fn merc_lat(y: f64) -> f64 {
    (2.0 * (y / 6_378_137.0).exp().atan() - std::f64::consts::FRAC_PI_2).to_degrees()
}

#[test]
fn web_mercator_cells_match_geographiclib() {
    // Web Mercator cell edges are parallels and meridians, so a cell is a lon/lat cell whose
    // area GeographicLib gives (densified parallels, Richardson-extrapolated).
    let geod = Geodesic::wgs84();
    let (_, y45) = forward("EPSG:3857", 0.0, 45.0);
    for cell in [1_000.0, 10_000.0, 100_000.0] {
        let g = projected_grid("EPSG:3857", 3, 2, 500_000.0, y45 + cell, cell);
        let mut ca = CellAreas::new(&g).unwrap();
        for r in 0..2 {
            let row = ca.row(r).unwrap();
            let (top, bottom) = g.row_edges_y(r);
            let dlon = (cell / 6_378_137.0).to_degrees();
            let want = gl_cell_area(&geod, merc_lat(bottom), merc_lat(top), dlon, 200);
            for c in 0..3 {
                let e = rel(row.get(c), want);
                assert!(e < 2e-8, "cell {cell} m, row {r} col {c}: rel err {e}");
            }
            // Known scale: Mercator's areal scale is sec²φ on the sphere R = a, and at 45°
            // M·N/a² = 1 + O(e⁴), so area ≈ nominal·cos²φ (common practice, no source).
            let phi = merc_lat(g.row_centre_y(r)).to_radians();
            assert!(rel(row.get(0), cell * cell * phi.cos().powi(2)) < 1e-3);
        }
    }
}

#[test]
fn cylindrical_equal_area_corners_match_q() {
    // EPSG:6933 (CEA on WGS 84, EPSG registry): cells are lon/lat cells and equal-area, so the
    // corner method must give both the nominal area and the closed form (computed with PROJ
    // via pyproj: EPSG:6933 agrees with the Snyder 1987 closed form to 1e-14).
    let (_, y60) = forward("EPSG:6933", 0.0, 60.0);
    let g = projected_grid("EPSG:6933", 2, 2, 0.0, y60, 25_000.0);
    assert!(matches!(
        CellAreas::new(&g).unwrap().method(),
        AreaMethod::EqualAreaProjection { .. }
    ));
    let mut co = CellAreas::new_projected_corners(&g).unwrap();
    for a in all_rows(&mut co, 2, 2) {
        // Design target of the corner method: about 1e-8 (measured 1.2e-8 here).
        assert!(rel(a, 25_000.0 * 25_000.0) < 3e-8, "{a}");
    }
}

#[test]
fn mollweide_on_wgs84_is_measured_not_trusted() {
    // Computed with PROJ via pyproj: for a 1° cell at 45–46°N, ESRI:54009 projected/true =
    // 0.999894. A block of 5 km cells around 45.5°N (±0.05°) sees the same ratio to ~1e-5 (the
    // ratio changes by about 2.2e-4 per degree between 45° and 60°, same computation).
    let (_, y_mid) = forward("ESRI:54009", 0.0, 45.5);
    let cell = 5_000.0;
    let g = projected_grid("ESRI:54009", 2, 2, 0.0, y_mid + cell, cell);
    let mut ca = CellAreas::new(&g).unwrap();
    let total = fsum(all_rows(&mut ca, 2, 2));
    let ratio = 4.0 * cell * cell / total;
    assert!((ratio - 0.999894).abs() < 2e-5, "ratio {ratio}");
    // The nominal area would be wrong by more than the 1e-4 this detects.
    assert!((ratio - 1.0).abs() > 5e-5);
}

#[test]
fn mollweide_world_corners_outside_the_globe() {
    // A world Mollweide grid: its corner cells lie outside the projection's ellipse
    // (x range ±18 040 km at the equator, from the same PROJ). The strict row() refuses them
    // with a CRS error naming the cell; row_allow_outside() gives NaN there and areas elsewhere.
    let g = projected_grid(
        "ESRI:54009",
        36,
        18,
        -18_040_000.0,
        9_020_000.0,
        1_002_222.0,
    );
    let mut ca = CellAreas::new(&g).unwrap();
    match ca.row(0) {
        Err(Error::Crs { reason, .. }) => assert!(reason.contains("row 0, column 0"), "{reason}"),
        other => panic!("expected a CRS error, got {other:?}"),
    }
    let row = ca.row_allow_outside(9).unwrap();
    assert!(row.get(0).is_nan());
    assert!(row.get(18).is_finite() && row.get(18) > 0.9e12);
}

#[test]
fn row_cache_gives_the_same_areas_in_any_order() {
    let (_, y45) = forward("EPSG:3857", 0.0, 45.0);
    let g = projected_grid("EPSG:3857", 4, 5, 0.0, y45, 20_000.0);
    let mut seq = CellAreas::new(&g).unwrap();
    let forward_order: Vec<RowAreas> = (0..5).map(|r| seq.row(r).unwrap()).collect();
    let mut rnd = CellAreas::new(&g).unwrap();
    for r in [3, 1, 4, 0, 2] {
        assert_eq!(rnd.row(r).unwrap(), forward_order[r]);
    }
}
