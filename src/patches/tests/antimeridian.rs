//! Labelling across the antimeridian on 360-degree grids: joins, circular centroids, a band
//! round the globe.

use super::*;

// Antimeridian rule (worked by hand on an 8-column grid).
#[test]
fn patch_across_the_antimeridian() {
    let (g, w) = grid(
        "
        1......1
        1.......",
    );
    let p = run(
        &g,
        w,
        Connectivity::Four,
        false,
        |_| RowAreas::Uniform(1.0),
        &[],
    );
    assert_eq!(sizes(&p), [2, 1]);
    assert_eq!((p[1].col_start, p[1].col_len), (7, 1));
    for conn in [Connectivity::Four, Connectivity::Eight] {
        let p = run(&g, w, conn, true, |_| RowAreas::Uniform(1.0), &[]);
        assert_eq!(p.len(), 1);
        let p = &p[0];
        assert_eq!(
            (p.cells, p.first_cell, p.row_min, p.row_max),
            (3, (0, 0), 0, 1)
        );
        assert_eq!((p.col_start, p.col_len), (7, 2));
        // Circular mean of angles 2π·0.5/8 (twice) and 2π·7.5/8 = −2π·0.5/8 (once):
        // atan2(sin a, 3 cos a) with a = π/8, i.e. atan(tan(π/8)/3) · 8/2π columns.
        let want = (std::f64::consts::FRAC_PI_8.tan() / 3.0).atan() * 8.0 / TAU;
        assert!((p.centroid_col - want).abs() < 1e-12, "{}", p.centroid_col);
        // Close to the unwrapped mean (0.5 + 0.5 − 0.5)/3 = 1/6, as a sanity bound.
        assert!((p.centroid_col - 1.0 / 6.0).abs() < 0.01);
        assert!((p.centroid_row - (0.5 * 2.0 + 1.5) / 3.0).abs() < 1e-12);
    }
}

// The circular centroid just west of column 0 stays in [0, width) (by hand).
#[test]
fn circular_centroid_west_of_column_zero() {
    let (g, w) = grid(
        "
        1......1
        .......1",
    );
    let p = run(
        &g,
        w,
        Connectivity::Four,
        true,
        |_| RowAreas::Uniform(2.5),
        &[],
    );
    assert_eq!(p.len(), 1);
    let want = 8.0 - (std::f64::consts::FRAC_PI_8.tan() / 3.0).atan() * 8.0 / TAU;
    assert!(
        (p[0].centroid_col - want).abs() < 1e-12,
        "{}",
        p[0].centroid_col
    );
    assert_eq!(
        (p[0].col_start, p[0].col_len, p[0].first_cell),
        (7, 2, (0, 0))
    );
}

// Eight joins diagonally across the antimeridian, Four does not (by hand).
#[test]
fn diagonal_across_the_antimeridian() {
    let (g, w) = grid(
        "
        .....1
        1.....
        .....1",
    );
    let eight = run(
        &g,
        w,
        Connectivity::Eight,
        true,
        |_| RowAreas::Uniform(1.0),
        &[],
    );
    assert_eq!(sizes(&eight), [3]);
    assert_eq!((eight[0].col_start, eight[0].col_len), (5, 2));
    assert_eq!(eight[0].first_cell, (0, 5));
    assert_eq!(
        run(
            &g,
            w,
            Connectivity::Four,
            true,
            |_| RowAreas::Uniform(1.0),
            &[]
        )
        .len(),
        3
    );
    assert_eq!(
        run(
            &g,
            w,
            Connectivity::Eight,
            false,
            |_| RowAreas::Uniform(1.0),
            &[]
        )
        .len(),
        3
    );
}

// A band round the whole globe: full circle, undefined circular mean (by hand).
#[test]
fn full_circle_band() {
    let (g, w) = grid(
        "
        ..1...
        111111",
    );
    let p = run(
        &g,
        w,
        Connectivity::Four,
        true,
        |_| RowAreas::Uniform(1.0),
        &[],
    );
    assert_eq!(p.len(), 1);
    assert_eq!(
        (p[0].col_start, p[0].col_len, p[0].first_cell),
        (0, 6, (0, 2))
    );
    // The top cell pulls the mean towards column 2.5; the band alone has no mean.
    assert!(
        (p[0].centroid_col - 2.5).abs() < 1e-9,
        "{}",
        p[0].centroid_col
    );
    let (band, w) = grid("111111");
    let p = run(
        &band,
        w,
        Connectivity::Eight,
        true,
        |_| RowAreas::Uniform(1.0),
        &[],
    );
    assert_eq!((p[0].col_start, p[0].col_len), (0, 6));
    assert!(p[0].centroid_col.is_nan());
    // Without wrap the same row is an ordinary interval with a planar mean.
    let p = run(
        &band,
        w,
        Connectivity::Eight,
        false,
        |_| RowAreas::Uniform(1.0),
        &[],
    );
    assert_eq!(
        (p[0].col_start, p[0].col_len, p[0].centroid_col),
        (0, 6, 3.0)
    );
}
