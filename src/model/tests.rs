//! The model's runs against a direct labelling, and the spill path.

use super::*;
use crate::patches::label_grid;
use std::collections::BTreeMap;

/// A deterministic speckle of classes 0, 1, 2 and 255 (`w` x `h`).
fn speckle(w: usize, h: usize, seed: u64) -> Vec<u8> {
    (0..w * h)
        .map(|i| {
            let x = (i as u64 ^ seed).wrapping_mul(0x9E37_79B9_7F4A_7C15) >> 59;
            match x {
                0..=13 => 0,
                14..=23 => 1,
                24..=30 => 2,
                _ => 255,
            }
        })
        .collect()
}

fn labels_of(m: &RangeModel) -> Vec<u32> {
    let w = m.grid().width;
    let mut out = vec![0u32; w * m.grid().height];
    m.for_each_row(&mut |r, runs| {
        for run in runs {
            for c in run.start..run.end {
                out[r * w + c as usize] = run.patch;
            }
        }
        Ok(())
    })
    .unwrap();
    out
}

#[test]
fn runs_carry_the_ids_of_the_label_raster() {
    // label_grid numbers patches like scipy.ndimage.label (scan order of first cells); the
    // model's runs must carry exactly those ids, in memory and spilled to disk.
    for (w, h, wrap) in [(37, 23, false), (72, 36, true)] {
        let grid = GridSpec::lonlat(w, h, -180.0, 90.0, 360.0 / 72.0);
        let classes = speckle(w, h, w as u64);
        for conn in [Connectivity::Eight, Connectivity::Four] {
            let (want, patches) = label_grid(&classes, w, conn, wrap && w == 72);
            let grid = if w == 72 {
                grid.clone()
            } else {
                GridSpec::lonlat(w, h, 0.0, 10.0, 0.1)
            };
            let m = RangeModel::from_class_grid(&grid, conn, &classes, &BTreeMap::new()).unwrap();
            assert_eq!(labels_of(&m), want, "{w}x{h} {conn:?}");
            assert_eq!(m.patches().len(), patches.len());
            let mut b = ModelBuilder::new(
                &grid,
                conn,
                &ModelOptions {
                    budget_bytes: 24,
                    spill_dir: None,
                },
            );
            let mut areas = crate::area::CellAreas::new(&grid).unwrap();
            for r in 0..h {
                let row = &classes[r * w..(r + 1) * w];
                b.push_row(
                    r,
                    row,
                    &areas.row_allow_outside(r).unwrap(),
                    &[],
                    RowM::Whole,
                )
                .unwrap();
            }
            let spilled = b.finish(&grid, conn, Totals::default()).unwrap();
            assert!(spilled.spilled());
            assert_eq!(labels_of(&spilled), want, "spilled {w}x{h} {conn:?}");
            // M as the whole raster: the runs of data cells.
            let data: usize = classes.iter().filter(|&&k| k != 255).count();
            let m_cells: u32 = (0..h)
                .flat_map(|r| spilled.m_row(r).iter().map(|(s, e)| e - s))
                .sum();
            assert_eq!(m_cells as usize, data);
        }
    }
}

#[test]
fn true_runs_of_a_row() {
    // Derived by hand: cells in M (data and m) at 0-1, 3 and 6.
    let classes = [0u8, 1, 255, 2, 0, 255, 1];
    let in_m = [true, true, true, true, false, true, true];
    let mut out = Vec::new();
    push_true_runs(&mut out, classes.len(), |c, want| {
        crate::scan::run_end2(&classes, &in_m, c, |k, m| (m & (k != 255)) == want)
    });
    assert_eq!(out, [(0, 2), (3, 4), (6, 7)]);
}
