//! Random grids against a plain breadth-first flood fill written here, independently of the
//! labeller (common practice, no source: the flood fill is the textbook definition of a
//! connected component; ids in scan order of first cells, as scipy.ndimage.label numbers them).

use super::*;
use proptest::prelude::*;
use std::collections::VecDeque;

/// Expected statistics of one patch.
#[derive(Debug)]
struct Want {
    first_cell: (usize, usize),
    class: u8,
    cells: u64,
    records: u64,
    row_min: usize,
    row_max: usize,
    area: f64,
    arc: (usize, usize),
    centroid_row: f64,
    /// Planar or circular mean, and on a circle the resultant length over the total weight.
    centroid_col: f64,
    resultant: f64,
}

struct Case {
    width: usize,
    height: usize,
    classes: Vec<u8>,
    conn: Connectivity,
    wrap: bool,
    /// Cell areas, row-major.
    areas: Vec<f64>,
    uniform_rows: Vec<bool>,
    records: Vec<(usize, usize, u64)>,
}

impl std::fmt::Debug for Case {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        writeln!(
            f,
            "{}x{} {:?} wrap={}",
            self.height, self.width, self.conn, self.wrap
        )?;
        for row in self.classes.chunks(self.width) {
            let s: String = row
                .iter()
                .map(|&c| match c {
                    0 => '.',
                    255 => 'x',
                    c => char::from(b'0' + c),
                })
                .collect();
            writeln!(f, "{s}")?;
        }
        Ok(())
    }
}

fn neighbours(case: &Case, r: usize, c: usize) -> Vec<(usize, usize)> {
    let (w, h) = (case.width as isize, case.height as isize);
    let mut out = Vec::new();
    for dr in -1isize..=1 {
        for dc in -1isize..=1 {
            if (dr, dc) == (0, 0) || (case.conn == Connectivity::Four && dr != 0 && dc != 0) {
                continue;
            }
            let (nr, mut nc) = (r as isize + dr, c as isize + dc);
            if nr < 0 || nr >= h {
                continue;
            }
            if nc < 0 || nc >= w {
                if !case.wrap {
                    continue;
                }
                nc = (nc + w) % w;
            }
            out.push((nr as usize, nc as usize));
        }
    }
    out
}

fn reference(case: &Case) -> (Vec<u32>, Vec<Want>) {
    let (w, h) = (case.width, case.height);
    let mut labels = vec![0u32; w * h];
    let mut wants = Vec::new();
    for seed in 0..w * h {
        let class = case.classes[seed];
        if class == 0 || class == 255 || labels[seed] != 0 {
            continue;
        }
        let id = wants.len() as u32 + 1;
        labels[seed] = id;
        let mut queue = VecDeque::from([(seed / w, seed % w)]);
        let mut cells = Vec::new();
        while let Some((r, c)) = queue.pop_front() {
            cells.push((r, c));
            for (nr, nc) in neighbours(case, r, c) {
                if case.classes[nr * w + nc] == class && labels[nr * w + nc] == 0 {
                    labels[nr * w + nc] = id;
                    queue.push_back((nr, nc));
                }
            }
        }
        let mut used = vec![false; w];
        let (mut area, mut mr, mut mc, mut ms, mut mcos) = (0.0, 0.0, 0.0, 0.0, 0.0);
        for &(r, c) in &cells {
            used[c] = true;
            let a = case.areas[r * w + c];
            let theta = 2.0 * std::f64::consts::PI * (c as f64 + 0.5) / w as f64;
            area += a;
            mr += a * (r as f64 + 0.5);
            mc += a * (c as f64 + 0.5);
            ms += a * theta.sin();
            mcos += a * theta.cos();
        }
        let n_used = used.iter().filter(|&&u| u).count();
        let arc = if n_used == w {
            (0, w)
        } else if case.wrap {
            // The arc starts just east of the empty column that precedes an occupied one.
            let gap = (0..w).find(|&g| !used[g] && used[(g + 1) % w]).unwrap();
            ((gap + 1) % w, n_used)
        } else {
            let lo = used.iter().position(|&u| u).unwrap();
            let hi = used.iter().rposition(|&u| u).unwrap();
            (lo, hi + 1 - lo)
        };
        let (centroid_col, resultant) = if case.wrap {
            let ang = ms.atan2(mcos);
            let col = (ang / (2.0 * std::f64::consts::PI) * w as f64 + w as f64) % w as f64;
            (col, ms.hypot(mcos) / area)
        } else {
            (mc / area, 1.0)
        };
        let records = case
            .records
            .iter()
            .filter(|&&(r, c, _)| labels[r * w + c] == id)
            .map(|t| t.2)
            .sum();
        wants.push(Want {
            first_cell: (seed / w, seed % w),
            class,
            cells: cells.len() as u64,
            records,
            row_min: cells.iter().map(|t| t.0).min().unwrap(),
            row_max: cells.iter().map(|t| t.0).max().unwrap(),
            area,
            arc,
            centroid_row: mr / area,
            centroid_col,
            resultant,
        });
    }
    (labels, wants)
}

