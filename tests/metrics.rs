//! End to end: the `metrics` section of summary.json, the metric columns of patches.csv and
//! `areal extent`, on a projected (EPSG:3035, LAEA Europe) raster of two square patches.

mod common;
use common::*;
use std::path::{Path, PathBuf};

/// The keys other tools rely on (the contract).
const CONTRACT: [&str; 7] = [
    "eoo_km2",
    "eoo_method",
    "aoo_km2",
    "aoo_min_km2",
    "aoo_max_km2",
    "aoo_cell_km",
    "records_used",
];

const X0: f64 = 4_000_000.0;
const Y0: f64 = 3_000_000.0;

/// 40 x 20 cells of 1 km in EPSG:3035: patch P cols 2..9, rows 2..9 (7 x 7 km) with three
/// records, patch Q cols 15..18, rows 2..5, so the gap between them is 6 km on the grid.
fn fixture(dir: &Path) -> (PathBuf, PathBuf) {
    let (w, h) = (40, 20);
    let mut v = vec![0.1f32; w * h];
    for r in 2..9 {
        for c in 2..9 {
            v[r * w + c] = 0.9;
        }
    }
    for r in 2..5 {
        for c in 15..18 {
            v[r * w + c] = 0.8;
        }
    }
    let tif = dir.join("s.tif");
    write_raster(
        &tif,
        w,
        h,
        [X0, 1000.0, 0.0, Y0, 0.0, -1000.0],
        Some(3035),
        None,
        &v,
    );
    let rec = dir.join("r.csv");
    let pts: Vec<String> = [(2.5, 2.5), (8.5, 2.5), (2.5, 8.5)]
        .iter()
        .map(|(c, r)| format!("{},{}", X0 + c * 1000.0, Y0 - r * 1000.0))
        .collect();
    std::fs::write(&rec, format!("x,y\n{}\n", pts.join("\n"))).unwrap();
    (tif, rec)
}

