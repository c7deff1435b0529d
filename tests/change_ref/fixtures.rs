//! Driving `areal change` from the tests: file helpers and the hand-made block case.
#![allow(dead_code)]

use crate::common::*;
use std::path::{Path, PathBuf};

pub const ND: f32 = -9999.0;

pub fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// Run `areal change` with the given extra args; panics on failure.
pub fn change(
    dir: &Path,
    present: &Path,
    futures: &[&Path],
    rec: &Path,
    extra: &[&str],
) -> PathBuf {
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

pub fn records(dir: &Path, pts: &[(f64, f64)]) -> PathBuf {
    let p = dir.join("rec.csv");
    let mut t = String::from("lon,lat\n");
    for (x, y) in pts {
        t += &format!("{x},{y}\n");
    }
    std::fs::write(&p, t).unwrap();
    p
}

/// A 20 x 16 lon/lat case whose present range is the block rows 4..10, columns 5..12.
pub fn block(dir: &Path, shift: usize, future_value: f32) -> (PathBuf, PathBuf, PathBuf) {
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
