//! `areal change` end to end against the independent reference of `change_ref` (brute-force
//! GeographicLib distances, closed-form ellipsoidal cell areas, a plain labeller).

mod change_ref;
mod common;
use change_ref::fixtures::*;
use change_ref::*;
use common::*;
use std::path::Path;

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
                && case.in_m.is_none_or(|m| m[i])
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
