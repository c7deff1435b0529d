//! The distance search between patches against brute force: every pair of boundary corners
//! of two patches measured with GeographicLib's Inverse (Karney 2013, geographiclib-rs). The
//! search may skip pairs only where that cannot change the minimum, so the two must agree to
//! the last bit.

use super::reach::{nearest, nearest_many, Corners};
use crate::model::RangeModel;
use crate::patches::Connectivity;
use crate::GridSpec;
use geographiclib_rs::{Geodesic, InverseGeodesic};
use std::collections::BTreeMap;

fn brute_force(c: &Corners, n: usize, target: impl Fn(usize) -> bool) -> Vec<Option<f64>> {
    let g = Geodesic::wgs84();
    (0..n)
        .map(|p| {
            let mut best: Option<f64> = None;
            for q in (0..n).filter(|&q| q != p && target(q)) {
                for &a in c.of_patch(p) {
                    for &b in c.of_patch(q) {
                        let s: f64 = g.inverse(a.0, a.1, b.0, b.1);
                        best = Some(best.map_or(s, |x: f64| x.min(s)));
                    }
                }
            }
            best.map(|s| s / 1000.0)
        })
        .collect()
}

/// A random grid of `w` x `h` cells of `cell` degrees from (`lon0`, `lat0`) (top left):
/// scattered patches, a quarter of them class 1 with a record.
fn random_model(seed: u64, w: usize, h: usize, lon0: f64, lat0: f64, cell: f64) -> RangeModel {
    let mut s = seed;
    let mut rnd = || {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (s >> 33) as u32
    };
    let classes: Vec<u8> = (0..w * h)
        .map(|_| match rnd() % 10 {
            0 => 1,
            1 => 2,
            _ => 0,
        })
        .collect();
    let mut records: BTreeMap<usize, Vec<(usize, u64)>> = BTreeMap::new();
    for (i, &k) in classes.iter().enumerate() {
        if k == 1 && rnd() % 4 == 0 {
            records.entry(i / w).or_default().push((i % w, 1));
        }
    }
    let grid = GridSpec::lonlat(w, h, lon0, lat0, cell);
    RangeModel::from_class_grid(&grid, Connectivity::Eight, &classes, &records).unwrap()
}

#[test]
fn nearest_equals_brute_force_near_and_far() {
    // Fine cells (metres to kilometres apart), coarse cells far apart at high latitude, and
    // cells of 6 degrees over a hemisphere (thousands of kilometres: the band the lower
    // bound leaves is widest there).
    for (seed, w, h, lon0, lat0, cell) in [
        (1, 24, 16, 10.0, 46.0, 0.01),
        (2, 20, 14, -40.0, 80.0, 0.5),
        (3, 30, 15, -180.0, 90.0, 6.0),
        (4, 18, 12, 100.0, 10.0, 2.5),
    ] {
        let model = random_model(seed, w, h, lon0, lat0, cell);
        let c = Corners::from_model(&model).unwrap();
        let n = model.patches().len();
        assert!(n > 5, "seed {seed}: {n} patches");
        let occupied = |p: usize| model.patches()[p].records > 0;
        let any = |_: usize| true;
        let class1 = |p: usize| model.patches()[p].class == crate::raster_io::class::INSIDE;
        // Several targets in one search, and one alone.
        let many = nearest_many(&c, &[&any, &occupied, &class1]);
        assert_eq!(many.len(), 3, "seed {seed}");
        assert_eq!(many[0], brute_force(&c, n, any), "seed {seed}");
        assert_eq!(many[1], brute_force(&c, n, occupied), "seed {seed}");
        assert_eq!(many[2], brute_force(&c, n, class1), "seed {seed}");
        assert_eq!(nearest(&c, occupied), many[1], "seed {seed}");
    }
}

#[test]
fn nearest_equals_brute_force_thousands_of_kilometres_apart() {
    // Two windows of fine cells (0.02 degrees, about 2 km) at opposite corners of a 120 x 60
    // degree grid, over 12,000 km apart, records only in the first: the nearest occupied
    // patch of every patch of the second lies in the first, where the rolling-ball bound
    // falls short by tens of kilometres and the triangle rule settles most pairs (about
    // 1,800 here, counted by hand with a print).
    let (w, h) = (6000, 3000);
    let mut s = 11u64;
    let mut rnd = || {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (s >> 33) as u32
    };
    let mut classes = vec![0u8; w * h];
    let mut records: BTreeMap<usize, Vec<(usize, u64)>> = BTreeMap::new();
    for (r0, c0) in [(0, 0), (h - 24, w - 24)] {
        for r in r0..r0 + 24 {
            for col in c0..c0 + 24 {
                let k = match rnd() % 8 {
                    0 => 1,
                    1 => 2,
                    _ => 0,
                };
                classes[r * w + col] = k;
                if k == 1 && r0 == 0 && rnd() % 3 == 0 {
                    records.entry(r).or_default().push((col, 1));
                }
            }
        }
    }
    let grid = GridSpec::lonlat(w, h, -60.0, 50.0, 0.02);
    let model =
        RangeModel::from_class_grid(&grid, Connectivity::Eight, &classes, &records).unwrap();
    let c = Corners::from_model(&model).unwrap();
    let n = model.patches().len();
    assert!(n > 20, "{n} patches");
    let occupied = |p: usize| model.patches()[p].records > 0;
    let far = nearest(&c, occupied);
    assert!(far.iter().flatten().any(|&d| d > 12000.0), "{far:?}");
    assert_eq!(far, brute_force(&c, n, occupied));
    assert_eq!(nearest(&c, |_| true), brute_force(&c, n, |_| true));
}