fn case() -> impl Strategy<Value = Case> {
    (
        1usize..=40,
        1usize..=40,
        0u8..4,
        any::<bool>(),
        any::<bool>(),
    )
        .prop_flat_map(|(width, height, density, eight, wrap)| {
            let n = width * height;
            (
                prop::collection::vec(any::<u8>(), n),
                prop::collection::vec(0.5f64..2.0, n),
                prop::collection::vec(any::<bool>(), height),
                prop::collection::vec((0..height, 0..width, 1u64..5), 0..40),
            )
                .prop_map(move |(raw, mut areas, uniform_rows, records)| {
                    // Share of patch cells from 40 % up to 95 % (dense grids make long merges).
                    let t0 = 150 - 40 * u32::from(density);
                    let classes = raw
                        .iter()
                        .map(|&v| match u32::from(v) {
                            v if v < t0 => 0,
                            v if v < t0 + (256 - t0) * 5 / 10 => 1,
                            v if v < t0 + (256 - t0) * 9 / 10 => 2,
                            _ => 255,
                        })
                        .collect();
                    for (r, &u) in uniform_rows.iter().enumerate() {
                        if u {
                            let a = areas[r * width];
                            areas[r * width..(r + 1) * width].fill(a);
                        }
                    }
                    for a in &mut areas {
                        *a *= 1e6;
                    }
                    Case {
                        width,
                        height,
                        classes,
                        conn: if eight {
                            Connectivity::Eight
                        } else {
                            Connectivity::Four
                        },
                        wrap,
                        areas,
                        uniform_rows,
                        records,
                    }
                })
        })
}

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(600))]

    #[test]
    fn matches_flood_fill(case in case()) {
        let (w, h) = (case.width, case.height);
        let (want_labels, wants) = reference(&case);

        let mut lab = PatchLabeler::new(w, case.conn, case.wrap);
        // Memory bound: slots never exceed the runs of two consecutive rows.
        let runs = |r: usize| {
            let row = &case.classes[r * w..(r + 1) * w];
            (0..w).filter(|&c| row[c] != 0 && row[c] != 255 && (c == 0 || row[c - 1] != row[c])).count()
        };
        let mut bound = 0;
        for r in 0..h {
            bound = bound.max(runs(r) + if r > 0 { runs(r - 1) } else { 0 });
            let row_areas = &case.areas[r * w..(r + 1) * w];
            let areas = if case.uniform_rows[r] {
                RowAreas::Uniform(row_areas[0])
            } else {
                RowAreas::PerCell(row_areas.to_vec())
            };
            let rec: Vec<(usize, u64)> =
                case.records.iter().filter(|t| t.0 == r).map(|t| (t.1, t.2)).collect();
            lab.push_row(r, &case.classes[r * w..(r + 1) * w], &areas, &rec);
            prop_assert!(lab.label_slots() <= bound, "{} slots, bound {}", lab.label_slots(), bound);
        }
        let got = lab.finish();
        prop_assert_eq!(got.len(), wants.len());
        for (i, (p, q)) in got.iter().zip(&wants).enumerate() {
            prop_assert_eq!(p.id as usize, i + 1);
            prop_assert_eq!(
                (p.first_cell, p.class, p.cells, p.records, p.row_min, p.row_max),
                (q.first_cell, q.class, q.cells, q.records, q.row_min, q.row_max)
            );
            prop_assert_eq!((p.col_start, p.col_len), q.arc, "patch {}", p.id);
            prop_assert!(close(p.area_m2, q.area, 1e-9 * q.area), "patch {} area", p.id);
            prop_assert!(close(p.centroid_row, q.centroid_row, 1e-9 * h as f64));
            if !case.wrap {
                prop_assert!(close(p.centroid_col, q.centroid_col, 1e-9 * w as f64));
            } else if q.resultant > 1e-6 {
                prop_assert!((0.0..w as f64).contains(&p.centroid_col));
                let d = (p.centroid_col - q.centroid_col).rem_euclid(w as f64);
                prop_assert!(d.min(w as f64 - d) < 1e-7, "patch {}: {} vs {}", p.id, p.centroid_col, q.centroid_col);
            } else if q.resultant < 1e-12 {
                prop_assert!(p.centroid_col.is_nan());
            }
        }

        let (labels, patches) = label_grid(&case.classes, w, case.conn, case.wrap);
        prop_assert_eq!(labels, want_labels);
        prop_assert_eq!(patches.len(), wants.len());
    }
}
