//! Tests of the area module. Check values come from /work/shared/CHECKS.md (with the sources it
//! names) or are computed here with GeographicLib (geographiclib-rs, Karney 2013).

use super::*;
use crate::Error;
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
/// (error ∝ 1/n², CHECKS.md §2 route GL-dens).
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

/// WKT of a CRS definition (EPSG:n, ESRI:n or a PROJ string): WKT1 when GDAL can write it,
/// WKT2 otherwise (GDAL 3.6 has no WKT1 for Equal Earth).
fn wkt_of(def: &str) -> String {
    let srs = SpatialRef::from_definition(def).unwrap();
    if let Ok(w) = srs.to_wkt() {
        return w;
    }
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
    // CHECKS.md §1 [REF]/[PUB✓] (NIMA TR8350.2; Humerfelt 2000).
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
    // CHECKS.md §2 "values" row [REF].
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

/// CHECKS.md §2 closed-form values [REF] (independently confirmed there by quadrature, CEA and
/// densified GeographicLib).
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
        // CHECKS.md §2: GL-dens agrees with the closed form to <= 8e-11; brief asks 1e-9.
        assert!(
            rel(got, want) < 1e-9,
            "cell {s}..{n} x {d}: {got} vs GL {want}"
        );
    }
}

#[test]
fn wrong_answer_detectors_are_not_matched() {
    // CHECKS.md §2 "wrong-answer detectors" [REF]: each approximation differs from the exact
    // value by the amount given there, so a correct implementation is that far from it.
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
    // CHECKS.md §1: 510 065 621.724 km² (Humerfelt 2000 [PUB✓]); [REF] 510 065 621 724 088.5 m².
    assert!(rel(total, 510_065_621_724_088.5) < 1e-12, "{total}");
    assert!(rel(total, 510_065_621.724e6) < 1e-9);
    assert!(ca.describe().contains("Snyder 1987"));
}

#[test]
fn geographic_grid_from_wkt_uses_the_crs_ellipsoid() {
    // A lonlat grid without WKT and the same grid with EPSG:4326's WKT agree (CHECKS.md §2 value).
    let mut g = GridSpec::lonlat(4, 2, 0.0, 46.0, 1.0);
    let mut bare = CellAreas::new(&g).unwrap();
    g.crs_wkt = wkt_of("EPSG:4326");
    let mut wkt = CellAreas::new(&g).unwrap();
    for ca in [&mut bare, &mut wkt] {
        assert!(rel(ca.row(0).unwrap().get(3), 8_686_494_956.670) < 1e-11);
    }
    // ETRS89 (EPSG:4258) is on GRS 1980, 1/f = 298.257222101 (CHECKS.md §1 [PUB-mem]).
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
