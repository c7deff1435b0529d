//! Golden outputs: `patches.csv` and `summary.json` of fixed runs, compared with the files
//! committed in tests/golden/. They were written by areal before the pass produced a range
//! model (commit 8422161), so they hold the numbers that restructuring must not change.
//!
//! `patches.csv` must match byte for byte. `summary.json` must match value for value, except
//! the input paths (they name a temporary folder) and the fields listed in `CHANGED` with the
//! reason each changed. Set `AREAL_BLESS=1` to write the files anew (only when a definition
//! changes on purpose; say which in the commit).

mod common;
use common::*;
use serde_json::Value;
use std::path::{Path, PathBuf};

/// Summary fields whose definition changed on purpose since the golden files were written.
const CHANGED: &[(&str, &str)] = &[
    (
        "metrics.modelled.distinct_points",
        "the modelled hull is built from the boundary corners of the occupied patches, no longer \
         from every corner of their boundary cells (corners inside a patch cannot be hull vertices)",
    ),
    (
        "metrics.modelled.eoo_points",
        "the words describing the point set above",
    ),
    (
        "inputs.data_type",
        "GDAL's type name (\"Float32\") instead of a Rust debug string",
    ),
    (
        "metrics.general_notes",
        "the metrics' general notes were written as a second `notes` key beside the flattened \
         record figures' `notes` (a duplicate key: readers kept one); they are now `general_notes`",
    ),
    (
        "metrics.notes",
        "with the duplicate key gone, the record figures' notes are kept (the golden files hold \
         the general notes there, which won the duplicate; global-buffer's record note \
         'the points do not fit in one hemisphere' was lost)",
    ),
];

fn golden_dir(case: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/golden")
        .join(case)
}

/// A global 1-degree grid (360 x 180, wraps the antimeridian) with a smooth pattern of bumps,
/// nodata over two "seas", and records on and off the bumps. Deterministic.
fn global_fixture(dir: &Path) -> (PathBuf, PathBuf) {
    let (w, h) = (360usize, 180usize);
    let mut v = vec![0f32; w * h];
    for r in 0..h {
        let lat = 89.5 - r as f64;
        for c in 0..w {
            let lon = -179.5 + c as f64;
            let s =
                ((lon * 0.37).sin() * (lat * 0.29).cos() + (lon * 0.13 + lat * 0.21).sin()) * 0.5;
            let sea = (lon > -40.0 && lon < -20.0 && lat.abs() < 50.0)
                || (lon > 60.0 && lon < 80.0 && lat < -10.0);
            v[r * w + c] = if sea { -9999.0 } else { (0.5 + 0.5 * s) as f32 };
        }
    }
    let tif = dir.join("global.tif");
    write_raster(
        &tif,
        w,
        h,
        [-180.0, 1.0, 0.0, 90.0, 0.0, -1.0],
        Some(4326),
        Some(-9999.0),
        &v,
    );
    let mut csv = String::from("id,lon,lat\n");
    for i in 0..60 {
        let lon = -179.3 + (i as f64 * 47.3) % 359.0;
        let lat = -70.0 + (i as f64 * 23.7) % 140.0;
        csv.push_str(&format!("g{i},{lon:.4},{lat:.4}\n"));
    }
    // Records either side of the antimeridian.
    csv.push_str("e1,179.6,10.2\ne2,-179.6,10.4\n");
    let rec = dir.join("global.csv");
    std::fs::write(&rec, csv).unwrap();
    // A second record set around the antimeridian, within one hemisphere (for the hull).
    let mut near = String::from("id,lon,lat\n");
    for i in 0..30 {
        let lon = 150.0 + (i as f64 * 7.9) % 60.0;
        let lon = if lon >= 180.0 { lon - 360.0 } else { lon };
        let lat = -30.0 + (i as f64 * 13.3) % 60.0;
        near.push_str(&format!("n{i},{lon:.4},{lat:.4}\n"));
    }
    std::fs::write(dir.join("near.csv"), near).unwrap();
    (tif, rec)
}

fn cases(dir: &Path) -> Vec<(&'static str, Vec<String>)> {
    let s = |x: &str| x.to_string();
    let d = |n: &str| demo(n).to_str().unwrap().to_string();
    let (gt, gr) = global_fixture(dir);
    let near = dir.join("near.csv").to_str().unwrap().to_string();
    let (gt, gr) = (
        gt.to_str().unwrap().to_string(),
        gr.to_str().unwrap().to_string(),
    );
    vec![
        (
            "demo-polygon",
            vec![
                s("--suitability"),
                d("suitability.tif"),
                s("--records"),
                d("records.csv"),
                s("--omission"),
                s("5"),
                s("--accessible"),
                d("accessible.geojson"),
                s("--gap-km"),
                s("15"),
            ],
        ),
        (
            "demo-buffer-rook",
            vec![
                s("--suitability"),
                d("suitability.tif"),
                s("--records"),
                d("records.csv"),
                s("--omission"),
                s("10"),
                s("--buffer-km"),
                s("40"),
                s("--connectivity"),
                s("4"),
                s("--min-patch-km2"),
                s("50"),
            ],
        ),
        (
            "global-buffer",
            vec![
                s("--suitability"),
                gt.clone(),
                s("--records"),
                gr.clone(),
                s("--omission"),
                s("5"),
                s("--buffer-km"),
                s("1500"),
                s("--gap-km"),
                s("300"),
            ],
        ),
        (
            "global-hull",
            vec![
                s("--suitability"),
                gt,
                s("--records"),
                near,
                s("--threshold"),
                s("0.6"),
                s("--hull-buffer-km"),
                s("200"),
                s("--aoo-cell-km"),
                s("50"),
            ],
        ),
    ]
}

