//! `areal batch`, `gather`, `rerun`, `verify` end to end on the batch fixture
//! (tests/batch_fixture.sh: 20 species from generated landscapes and the demo; 12 share one
//! grid, one has a bad records file, one a missing raster).
//!
//! Independent checks: each batch species against a standalone `areal range` (byte-identical
//! outputs); richness.tif against the sum of the class-1 masks read through GDAL; the ranges of
//! batch.gpkg against the areas in batch.csv with GeographicLib's PolygonArea (Karney 2013).

mod batch_common;
mod common;
mod vectors_common;

use batch_common::*;
use common::*;

#[test]
fn batch_species_equal_standalone_runs_and_richness_is_the_sum_of_ranges() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("b");
    let o = batch(&out, &["--jobs", "2"]);
    // Two species fail, so the batch exits 6 (docs/hostile-input.md), after finishing the rest.
    assert_eq!(o.status.code(), Some(6), "{}", stderr(&o));
    let tab = table(&out);
    assert_eq!(tab.len(), 20);
    let failed: Vec<&String> = tab
        .keys()
        .filter(|k| tab[*k]["status"] == "failed")
        .collect();
    assert_eq!(failed, ["bad_records", "missing_raster"]);
    assert!(
        tab["bad_records"]["message"].contains("bad.csv")
            && tab["bad_records"]["message"].contains("not-a-number")
    );
    assert!(tab["missing_raster"]["message"]
        .contains("no-such-raster.tif: suitability raster not found"));

    // Every ok species equals a standalone run with the same options, byte for byte.
    for row in manifest_rows() {
        let sp = &row["species"];
        if tab[sp]["status"] != "ok" {
            continue;
        }
        let alone = t.path().join(format!("alone-{sp}"));
        let mut args = range_args(&row);
        args.extend(["--out".into(), alone.to_str().unwrap().into()]);
        let o = areal().args(&args).output().unwrap();
        assert!(o.status.success(), "{sp}: {}", stderr(&o));
        for f in [
            "classes.tif",
            "patches.csv",
            "records.csv",
            "summary.json",
            "areal-run.toml",
        ] {
            assert!(
                same_bytes(&out.join(sp).join(f), &alone.join(f)),
                "{sp}: {f} differs"
            );
        }
        let s = json(&alone.join("summary.json"));
        let v: f64 = tab[sp]["area_km2_inside_accessible"].parse().unwrap();
        assert_eq!(
            v,
            s["area_km2"]["inside_accessible"].as_f64().unwrap(),
            "{sp}"
        );
    }

    // richness.tif = the number of class-1 cells over the 12 species on the shared grid.
    let in_rich: Vec<&String> = tab
        .keys()
        .filter(|k| tab[*k]["in_richness"] == "yes")
        .collect();
    assert_eq!(in_rich.len(), 12);
    assert!(in_rich.iter().all(|s| s.starts_with("g1_")));
    let (w, h, _) = read_u8(&out.join(in_rich[0]).join("classes.tif"));
    let mut sum = vec![0u16; w * h];
    let mut all_nodata = vec![true; w * h];
    for sp in &in_rich {
        let (_, _, c) = read_u8(&out.join(sp).join("classes.tif"));
        for ((s, n), k) in sum.iter_mut().zip(all_nodata.iter_mut()).zip(c) {
            *s += u16::from(k == 1);
            *n &= k == 255;
        }
    }
    let ds = gdal::Dataset::open(out.join("richness.tif")).unwrap();
    let band = ds.rasterband(1).unwrap();
    assert_eq!(band.size(), (w, h));
    let r = band.read_as::<u16>((0, 0), (w, h), (w, h), None).unwrap();
    assert!(
        all_nodata.iter().any(|&n| n),
        "the sea is nodata in every species"
    );
    for i in 0..w * h {
        let want = if all_nodata[i] { 65535 } else { sum[i] };
        assert_eq!(r.data()[i], want, "cell {i}");
    }
    assert!(sum.iter().any(|&v| v >= 2), "ranges overlap somewhere");

    // batch.gpkg: one feature per species; each ok range's geodesic area (GeographicLib)
    // equals its area_km2_inside_accessible (cell areas on the ellipsoid, Snyder 1987).
    let layers = vectors_common::read_gpkg(&out.join("batch.gpkg"));
    assert_eq!(layers.len(), 1);
    assert_eq!(layers[0].name, "ranges");
    assert_eq!(layers[0].features.len(), 20);
    for f in &layers[0].features {
        let sp = &f.attrs["species"];
        if tab[sp]["status"] != "ok" {
            assert!(f.polygons.is_empty(), "{sp}");
            continue;
        }
        assert!(f.valid, "{sp}");
        if ["demo_m", "g2_s2_m", "g1_s7_m"].contains(&sp.as_str()) {
            let want: f64 = tab[sp]["area_km2_inside_accessible"].parse().unwrap();
            let got = vectors_common::area_km2_geodesic(&f.polygons);
            assert!(
                vectors_common::rel(got, want) < 1e-6,
                "{sp}: {got} vs {want}"
            );
        }
    }
}

