//! The streaming pass equals a plain in-memory computation: the whole raster read at
//! once, classified, labelled by breadth-first flood fill (the textbook algorithm, the
//! same definition as scipy.ndimage.label with a 3x3 or cross structure, plus the
//! antimeridian join), measured with the closed-form cell area. Shapes are chosen so
//! that patches join only far below where they start, across the 256-row strips.
//!
//! `AREAL_EQUALITY_TIF=path` (and `AREAL_EQUALITY_RECORDS`) also runs the check on a
//! large raster: the bench script does this on the S size.

mod common;
use areal::access::AccessSpec;
use areal::patches::Connectivity;
use areal::records::RecordOptions;
use areal::{compute_range, MemorySink, RangeOptions, ThresholdSpec};
use common::*;
use gdal::Dataset;
use std::collections::VecDeque;
use std::path::Path;

struct Reference {
    classes: Vec<u8>,
    patches: Vec<(usize, u8, u64, f64)>, // first cell index, class, cells, area m2
}

/// Classify and label in memory. Cells >= t are suitable; no M (all class 1).
fn reference(path: &Path, t: f64, eight: bool) -> Reference {
    let ds = Dataset::open(path).unwrap();
    let gt = ds.geo_transform().unwrap();
    let band = ds.rasterband(1).unwrap();
    let (w, h) = band.size();
    let nd = band.no_data_value();
    let v = band
        .read_as::<f64>((0, 0), (w, h), (w, h), None)
        .unwrap()
        .data()
        .to_vec();
    let classes: Vec<u8> = v
        .iter()
        .map(|&x| {
            if !x.is_finite() || Some(x) == nd {
                255
            } else if x >= t {
                1
            } else {
                0
            }
        })
        .collect();
    let wrap = ((w as f64 * gt[1]) - 360.0).abs() < 1e-6;
    // Closed-form row areas (Snyder 1987 eq. 3-12), computed here independently.
    let e2: f64 = 0.0066943799901413165;
    let q = |phi: f64| {
        let (e, s) = (e2.sqrt(), phi.to_radians().sin());
        (1.0 - e2) * (s / (1.0 - e2 * s * s) + (e * s).atanh() / e)
    };
    let row_area: Vec<f64> = (0..h)
        .map(|r| {
            let (top, bot) = (gt[3] + r as f64 * gt[5], gt[3] + (r + 1) as f64 * gt[5]);
            6378137.0f64.powi(2) / 2.0 * gt[1].to_radians() * (q(top) - q(bot)).abs()
        })
        .collect();
    let mut seen = vec![false; w * h];
    let mut patches = Vec::new();
    for start in 0..w * h {
        let k = classes[start];
        if seen[start] || k == 0 || k == 255 {
            continue;
        }
        seen[start] = true;
        let (mut cells, mut area) = (0u64, 0f64);
        let mut queue = VecDeque::from([start]);
        while let Some(i) = queue.pop_front() {
            let (r, c) = ((i / w) as i64, (i % w) as i64);
            cells += 1;
            area += row_area[r as usize];
            for dr in -1i64..=1 {
                for dc in -1i64..=1 {
                    if (dr == 0 && dc == 0) || (!eight && dr != 0 && dc != 0) {
                        continue;
                    }
                    let (nr, mut nc) = (r + dr, c + dc);
                    if nr < 0 || nr >= h as i64 {
                        continue;
                    }
                    if wrap {
                        nc = nc.rem_euclid(w as i64);
                    } else if nc < 0 || nc >= w as i64 {
                        continue;
                    }
                    let j = nr as usize * w + nc as usize;
                    if !seen[j] && classes[j] == k {
                        seen[j] = true;
                        queue.push_back(j);
                    }
                }
            }
        }
        patches.push((start, k, cells, area));
    }
    Reference { classes, patches }
}

fn streaming(path: &Path, records: &Path, t: f64, eight: bool) -> (Vec<u8>, areal::RangeResult) {
    let (classes, res, _) = streaming_model(path, records, t, eight, None);
    (classes, res)
}

