//! The fast paths of the modelled AOO against their plain counterparts: the row-wise LAEA
//! against PROJ, and the bitmap count over 16 origins against the sorted quarter cells.

use super::aoo::{AooCounter, AooGrid};
use super::aoo_bitmap::QuarterBitmap;
use crate::GridSpec;

#[test]
fn row_laea_matches_proj() {
    // Source: PROJ's `laea` (through GDAL) for the same centres; the closed form of Snyder
    // (1987) must agree to well under a millimetre.
    for (lon0, lat0) in [(12.34, 45.67), (-170.0, -60.5), (0.0, 0.0), (100.0, 80.0)] {
        let aoo = AooGrid::new(lon0, lat0, 2.0).unwrap();
        let grid = GridSpec::lonlat(3600, 1800, -180.0, 90.0, 0.1);
        let mut fast = aoo.spec().projector(&grid).unwrap();
        assert!(matches!(fast, super::laea::RowProjector::Laea(_)));
        let ct = aoo.transform_from(&crate::crs::wgs84().unwrap()).unwrap();
        for row in [100usize, 449, 900, 1300] {
            let cols: Vec<u32> = (0..3600).step_by(37).map(|c| c as u32).collect();
            let runs: Vec<(u32, u32)> = cols.iter().map(|&c| (c, c + 1)).collect();
            let mut got = Vec::new();
            fast.row(row, &runs, &mut got).unwrap();
            let lat = 90.0 - (row as f64 + 0.5) * 0.1;
            let mut xs: Vec<f64> = cols
                .iter()
                .map(|&c| -180.0 + (c as f64 + 0.5) * 0.1)
                .collect();
            let mut ys = vec![lat; xs.len()];
            // Points opposite the centre do not project; compare the rest.
            if ct.transform_coords(&mut xs, &mut ys, &mut []).is_err() {
                continue;
            }
            for ((x, y), (gx, gy)) in xs.iter().zip(&ys).zip(&got) {
                if x.is_finite() && (x.hypot(*y) < 9.0e6) {
                    assert!(
                        (x - gx).abs() < 1e-4 && (y - gy).abs() < 1e-4,
                        "{x},{y} vs {gx},{gy}"
                    );
                }
            }
        }
    }
}

#[test]
fn bitmap_counts_equal_sorted_counts() {
    // Deterministic scatter of points in clusters and lines, 2 km cells.
    let mut s = 987654321u64;
    let mut rnd = || {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (s >> 11) as f64 / (1u64 << 53) as f64
    };
    let pts: Vec<(f64, f64)> = (0..20_000)
        .map(|i| {
            let (cx, cy) = (
                (i % 7) as f64 * 9_000.0 - 30_000.0,
                (i % 5) as f64 * 7_000.0 - 20_000.0,
            );
            (cx + rnd() * 6_000.0, cy + rnd() * 3_000.0)
        })
        .collect();
    let mut sorted = AooCounter::new(2000.0);
    for &(x, y) in &pts {
        sorted.add(x, y);
    }
    let bitmap = QuarterBitmap::new(500.0, (-40_000.0, 40_000.0), (-30_000.0, 30_000.0)).unwrap();
    for &(x, y) in &pts {
        assert!(bitmap.set(x, y));
    }
    assert_eq!(bitmap.per_origin(), sorted.per_origin());
    assert!(!bitmap.set(1e6, 0.0), "outside the extent");
}

#[test]
fn whole_disk_bitmap_counts_equal_sorted_counts() {
    // Points over most of the LAEA disk, across many lazily allocated tiles, and a cluster
    // that shares cells: the tiled bitmap must count as the sorted quarter cells do. The disk
    // is about 2 x 6,371,007 m across each way (the WGS84 authalic radius, from memory).
    let (hx, hy) = super::laea::disk_half_widths(-35.0);
    assert!((hx - 2.0 * 6_371_007.2).abs() < 30_000.0 && (hy - 2.0 * 6_371_007.2).abs() < 30_000.0);
    let bitmap = QuarterBitmap::whole_disk(500.0, (hx, hy)).unwrap();
    let mut sorted = AooCounter::new(2000.0);
    let mut s = 42u64;
    let mut rnd = || {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (s >> 11) as f64 / (1u64 << 53) as f64
    };
    for i in 0..50_000 {
        let (x, y) = if i % 2 == 0 {
            ((rnd() - 0.5) * 1.8 * hx, (rnd() - 0.5) * 1.8 * hy)
        } else {
            (rnd() * 20_000.0 - 10_000.0, rnd() * 9_000.0)
        };
        assert!(bitmap.set(x, y));
        sorted.add(x, y);
    }
    assert_eq!(bitmap.per_origin(), sorted.per_origin());
    assert!(!bitmap.set(f64::NAN, 0.0), "a point that did not project");
}

#[test]
fn point_laea_matches_proj() {
    // Source: PROJ's `laea` (through GDAL) for the same points, as for the row form above.
    for (lon0, lat0) in [(12.34, 45.67), (-170.0, -60.5), (100.0, 80.0)] {
        let aoo = AooGrid::new(lon0, lat0, 2.0).unwrap();
        let pts: Vec<(f64, f64)> = (0..50)
            .map(|i| {
                (
                    lon0 - 40.0 + i as f64 * 1.7,
                    (lat0 - 20.0 + i as f64 * 0.8).clamp(-89.0, 89.0),
                )
            })
            .collect();
        let (gx, gy) = super::laea::project_points(aoo.spec().centre, &pts).unwrap();
        let ct = aoo.transform_from(&crate::crs::wgs84().unwrap()).unwrap();
        let (mut xs, mut ys): (Vec<f64>, Vec<f64>) = pts.iter().copied().unzip();
        ct.transform_coords(&mut xs, &mut ys, &mut []).unwrap();
        for i in 0..pts.len() {
            assert!(
                (xs[i] - gx[i]).abs() < 1e-4 && (ys[i] - gy[i]).abs() < 1e-4,
                "point {i}"
            );
        }
    }
}
