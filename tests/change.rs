//! `areal change` end to end against the independent reference of `change_ref` (brute-force
//! GeographicLib distances, closed-form ellipsoidal cell areas, a plain labeller), hand-made
//! cases with known counts, and bad inputs.

mod change_ref;
mod common;
use change_ref::*;
use common::*;
use std::path::{Path, PathBuf};

const ND: f32 = -9999.0;

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// Run `areal change` with the given extra args; panics on failure.
fn change(dir: &Path, present: &Path, futures: &[&Path], rec: &Path, extra: &[&str]) -> PathBuf {
    let out = dir.join(format!("out{}", std::fs::read_dir(dir).unwrap().count()));
    let mut args = vec!["change", "--present", s(present), "--records", s(rec)];
    for f in futures {
        args.extend(["--future", s(f)]);
    }
    args.extend(extra);
    args.extend(["--out", s(&out), "--quiet"]);
    let o = run(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    out
}

fn records(dir: &Path, pts: &[(f64, f64)]) -> PathBuf {
    let p = dir.join("rec.csv");
    let mut t = String::from("lon,lat\n");
    for (x, y) in pts {
        t += &format!("{x},{y}\n");
    }
    std::fs::write(&p, t).unwrap();
    p
}

fn close(a: f64, b: f64, what: &str) {
    assert!(
        (a - b).abs() <= 1e-9 * b.abs().max(1e-12),
        "{what}: {a} vs reference {b}"
    );
}

/// Classes, areas, patches and summary keys of one run against the reference.
fn check_against_reference(out: &Path, g: &RefGrid, case: &RefCase, eight: bool) -> Vec<u8> {
    let want = classes(case);
    let (w, h, got) = read_u8(&out.join("change.tif"));
    assert_eq!((w, h), (g.w, g.h));
    let diff: Vec<usize> = (0..got.len()).filter(|&i| got[i] != want[i]).collect();
    assert!(
        diff.is_empty(),
        "{} cells differ, first at {} (got {}, reference {})",
        diff.len(),
        diff[0],
        got[diff[0]],
        want[diff[0]]
    );
    let j = json(&out.join("summary.json"));
    let c = &j["change"];
    let a = |k: u8| area_km2(&want, g, k, None);
    let am = |k: u8| area_km2(&want, g, k, case.in_m);
    close(c["area_km2"]["stable"].as_f64().unwrap(), a(1), "stable");
    close(c["area_km2"]["lost"].as_f64().unwrap(), a(2), "lost");
    close(
        c["area_km2"]["gained_within_reach"].as_f64().unwrap(),
        a(3),
        "within",
    );
    close(
        c["area_km2"]["gained_out_of_reach"].as_f64().unwrap(),
        a(4),
        "beyond",
    );
    let present = (0..want.len())
        .filter(|&i| {
            case.present[i] != ND
                && case.present[i] as f64 >= case.t
                && case.in_m.map_or(true, |m| m[i])
        })
        .map(|i| g.area[i])
        .sum::<f64>()
        / 1e6;
    close(
        c["area_km2"]["present_range"].as_f64().unwrap(),
        present,
        "present",
    );
    let f = &c["future_range_km2"];
    close(f["no_dispersal"].as_f64().unwrap(), a(1), "no dispersal");
    close(
        f["limited_dispersal"].as_f64().unwrap(),
        a(1) + a(3),
        "limited",
    );
    close(
        f["full_dispersal"].as_f64().unwrap(),
        a(1) + a(3) + a(4),
        "full",
    );
    let fm = &c["future_range_in_m_km2"];
    close(
        fm["limited_dispersal"].as_f64().unwrap(),
        a(1) + am(3),
        "limited in M",
    );
    close(
        fm["full_dispersal"].as_f64().unwrap(),
        a(1) + am(3) + am(4),
        "full in M",
    );
    let pc = c["percent_change"]["full_dispersal"].as_f64().unwrap();
    close(
        pc,
        100.0 * (a(1) + a(3) + a(4) - present) / present,
        "percent change",
    );
    // Patches: the reference labeller's (class, cells) list equals change.csv's.
    let (hd, rows) = read_csv(&out.join("change.csv"));
    let (ic, in_) = (col(&hd, "class"), col(&hd, "cells"));
    let mut got_p: Vec<(u8, usize)> = rows
        .iter()
        .map(|r| (r[ic].parse().unwrap(), r[in_].parse().unwrap()))
        .collect();
    got_p.sort();
    assert_eq!(got_p, patches(&want, g.w, g.h, g.wrap, eight));
    for (k, name) in [
        (1, "stable"),
        (2, "lost"),
        (3, "gained_within_reach"),
        (4, "gained_out_of_reach"),
    ] {
        let n = got_p.iter().filter(|p| p.0 == k).count();
        assert_eq!(
            c["patches"][name].as_u64().unwrap() as usize,
            n,
            "{name} patches"
        );
    }
    want
}

#[test]
fn lonlat_grid_with_buffer_m_matches_the_reference() {
    let dir = tempfile::tempdir().unwrap();
    let (w, h, cell) = (36, 28, 0.25);
    let gt = [10.0, cell, 0.0, 47.0, 0.0, -cell];
    let mut present = field(w, h, 7);
    let future = field(w, h, 8);
    present[5] = ND;
    let (pp, fp) = (dir.path().join("now.tif"), dir.path().join("later.tif"));
    write_raster(&pp, w, h, gt, Some(4326), Some(ND as f64), &present);
    write_raster(&fp, w, h, gt, Some(4326), Some(ND as f64), &future);
    let recs = [(12.1, 45.2), (14.3, 42.9), (17.6, 44.0)];
    let rec = records(dir.path(), &recs);
    let g = RefGrid::lonlat(w, h, 10.0, 47.0, cell);
    // M: cell centres within 150 km (geodesic) of a record.
    let in_m: Vec<bool> = g
        .centre
        .iter()
        .map(|&c| recs.iter().any(|&r| distance_m(c, r) <= 150_000.0))
        .collect();
    let case = RefCase {
        grid: &g,
        present: &present,
        future: &future,
        nodata: ND,
        t: 0.5,
        in_m: Some(&in_m),
        dispersal_m: Some(60_000.0),
    };
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &[
            "--threshold",
            "0.5",
            "--buffer-km",
            "150",
            "--dispersal-km",
            "60",
        ],
    );
    let want = check_against_reference(&out, &g, &case, true);
    assert!(
        want.contains(&3) && want.contains(&4) && want.contains(&2),
        "the case exercises every class"
    );
    // Rook connectivity: the same classes, the reference's 4-connected patches.
    let out4 = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &[
            "--threshold",
            "0.5",
            "--buffer-km",
            "150",
            "--dispersal-km",
            "60",
            "--connectivity",
            "4",
        ],
    );
    check_against_reference(&out4, &g, &case, false);
}