/// The pass with the range model; `budget` in bytes forces the model to spill.
fn streaming_model(
    path: &Path,
    records: &Path,
    t: f64,
    eight: bool,
    budget: Option<usize>,
) -> (Vec<u8>, areal::RangeResult, areal::RangeModel) {
    let opts = RangeOptions {
        threshold: ThresholdSpec::fixed(t).unwrap(),
        access: AccessSpec::default(),
        connectivity: if eight {
            Connectivity::Eight
        } else {
            Connectivity::Four
        },
        keep_duplicates: false,
        records: RecordOptions::default(),
        progress: Default::default(),
        vectors: None,
        metrics: Default::default(),
        report: false,
        model: areal::ModelOptions {
            budget_bytes: budget.unwrap_or(64 << 20),
            spill_dir: None,
        },
    };
    let w = Dataset::open(path).unwrap().raster_size().0;
    let mut sink = MemorySink::new(w);
    let (res, model) = compute_range(path, records, &opts, &mut sink).unwrap();
    (sink.classes, res, model)
}

/// The model's runs expanded to a label grid (0 = no patch).
fn model_labels(model: &areal::RangeModel) -> Vec<u32> {
    let (w, h) = (model.grid().width, model.grid().height);
    let mut labels = vec![0u32; w * h];
    model
        .for_each_row(&mut |r, runs| {
            for run in runs {
                for c in run.start..run.end {
                    labels[r * w + c as usize] = run.patch;
                }
            }
            Ok(())
        })
        .unwrap();
    labels
}

/// The model agrees with the class rows and the reference labelling: its runs cover exactly
/// the class-1 and class-2 cells, each with its patch's class; every patch has the reference's
/// cell count; ids follow the scan order of first cells; edge neighbours of one class share an
/// id. And a model forced to spill to disk holds the same runs.
fn assert_model(path: &Path, records: &Path, t: f64, eight: bool) {
    let want = reference(path, t, eight);
    let (classes, got, model) = streaming_model(path, records, t, eight, None);
    let labels = model_labels(&model);
    let (w, h) = (model.grid().width, model.grid().height);
    let mut cells = vec![0u64; model.patches().len()];
    let mut next_new = 1u32;
    for i in 0..w * h {
        let (k, l) = (classes[i], labels[i]);
        assert_eq!(k == 1 || k == 2, l != 0, "cell {i}: class {k}, label {l}");
        if l == 0 {
            continue;
        }
        assert_eq!(model.class_of(l), k, "cell {i}");
        cells[l as usize - 1] += 1;
        if l == next_new {
            next_new += 1;
        } else {
            assert!(
                l < next_new,
                "id {l} met before id {next_new} in scan order"
            );
        }
        let east = if i % w + 1 < w { Some(i + 1) } else { None };
        for j in east.into_iter().chain((i + w < w * h).then_some(i + w)) {
            if classes[j] == k {
                assert_eq!(labels[j], l, "neighbours {i} and {j}");
            }
        }
    }
    let want_cells: Vec<u64> = want.patches.iter().map(|p| p.2).collect();
    assert_eq!(cells, want_cells);
    assert_eq!(got.patches.len(), want.patches.len());
    let (_, _, spilled) = streaming_model(path, records, t, eight, Some(1));
    assert!(spilled.spilled() && !model.spilled());
    assert_eq!(model_labels(&spilled), labels, "spilled model differs");
}

fn assert_equal(path: &Path, records: &Path, t: f64, eight: bool) -> usize {
    let want = reference(path, t, eight);
    let (classes, got) = streaming(path, records, t, eight);
    assert!(classes == want.classes, "class rasters differ");
    let s = &got.summary;
    let count = |k: u8| want.classes.iter().filter(|&&c| c == k).count() as u64;
    assert_eq!(s.cells.unsuitable, count(0));
    assert_eq!(s.cells.inside_accessible, count(1));
    assert_eq!(s.cells.nodata, count(255));
    assert_eq!(got.patches.len(), want.patches.len(), "patch count");
    for (p, (_, k, cells, area)) in got.patches.iter().zip(&want.patches) {
        assert_eq!((p.class, p.cells), (*k, *cells), "patch {}", p.patch_id);
        // Counts are exact; areas agree to the reference's own rounding: its plain
        // q(top) - q(bottom) loses digits next to the poles (7e-10 relative on the
        // 2.5' cell touching 90 N), where areal uses an exact difference form.
        assert!(
            (p.area_km2 * 1e6 - area).abs() <= 1e-8 * area,
            "patch {} area {} vs {}",
            p.patch_id,
            p.area_km2 * 1e6,
            area
        );
    }
    got.patches.len()
}

