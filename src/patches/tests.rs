//! Unit tests of the streaming labeller and `label_grid`. The random-grid comparison with a
//! flood-fill reference lives in `proptests.rs`.

use super::*;
use std::f64::consts::TAU;

mod antimeridian;
mod proptests;

/// Parse a grid drawn as text: one row per line, one digit per cell, `.` for 0, `x` for 255.
fn grid(text: &str) -> (Vec<u8>, usize) {
    let rows: Vec<Vec<u8>> = text
        .lines()
        .map(str::trim)
        .filter(|l| !l.is_empty())
        .map(|l| {
            l.bytes()
                .filter(|b| !b.is_ascii_whitespace())
                .map(|b| match b {
                    b'.' => 0,
                    b'x' => 255,
                    d => d - b'0',
                })
                .collect()
        })
        .collect();
    let width = rows[0].len();
    assert!(rows.iter().all(|r| r.len() == width));
    (rows.concat(), width)
}

/// Push a whole grid with one area per row and the given records `(row, col, count)`.
fn run(
    classes: &[u8],
    width: usize,
    conn: Connectivity,
    wrap: bool,
    row_area: impl Fn(usize) -> RowAreas,
    records: &[(usize, usize, u64)],
) -> Vec<Patch> {
    let mut lab = PatchLabeler::new(width, conn, wrap);
    for (r, row) in classes.chunks_exact(width).enumerate() {
        let rec: Vec<(usize, u64)> = records
            .iter()
            .filter(|t| t.0 == r)
            .map(|t| (t.1, t.2))
            .collect();
        lab.push_row(r, row, &row_area(r), &rec);
    }
    lab.finish()
}

fn sizes(p: &[Patch]) -> Vec<u64> {
    p.iter().map(|p| p.cells).collect()
}

const CHECKS_6X6: &str = "
    11...1
    1...1.
    ..1...
    .1.11.
    ....1.
    1..1.1";

// A 6x6 grid constructed by hand, labels checked with scipy.ndimage.label (scipy 1.17.1).
#[test]
fn checks_grid_four_and_eight() {
    let (g, w) = grid(CHECKS_6X6);
    let (labels4, p4) = label_grid(&g, w, Connectivity::Four, false);
    assert_eq!(sizes(&p4), [3, 1, 1, 1, 1, 3, 1, 1, 1]);
    #[rustfmt::skip]
    let want4 = [1, 1, 0, 0, 0, 2,  1, 0, 0, 0, 3, 0,  0, 0, 4, 0, 0, 0,
                 0, 5, 0, 6, 6, 0,  0, 0, 0, 0, 6, 0,  7, 0, 0, 8, 0, 9];
    assert_eq!(labels4, want4);
    let (labels8, p8) = label_grid(&g, w, Connectivity::Eight, false);
    assert_eq!(sizes(&p8), [3, 2, 7, 1]);
    #[rustfmt::skip]
    let want8 = [1, 1, 0, 0, 0, 2,  1, 0, 0, 0, 2, 0,  0, 0, 3, 0, 0, 0,
                 0, 3, 0, 3, 3, 0,  0, 0, 0, 0, 3, 0,  4, 0, 0, 3, 0, 3];
    assert_eq!(labels8, want8);
    assert_eq!(Connectivity::default(), Connectivity::Eight);
}

// Patch areas of the 6x6 grid made of 30" cells, NW corner 60.05N 10E: row and patch areas
// in km2 from the Snyder 1987 eq. 3-12 closed form, computed in Python; tolerance 1e-9 rel.
#[test]
fn checks_grid_areas() {
    let row_km2 = [
        0.431128335,
        0.431236410,
        0.431344475,
        0.431452530,
        0.431560575,
        0.431668611,
    ];
    let (g, w) = grid(CHECKS_6X6);
    let area = |r: usize| RowAreas::Uniform(row_km2[r] * 1e6);
    let want4 = [
        1.293493080,
        0.431128335,
        0.431236410,
        0.431344475,
        0.431452530,
        1.294465635,
        0.431668611,
        0.431668611,
        0.431668611,
    ];
    let want8 = [1.293493080, 0.862364745, 3.020599862, 0.431668611];
    for (conn, want) in [
        (Connectivity::Four, &want4[..]),
        (Connectivity::Eight, &want8[..]),
    ] {
        let p = run(&g, w, conn, false, area, &[]);
        assert_eq!(p.len(), want.len());
        for (p, km2) in p.iter().zip(want) {
            let rel = (p.area_m2 - km2 * 1e6).abs() / (km2 * 1e6);
            assert!(
                rel < 1e-9,
                "{conn:?} patch {}: {} m2 vs {km2} km2",
                p.id,
                p.area_m2
            );
        }
        let total: f64 = p.iter().map(|p| p.area_m2).sum();
        assert!((total - 5.608126298e6).abs() / 5.608126298e6 < 1e-9);
    }
}

