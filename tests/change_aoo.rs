//! The modelled AOO of the present and future ranges of `areal change` against an independent
//! count: the centres of the range cells of classes.tif and change.tif projected with PROJ
//! (through GDAL's OGRCoordinateTransformation) into the LAEA that summary.json names, and the
//! distinct grid cells counted with a hash set for each of the 16 documented origins (x and y
//! offsets of 0, 1/4, 1/2 and 3/4 of a cell; the minimum is reported).

mod change_ref;
mod common;
use change_ref::field;
use change_ref::fixtures::*;
use common::*;
use gdal::spatial_ref::{AxisMappingStrategy, CoordTransform, SpatialRef};
use std::collections::HashSet;
use std::path::Path;

/// Smallest occupied-cell count over the 16 origins of the cells' centres in `keep`.
fn reference_min_cells(
    out: &Path,
    gt: [f64; 6],
    crs: &str,
    cell_m: f64,
    keep: impl Fn(usize) -> bool,
    n: usize,
    w: usize,
) -> usize {
    let mut src = SpatialRef::from_epsg(4326).unwrap();
    src.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let mut dst = SpatialRef::from_proj4(crs).unwrap();
    dst.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let ct = CoordTransform::new(&src, &dst).unwrap();
    let (mut xs, mut ys) = (Vec::new(), Vec::new());
    for i in (0..n).filter(|&i| keep(i)) {
        let (r, c) = (i / w, i % w);
        xs.push(gt[0] + (c as f64 + 0.5) * gt[1]);
        ys.push(gt[3] + (r as f64 + 0.5) * gt[5]);
    }
    assert!(!xs.is_empty(), "{}: empty range", out.display());
    ct.transform_coords(&mut xs, &mut ys, &mut []).unwrap();
    let mut best = usize::MAX;
    for k in 0..4 {
        for l in 0..4 {
            let (ox, oy) = (k as f64 * cell_m / 4.0, l as f64 * cell_m / 4.0);
            let cells: HashSet<(i64, i64)> = xs
                .iter()
                .zip(&ys)
                .map(|(x, y)| {
                    (
                        ((x - ox) / cell_m).floor() as i64,
                        ((y - oy) / cell_m).floor() as i64,
                    )
                })
                .collect();
            best = best.min(cells.len());
        }
    }
    best
}

/// Run a case and compare the present range and the three future ranges with the reference.
/// Records on the `n` most suitable present cells.
fn fix_records(dir: &Path, gt: [f64; 6], w: usize, now: &[f32], n: usize) -> std::path::PathBuf {
    let mut idx: Vec<usize> = (0..now.len()).collect();
    idx.sort_by(|&a, &b| now[b].total_cmp(&now[a]));
    let pts: Vec<(f64, f64)> = idx[..n]
        .iter()
        .map(|&i| {
            let (r, c) = (i / w, i % w);
            (
                gt[0] + (c as f64 + 0.5) * gt[1],
                gt[3] + (r as f64 + 0.5) * gt[5],
            )
        })
        .collect();
    records(dir, &pts)
}

fn check(
    dir: &Path,
    w: usize,
    h: usize,
    gt: [f64; 6],
    seed: u64,
    cell_km: &str,
) -> serde_json::Value {
    let (pp, fp) = (dir.join("now.tif"), dir.join("later.tif"));
    let now = field(w, h, seed);
    write_raster(&pp, w, h, gt, Some(4326), None, &now);
    // The future: the present moved 3 columns east, blended with another field, so some of
    // the range stays, some is lost and some is gained.
    let other = field(w, h, seed + 1);
    let later: Vec<f32> = (0..w * h)
        .map(|i| 0.7 * now[i - i % w + (i % w + w - 3) % w] + 0.3 * other[i])
        .collect();
    write_raster(&fp, w, h, gt, Some(4326), None, &later);
    let rec = fix_records(dir, gt, w, &now, 5);
    let out = change(
        dir,
        &pp,
        &[&fp],
        &rec,
        &[
            "--threshold",
            "0.5",
            "--dispersal-km",
            "300",
            "--aoo-cell-km",
            cell_km,
        ],
    );
    let j = json(&out.join("summary.json"));
    let crs = j["metrics"]["aoo_grid"]["crs"]
        .as_str()
        .unwrap()
        .to_string();
    let cell_m = cell_km.parse::<f64>().unwrap() * 1000.0;
    let cell_km2 = (cell_m / 1000.0).powi(2);
    let (_, _, present) = read_u8(&out.join("classes.tif"));
    let (_, _, chg) = read_u8(&out.join("change.tif"));
    let refc = |keep: &dyn Fn(usize) -> bool| {
        reference_min_cells(&out, gt, &crs, cell_m, keep, w * h, w) as f64 * cell_km2
    };
    let aoo = &j["change"]["aoo_km2"];
    let got = |v: &serde_json::Value| v.as_f64().unwrap();
    assert_eq!(got(&aoo["present_range"]), refc(&|i| present[i] == 1));
    let f = &aoo["future_range"];
    assert_eq!(got(&f["no_dispersal"]), refc(&|i| chg[i] == 1));
    assert_eq!(
        got(&f["limited_dispersal"]),
        refc(&|i| chg[i] == 1 || chg[i] == 3)
    );
    assert_eq!(
        got(&f["full_dispersal"]),
        refc(&|i| matches!(chg[i], 1 | 3 | 4))
    );
    for k in ["stable", "lost", "gained_within_reach"] {
        assert!(j["change"]["cells"][k].as_u64().unwrap() > 0, "no {k} cell");
    }
    j
}

#[test]
fn range_aoo_matches_proj_and_a_hash_set_regional() {
    // 0.005 degree cells (about 0.5 km): several centres share a 2 km cell.
    let dir = tempfile::tempdir().unwrap();
    let gt = [10.0, 0.005, 0.0, 46.0, 0.0, -0.005];
    check(dir.path(), 240, 180, gt, 11, "2");
}

#[test]
fn range_aoo_matches_proj_and_a_hash_set_global() {
    // A 360-degree grid of 2 degree cells, 100 km AOO cells: the ranges span the globe, up to
    // the far side of the LAEA centre.
    let dir = tempfile::tempdir().unwrap();
    let gt = [-180.0, 2.0, 0.0, 90.0, 0.0, -2.0];
    let j = check(dir.path(), 180, 90, gt, 5, "100");
    // Gains beyond 300 km too, so the three rules differ.
    assert!(
        j["change"]["cells"]["gained_out_of_reach"]
            .as_u64()
            .unwrap()
            > 0
    );
}