#[test]
fn projected_equal_area_grid_matches_the_reference() {
    let dir = tempfile::tempdir().unwrap();
    let (w, h, cell) = (30, 22, 5000.0);
    // EPSG:3035 (LAEA Europe): an equal-area CRS, so each cell's area is its size.
    let gt = [4_300_000.0, cell, 0.0, 3_000_000.0, 0.0, -cell];
    let mut present = field(w, h, 21);
    let mut future = field(w, h, 22);
    // A wide block with gains just north of its middle: the nearest range cells of those
    // gains lie on the block's top edge, not at its ends.
    for c in 4..26 {
        for r in 3..7 {
            present[r * w + c] = 0.9;
        }
        present[2 * w + c] = 0.1;
        present[w + c] = 0.1;
        future[2 * w + c] = 0.9;
        future[w + c] = 0.9;
    }
    let (pp, fp) = (dir.path().join("now.tif"), dir.path().join("later.tif"));
    write_raster(&pp, w, h, gt, Some(3035), Some(ND as f64), &present);
    write_raster(&fp, w, h, gt, Some(3035), Some(ND as f64), &future);
    // Cell centres to WGS84 lon/lat through GDAL/PROJ (outside the library under test).
    let mut src = gdal::spatial_ref::SpatialRef::from_epsg(3035).unwrap();
    src.set_axis_mapping_strategy(gdal::spatial_ref::AxisMappingStrategy::TraditionalGisOrder);
    let mut dst = gdal::spatial_ref::SpatialRef::from_epsg(4326).unwrap();
    dst.set_axis_mapping_strategy(gdal::spatial_ref::AxisMappingStrategy::TraditionalGisOrder);
    let ct = gdal::spatial_ref::CoordTransform::new(&src, &dst).unwrap();
    let mut xs: Vec<f64> = (0..w * h)
        .map(|i| gt[0] + ((i % w) as f64 + 0.5) * cell)
        .collect();
    let mut ys: Vec<f64> = (0..w * h)
        .map(|i| gt[3] - ((i / w) as f64 + 0.5) * cell)
        .collect();
    ct.transform_coords(&mut xs, &mut ys, &mut []).unwrap();
    let g = RefGrid {
        w,
        h,
        wrap: false,
        centre: xs.into_iter().zip(ys).collect(),
        area: vec![cell * cell; w * h],
    };
    let rec = records(dir.path(), &[g.centre[w * 10 + 12]]);
    let case = RefCase {
        grid: &g,
        present: &present,
        future: &future,
        nodata: ND,
        t: 0.55,
        in_m: None,
        dispersal_m: Some(12_000.0),
    };
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.55", "--dispersal-km", "12"],
    );
    let want = check_against_reference(&out, &g, &case, true);
    assert!(want.contains(&3) && want.contains(&4));
    assert_eq!(want[w + 15], 3, "two cells (10 km) north of the block");
}