// Arms that meet only in the last row (by hand).
#[test]
fn u_shape_joins_at_the_bottom() {
    let (g, w) = grid(
        "
        1.....1
        1.....1
        1.....1
        1.....1
        1111111",
    );
    for conn in [Connectivity::Four, Connectivity::Eight] {
        let mut lab = PatchLabeler::new(w, conn, false);
        for (r, row) in g.chunks_exact(w).enumerate() {
            lab.push_row(r, row, &RowAreas::Uniform(1.0), &[]);
            assert_eq!(lab.active_components(), if r < 4 { 2 } else { 1 });
        }
        let p = lab.finish();
        assert_eq!(p.len(), 1);
        let p = &p[0];
        assert_eq!(
            (p.cells, p.first_cell, p.col_start, p.col_len),
            (15, (0, 0), 0, 7)
        );
        assert_eq!((p.row_min, p.row_max), (0, 4));
        // Centroid: columns 0.5 and 6.5 four times each, 0.5..6.5 once in row 4 → 52.5/15.
        assert!((p.centroid_col - 3.5).abs() < 1e-12);
        // Rows: 0.5+1.5+2.5+3.5 twice (16) + 4.5 ×7 (31.5) → 47.5/15.
        assert!((p.centroid_row - 47.5 / 15.0).abs() < 1e-12);
    }
}

// A Four-connected spiral: every 1 is one patch, labelled 1 (by hand).
#[test]
fn spiral_is_one_patch() {
    let (g, w) = grid(
        "
        111111111
        ........1
        1111111.1
        1.....1.1
        1.111.1.1
        1.1...1.1
        1.11111.1
        1.......1
        111111111",
    );
    let ones = g.iter().filter(|&&c| c == 1).count() as u64;
    for conn in [Connectivity::Four, Connectivity::Eight] {
        let (labels, p) = label_grid(&g, w, conn, false);
        assert_eq!(sizes(&p), [ones]);
        assert!(g.iter().zip(&labels).all(|(&c, &l)| l == u32::from(c == 1)));
    }
}

/// A comb: `teeth` teeth on even columns, `height - 1` rows long, and a last row `last`.
fn comb(teeth: usize, height: usize, last: impl Fn(usize) -> u8) -> (Vec<u8>, usize) {
    let w = 2 * teeth - 1;
    let mut g = Vec::new();
    for _ in 0..height - 1 {
        g.extend((0..w).map(|c| u8::from(c % 2 == 0)));
    }
    g.extend((0..w).map(last));
    (g, w)
}

// Many teeth joined only in the last row (by hand).
#[test]
fn comb_joined_in_last_row() {
    let (g, w) = comb(60, 30, |_| 1);
    let mut lab = PatchLabeler::new(w, Connectivity::Four, false);
    for (r, row) in g.chunks_exact(w).enumerate() {
        lab.push_row(r, row, &RowAreas::Uniform(1.0), &[(w - 1, 1)]);
        assert_eq!(lab.active_components(), if r < 29 { 60 } else { 1 });
    }
    let p = lab.finish();
    assert_eq!(p.len(), 1);
    assert_eq!(
        (p[0].cells, p[0].col_len, p[0].records),
        (60 * 29 + w as u64, w, 30)
    );
    // Last row only on odd columns: it touches the teeth diagonally, so Eight joins them all
    // while Four leaves 60 teeth and 59 single cells.
    let (g, w) = comb(60, 30, |c| u8::from(c % 2 == 1));
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
        1
    );
    let four = run(
        &g,
        w,
        Connectivity::Four,
        false,
        |_| RowAreas::Uniform(1.0),
        &[],
    );
    assert_eq!(four.len(), 119);
    // Ids follow the first cells: teeth 1..=60 along row 0, then the singles in row 29.
    assert_eq!(four[59].first_cell, (0, 118));
    assert_eq!(four[60].first_cell, (29, 1));
}

