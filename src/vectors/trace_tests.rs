//! The run tracer against GDAL's polygonizer (GDALPolygonize, GDAL 3.6, through the gdal
//! crate) and GEOS validity (through GDAL): same cells per id, valid polygons.

use super::gdal_ref::polygonize_labels;
use super::polygonize::is_valid_quiet;
use super::trace::{IdRun, PixelPolygon, Tracer};
use crate::patches::{label_grid, Connectivity};
use crate::GridSpec;
use gdal::vector::ToGdal;
use geo::Area;
use geo_types::{Coord, LineString, MultiPolygon, Polygon};
use proptest::prelude::*;
use std::path::Path;

/// Runs of each row of a label raster.
pub(super) fn runs_of(labels: &[u32], width: usize) -> Vec<Vec<IdRun>> {
    labels
        .chunks_exact(width)
        .map(|row| {
            let mut out: Vec<IdRun> = Vec::new();
            for (c, &id) in row.iter().enumerate() {
                if id == 0 {
                    continue;
                }
                match out.last_mut() {
                    Some(r) if r.id == id && r.end == c as u32 => r.end += 1,
                    _ => out.push(IdRun {
                        start: c as u32,
                        end: c as u32 + 1,
                        id,
                    }),
                }
            }
            out
        })
        .collect()
}

/// Trace every id, taking each as soon as its last row (from `last_row`) is closed.
pub(super) fn trace_all(rows: &[Vec<IdRun>], last_row: &[usize]) -> Vec<Vec<PixelPolygon>> {
    let mut t = Tracer::new();
    let mut out = vec![Vec::new(); last_row.len()];
    let mut taken = vec![false; last_row.len()];
    for (r, runs) in rows.iter().enumerate() {
        t.push_row(r as u32, runs).unwrap();
        for (k, &lr) in last_row.iter().enumerate() {
            if r >= 1 && lr == r - 1 && !taken[k] {
                out[k] = t.take(k as u32 + 1).unwrap();
                taken[k] = true;
            }
        }
    }
    for id in t.finish().unwrap() {
        out[id as usize - 1] = t.take(id).unwrap();
        taken[id as usize - 1] = true;
    }
    assert!(taken.iter().all(|&x| x));
    out
}

/// Pixel polygons as map coordinates (x = column, y = -row).
pub(super) fn to_geo(ps: &[PixelPolygon]) -> MultiPolygon<f64> {
    let ring = |r: &[(u32, u32)]| {
        LineString(
            r.iter()
                .map(|&(c, rr)| Coord {
                    x: c as f64,
                    y: -(rr as f64),
                })
                .collect(),
        )
    };
    MultiPolygon(
        ps.iter()
            .map(|p| Polygon::new(ring(&p.exterior), p.holes.iter().map(|h| ring(h)).collect()))
            .collect(),
    )
}

fn check_grid(classes: &[u8], w: usize, conn: Connectivity) {
    check_grid_wrap(classes, w, conn, false)
}

/// With `wrap`, patches join across the grid's east and west edges (a global grid's
/// antimeridian): each comes out as pieces at both edges, as GDAL's do.
fn check_grid_wrap(classes: &[u8], w: usize, conn: Connectivity, wrap: bool) {
    let h = classes.len() / w;
    let (mut labels, patches) = label_grid(classes, w, conn, wrap);
    let rows = runs_of(&labels, w);
    let last: Vec<usize> = patches.iter().map(|p| p.row_max).collect();
    let ours = trace_all(&rows, &last);
    // GDAL on the same labels, in the same frame (x = column, y = -row).
    let grid = GridSpec {
        width: w,
        height: h,
        geo_transform: [0.0, 1.0, 0.0, 0.0, 0.0, -1.0],
        crs_wkt: String::new(),
        geographic: false,
    };
    let gdal = polygonize_labels(&mut labels, &grid, conn, patches.len(), Path::new("t")).unwrap();
    for (k, p) in patches.iter().enumerate() {
        let mine = to_geo(&ours[k]);
        let g = mine.to_gdal().unwrap();
        assert!(
            is_valid_quiet(&g),
            "GEOS finds patch {} invalid: {mine:?}\n{classes:?}",
            p.id
        );
        // Every exterior counter-clockwise, every hole clockwise (north up).
        for poly in &mine.0 {
            assert!(Polygon::new(poly.exterior().clone(), vec![]).signed_area() > 0.0);
            for hole in poly.interiors() {
                assert!(Polygon::new(hole.clone(), vec![]).signed_area() < 0.0);
            }
        }
        assert_eq!(mine.unsigned_area(), p.cells as f64, "patch {} area", p.id);
        let theirs = gdal[k].to_gdal().unwrap();
        let sym = g.difference(&theirs).unwrap().area() + theirs.difference(&g).unwrap().area();
        assert_eq!(sym, 0.0, "patch {}: not GDAL's cells\n{classes:?}", p.id);
    }
}

#[test]
fn hand_made_pinches_holes_and_nested_islands() {
    // 1 1 1 0 0
    // 1 0 1 0 0
    // 1 1 0 1 0    a C whose gap is a diagonal, a cell touching it, one more corner touch
    // 0 0 0 0 1
    #[rustfmt::skip]
    let g = [1u8,1,1,0,0, 1,0,1,0,0, 1,1,0,1,0, 0,0,0,0,1];
    check_grid(&g, 5, Connectivity::Eight);
    check_grid(&g, 5, Connectivity::Four);
    // Island (class 1) in a lake in an island, the inner one touching the lake's corner.
    #[rustfmt::skip]
    let g = [1u8,1,1,1,1,1,
             1,0,0,0,0,1,
             1,0,1,1,0,1,
             1,0,1,1,0,1,
             1,0,0,0,1,1,
             1,1,1,1,1,1];
    check_grid(&g, 6, Connectivity::Eight);
    check_grid(&g, 6, Connectivity::Four);
    // Checkerboard: every cell a separate polygon touching four others at corners.
    let g: Vec<u8> = (0..64).map(|i| ((i / 8 + i % 8) % 2) as u8).collect();
    check_grid(&g, 8, Connectivity::Eight);
    let (labels, _) = label_grid(&g, 8, Connectivity::Eight, false);
    let ours = trace_all(&runs_of(&labels, 8), &[7]);
    assert_eq!(ours[0].len(), 32, "one polygon per cell");
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]
    #[test]
    fn traced_polygons_are_gdals_cells_and_valid(
        w in 1usize..12,
        h in 1usize..10,
        seed in proptest::collection::vec(0u8..6, 120),
        eight in any::<bool>(),
        wrap in any::<bool>(),
    ) {
        // Classes 0 (half the cells), 1 and 2.
        let g: Vec<u8> = (0..w * h).map(|i| match seed[i % seed.len()] ^ (i as u8 / 7 % 3) {
            0..=2 => 0,
            3 | 4 => 1,
            _ => 2,
        }).collect();
        let conn = if eight { Connectivity::Eight } else { Connectivity::Four };
        check_grid_wrap(&g, w, conn, wrap && w >= 3);
    }
}