#[test]
fn global_grid_patch_across_the_antimeridian() {
    let dir = tempfile::tempdir().unwrap();
    let (w, h, cell) = (72, 36, 5.0);
    let gt = [-180.0, cell, 0.0, 90.0, 0.0, -cell];
    let mut present = vec![0.1f32; w * h];
    let mut future = vec![0.1f32; w * h];
    // Present patch: rows 10..14, columns 70, 71, 0, 1 (across 180°). Future: the same
    // patch moved two columns east, plus a far gain at column 30 and one two cells
    // west of the patch across the seam's other side.
    for r in 10..14 {
        for c in [70, 71, 0, 1] {
            present[r * w + c] = 0.9;
            future[r * w + (c + 2) % w] = 0.9;
        }
        future[r * w + 30] = 0.9;
        future[r * w + 68] = 0.9;
    }
    // Reach only across the seam: a present cell at column 71 with a gain at column 1,
    // and one at column 0 with a gain at column 70 (10 degrees apart either way).
    for r in 25..27 {
        present[r * w + 71] = 0.9;
        future[r * w + 1] = 0.9;
    }
    for r in 30..32 {
        present[r * w] = 0.9;
        future[r * w + 70] = 0.9;
    }
    let (pp, fp) = (dir.path().join("now.tif"), dir.path().join("later.tif"));
    write_raster(&pp, w, h, gt, Some(4326), None, &present);
    write_raster(&fp, w, h, gt, Some(4326), None, &future);
    let rec = records(dir.path(), &[(179.0, 28.0)]);
    let g = RefGrid::lonlat(w, h, -180.0, 90.0, cell);
    let case = RefCase {
        grid: &g,
        present: &present,
        future: &future,
        nodata: ND,
        t: 0.5,
        in_m: None,
        dispersal_m: Some(1_000_000.0),
    };
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "1000"],
    );
    let want = check_against_reference(&out, &g, &case, true);
    // The lost cells at columns 70, 71 of rows 10..14 are one patch (the reference labeller
    // agrees above); the two seam pairs are one lost patch each.
    let j = json(&out.join("summary.json"));
    assert_eq!(j["change"]["patches"]["lost"], 3);
    assert_eq!(j["change"]["cells"]["lost"], 8 + 4);
    assert_eq!(j["change"]["cells"]["stable"], 8);
    // Column 68 is 2 cells (10°) west of the lost column 70: within 1000 km at these
    // latitudes; column 30 is far out.
    assert_eq!(want[11 * w + 68], 3);
    assert_eq!(want[11 * w + 30], 4);
    assert_eq!([want[25 * w + 1], want[30 * w + 70]], [3, 3]);
}

