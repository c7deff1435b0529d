//! The range model's runs and boundary corners, distances and stepping-stone reach on
//! hand-made class grids.

use super::*;
use crate::model::RangeModel;
use crate::patches::Connectivity;
use crate::GridSpec;
use geographiclib_rs::{Geodesic, InverseGeodesic};
use std::collections::BTreeMap;
use std::path::Path;

fn model_of(
    classes: &[u8],
    grid: &GridSpec,
    conn: Connectivity,
    rec: &[(usize, usize)],
) -> RangeModel {
    let mut records: BTreeMap<usize, Vec<(usize, u64)>> = BTreeMap::new();
    for &(r, c) in rec {
        records.entry(r).or_default().push((c, 1));
    }
    RangeModel::from_class_grid(grid, conn, classes, &records).unwrap()
}

/// Cells per patch id, counted from the model's runs.
fn cells_per_patch(classes: &[u8], width: usize, conn: Connectivity, wrap: bool) -> Vec<u64> {
    let h = classes.len() / width;
    let grid = if wrap {
        let mut g = GridSpec::lonlat(width, h, -180.0, 90.0, 360.0 / width as f64);
        g.geo_transform[5] = -180.0 / h as f64;
        g
    } else {
        GridSpec::lonlat(width, h, 0.0, 10.0, 0.01)
    };
    let model = model_of(classes, &grid, conn, &[]);
    let mut cells = vec![0u64; model.patches().len()];
    model
        .for_each_row(&mut |_, runs| {
            for r in runs {
                cells[r.patch as usize - 1] += (r.end - r.start) as u64;
            }
            Ok(())
        })
        .unwrap();
    cells
}

// A 6×6 grid constructed by hand, labels checked with scipy.ndimage.label (scipy 1.17.1):
// 8-connectivity sizes [3, 2, 7, 1], 4-connectivity [3, 1, 1, 1, 1, 3, 1, 1, 1], scan order.
#[rustfmt::skip]
const SIX: [u8; 36] = [
    1, 1, 0, 0, 0, 1,
    1, 0, 0, 0, 1, 0,
    0, 0, 1, 0, 0, 0,
    0, 1, 0, 1, 1, 0,
    0, 0, 0, 0, 1, 0,
    1, 0, 0, 1, 0, 1,
];

#[test]
fn scan_numbers_patches_like_the_published_grid() {
    assert_eq!(
        cells_per_patch(&SIX, 6, Connectivity::Eight, false),
        [3, 2, 7, 1]
    );
    assert_eq!(
        cells_per_patch(&SIX, 6, Connectivity::Four, false),
        [3, 1, 1, 1, 1, 3, 1, 1, 1]
    );
    // Wrapping joins column 0 and column 5 (by hand): with 8 neighbours, (0,5)-(0,0) joins
    // the first two patches and (5,5)-(5,0) the last two: 2 patches of 5 and 8 cells.
    assert_eq!(cells_per_patch(&SIX, 6, Connectivity::Eight, true), [5, 8]);
}

#[test]
fn boundary_corners_are_the_rim_of_a_block() {
    // A 4×4 block in a 6×6 grid: its boundary corners are the 16 grid points on the rim of
    // the block; the 9 corners inside it are not boundary corners (by hand).
    let mut g = [0u8; 36];
    for r in 1..5 {
        for c in 1..5 {
            g[r * 6 + c] = 1;
        }
    }
    let grid = GridSpec::lonlat(6, 6, 0.0, 10.0, 0.01);
    let m = model_of(&g, &grid, Connectivity::Eight, &[]);
    let bc = m.boundary_corners(&|_| true).unwrap();
    assert_eq!(bc.len(), 16);
    let inside =
        (0..bc.len()).filter(|&i| (2..5).contains(&bc.line[i]) && (2..5).contains(&bc.col[i]));
    assert_eq!(inside.count(), 0);
    // A patch filling the raster: its rim of 3 × 4 grid points on a 3×3 grid is the boundary.
    let full = [2u8; 9];
    let grid = GridSpec::lonlat(3, 3, 0.0, 10.0, 0.01);
    let m = model_of(&full, &grid, Connectivity::Eight, &[]);
    assert_eq!(m.boundary_corners(&|_| true).unwrap().len(), 12);
    // Two 4-connected patches touching at a corner both own that corner.
    let diag = [1u8, 0, 0, 1];
    let grid = GridSpec::lonlat(2, 2, 0.0, 10.0, 0.01);
    let m = model_of(&diag, &grid, Connectivity::Four, &[]);
    let bc = m.boundary_corners(&|_| true).unwrap();
    assert_eq!((bc.of(1).len(), bc.of(2).len()), (4, 4));
    assert!(bc.of(1).any(|i| (bc.line[i], bc.col[i]) == (1, 1)));
    assert!(bc.of(2).any(|i| (bc.line[i], bc.col[i]) == (1, 1)));
}

