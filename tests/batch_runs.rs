//! `areal batch` end to end, continued (tests/batch.rs has the fixture batch itself): manifest
//! errors, locks and the Slurm variables, and species side by side under a small GDAL block
//! cache (classes.tif bytes equal to a standalone run).

mod batch_common;
mod common;

use batch_common::*;
use common::*;

#[test]
fn bad_manifest_rows_are_all_named_and_nothing_runs() {
    let t = tempfile::tempdir().unwrap();
    let m = t.path().join("m.csv");
    std::fs::write(
        &m,
        "species,suitability,records,omission,colour\nok_one,s.tif,r.csv,5,\n",
    )
    .unwrap();
    let out = t.path().join("b");
    let o = run(&["batch", m.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(3));
    assert!(
        stderr(&o).contains("line 1: column \"colour\""),
        "{}",
        stderr(&o)
    );
    std::fs::write(
        &m,
        "species,suitability,records,omission\nok_one,s.tif,r.csv,5\nsp two,s.tif,r.csv,5\nOK_ONE,s.tif,r.csv,5\nx,,r.csv,abc\n",
    )
    .unwrap();
    let o = run(&["batch", m.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(3));
    let e = stderr(&o);
    for want in [
        "line 3: species \"sp two\" holds characters",
        "line 4: species \"OK_ONE\" is already on line 2",
        "line 5: the suitability cell is empty",
        "line 5 (x): --omission: omission = \"abc\" is not a number",
        "nothing has run",
    ] {
        assert!(e.contains(want), "{want} not in {e}");
    }
    assert!(!out.exists(), "nothing is written for a bad manifest");
}

#[test]
fn a_running_batch_locks_its_shard_and_a_stale_lock_is_taken_over() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("b");
    let state = out.join(".areal-batch");
    std::fs::create_dir_all(&state).unwrap();
    let host = std::fs::read_to_string("/proc/sys/kernel/hostname").unwrap();
    // A live owner: this test process.
    let live = format!(
        "host={} pid={} start={}\n",
        host.trim(),
        std::process::id(),
        own_start_time()
    );
    std::fs::write(state.join("lock-1of3"), &live).unwrap();
    let o = batch(&out, &["--shard", "1/3"]);
    assert_eq!(o.status.code(), Some(4));
    let e = stderr(&o);
    assert!(
        e.contains("another batch is running")
            && e.contains(&format!("pid={}", std::process::id())),
        "{e}"
    );
    // Another shard is not blocked; inside a Slurm array the shard comes from the environment.
    let o = areal()
        .args([
            "batch",
            manifest().to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--omission",
            "7",
        ])
        .env("SLURM_ARRAY_TASK_ID", "5")
        .env("SLURM_ARRAY_TASK_MIN", "3")
        .env("SLURM_ARRAY_TASK_MAX", "5")
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("shard 2/3 (from the Slurm array variables)"),
        "{}",
        stderr(&o)
    );
    let done: Vec<String> = manifest_rows()
        .iter()
        .enumerate()
        .filter(|(i, _)| out.join(&manifest_rows()[*i]["species"]).exists())
        .map(|(i, _)| i.to_string())
        .collect();
    let want: Vec<String> = (0..20)
        .filter(|i| i % 3 == 2 && *i != 19)
        .map(|i| i.to_string())
        .collect();
    assert_eq!(
        done, want,
        "rows 2, 5, ..., 17 ran (row 19 has a missing raster)"
    );
    // A lock left by a dead process is taken over.
    std::fs::write(
        state.join("lock-1of3"),
        format!("host={} pid=4194304 start=1\n", host.trim()),
    )
    .unwrap();
    let o = batch(&out, &["--shard", "1/3"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(!state.join("lock-1of3").exists());
}

#[test]
fn species_run_side_by_side_under_a_small_block_cache_keep_standalone_bytes() {
    // Two 1,200 x 1,200 species run at once in one process share GDAL's block cache; with a
    // 2 MB cache, tiles of classes.tif are evicted while the other species runs. The file must
    // still be byte-identical to a standalone run (the tile order may not depend on the cache).
    let t = tempfile::tempdir().unwrap();
    let n = 1200usize;
    let gt = [0.0, 0.01, 0.0, 12.0, 0.0, -0.01];
    let mut rows = String::from("species,suitability,records,omission\n");
    for s in 0..2 {
        let v: Vec<f32> = (0..n * n)
            .map(|i| {
                let (x, y) = ((i % n) as f32, (i / n) as f32);
                (0.5 + 0.5 * ((x * 0.013 + s as f32).sin() * (y * 0.011).cos())).clamp(0.0, 1.0)
            })
            .collect();
        write_raster(
            &t.path().join(format!("s{s}.tif")),
            n,
            n,
            gt,
            Some(4326),
            None,
            &v,
        );
        let mut csv = String::from("lon,lat\n");
        for k in 0..40 {
            csv += &format!("{},{}\n", 0.3 + 0.28 * k as f64, 11.7 - 0.27 * k as f64);
        }
        std::fs::write(t.path().join(format!("r{s}.csv")), csv).unwrap();
        rows += &format!("sp{s},s{s}.tif,r{s}.csv,10\n");
    }
    let m = t.path().join("m.csv");
    std::fs::write(&m, rows).unwrap();
    let out = t.path().join("b");
    let o = areal()
        .args([
            "batch",
            m.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--jobs",
            "2",
            "--quiet",
        ])
        .env("GDAL_CACHEMAX", "2")
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    for s in 0..2 {
        let alone = t.path().join(format!("alone{s}"));
        let o = run(&[
            "range",
            "--suitability",
            t.path().join(format!("s{s}.tif")).to_str().unwrap(),
            "--records",
            t.path().join(format!("r{s}.csv")).to_str().unwrap(),
            "--omission",
            "10",
            "--out",
            alone.to_str().unwrap(),
            "--quiet",
        ]);
        assert!(o.status.success(), "{}", stderr(&o));
        let (a, b) = (
            out.join(format!("sp{s}/classes.tif")),
            alone.join("classes.tif"),
        );
        assert_eq!(read_u8(&a).2, read_u8(&b).2, "sp{s}: pixels");
        assert!(
            same_bytes(&a, &b),
            "sp{s}: classes.tif bytes differ (tile layout)"
        );
    }
}