#[test]
fn dispersal_edge_at_one_part_in_a_thousand() {
    let dir = tempfile::tempdir().unwrap();
    let (w, h, cell) = (40, 30, 0.1);
    let gt = [5.0, cell, 0.0, 52.0, 0.0, -cell];
    let mut present = vec![0.2f32; w * h];
    for r in 14..16 {
        for c in 18..21 {
            present[r * w + c] = 0.8;
        }
    }
    let future = vec![0.8f32; w * h];
    let (pp, fp) = (dir.path().join("now.tif"), dir.path().join("later.tif"));
    write_raster(&pp, w, h, gt, Some(4326), None, &present);
    write_raster(&fp, w, h, gt, Some(4326), None, &future);
    let rec = records(dir.path(), &[(6.95, 50.55)]);
    let g = RefGrid::lonlat(w, h, 5.0, 52.0, cell);
    // The distance from cell (3, 33) to its nearest present-range cell (GeographicLib).
    let target = 3 * w + 33;
    let d = (0..w * h)
        .filter(|&i| present[i] > 0.5)
        .map(|i| distance_m(g.centre[target], g.centre[i]))
        .fold(f64::INFINITY, f64::min);
    for (factor, class) in [(1.001, 3u8), (0.999, 4u8)] {
        let dkm = format!("{}", d * factor / 1000.0);
        let out = change(
            dir.path(),
            &pp,
            &[&fp],
            &rec,
            &["--threshold", "0.5", "--dispersal-km", &dkm],
        );
        let case = RefCase {
            grid: &g,
            present: &present,
            future: &future,
            nodata: ND,
            t: 0.5,
            in_m: None,
            dispersal_m: Some(d * factor),
        };
        let want = check_against_reference(&out, &g, &case, true);
        assert_eq!(want[target], class, "reference at D x {factor}");
    }
}

/// A 20 x 16 lon/lat case whose present range is the block rows 4..10, columns 5..12.
fn block(dir: &Path, shift: usize, future_value: f32) -> (PathBuf, PathBuf, PathBuf) {
    let (w, h) = (20, 16);
    let gt = [30.0, 0.05, 0.0, -10.0, 0.0, -0.05];
    let mut present = vec![0.1f32; w * h];
    let mut future = vec![0.1f32; w * h];
    for r in 4..10 {
        for c in 5..12 {
            present[r * w + c] = 0.9;
            future[r * w + c + shift] = future_value;
        }
    }
    let (pp, fp) = (dir.join("now.tif"), dir.join(format!("later{shift}.tif")));
    write_raster(&pp, w, h, gt, Some(4326), None, &present);
    write_raster(&fp, w, h, gt, Some(4326), None, &future);
    (pp, fp, records(dir, &[(30.3, -10.3)]))
}

#[test]
fn hand_made_no_change_total_loss_shift_and_zero_distance() {
    let dir = tempfile::tempdir().unwrap();
    let cells = |out: &Path, k: &str| {
        json(&out.join("summary.json"))["change"]["cells"][k]
            .as_u64()
            .unwrap()
    };
    // No change: all 42 present cells stable, nothing lost or gained.
    let (pp, fp, rec) = block(dir.path(), 0, 0.9);
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "5"],
    );
    assert_eq!(
        [
            cells(&out, "stable"),
            cells(&out, "lost"),
            cells(&out, "gained_within_reach"),
            cells(&out, "gained_out_of_reach")
        ],
        [42, 0, 0, 0]
    );
    let j = json(&out.join("summary.json"));
    assert_eq!(
        j["change"]["percent_change"]["full_dispersal"]
            .as_f64()
            .unwrap(),
        0.0
    );
    // With the record in the one patch, the present range's AOO is the metrics' modelled AOO.
    assert_eq!(
        j["change"]["aoo_km2"]["present_range"],
        j["metrics"]["modelled"]["aoo_km2"]
    );
    assert_eq!(
        j["change"]["aoo_km2"]["future_range"]["no_dispersal"],
        j["change"]["aoo_km2"]["present_range"]
    );
    // Total loss: the future is unsuitable everywhere.
    let (pp, fp, rec) = block(dir.path(), 0, 0.1);
    let out = change(dir.path(), &pp, &[&fp], &rec, &["--threshold", "0.5"]);
    assert_eq!([cells(&out, "stable"), cells(&out, "lost")], [0, 42]);
    let j = json(&out.join("summary.json"));
    assert_eq!(
        j["change"]["percent_change"]["no_dispersal"]
            .as_f64()
            .unwrap(),
        -100.0
    );
    // Shifted by k = 3 columns: 3 columns of 6 rows lost, 3 gained, 4 x 6 stable. Gains are
    // 1 to 3 cells (about 5.5 to 16.5 km) east of the range: within 20 km.
    let (pp, fp, rec) = block(dir.path(), 3, 0.9);
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "20"],
    );
    assert_eq!(
        [
            cells(&out, "stable"),
            cells(&out, "lost"),
            cells(&out, "gained_within_reach"),
            cells(&out, "gained_out_of_reach")
        ],
        [24, 18, 18, 0]
    );
    // D = 0: no gain is within reach.
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "0"],
    );
    assert_eq!(
        [
            cells(&out, "gained_within_reach"),
            cells(&out, "gained_out_of_reach")
        ],
        [0, 18]
    );
    // No --dispersal-km: every gain is class 4, and dispersal_km is null.
    let out = change(dir.path(), &pp, &[&fp], &rec, &["--threshold", "0.5"]);
    let j = json(&out.join("summary.json"));
    assert!(j["change"]["dispersal_km"].is_null());
    assert_eq!(cells(&out, "gained_out_of_reach"), 18);
}

