//! Parallels cut by the rule of `parallels.rs`: the geodesic area of every polygon, measured
//! by GeographicLib (geographiclib-rs `PolygonArea`, Karney 2013) with nothing densified,
//! against the exact cell areas (Snyder 1987 eq. 3-12, `lonlat_cell_area_m2`).

use super::lonlat::split_at;
use super::parallels::lonlat_polygon;
use super::trace::{IdRun, Tracer};
use crate::area::lonlat_cell_area_m2;
use crate::GridSpec;
use geo::orient::{Direction, Orient};
use geo_types::{LineString, MultiPolygon};
use geographiclib_rs::{Geodesic, PolygonArea, Winding};
use std::path::Path;

fn ring_m2(g: &Geodesic, r: &LineString<f64>) -> f64 {
    let mut pa = PolygonArea::new(g, Winding::CounterClockwise);
    for c in &r.0[..r.0.len() - 1] {
        pa.add_point(c.y, c.x);
    }
    pa.compute(true).1
}

/// Geodesic area (m2) of a lon/lat multipolygon: exteriors minus holes, signed rings.
fn geodesic_m2(mp: &MultiPolygon<f64>) -> f64 {
    let g = Geodesic::wgs84();
    mp.0.iter()
        .map(|p| {
            ring_m2(&g, p.exterior()) + p.interiors().iter().map(|h| ring_m2(&g, h)).sum::<f64>()
        })
        .sum()
}

/// One region given as (row, start, end) runs on a global grid from `west`; returns
/// (relative error of the geodesic area, vertices added by the rule, vertices in all).
fn measure(grid: &GridSpec, runs: &[(u32, u32, u32)]) -> (f64, usize, usize) {
    let r = measure_quiet(grid, runs);
    println!(
        "cell {:.6} deg, {} runs: rel {:.1e}, {} of {} vertices added",
        grid.dx(),
        runs.len(),
        r.0,
        r.1,
        r.2
    );
    r
}

fn measure_quiet(grid: &GridSpec, runs: &[(u32, u32, u32)]) -> (f64, usize, usize) {
    let mut t = Tracer::new();
    let mut rows: Vec<u32> = runs.iter().map(|r| r.0).collect();
    rows.dedup();
    let mut truth = 0.0;
    for &r in &rows {
        let rr: Vec<IdRun> = runs
            .iter()
            .filter(|x| x.0 == r)
            .map(|x| IdRun {
                start: x.1,
                end: x.2,
                id: 1,
            })
            .collect();
        let (top, bottom) = grid.row_edges_y(r as usize);
        for x in &rr {
            truth += lonlat_cell_area_m2(bottom, top, (x.end - x.start) as f64 * grid.dx());
        }
        t.push_row(r, &rr).unwrap();
    }
    t.finish().unwrap();
    let polys = t.take(1).unwrap();
    let mut added = 0;
    let mut parts = Vec::new();
    for p in &polys {
        let (ll, n) = lonlat_polygon(p, grid);
        added += n;
        parts.push(ll);
    }
    let cut = split_at(&MultiPolygon(parts), 0.0, Path::new("t"))
        .unwrap()
        .orient(Direction::Default);
    let total: usize = cut
        .0
        .iter()
        .map(|p| p.exterior().0.len() + p.interiors().iter().map(|h| h.0.len()).sum::<usize>())
        .sum();
    ((geodesic_m2(&cut) - truth).abs() / truth, added, total)
}

/// A blob with a hole, a long thin bar and a comb, at row `r0`, column `c0`, scaled by `k`.
fn shapes(r0: u32, c0: u32, k: u32) -> Vec<(u32, u32, u32)> {
    let mut v = Vec::new();
    for i in 0..(6 * k) {
        let r = r0 + i;
        let half = 3 * k - (i as i64 - 3 * k as i64).unsigned_abs() as u32 / 2;
        let (s, e) = (c0 + 3 * k - half, c0 + 3 * k + half + 1);
        if (2 * k..3 * k).contains(&i) {
            // A hole in the middle.
            let m = c0 + 3 * k;
            v.push((r, s, m - k / 2 - 1));
            v.push((r, m + k / 2 + 1, e));
        } else {
            v.push((r, s, e));
        }
    }
    // The bar: 40 k cells long, 1 row, joined at the blob's bottom row.
    let rb = r0 + 6 * k;
    v.push((rb, c0, c0 + 40 * k));
    // The comb: teeth below the bar.
    for i in 1..(4 * k) {
        let mut x = c0;
        while x + 2 <= c0 + 40 * k {
            v.push((rb + i, x, x + 1));
            x += 3;
        }
    }
    v
}

