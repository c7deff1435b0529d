//! Helpers of the batch tests (tests/batch.rs, tests/batch_runs.rs): the batch fixture
//! (tests/batch_fixture.sh), running a batch, reading batch.csv and the manifest.
#![allow(dead_code)]

use super::common::*;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Output;
use std::sync::OnceLock;

/// The fixture folder, made once per test binary.
pub fn fixture() -> &'static Path {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        let root = Path::new(env!("CARGO_MANIFEST_DIR"));
        let dir = root.join("target/batch-fixture");
        let st = std::process::Command::new("bash")
            .arg(root.join("tests/batch_fixture.sh"))
            .arg(&dir)
            .status()
            .expect("bash runs");
        assert!(st.success(), "tests/batch_fixture.sh failed");
        dir
    })
}

pub fn manifest() -> PathBuf {
    fixture().join("manifest.csv")
}

/// `areal batch MANIFEST --out DIR --omission 7 --quiet` plus `extra`.
pub fn batch(out: &Path, extra: &[&str]) -> Output {
    let m = manifest();
    let mut args = vec![
        "batch",
        m.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--omission",
        "7",
        "--quiet",
    ];
    args.extend_from_slice(extra);
    run(&args)
}

/// batch.csv as species -> column -> value, without the `seconds` column (wall time).
pub fn table(dir: &Path) -> BTreeMap<String, BTreeMap<String, String>> {
    let (h, rows) = read_csv(&dir.join("batch.csv"));
    rows.into_iter()
        .map(|r| {
            let m: BTreeMap<String, String> = h
                .iter()
                .cloned()
                .zip(r.iter().cloned())
                .filter(|(k, _)| k != "seconds")
                .collect();
            (r[0].clone(), m)
        })
        .collect()
}

/// The `areal range` arguments of a manifest row (batch default --omission 7).
pub fn range_args(row: &BTreeMap<String, String>) -> Vec<String> {
    let f = |k: &str| fixture().join(&row[k]).to_str().unwrap().to_string();
    let mut a = vec![
        "range".into(),
        "--suitability".into(),
        f("suitability"),
        "--records".into(),
        f("records"),
    ];
    for (k, flag) in [
        ("omission", "--omission"),
        ("threshold", "--threshold"),
        ("buffer_km", "--buffer-km"),
        ("hull_buffer_km", "--hull-buffer-km"),
        ("connectivity", "--connectivity"),
    ] {
        if !row[k].is_empty() {
            a.extend([flag.to_string(), row[k].clone()]);
        }
    }
    if row["omission"].is_empty() && row["threshold"].is_empty() {
        a.extend(["--omission".into(), "7".into()]);
    }
    if !row["accessible"].is_empty() {
        a.extend(["--accessible".into(), f("accessible")]);
    }
    if row["vectors"] == "true" {
        a.push("--vectors".into());
    }
    a.push("--quiet".into());
    a
}

pub fn manifest_rows() -> Vec<BTreeMap<String, String>> {
    let (h, rows) = read_csv(&manifest());
    rows.into_iter()
        .map(|r| h.iter().cloned().zip(r).collect())
        .collect()
}

pub fn same_bytes(a: &Path, b: &Path) -> bool {
    std::fs::read(a).unwrap() == std::fs::read(b).unwrap()
}

/// Start time of this process (field 22 of /proc/self/stat), as the lock file records it.
pub fn own_start_time() -> String {
    let s = std::fs::read_to_string("/proc/self/stat").unwrap();
    let rest = &s[s.rfind(')').unwrap() + 1..];
    rest.split_whitespace().nth(19).unwrap().to_string()
}