#[test]
fn shards_then_gather_and_a_resume_equal_the_unsharded_batch() {
    let t = tempfile::tempdir().unwrap();
    let (one, sharded) = (t.path().join("one"), t.path().join("sharded"));
    assert_eq!(batch(&one, &[]).status.code(), Some(6));
    for i in 0..3 {
        let o = batch(&sharded, &["--shard", &format!("{i}/3")]);
        // A shard exits 0 when it has handled its species (failures are in batch.csv).
        assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
        assert!(
            !sharded.join("batch.csv").exists(),
            "a shard does not gather"
        );
    }
    let o = run(&["gather", sharded.to_str().unwrap(), "--quiet"]);
    assert_eq!(o.status.code(), Some(6));
    assert_eq!(table(&one), table(&sharded));
    assert!(same_bytes(
        &one.join("richness.tif"),
        &sharded.join("richness.tif")
    ));

    // Resume: nothing to redo; a deleted species folder and a changed option are redone.
    std::fs::remove_dir_all(one.join("demo_m")).unwrap();
    let m = std::fs::read_to_string(manifest()).unwrap();
    let m2 = t.path().join("m2.csv");
    std::fs::write(
        &m2,
        m.replace(
            "g2_s1_all,g2s1.tif,g2s1.occ.csv,,0.6",
            "g2_s1_all,g2s1.tif,g2s1.occ.csv,,0.65",
        ),
    )
    .unwrap();
    // Same folder, the paths in m2 relative to the fixture: copy it there under a new name.
    let m2f = fixture().join(format!("m2-{}.csv", std::process::id()));
    std::fs::copy(&m2, &m2f).unwrap();
    let o = run(&[
        "batch",
        m2f.to_str().unwrap(),
        "--out",
        one.to_str().unwrap(),
        "--omission",
        "7",
    ]);
    std::fs::remove_file(&m2f).unwrap();
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains("20 species: 2 run, 16 kept from an earlier run, 2 failed"),
        "{text}"
    );
    let after = table(&one);
    assert_eq!(after["g2_s1_all"]["threshold"], "0.65");
    let mut before = table(&sharded);
    before.remove("g2_s1_all");
    let mut after = after;
    after.remove("g2_s1_all");
    assert_eq!(before, after);
}

#[test]
fn rerun_reproduces_byte_for_byte_and_refuses_a_changed_input_and_verify_catches_edits() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("b");
    batch(&out, &["--shard", "0/3"]);
    // A batch species (shard 0 holds row 0, g1_s1_m) and the demo run.
    let demo_run = t.path().join("demo");
    let o = areal()
        .args(demo_range(&[
            "--vectors",
            "--out",
            demo_run.to_str().unwrap(),
            "--quiet",
        ]))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    for src in [out.join("g1_s1_m"), demo_run.clone()] {
        let again = t.path().join(format!(
            "again-{}",
            src.file_name().unwrap().to_string_lossy()
        ));
        let o = run(&[
            "rerun",
            src.join("areal-run.toml").to_str().unwrap(),
            "--out",
            again.to_str().unwrap(),
        ]);
        assert!(o.status.success(), "{}", stderr(&o));
        let names: Vec<_> = std::fs::read_dir(&src)
            .unwrap()
            .map(|e| e.unwrap().file_name())
            .collect();
        assert!(names.len() >= 5);
        for n in names {
            assert!(same_bytes(&src.join(&n), &again.join(&n)), "{n:?} differs");
        }
        let o = run(&["verify", again.to_str().unwrap()]);
        assert!(o.status.success(), "{}", stderr(&o));
    }
    // verify catches a changed output.
    let mut f = std::fs::read(demo_run.join("patches.csv")).unwrap();
    f[0] ^= 1;
    std::fs::write(demo_run.join("patches.csv"), f).unwrap();
    let o = run(&["verify", demo_run.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(3));
    assert!(
        stderr(&o).contains("patches.csv has changed"),
        "{}",
        stderr(&o)
    );
    // rerun refuses a changed input, naming it.
    let copy = t.path().join("in");
    std::fs::create_dir(&copy).unwrap();
    for n in ["suitability.tif", "records.csv"] {
        std::fs::copy(demo(n), copy.join(n)).unwrap();
    }
    let r1 = t.path().join("r1");
    let o = run(&[
        "range",
        "--suitability",
        copy.join("suitability.tif").to_str().unwrap(),
        "--records",
        copy.join("records.csv").to_str().unwrap(),
        "--threshold",
        "0.5",
        "--out",
        r1.to_str().unwrap(),
        "--quiet",
    ]);
    assert!(o.status.success());
    let mut rec = std::fs::read_to_string(copy.join("records.csv")).unwrap();
    rec.push_str("X-1,11.5,42.6,HumanObservation,survey team A\n");
    std::fs::write(copy.join("records.csv"), rec).unwrap();
    let o = run(&[
        "rerun",
        r1.join("areal-run.toml").to_str().unwrap(),
        "--out",
        t.path().join("r2").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(3));
    let e = stderr(&o);
    assert!(
        e.contains("records input") && e.contains("has changed since the run"),
        "{e}"
    );
    assert!(!t.path().join("r2").exists());
}