/// A raster from a drawing: `cell(r, c) -> suitable?`, on a lon/lat grid.
fn draw(
    dir: &Path,
    name: &str,
    w: usize,
    h: usize,
    west: f64,
    cell: f64,
    f: impl Fn(usize, usize) -> bool,
) -> std::path::PathBuf {
    let v: Vec<f32> = (0..w * h)
        .map(|i| if f(i / w, i % w) { 0.9 } else { 0.1 })
        .collect();
    let p = dir.join(name);
    write_raster(
        &p,
        w,
        h,
        [west, cell, 0.0, 80.0, 0.0, -cell],
        Some(4326),
        None,
        &v,
    );
    p
}

fn one_record(dir: &Path, lon: f64, lat: f64) -> std::path::PathBuf {
    let p = dir.join("r.csv");
    std::fs::write(&p, format!("lon,lat\n{lon},{lat}\n")).unwrap();
    p
}

#[test]
fn u_shape_joining_only_at_the_bottom_across_strips() {
    // Two arms 700 rows tall (three strips), joined by the last row only.
    let t = tempfile::tempdir().unwrap();
    let p = draw(t.path(), "u.tif", 40, 700, 0.0, 0.1, |r, c| {
        c == 5 || c == 30 || (r == 699 && (5..=30).contains(&c))
    });
    let rec = one_record(t.path(), 0.55, 79.95);
    assert_eq!(assert_equal(&p, &rec, 0.5, true), 1);
    assert_eq!(assert_equal(&p, &rec, 0.5, false), 1);
    assert_model(&p, &rec, 0.5, true);
    assert_model(&p, &rec, 0.5, false);
}

#[test]
fn spiral_across_strips() {
    // A square spiral of width-1 walls, 600 x 600 cells, one corridor apart.
    let t = tempfile::tempdir().unwrap();
    let n = 600usize;
    // Walk a square spiral inwards: legs of n-1, n-1, n-1, then shrinking by 2 every two
    // legs, leaving one-cell corridors between the walls.
    let mut on = vec![false; n * n];
    let (mut r, mut c) = (0i64, 0i64);
    let dirs = [(0i64, 1i64), (1, 0), (0, -1), (-1, 0)];
    let mut len = n as i64 - 1;
    let mut leg = 0usize;
    on[0] = true;
    while len > 0 {
        let (dr, dc) = dirs[leg % 4];
        for _ in 0..len {
            r += dr;
            c += dc;
            on[r as usize * n + c as usize] = true;
        }
        if leg >= 2 && leg.is_multiple_of(2) {
            len -= 2;
        }
        leg += 1;
    }
    let spiral = move |r: usize, c: usize| on[r * n + c];
    let p = draw(t.path(), "spiral.tif", n, n, 0.0, 0.1, spiral);
    let rec = one_record(t.path(), 0.05, 79.95);
    assert_eq!(
        assert_equal(&p, &rec, 0.5, true),
        1,
        "8-connected: one spiral"
    );
    assert_eq!(
        assert_equal(&p, &rec, 0.5, false),
        1,
        "4-connected: one spiral"
    );
}

#[test]
fn comb_and_antimeridian_on_a_global_grid() {
    // A global 0.5-degree grid (720 x 360: two strips); a comb whose teeth start at the
    // top and join only in row 300, and a band crossing 180 degrees.
    let t = tempfile::tempdir().unwrap();
    let comb = |r: usize, c: usize| {
        (r < 300 && c.is_multiple_of(10) && c < 200)
            || (r == 300 && c < 200)
            || ((310..320).contains(&r) && !(5..=714).contains(&c))
    };
    let v: Vec<f32> = (0..720 * 360)
        .map(|i| if comb(i / 720, i % 720) { 0.9 } else { 0.1 })
        .collect();
    let p = t.path().join("g.tif");
    write_raster(
        &p,
        720,
        360,
        [-180.0, 0.5, 0.0, 90.0, 0.0, -0.5],
        Some(4326),
        None,
        &v,
    );
    let rec = one_record(t.path(), -179.75, 89.75);
    assert_eq!(
        assert_equal(&p, &rec, 0.5, true),
        2,
        "comb + band joined across 180"
    );
    assert_eq!(assert_equal(&p, &rec, 0.5, false), 2);
    assert_model(&p, &rec, 0.5, true);
}

