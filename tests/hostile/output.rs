//! Hostile output folders, and inputs left untouched.

use super::common;
use super::fixture::*;
use std::fs;

#[test]
fn existing_output_folder_is_refused_without_overwrite_and_left_intact() {
    let c = Case::new();
    fs::create_dir(&c.out).unwrap();
    fs::write(c.out.join("summary.json"), "{\"old\": true}").unwrap();
    let o = c.run(&["--omission", "0"]);
    assert_clean_refusal(&o, 4, &["out: exists and is not empty", "--overwrite"]);
    assert_eq!(
        fs::read_to_string(c.out.join("summary.json")).unwrap(),
        "{\"old\": true}"
    );
    assert_no_temporaries(c.dir.path());
}

#[test]
fn overwrite_replaces_a_previous_areal_output_whole() {
    let c = Case::new();
    c.succeeded(&c.run(&["--omission", "0"]));
    fs::write(c.out.join("patches.csv"), "stale").unwrap();
    let s = c.succeeded(&c.run(&["--omission", "20", "--overwrite"]));
    assert_eq!(threshold(&s), value(6, 6));
    assert_ne!(
        fs::read_to_string(c.out.join("patches.csv")).unwrap(),
        "stale"
    );
}

#[test]
fn overwrite_refuses_a_folder_holding_files_areal_did_not_write() {
    let c = Case::new();
    fs::create_dir(&c.out).unwrap();
    fs::write(c.out.join("thesis.docx"), "precious").unwrap();
    let o = c.run(&["--omission", "0", "--overwrite"]);
    assert_clean_refusal(&o, 4, &["thesis.docx", "areal did not write"]);
    assert_eq!(
        fs::read_to_string(c.out.join("thesis.docx")).unwrap(),
        "precious"
    );
}

#[test]
fn unwritable_output_parent_is_refused_exit_4() {
    use std::os::unix::fs::PermissionsExt;
    let mut c = Case::new();
    let locked = c.path("locked");
    fs::create_dir(&locked).unwrap();
    fs::set_permissions(&locked, fs::Permissions::from_mode(0o555)).unwrap();
    // root ignores permission bits; /proc refuses new folders to everyone.
    let probe = locked.join("probe");
    c.out = if fs::create_dir(&probe).is_ok() {
        fs::remove_dir(&probe).unwrap();
        std::path::PathBuf::from("/proc/areal-hostile-out")
    } else {
        locked.join("out")
    };
    let o = c.run(&["--omission", "0"]);
    assert_clean_refusal(
        &o,
        4,
        &["cannot create a temporary folder", "is it writable?"],
    );
    assert!(!c.out.exists());
    fs::set_permissions(&locked, fs::Permissions::from_mode(0o755)).unwrap();
}

#[test]
fn output_folder_that_is_the_inputs_folder_is_refused_and_inputs_are_untouched() {
    let mut c = Case::new();
    // The records file is named like an output (records.csv) and lives in --out.
    c.out = c.dir.path().to_path_buf();
    let before = fs::read(&c.records).unwrap();
    for extra in [
        &["--omission", "0"][..],
        &["--omission", "0", "--overwrite"][..],
    ] {
        let o = c.run(extra);
        assert_clean_refusal(&o, 4, &["holds the input", "records.csv"]);
        assert_eq!(fs::read(&c.records).unwrap(), before);
    }
    let names: Vec<String> = fs::read_dir(c.dir.path())
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names.len(), 2, "only the two inputs: {names:?}");
}

#[test]
fn output_path_that_is_a_file_is_refused() {
    let mut c = Case::new();
    c.out = c.records.clone();
    let o = c.run(&["--omission", "0", "--overwrite"]);
    assert_clean_refusal(&o, 4, &["records.csv", "not a folder"]);
}

#[test]
fn inputs_are_left_byte_identical_and_no_sidecar_appears_beside_them() {
    let c = Case::new();
    let m = c.path("m.geojson");
    fs::write(
        &m,
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":
        {"type":"Polygon","coordinates":[[[-4,41],[4,41],[4,49],[-4,49],[-4,41]]]}}]}"#,
    )
    .unwrap();
    let files = [&c.suitability, &c.records, &m];
    let before: Vec<Vec<u8>> = files.iter().map(|p| fs::read(p).unwrap()).collect();
    let o = c.run(&[
        "--omission",
        "0",
        "--accessible",
        m.to_str().unwrap(),
        "--buffer-km",
        "300",
    ]);
    c.succeeded(&o);
    for (p, b) in files.iter().zip(&before) {
        assert_eq!(&fs::read(p).unwrap(), b, "{} changed", p.display());
    }
    let mut names: Vec<String> = fs::read_dir(c.dir.path())
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(
        names,
        ["m.geojson", "out", "records.csv", "suitability.tif"]
    );
}

#[test]
fn leftover_temporary_folder_of_a_killed_run_is_removed_by_the_next_run() {
    let c = Case::new();
    let stale = c.path(".out.areal-tmp-999999");
    fs::create_dir(&stale).unwrap();
    fs::write(stale.join("classes.tif"), "half").unwrap();
    c.succeeded(&c.run(&["--omission", "0"]));
    assert!(!stale.exists());
}

#[test]
fn failed_run_with_overwrite_keeps_the_previous_outputs() {
    let mut c = Case::new();
    c.succeeded(&c.run(&["--omission", "0"]));
    let before = fs::read(c.out.join("summary.json")).unwrap();
    c.records_text("bad.csv", "lon,lat\n-70,10\n");
    let o = c.run(&["--omission", "0", "--overwrite"]);
    assert_clean_refusal(&o, 3, &["bad.csv", "outside the raster"]);
    assert_eq!(fs::read(c.out.join("summary.json")).unwrap(), before);
    assert_no_temporaries(c.dir.path());
}

#[test]
fn warnings_go_to_stderr_unless_quiet() {
    let c = Case::new();
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_warned(&s, &o, "the whole raster counts as M");
    let o = c.run(&["--omission", "0", "--overwrite", "--quiet"]);
    c.succeeded(&o);
    assert!(!o.stderr.contains("areal: warning:"), "{}", o.stderr);
}

#[test]
fn closed_stdout_is_not_a_crash_and_the_outputs_are_complete() {
    use std::process::Stdio;
    let c = Case::new();
    let mut child = common::areal()
        .args([
            "range",
            "--suitability",
            c.suitability.to_str().unwrap(),
            "--records",
            c.records.to_str().unwrap(),
            "--omission",
            "0",
            "--out",
            c.out.to_str().unwrap(),
        ])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take()); // the reader goes away, as with `| head -0`
    let o = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(0), "{err}");
    assert!(
        !err.contains("panicked") && !err.contains("internal error"),
        "{err}"
    );
    assert_eq!(
        threshold(&common::json(&c.out.join("summary.json"))),
        value(5, 5)
    );
}