fn range(dir: &Path, extra: &[&str]) -> PathBuf {
    let (tif, rec) = fixture(dir);
    let out = dir.join("out");
    let mut args = vec![
        "range",
        "--suitability",
        tif.to_str().unwrap(),
        "--records",
        rec.to_str().unwrap(),
        "--records-crs",
        "EPSG:3035",
        "--threshold",
        "0.5",
        "--out",
        out.to_str().unwrap(),
        "--overwrite",
    ];
    args.extend_from_slice(extra);
    let o = run(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    out
}

#[test]
fn range_writes_metrics_and_patch_columns() {
    let dir = tempfile::tempdir().unwrap();
    let out = range(dir.path(), &["--gap-km", "6.1", "--min-patch-km2", "20"]);
    let s = json(&out.join("summary.json"));
    let m = &s["metrics"];
    for k in CONTRACT {
        assert!(!m[k].is_null(), "metrics.{k} missing: {m}");
    }
    assert_eq!(m["records_used"], 3);
    assert_eq!(m["aoo_cell_km"], 2.0);
    // Three records far apart (> 2 km): 3 cells of 4 km2 at every origin (by hand).
    assert_eq!(
        (m["aoo_min_km2"].as_f64(), m["aoo_max_km2"].as_f64()),
        (Some(12.0), Some(12.0))
    );
    // Three points: the hull is a triangle of about 18 km2 on the grid (legs 6 and 6 km,
    // by hand; EPSG:3035 is equal-area, so the geodesic triangle differs only by edge shape).
    let hull = m["eoo_hull_km2"].as_f64().unwrap();
    assert!((hull - 18.0).abs() < 0.05, "{hull}");
    assert_eq!(m["eoo_km2"].as_f64(), Some(hull)); // 18 > 12: no EOO := AOO
                                                   // Modelled: the occupied patch P is 7 x 7 km of 1 km cells, its hull the square, 49 km2
                                                   // (by hand; equal-area CRS), its AOO 16 or more 2 km cells.
    let md = &m["modelled"];
    assert!(
        (md["eoo_hull_km2"].as_f64().unwrap() - 49.0).abs() < 0.05,
        "{md}"
    );
    assert!(md["aoo_min_km2"].as_f64().unwrap() >= 64.0);
    // Structure with --min-patch-km2 20: Q (9 km2) is small, 9 / 58 of the area (by hand).
    let st = &m["structure"]["inside_accessible"];
    assert_eq!(st["patches"], 2);
    assert!(
        (st["share_below_min"].as_f64().unwrap() - 9.0 / 58.0).abs() < 1e-3,
        "{st}"
    );
    let (h, rows) = read_csv(&out.join("patches.csv"));
    assert_eq!(
        h[h.len() - 4..],
        [
            "nearest_patch_km",
            "nearest_occupied_km",
            "reachable",
            "reach_jumps"
        ]
    );
    // The 6 km gap on the grid is a 6 km geodesic to within the LAEA's distance distortion
    // this close to its centre (about 1e-3, by hand); 6.1 km jumps reach Q.
    let gap: f64 = rows[1][col(&h, "nearest_patch_km")].parse().unwrap();
    assert!((gap - 6.0).abs() < 0.02, "{gap}");
    assert_eq!(rows[1][col(&h, "reachable")], "TRUE");
    assert_eq!(rows[1][col(&h, "reach_jumps")], "1");
    // 5.9 km jumps do not.
    let out = range(dir.path(), &["--gap-km", "5.9"]);
    let (h, rows) = read_csv(&out.join("patches.csv"));
    assert_eq!(rows[1][col(&h, "reachable")], "FALSE");
    assert_eq!(rows[1][col(&h, "reach_jumps")], "");
}

#[test]
fn extent_agrees_with_range_and_no_metrics_turns_them_off() {
    let dir = tempfile::tempdir().unwrap();
    let out = range(dir.path(), &[]);
    let s = json(&out.join("summary.json"));
    let rec = dir.path().join("r.csv");
    let classes = out.join("classes.tif");
    let o = run(&[
        "extent",
        "--records",
        rec.to_str().unwrap(),
        "--records-crs",
        "EPSG:3035",
        "--range",
        classes.to_str().unwrap(),
        "--json",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let e: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    for k in CONTRACT {
        assert_eq!(e[k], s["metrics"][k], "{k}");
    }
    assert_eq!(e["modelled"], s["metrics"]["modelled"]);
    // Records alone: the same record figures.
    let o = run(&[
        "extent",
        "--records",
        rec.to_str().unwrap(),
        "--records-crs",
        "EPSG:3035",
        "--json",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let e: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(e["eoo_km2"], s["metrics"]["eoo_km2"]);
    assert!(e["modelled"].is_null());
    let out = range(dir.path(), &["--no-metrics"]);
    assert!(json(&out.join("summary.json"))["metrics"].is_null());
}

#[test]
fn bad_metric_options_exit_2_and_name_the_option() {
    let dir = tempfile::tempdir().unwrap();
    let (_, rec) = fixture(dir.path());
    for (opt, val) in [
        ("--aoo-cell-km", "0"),
        ("--gap-km", "-1"),
        ("--min-patch-km2", "nan"),
    ] {
        let o = run(&[
            "extent",
            "--records",
            rec.to_str().unwrap(),
            "--records-crs",
            "EPSG:3035",
            opt,
            val,
        ]);
        assert_eq!(o.status.code(), Some(2), "{opt}");
        assert!(stderr(&o).contains(opt), "{}", stderr(&o));
    }
    let o = run(&[
        "extent",
        "--records",
        rec.to_str().unwrap(),
        "--range",
        "/nonexistent/classes.tif",
    ]);
    assert_eq!(o.status.code(), Some(3));
    assert!(
        stderr(&o).contains("/nonexistent/classes.tif"),
        "{}",
        stderr(&o)
    );
}