#[test]
fn several_futures_get_folders_and_agreement() {
    let dir = tempfile::tempdir().unwrap();
    let (pp, f0, rec) = block(dir.path(), 0, 0.9);
    let (_, f3, _) = block(dir.path(), 3, 0.9);
    let out = change(
        dir.path(),
        &pp,
        &[&f0, &f3],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "20"],
    );
    for name in ["later0", "later3"] {
        for f in ["change.tif", "change.csv", "summary.json"] {
            assert!(out.join(name).join(f).is_file(), "{name}/{f}");
        }
    }
    let (_, _, a) = read_u8(&out.join("agreement.tif"));
    let (_, _, c0) = read_u8(&out.join("later0/change.tif"));
    let (_, _, c3) = read_u8(&out.join("later3/change.tif"));
    for i in 0..a.len() {
        let n = [&c0, &c3].iter().filter(|c| c[i] == 1 || c[i] == 3).count() as u8;
        assert_eq!(a[i], n, "cell {i}");
    }
    assert_eq!(a.iter().filter(|&&v| v == 2).count(), 24);
    let j = json(&out.join("summary.json"));
    assert_eq!(j["changes"].as_array().unwrap().len(), 2);
    assert_eq!(j["changes"][1]["cells"]["lost"], 18);
    let sub = json(&out.join("later3/summary.json"));
    assert_eq!(sub["change"]["cells"]["gained_within_reach"], 18);
    // The folder with its per-future subfolders is ours: --overwrite replaces it.
    let mut args = vec![
        "change",
        "--present",
        s(&pp),
        "--future",
        s(&f3),
        "--records",
        s(&rec),
    ];
    args.extend([
        "--threshold",
        "0.5",
        "--out",
        s(&out),
        "--overwrite",
        "--quiet",
    ]);
    let o = run(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(!out.join("later3").exists() && out.join("change.tif").is_file());
}

fn refused(args: &[&str], out: &Path, needle: &[&str]) {
    let o = run(args);
    assert!(!o.status.success());
    let e = stderr(&o);
    for n in needle {
        assert!(e.contains(n), "{e:?} lacks {n:?}");
    }
    assert!(!e.contains("panicked"));
    assert!(!out.exists(), "nothing written");
}

