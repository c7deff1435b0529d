//! summary.json against its published JSON Schema (docs/summary.schema.json, generated from
//! the Rust types with schemars and validated with the jsonschema crate, JSON Schema draft
//! 2020-12), and the CLI's generated extras: completions, man page, examples in --help.

mod common;
use common::*;

fn demo_summary(dir: &std::path::Path) -> serde_json::Value {
    let out = dir.join("out");
    let o = areal()
        .args(demo_range(&[
            "--gap-km",
            "20",
            "--min-patch-km2",
            "10",
            "--out",
            out.to_str().unwrap(),
        ]))
        .output()
        .unwrap();
    assert!(o.status.success(), "demo failed: {}", stderr(&o));
    // json() validates summary.json against the committed schema.
    json(&out.join("summary.json"))
}

#[test]
fn committed_schema_is_the_generated_one() {
    let o = run(&["schema"]);
    assert!(o.status.success());
    let committed = std::fs::read_to_string(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/summary.schema.json"),
    )
    .unwrap();
    assert!(
        String::from_utf8(o.stdout).unwrap() == committed,
        "docs/summary.schema.json is stale: run `cargo run --release -- schema > docs/summary.schema.json`"
    );
    assert_eq!(committed, areal::summary_schema());
}

#[test]
fn demo_summary_is_valid_and_typed() {
    let t = tempfile::tempdir().unwrap();
    let s = demo_summary(t.path());
    // The GDAL type name, not a Rust debug string (GDALGetDataTypeName of GDT_Float32).
    assert_eq!(s["inputs"]["data_type"], "Float32");
    assert!(s["metrics"]["reach"]["reachable_patches"].is_u64());
}

#[test]
fn summaries_with_a_wrong_type_fail_validation() {
    let t = tempfile::tempdir().unwrap();
    let good = demo_summary(t.path());
    assert!(schema_errors(&good).is_empty());
    let mutations: [(&str, serde_json::Value); 5] = [
        (
            "/inputs/data_type",
            serde_json::json!({"name": "Float32", "bits": 32}),
        ),
        ("/cells/nodata", serde_json::json!("12")),
        ("/area_km2/suitable", serde_json::json!(null)),
        ("/threshold/binary_input", serde_json::json!("false")),
        ("/metrics/reach/reachable_patches", serde_json::json!(-1)),
    ];
    for (ptr, bad) in mutations {
        let mut s = good.clone();
        *s.pointer_mut(ptr).unwrap_or_else(|| panic!("{ptr} exists")) = bad;
        let errors = schema_errors(&s);
        assert!(!errors.is_empty(), "{ptr} with a wrong type validated");
        // The error is located at the key or at an enclosing optional section (`metrics`
        // is `anyOf` [object, null]).
        assert!(
            errors.iter().any(|e| {
                let at = e.rsplit(" at ").next().unwrap();
                !at.is_empty() && ptr.starts_with(at)
            }),
            "{ptr}: errors do not point to it: {errors:?}"
        );
    }
    let mut s = good.clone();
    s["threshold"].as_object_mut().unwrap().remove("value");
    assert!(!schema_errors(&s).is_empty(), "a missing key validated");
}

#[test]
fn change_summary_is_valid_and_its_contract_keys_are_checked() {
    // The demo raster as present and future: every present-range cell is stable.
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("chg");
    let s = |p: &std::path::Path| p.to_str().unwrap().to_string();
    let o = run(&[
        "change",
        "--present",
        &s(&demo("suitability.tif")),
        "--future",
        &s(&demo("suitability.tif")),
        "--records",
        &s(&demo("records.csv")),
        "--omission",
        "5",
        "--dispersal-km",
        "10",
        "--out",
        &s(&out),
        "--quiet",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    // json() validates against the committed schema.
    let good = json(&out.join("summary.json"));
    assert!(good["change"]["aoo_km2"]["future_range"]["full_dispersal"].is_f64());
    let mutations: [(&str, serde_json::Value); 4] = [
        ("/change/area_km2/stable", serde_json::json!("12.5")),
        (
            "/change/future_range_km2/limited_dispersal",
            serde_json::json!(null),
        ),
        ("/change/patches/lost", serde_json::json!(-2)),
        ("/change/aoo_km2/present_range", serde_json::json!([1.0])),
    ];
    for (ptr, bad) in mutations {
        let mut v = good.clone();
        *v.pointer_mut(ptr).unwrap_or_else(|| panic!("{ptr} exists")) = bad;
        assert!(
            !schema_errors(&v).is_empty(),
            "{ptr} with a wrong type validated"
        );
    }
    // Each contract key of issue 12 is required.
    for (section, key) in [
        ("/change", "threshold"),
        ("/change/area_km2", "present_range"),
        ("/change/area_km2", "gained_out_of_reach"),
        ("/change/future_range_km2", "full_dispersal"),
        ("/change/future_range_in_m_km2", "no_dispersal"),
        ("/change/percent_change", "limited_dispersal"),
        ("/change", "patches"),
        ("/change", "dispersal_km"),
        ("/change", "aoo_km2"),
    ] {
        let mut v = good.clone();
        v.pointer_mut(section)
            .unwrap()
            .as_object_mut()
            .unwrap()
            .remove(key);
        assert!(
            !schema_errors(&v).is_empty(),
            "{section} without {key} validated"
        );
    }
}

#[test]
fn completions_and_man_page_come_from_the_options() {
    let bash = run(&["completions", "bash"]);
    assert!(bash.status.success());
    let b = String::from_utf8(bash.stdout).unwrap();
    assert!(b.contains("complete -F") && b.contains("--suitability") && b.contains("--gap-km"));
    let zsh = String::from_utf8(run(&["completions", "zsh"]).stdout).unwrap();
    assert!(zsh.starts_with("#compdef areal"));
    let man = run(&["man"]);
    assert!(man.status.success());
    let m = String::from_utf8(man.stdout).unwrap();
    assert!(
        m.starts_with(".ie") || m.contains(".TH areal"),
        "{}",
        &m[..200.min(m.len())]
    );
    for opt in [
        "suitability",
        "omission",
        "aoo\\-cell\\-km",
        "areal\\-extent",
    ] {
        assert!(m.contains(opt), "man page lacks {opt}");
    }
    let bad = run(&["completions", "tcsh"]);
    assert_eq!(bad.status.code(), Some(2));
}

#[test]
fn help_shows_worked_examples() {
    for args in [&["--help"][..], &["range", "--help"], &["extent", "--help"]] {
        let o = run(args);
        let h = String::from_utf8(o.stdout).unwrap();
        assert!(h.contains("Examples:"), "{args:?}");
        assert!(h.contains("areal "), "{args:?}");
    }
    let h = String::from_utf8(run(&["range", "--help"]).stdout).unwrap();
    assert!(h.contains("--omission 5") && h.contains("--buffer-km 150"));
}