/// Fields that follow from a changed definition and may move in the last digits: the
/// modelled hull's area (relative tolerance) and its vertex count (a point lying on a hull
/// edge, to rounding, may or may not count as a vertex when the point set changes).
const NEAR: &[(&str, f64)] = &[
    ("metrics.modelled.eoo_hull_km2", 1e-12),
    ("metrics.modelled.eoo_km2", 1e-12),
    ("metrics.modelled.eoo_hull_vertices", 1.0),
];

fn at<'a>(v: &'a Value, path: &str) -> &'a Value {
    path.split('.').fold(v, |node, p| &node[p])
}

/// `None` when `got` and `want` agree on the NEAR fields, else what differs.
fn near_differences(got: &Value, want: &Value) -> Option<String> {
    let mut out = Vec::new();
    for (path, tol) in NEAR {
        let (g, w) = (at(got, path), at(want, path));
        let ok = match (g.as_f64(), w.as_f64()) {
            (Some(a), Some(b)) if *tol >= 1.0 => (a - b).abs() <= *tol,
            (Some(a), Some(b)) => (a - b).abs() <= tol * b.abs(),
            _ => g == w,
        };
        if !ok {
            out.push(format!("{path}: got {g}, want {w}"));
        }
    }
    (!out.is_empty()).then(|| out.join("; "))
}

/// Drop what names the temporary folder, and the fields whose definition changed.
fn comparable(mut v: Value) -> Value {
    for key in ["suitability", "records"] {
        v["inputs"][key] = Value::Null;
    }
    // Added for the report after these files were written (tests/report.rs covers them):
    // the command line and M's options (paths of this machine), and the sensitivity rows.
    if let Some(o) = v.as_object_mut() {
        o.remove("command_line");
        o.remove("sensitivity");
    }
    if let Some(o) = v["accessible"].as_object_mut() {
        for k in ["polygon", "buffer_km", "hull_buffer_km"] {
            o.remove(k);
        }
    }
    let near = NEAR.iter().map(|(p, _)| (*p, ""));
    for (path, _why) in CHANGED.iter().copied().chain(near) {
        let mut node = &mut v;
        let parts: Vec<&str> = path.split('.').collect();
        for p in &parts[..parts.len() - 1] {
            node = &mut node[*p];
        }
        if let Some(obj) = node.as_object_mut() {
            obj.remove(parts[parts.len() - 1]);
        }
    }
    v
}

#[test]
fn patches_and_summary_equal_the_golden_files() {
    let t = tempfile::tempdir().unwrap();
    let bless = std::env::var("AREAL_BLESS").is_ok_and(|v| v == "1");
    let mut failures = Vec::new();
    for (case, args) in cases(t.path()) {
        let out = t.path().join(case);
        let mut full: Vec<String> = vec!["range".into()];
        full.extend(args);
        full.extend([
            "--out".into(),
            out.to_str().unwrap().into(),
            "--quiet".into(),
        ]);
        let refs: Vec<&str> = full.iter().map(String::as_str).collect();
        let o = run(&refs);
        assert!(o.status.success(), "{case}: {}", stderr(&o));
        let gold = golden_dir(case);
        if bless {
            std::fs::create_dir_all(&gold).unwrap();
            std::fs::copy(out.join("patches.csv"), gold.join("patches.csv")).unwrap();
            let s = comparable(json(&out.join("summary.json")));
            std::fs::write(
                gold.join("summary.json"),
                serde_json::to_string_pretty(&s).unwrap() + "\n",
            )
            .unwrap();
            continue;
        }
        let got = std::fs::read(out.join("patches.csv")).unwrap();
        let want = std::fs::read(gold.join("patches.csv")).unwrap();
        if got != want {
            failures.push(format!(
                "{case}: patches.csv differs from {}",
                gold.display()
            ));
        }
        let (got, want) = (
            json(&out.join("summary.json")),
            json(&gold.join("summary.json")),
        );
        if let Some(d) = near_differences(&got, &want) {
            failures.push(format!("{case}: {d}"));
        }
        let (got, want) = (comparable(got), comparable(want));
        if got != want {
            failures.push(format!(
                "{case}: summary.json differs:\n got  {}\n want {}",
                serde_json::to_string(&got).unwrap(),
                serde_json::to_string(&want).unwrap()
            ));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
