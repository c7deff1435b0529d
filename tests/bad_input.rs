//! Bad input exits non-zero with a message naming the file or option, and leaves no output.

mod common;
use common::*;
use std::path::Path;

fn demo_args(out: &str) -> Vec<String> {
    vec![
        "range".into(),
        "--suitability".into(),
        demo("suitability.tif").display().to_string(),
        "--records".into(),
        demo("records.csv").display().to_string(),
        "--out".into(),
        out.into(),
    ]
}

fn fails_with(args: &[String], code: i32, needle: &str, out: &Path) {
    let o = areal().args(args).output().unwrap();
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(code), "stderr: {err}");
    assert!(err.contains(needle), "expected {needle:?} in: {err}");
    assert!(!err.contains("panicked"), "{err}");
    assert!(
        !out.exists() || std::fs::read_dir(out).unwrap().next().is_none(),
        "no output left behind"
    );
    let parent = out.parent().unwrap();
    let leftovers: Vec<_> = std::fs::read_dir(parent)
        .unwrap()
        .flatten()
        .filter(|e| e.file_name().to_string_lossy().contains("areal-tmp"))
        .collect();
    assert!(
        leftovers.is_empty(),
        "temporary folders left: {leftovers:?}"
    );
}

#[test]
fn raster_without_crs_names_the_file() {
    let t = tempfile::tempdir().unwrap();
    let tif = t.path().join("nocrs.tif");
    write_raster(
        &tif,
        4,
        4,
        [0.0, 1.0, 0.0, 4.0, 0.0, -1.0],
        None,
        None,
        &[0.5; 16],
    );
    let out = t.path().join("out");
    let mut a = demo_args(out.to_str().unwrap());
    a[2] = tif.display().to_string();
    a.extend(["--omission".into(), "5".into()]);
    fails_with(&a, 3, "nocrs.tif: raster has no CRS", &out);
}

#[test]
fn omission_out_of_range_names_the_option() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    for e in ["-1", "100", "250"] {
        let mut a = demo_args(out.to_str().unwrap());
        a.extend(["--omission".into(), e.into()]);
        fails_with(&a, 2, "--omission", &out);
    }
}

#[test]
fn both_rules_or_none_is_a_usage_error() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    let mut a = demo_args(out.to_str().unwrap());
    a.extend([
        "--omission".into(),
        "5".into(),
        "--threshold".into(),
        "0.3".into(),
    ]);
    fails_with(&a, 2, "--threshold", &out);
    let a = demo_args(out.to_str().unwrap());
    fails_with(&a, 2, "--omission", &out);
}

#[test]
fn unknown_columns_name_the_options() {
    let t = tempfile::tempdir().unwrap();
    let rec = t.path().join("r.csv");
    std::fs::write(&rec, "easting,northing\n11,42\n").unwrap();
    let out = t.path().join("out");
    let mut a = demo_args(out.to_str().unwrap());
    a[4] = rec.display().to_string();
    a.extend(["--omission".into(), "5".into()]);
    fails_with(&a, 3, "--lon-col", &out);
}

#[test]
fn records_all_outside_the_raster() {
    let t = tempfile::tempdir().unwrap();
    let rec = t.path().join("far.csv");
    std::fs::write(&rec, "lon,lat\n-70,10\n-71,11\n").unwrap();
    let out = t.path().join("out");
    let mut a = demo_args(out.to_str().unwrap());
    a[4] = rec.display().to_string();
    a.extend(["--omission".into(), "5".into()]);
    fails_with(&a, 3, "2 outside the raster", &out);
}

#[test]
fn missing_input_file_is_named() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    let mut a = demo_args(out.to_str().unwrap());
    a[2] = t.path().join("nope.tif").display().to_string();
    a.extend(["--omission".into(), "5".into()]);
    fails_with(&a, 3, "nope.tif: suitability raster not found", &out);
}

#[test]
fn existing_output_needs_overwrite_and_is_kept() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    std::fs::create_dir(&out).unwrap();
    std::fs::write(out.join("summary.json"), "{\"old\": true}").unwrap();
    let mut a = demo_args(out.to_str().unwrap());
    a.extend(["--omission".into(), "5".into()]);
    let o = areal().args(&a).output().unwrap();
    assert_eq!(o.status.code(), Some(4));
    assert!(stderr(&o).contains("--overwrite"), "{}", stderr(&o));
    assert_eq!(
        std::fs::read_to_string(out.join("summary.json")).unwrap(),
        "{\"old\": true}"
    );
    a.push("--overwrite".into());
    let o = areal().args(&a).output().unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(json(&out.join("summary.json"))["threshold"]["value"].is_number());
}