/// One row of patches at the equator, 0.01-degree cells, in row 1 of a 3-row grid:
/// A cols 0-1 (class 1, one record), gap 2, B cols 4-5 (class 1), gap 5, C cols 11-12
/// (class 2), gap 2, D cols 15-16 (class 2), gap 10, E cols 27-28 (class 1).
fn strip_grid() -> (GridSpec, Vec<u8>) {
    let w = 30;
    let mut g = vec![0u8; 3 * w];
    for (cols, k) in [
        (0..2, 1u8),
        (4..6, 1),
        (11..13, 2),
        (15..17, 2),
        (27..29, 1),
    ] {
        for c in cols {
            g[w + c] = k;
        }
    }
    (GridSpec::lonlat(w, 3, 0.0, 0.015, 0.01), g)
}

/// GeographicLib distance (km) between corners at latitude 0.005 separated by `cells` columns
/// from column `c0` (the nearest corners of two patches in one row).
fn gap_km(c0: usize, cells: usize) -> f64 {
    let g = Geodesic::wgs84();
    let d: f64 = g.inverse(0.005, c0 as f64 * 0.01, 0.005, (c0 + cells) as f64 * 0.01);
    d / 1000.0
}

/// Area (km2) of patch `id` of the strip grid, from the model.
fn strip_area(id: u32) -> f64 {
    let (grid, g) = strip_grid();
    model_of(&g, &grid, Connectivity::Eight, &[(1, 0)]).patches()[id as usize - 1].area_m2 / 1e6
}

fn run(gap: Option<f64>) -> (Metrics, Vec<PatchMetrics>) {
    let (grid, g) = strip_grid();
    let recs = [MetricRecord {
        lon: 0.005,
        lat: 0.0,
        usage: RecordUse::Used,
    }];
    let opts = MetricsOptions {
        gap_km: gap,
        min_patch_km2: Some(2.5),
        ..Default::default()
    };
    let model = model_of(&g, &grid, Connectivity::Eight, &[(1, 0)]);
    range_metrics(&model, Path::new("r.csv"), &recs, &opts).unwrap()
}

#[test]
fn edge_to_edge_distances_between_patches() {
    // Sources: GeographicLib Inverse (geographiclib-rs) between the facing corners.
    let (_, cols) = run(None);
    let close = |a: Option<f64>, b: f64| (a.unwrap() - b).abs() < 1e-9;
    assert!(close(cols[0].nearest_patch_km, gap_km(2, 2))); // A-B
    assert!(close(cols[1].nearest_patch_km, gap_km(2, 2))); // B-A
    assert!(close(cols[2].nearest_patch_km, gap_km(13, 2))); // C-D, not C-B (5 cells)
    assert!(close(cols[4].nearest_patch_km, gap_km(17, 10))); // E-D
                                                              // Only A is occupied: its nearest other occupied patch does not exist.
    assert_eq!(cols[0].nearest_occupied_km, None);
    assert!(close(cols[2].nearest_occupied_km, gap_km(2, 9))); // C-A
    assert!(close(cols[3].nearest_occupied_km, gap_km(2, 13))); // D-A
                                                                // To the nearest other class-1 patch (A, B, E are class 1): C-B, D-B, E-B.
    assert!(close(cols[2].nearest_range_km, gap_km(6, 5)));
    assert!(close(cols[3].nearest_range_km, gap_km(6, 9)));
    assert!(close(cols[4].nearest_range_km, gap_km(6, 21)));
    assert!(cols.iter().all(|c| c.reachable.is_none()));
}