// Cells of classes 1 and 2 that touch stay apart; records on 0 / 255 cells count nowhere (by hand).
#[test]
fn classes_apart_and_records() {
    let (g, w) = grid(
        "
        112x
        1221
        .x21",
    );
    // (row, col, count): two on patch A (class 1), one on B (class 2), 4 on nodata, 8 on 0.
    let records = [
        (0, 0, 1),
        (1, 0, 1),
        (0, 2, 1),
        (0, 3, 4),
        (2, 0, 8),
        (2, 3, 16),
        (1, 3, 32),
    ];
    let p = run(
        &g,
        w,
        Connectivity::Eight,
        false,
        |_| RowAreas::Uniform(1.0),
        &records,
    );
    let got: Vec<_> = p
        .iter()
        .map(|p| (p.class, p.cells, p.first_cell, p.records))
        .collect();
    assert_eq!(
        got,
        [(1, 3, (0, 0), 2), (2, 4, (0, 2), 1), (1, 2, (1, 3), 48)]
    );
    assert_eq!(p.iter().map(|p| p.id).collect::<Vec<_>>(), [1, 2, 3]);
}

// Compensated area sums across runs and merges: 1e16 + 1000 × 1 m2 is exact in f64, but a
// plain running sum drops every 1 (half an ulp of 1e16 is 1) (by hand, IEEE 754 rounding).
#[test]
fn areas_are_compensated() {
    let w = 11;
    let g = vec![1u8; w * 100];
    let area = |r: usize| {
        RowAreas::PerCell(
            (0..w)
                .map(|c| if r == 0 && c == 0 { 1e16 } else { 1.0 })
                .collect(),
        )
    };
    let p = run(&g, w, Connectivity::Four, false, area, &[]);
    let cells = (w * 100) as f64;
    assert_eq!(p[0].area_m2, 1e16 + (cells - 1.0));
    let mut plain = 1e16;
    for _ in 1..w * 100 {
        plain += 1.0;
    }
    assert_ne!(plain, p[0].area_m2);
}

// Skipped rows hold no patch cells, so patches above and below a gap are apart (by hand).
#[test]
fn gap_in_rows_separates() {
    let mut lab = PatchLabeler::new(3, Connectivity::Eight, false);
    lab.push_row(0, &[1, 1, 0], &RowAreas::Uniform(1.0), &[]);
    lab.push_row(2, &[0, 1, 1], &RowAreas::Uniform(1.0), &[]);
    let p = lab.finish();
    assert_eq!(
        p.iter().map(|p| p.first_cell).collect::<Vec<_>>(),
        [(0, 0), (2, 1)]
    );
}

// Memory stays bounded by the active components: 3000 rows of isolated cells (by hand).
#[test]
fn slots_are_reused() {
    let w = 41;
    let mut lab = PatchLabeler::new(w, Connectivity::Four, true);
    let dots: Vec<u8> = (0..w).map(|c| u8::from(c % 2 == 0 && c != w - 1)).collect();
    let empty = vec![0u8; w];
    for r in 0..3000 {
        let row = if r % 2 == 0 { &dots } else { &empty };
        lab.push_row(r, row, &RowAreas::Uniform(1.0), &[]);
        assert!(
            lab.label_slots() <= w,
            "row {r}: {} slots",
            lab.label_slots()
        );
    }
    let p = lab.finish();
    assert_eq!(p.len(), 1500 * 20);
    assert!(p.iter().all(|p| p.cells == 1));
    assert!(p.windows(2).all(|w| w[0].first_cell < w[1].first_cell));
}

#[test]
fn empty_input() {
    assert!(PatchLabeler::new(5, Connectivity::Eight, true)
        .finish()
        .is_empty());
    assert_eq!(
        label_grid(&[], 3, Connectivity::Four, false),
        (vec![], vec![])
    );
    let (labels, p) = label_grid(&[0, 255, 0, 255], 2, Connectivity::Eight, true);
    assert_eq!((labels, p.len()), (vec![0; 4], 0));
}
