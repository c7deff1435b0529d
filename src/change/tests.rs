//! Reach against brute force: every cell against every present-range cell with
//! GeographicLib's Inverse (geographiclib-rs, Karney 2013), on grids that stress the row
//! method (near a pole, across the antimeridian, D wider than half the Earth) and the point
//! method (a cell size that does not divide 360°).

use super::present::PresentRuns;
use super::reach::ReachSpec;
use crate::GridSpec;
use geographiclib_rs::{Geodesic, InverseGeodesic};
use std::sync::Arc;

/// Present range from a predicate on (row, col).
fn present(w: usize, h: usize, f: impl Fn(usize, usize) -> bool) -> PresentRuns {
    let mut p = PresentRuns::new(w, h);
    let rows: Vec<u8> = (0..w * h).map(|i| f(i / w, i % w) as u8).collect();
    p.take_rows(0, &rows);
    p
}

/// Brute-force membership of every cell.
fn brute(g: &GridSpec, p: &PresentRuns, d_m: f64) -> Vec<bool> {
    let geod = Geodesic::wgs84();
    let src: Vec<(f64, f64)> = (0..g.height)
        .flat_map(|r| {
            p.range[r]
                .iter()
                .flat_map(move |&(a, b)| (a..b).map(move |c| (r, c as usize)))
        })
        .map(|(r, c)| (g.row_centre_y(r), g.col_centre_x(c)))
        .collect();
    let mut out = Vec::new();
    for r in 0..g.height {
        for c in 0..g.width {
            let (lat, lon) = (g.row_centre_y(r), g.col_centre_x(c));
            out.push(src.iter().any(|&(la, lo)| {
                let s: f64 = geod.inverse(lat, lon, la, lo);
                s <= d_m
            }));
        }
    }
    out
}

/// Membership from the reach code, asking for every cell.
fn by_reach(g: &GridSpec, p: PresentRuns, d_km: f64, expect_rows: bool) -> Vec<bool> {
    let spec = ReachSpec::new(g, Arc::new(p), d_km).unwrap();
    assert_eq!(matches!(spec, ReachSpec::Rows(_)), expect_rows);
    let mut wk = spec.worker().unwrap();
    let want = vec![true; g.width];
    let mut out = Vec::new();
    let mut row = vec![false; g.width];
    for r in 0..g.height {
        wk.fill_row(r, &want, &mut row);
        out.extend_from_slice(&row);
    }
    out
}

fn assert_same(g: &GridSpec, f: impl Fn(usize, usize) -> bool + Copy, d_km: f64, rows: bool) {
    let want = brute(g, &present(g.width, g.height, f), d_km * 1000.0);
    let got = by_reach(g, present(g.width, g.height, f), d_km, rows);
    let bad: Vec<usize> = (0..want.len()).filter(|&i| want[i] != got[i]).collect();
    assert!(
        bad.is_empty(),
        "{} cells differ, first (row {}, col {}): brute force {}",
        bad.len(),
        bad[0] / g.width,
        bad[0] % g.width,
        want[bad[0]]
    );
    assert!(want.iter().any(|&x| x) && want.iter().any(|&x| !x));
}

#[test]
fn rows_method_near_the_pole_and_across_the_seam() {
    // Global 4-degree grid: a ring of cells near the north pole, a patch across 180°.
    let g = GridSpec::lonlat(90, 45, -180.0, 90.0, 4.0);
    let f = |r: usize, c: usize| {
        (r == 2 && c.is_multiple_of(7)) || ((20..23).contains(&r) && !(2..=87).contains(&c))
    };
    for d in [150.0, 444.0, 900.0, 2500.0] {
        assert_same(&g, f, d, true);
    }
}

#[test]
fn rows_method_with_reach_wider_than_half_the_earth() {
    let g = GridSpec::lonlat(36, 18, -180.0, 90.0, 10.0);
    assert_same(&g, |r, c| r == 9 && c == 3, 12_000.0, true);
}

#[test]
fn rows_method_on_a_regional_grid_by_the_seam() {
    // 160°E to 200°E (past the antimeridian without wrapping), fine cells.
    let g = GridSpec::lonlat(80, 40, 160.0, -30.0, 0.5);
    assert_same(
        &g,
        |r, c| (10..14).contains(&r) && (c == 5 || c == 77),
        120.0,
        true,
    );
}

#[test]
fn point_method_when_the_cell_size_does_not_divide_360() {
    let g = GridSpec::lonlat(40, 30, 20.0, 60.0, 0.7);
    assert_same(&g, |r, c| (r * 7 + c * 3) % 23 == 0 && r > 5, 90.0, false);
}