#[test]
fn random_speckle_with_nodata_matches() {
    // Deterministic speckle over 300 rows (two strips) with nodata holes.
    let t = tempfile::tempdir().unwrap();
    let (w, h) = (97, 300);
    let hash = |i: usize| {
        ((i as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15) >> 40) as f64 / (1u64 << 24) as f64
    };
    let v: Vec<f32> = (0..w * h)
        .map(|i| {
            if i >= w && hash(i) < 0.05 {
                -9999.0
            } else {
                hash(i * 7 + 3) as f32
            }
        })
        .collect();
    let p = t.path().join("speckle.tif");
    write_raster(
        &p,
        w,
        h,
        [10.0, 0.01, 0.0, 60.0, 0.0, -0.01],
        Some(4326),
        Some(-9999.0),
        &v,
    );
    let rec = one_record(t.path(), 10.005, 59.995);
    for eight in [true, false] {
        assert!(assert_equal(&p, &rec, 0.8, eight) > 50);
        assert_model(&p, &rec, 0.8, eight);
    }
}

#[test]
fn large_raster_from_the_environment() {
    // Run by bench/run.sh on the S size; skipped (passes trivially) without the variables.
    let (Ok(tif), Ok(rec)) = (
        std::env::var("AREAL_EQUALITY_TIF"),
        std::env::var("AREAL_EQUALITY_RECORDS"),
    ) else {
        return;
    };
    let n = assert_equal(Path::new(&tif), Path::new(&rec), 0.5, true);
    eprintln!("{tif}: streaming equals in-memory, {n} patches");
}

#[test]
fn buffer_m_applied_in_the_workers_matches_geographiclib_per_cell() {
    // M = cells within 800 km of a record (geodesic, WGS84), applied by the decode workers.
    // Reference: GeographicLib (geographiclib-rs) Inverse from every cell centre to every
    // record, in the test. A 1-degree global grid over three strips (720 rows at 0.25 deg).
    use geographiclib_rs::{Geodesic, InverseGeodesic};
    let t = tempfile::tempdir().unwrap();
    let (w, h) = (1440usize, 720usize);
    let hash = |i: usize| {
        ((i as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15) >> 40) as f64 / (1u64 << 24) as f64
    };
    let v: Vec<f32> = (0..w * h).map(|i| hash(i) as f32).collect();
    let tif = t.path().join("g.tif");
    write_raster(
        &tif,
        w,
        h,
        [-180.0, 0.25, 0.0, 90.0, 0.0, -0.25],
        Some(4326),
        None,
        &v,
    );
    let recs = [(179.9, 10.0), (-60.0, -45.0), (20.0, 88.0)];
    let rec = t.path().join("r.csv");
    let body: String = recs.iter().map(|(x, y)| format!("{x},{y}\n")).collect();
    std::fs::write(&rec, format!("lon,lat\n{body}")).unwrap();
    let opts = RangeOptions {
        threshold: ThresholdSpec::fixed(0.5).unwrap(),
        access: AccessSpec {
            buffer_km: Some(800.0),
            ..Default::default()
        },
        connectivity: Connectivity::Eight,
        keep_duplicates: false,
        records: RecordOptions::default(),
        progress: Default::default(),
        vectors: None,
        metrics: Default::default(),
        report: false,
        model: Default::default(),
    };
    let mut sink = MemorySink::new(w);
    let (res, _model) = compute_range(&tif, &rec, &opts, &mut sink).unwrap();
    let g = Geodesic::wgs84();
    let mut in_m_cells = 0u64;
    for r in 0..h {
        let lat = 90.0 - (r as f64 + 0.5) * 0.25;
        for c in 0..w {
            let lon = -180.0 + (c as f64 + 0.5) * 0.25;
            let near = recs.iter().any(|&(x, y)| {
                let s: f64 = g.inverse(lat, lon, y, x);
                s <= 800_000.0
            });
            in_m_cells += near as u64;
            let suitable = v[r * w + c] >= 0.5;
            let want = match (suitable, near) {
                (false, _) => 0,
                (true, true) => 1,
                (true, false) => 2,
            };
            assert_eq!(sink.classes[r * w + c], want, "row {r} col {c}");
        }
    }
    assert!(in_m_cells > 1000);
    assert_eq!(
        res.summary.cells.inside_accessible,
        sink.classes.iter().filter(|&&k| k == 1).count() as u64
    );
    assert!(res.summary.area_km2.accessible > 0.0);
}