#[test]
fn geodesic_areas_within_1e6_at_1_degree_5_minutes_and_30_seconds() {
    // 1 degree: bar across the antimeridian of a 0..360 grid, a patch touching the north pole.
    let g = GridSpec::lonlat(360, 180, 0.0, 90.0, 1.0);
    let (e, added, total) = measure(&g, &shapes(30, 170, 1));
    assert!(
        e < 1e-6,
        "1 degree, across 180: {e:e} ({added} of {total} vertices added)"
    );
    let (e, ..) = measure(&g, &shapes(0, 20, 1));
    assert!(e < 1e-6, "1 degree, at the pole: {e:e}");
    let (e, ..) = measure(&g, &shapes(150, 300, 1));
    assert!(e < 1e-6, "1 degree, southern hemisphere: {e:e}");
    // 5 minutes.
    let g = GridSpec::lonlat(4320, 2160, -180.0, 90.0, 1.0 / 12.0);
    let (e, ..) = measure(&g, &shapes(400, 4300, 3));
    assert!(e < 1e-6, "5 minutes, across 180: {e:e}");
    let (e, ..) = measure(&g, &shapes(0, 100, 3));
    assert!(e < 1e-6, "5 minutes, at the pole: {e:e}");
    // 30 seconds.
    let g = GridSpec::lonlat(43200, 21600, 0.0, 90.0, 1.0 / 120.0);
    let (e, ..) = measure(&g, &shapes(3000, 21500, 10));
    assert!(e < 1e-6, "30 seconds, across 180: {e:e}");
    let (e, ..) = measure(&g, &shapes(0, 500, 10));
    assert!(e < 1e-6, "30 seconds, at the pole: {e:e}");
    let (e, ..) = measure(&g, &shapes(17000, 500, 10));
    assert!(e < 1e-6, "30 seconds, south: {e:e}");
}

#[test]
fn compact_polygons_of_small_cells_get_no_vertices_and_long_edges_do() {
    // A square of side Δ (radians) at latitude φ is off by about (Δ²/12)|cos²φ − 2 sin²φ|
    // (top and bottom lenses nearly cancel, see parallels.rs): 2.2e-7 for 10 x 10 cells of
    // 30" at 60 N, under the 5e-7 budget: nothing added; 8.8e-7 for 20 x 20: cut.
    let g = GridSpec::lonlat(43200, 21600, -180.0, 90.0, 1.0 / 120.0);
    let sq: Vec<(u32, u32, u32)> = (3600..3610).map(|r| (r, 100, 110)).collect();
    let (e, added, _) = measure(&g, &sq);
    assert_eq!(added, 0);
    assert!(e < 3e-7, "{e:e}");
    let sq: Vec<(u32, u32, u32)> = (3600..3620).map(|r| (r, 100, 120)).collect();
    let (e, added, _) = measure(&g, &sq);
    assert_eq!(added, 2);
    assert!(e < 5e-7, "{e:e}");
    // A 30-degree, one-row strip at 60 N on a 1-degree grid: the top and bottom edges differ
    // by a cell of latitude, so the lens areas differ by about 1 % of each: cut.
    let g = GridSpec::lonlat(360, 180, -180.0, 90.0, 1.0);
    let (e, added, _) = measure(&g, &[(30, 10, 40)]);
    assert!(added > 0 && e < 1e-6, "{added} {e:e}");
    // Without cutting, GeographicLib measures it well off (this is what the rule fixes).
    let p = super::trace::PixelPolygon {
        exterior: vec![(40, 30), (10, 30), (10, 31), (40, 31), (40, 30)],
        holes: vec![],
    };
    let mut raw = lonlat_polygon(&p, &g).0;
    raw.exterior_mut(|r| r.0.retain(|c| c.x == -170.0 || c.x == -140.0));
    let truth = lonlat_cell_area_m2(59.0, 60.0, 30.0);
    let off = (geodesic_m2(&MultiPolygon(vec![raw])) - truth).abs() / truth;
    assert!(off > 1e-3, "{off:e}");
}