#[test]
fn bad_inputs_are_refused_and_nothing_is_written() {
    let dir = tempfile::tempdir().unwrap();
    let (pp, fp, rec) = block(dir.path(), 0, 0.9);
    let out = dir.path().join("out");
    let base = |f: &Path, extra: &[&str]| -> Vec<String> {
        let mut v: Vec<String> = [
            "change",
            "--present",
            s(&pp),
            "--future",
            s(f),
            "--records",
            s(&rec),
            "--threshold",
            "0.5",
            "--out",
            s(&out),
        ]
        .iter()
        .map(|x| x.to_string())
        .collect();
        v.extend(extra.iter().map(|x| x.to_string()));
        v
    };
    let go = |v: Vec<String>, needle: &[&str]| {
        let a: Vec<&str> = v.iter().map(|x| x.as_str()).collect();
        refused(&a, &out, needle);
    };
    for d in ["-1", "NaN"] {
        go(base(&fp, &["--dispersal-km", d]), &["--dispersal-km"]);
    }
    let w = |name: &str, wd: usize, gt: [f64; 6], epsg: Option<u32>| {
        let p = dir.path().join(name);
        write_raster(&p, wd, 16, gt, epsg, None, &vec![0.5f32; wd * 16]);
        p
    };
    let other_size = w(
        "wide.tif",
        21,
        [30.0, 0.05, 0.0, -10.0, 0.0, -0.05],
        Some(4326),
    );
    go(base(&other_size, &[]), &["wide.tif", "now.tif", "size"]);
    let shifted = w(
        "moved.tif",
        20,
        [30.5, 0.05, 0.0, -10.0, 0.0, -0.05],
        Some(4326),
    );
    go(
        base(&shifted, &[]),
        &["moved.tif", "now.tif", "geotransform"],
    );
    let other_crs = w(
        "crs.tif",
        20,
        [30.0, 0.05, 0.0, -10.0, 0.0, -0.05],
        Some(4269),
    );
    go(base(&other_crs, &[]), &["crs.tif", "now.tif", "CRS"]);
    let no_crs = w("nocrs.tif", 20, [30.0, 0.05, 0.0, -10.0, 0.0, -0.05], None);
    go(base(&no_crs, &[]), &["nocrs.tif", "no CRS"]);
    // Two futures with one file name would share a folder.
    std::fs::create_dir(dir.path().join("b")).unwrap();
    let twin = dir.path().join("b").join("later0.tif");
    std::fs::copy(&fp, &twin).unwrap();
    go(base(&fp, &["--future", s(&twin)]), &["--future", "later0"]);
}

#[test]
fn change_tif_is_tiled_compressed_styled_with_overviews() {
    use gdal::Metadata;
    let dir = tempfile::tempdir().unwrap();
    let (w, h) = (600, 520);
    let gt = [0.0, 0.01, 0.0, 10.0, 0.0, -0.01];
    let present: Vec<f32> = (0..w * h)
        .map(|i| if i % w < 300 { 0.9 } else { 0.1 })
        .collect();
    let future: Vec<f32> = (0..w * h)
        .map(|i| {
            let c = i % w;
            if c < 200 || (300..320).contains(&c) || c > 400 {
                0.9
            } else {
                0.1
            }
        })
        .collect();
    let (pp, fp) = (dir.path().join("now.tif"), dir.path().join("later.tif"));
    write_raster(&pp, w, h, gt, Some(4326), None, &present);
    write_raster(&fp, w, h, gt, Some(4326), None, &future);
    let rec = records(dir.path(), &[(1.0, 8.0)]);
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "30", "--no-metrics"],
    );
    let ds = gdal::Dataset::open(out.join("change.tif")).unwrap();
    let band = ds.rasterband(1).unwrap();
    assert_eq!(band.block_size(), (256, 256));
    assert_eq!(
        ds.metadata_item("COMPRESSION", "IMAGE_STRUCTURE")
            .as_deref(),
        Some("DEFLATE")
    );
    assert_eq!(
        band.overview_count().unwrap(),
        1,
        "600 x 520: one 2x overview"
    );
    assert_eq!(band.no_data_value(), Some(255.0));
    let ct = band.color_table().expect("a colour table");
    let lost = ct.entry_as_rgb(2).unwrap();
    assert_eq!((lost.r, lost.g, lost.b), (186, 64, 47));
    // Category names (GDAL keeps them in the .aux.xml sidecar).
    let names = unsafe {
        let p = gdal_sys::GDALGetRasterCategoryNames(band.c_rasterband());
        let mut v = Vec::new();
        let mut i = 0;
        while !(*p.add(i)).is_null() {
            v.push(
                std::ffi::CStr::from_ptr(*p.add(i))
                    .to_string_lossy()
                    .into_owned(),
            );
            i += 1;
        }
        v
    };
    assert_eq!(names.len(), 5);
    assert!(names[1].starts_with("stable") && names[4].starts_with("gained beyond"));
    // Columns 300..320 gained 1 to 21 cells (1.1 to 23 km at 5-10 N) east of the present
    // range, within 30 km; columns 401.. more than 100 cells away.
    let (_, _, k) = read_u8(&out.join("change.tif"));
    assert_eq!(
        [k[0], k[250], k[300], k[319], k[350], k[410]],
        [1, 2, 3, 3, 0, 4]
    );
}