#[test]
fn stepping_stone_reach_with_known_gaps() {
    // Gaps (cells of 0.01 degree at the equator, about 1.11 km): A-B 2, B-C 5, C-D 2, D-E 10
    // (by construction; distances from GeographicLib as above).
    let g2 = gap_km(2, 2);
    let g5 = gap_km(6, 5);
    // Just above 2 cells: A reaches B only.
    let (m, cols) = run(Some(g2 + 0.01));
    let jumps: Vec<Option<u32>> = cols.iter().map(|c| c.reach_jumps).collect();
    assert_eq!(jumps, [Some(0), Some(1), None, None, None]);
    let r = m.reach.unwrap();
    let (a, b, c, d) = (strip_area(1), strip_area(2), strip_area(3), strip_area(4));
    assert_eq!((r.reachable_patches, r.reachable_km2), (2, a + b + 0.0));
    assert_eq!(r.reachable_outside_accessible_km2, 0.0);
    // Just above 5 cells: A -> B -> C -> D in successive jumps; E (10 cells away) is not reached.
    let (m, cols) = run(Some(g5 + 0.01));
    let jumps: Vec<Option<u32>> = cols.iter().map(|c| c.reach_jumps).collect();
    assert_eq!(jumps, [Some(0), Some(1), Some(2), Some(3), None]);
    assert_eq!(cols[4].reachable, Some(false));
    let r = m.reach.unwrap();
    assert_eq!((r.reachable_patches, r.unreachable_patches), (4, 1));
    assert_eq!(r.reachable_outside_accessible_km2, c + d + 0.0); // C and D
                                                                 // Just below 5 cells: C stays out, and D with it.
    let (_, cols) = run(Some(g5 - 0.01));
    assert_eq!(cols[2].reachable, Some(false));
    assert_eq!(cols[3].reachable, Some(false));
}

#[test]
fn modelled_figures_of_the_occupied_patch() {
    let (m, _) = run(None);
    let md = m.modelled.unwrap();
    assert_eq!(md.occupied_patches, 1);
    // A is 2 cells whose centres are 0.01 degree (1.11 km) apart: 1 grid cell at some of the
    // 16 origins, 2 at others (by hand).
    assert_eq!((md.figures.aoo_min_km2, md.figures.aoo_max_km2), (4.0, 8.0));
    // Modelled hull: A's rectangle lon 0..0.02, lat -0.005..0.005; its area from
    // GeographicLib PolygonArea of the 4 corners (geographiclib-rs).
    let rect =
        geodesic_polygon_area_km2(&[(0.0, -0.005), (0.02, -0.005), (0.02, 0.005), (0.0, 0.005)]);
    assert!((md.figures.eoo_hull_km2.unwrap() - rect).abs() < 1e-9 * rect);
    // 2.46 km2 < AOO 4 km2: EOO := AOO (Guidelines §4.9, from memory).
    assert!(md.figures.eoo_set_to_aoo);
    assert_eq!(md.figures.eoo_km2, Some(4.0));
    // Structure of the class-1 patches A, B, E (2 cells of about 1.24 km2 each, all below
    // the 2.5 km2 of the options).
    let s = m.structure.unwrap();
    assert_eq!((s.inside_accessible.patches, s.suitable.patches), (3, 5));
    assert_eq!(s.suitable.share_below_min, Some(1.0));
}

#[test]
fn touching_patches_are_zero_apart() {
    // With 4 neighbours two diagonal cells are two patches sharing a corner: 0 km apart.
    let g = [1u8, 0, 0, 1];
    let grid = GridSpec::lonlat(2, 2, 10.0, 45.0, 0.01);
    let model = model_of(&g, &grid, Connectivity::Four, &[(0, 0), (1, 1)]);
    assert_eq!(model.patches().len(), 2);
    let recs = [MetricRecord {
        lon: 10.005,
        lat: 44.995,
        usage: RecordUse::Used,
    }];
    let (_, cols) =
        range_metrics(&model, Path::new("r"), &recs, &MetricsOptions::default()).unwrap();
    assert_eq!(cols[0].nearest_patch_km, Some(0.0));
    assert_eq!(cols[1].nearest_occupied_km, Some(0.0));
    // Read with 8 neighbours the two cells are one patch.
    assert_eq!(
        model_of(&g, &grid, Connectivity::Eight, &[])
            .patches()
            .len(),
        1
    );
}
