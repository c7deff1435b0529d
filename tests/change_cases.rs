//! `areal change` end to end: hand-made cases with known counts, several futures, the layout
//! of change.tif, and bad inputs.

mod change_ref;
mod common;
use change_ref::fixtures::*;
use common::*;
use std::path::Path;

#[test]
fn hand_made_no_change_total_loss_shift_and_zero_distance() {
    let dir = tempfile::tempdir().unwrap();
    let cells = |out: &Path, k: &str| {
        json(&out.join("summary.json"))["change"]["cells"][k]
            .as_u64()
            .unwrap()
    };
    // No change: all 42 present cells stable, nothing lost or gained.
    let (pp, fp, rec) = block(dir.path(), 0, 0.9);
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "5"],
    );
    assert_eq!(
        [
            cells(&out, "stable"),
            cells(&out, "lost"),
            cells(&out, "gained_within_reach"),
            cells(&out, "gained_out_of_reach")
        ],
        [42, 0, 0, 0]
    );
    let j = json(&out.join("summary.json"));
    assert_eq!(
        j["change"]["percent_change"]["full_dispersal"]
            .as_f64()
            .unwrap(),
        0.0
    );
    // With the record in the one patch, the present range's AOO is the metrics' modelled AOO.
    assert_eq!(
        j["change"]["aoo_km2"]["present_range"],
        j["metrics"]["modelled"]["aoo_km2"]
    );
    assert_eq!(
        j["change"]["aoo_km2"]["future_range"]["no_dispersal"],
        j["change"]["aoo_km2"]["present_range"]
    );
    // Total loss: the future is unsuitable everywhere.
    let (pp, fp, rec) = block(dir.path(), 0, 0.1);
    let out = change(dir.path(), &pp, &[&fp], &rec, &["--threshold", "0.5"]);
    assert_eq!([cells(&out, "stable"), cells(&out, "lost")], [0, 42]);
    let j = json(&out.join("summary.json"));
    assert_eq!(
        j["change"]["percent_change"]["no_dispersal"]
            .as_f64()
            .unwrap(),
        -100.0
    );
    // Shifted by k = 3 columns: 3 columns of 6 rows lost, 3 gained, 4 x 6 stable. Gains are
    // 1 to 3 cells (about 5.5 to 16.5 km) east of the range: within 20 km.
    let (pp, fp, rec) = block(dir.path(), 3, 0.9);
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "20"],
    );
    assert_eq!(
        [
            cells(&out, "stable"),
            cells(&out, "lost"),
            cells(&out, "gained_within_reach"),
            cells(&out, "gained_out_of_reach")
        ],
        [24, 18, 18, 0]
    );
    // D = 0: no gain is within reach.
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "0"],
    );
    assert_eq!(
        [
            cells(&out, "gained_within_reach"),
            cells(&out, "gained_out_of_reach")
        ],
        [0, 18]
    );
    // No --dispersal-km: every gain is class 4, and dispersal_km is null.
    let out = change(dir.path(), &pp, &[&fp], &rec, &["--threshold", "0.5"]);
    let j = json(&out.join("summary.json"));
    assert!(j["change"]["dispersal_km"].is_null());
    assert_eq!(cells(&out, "gained_out_of_reach"), 18);
}

#[test]
fn several_futures_get_folders_and_agreement() {
    let dir = tempfile::tempdir().unwrap();
    let (pp, f0, rec) = block(dir.path(), 0, 0.9);
    let (_, f3, _) = block(dir.path(), 3, 0.9);
    let out = change(
        dir.path(),
        &pp,
        &[&f0, &f3],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "20"],
    );
    for name in ["later0", "later3"] {
        for f in ["change.tif", "change.csv", "summary.json"] {
            assert!(out.join(name).join(f).is_file(), "{name}/{f}");
        }
    }
    let (_, _, a) = read_u8(&out.join("agreement.tif"));
    let (_, _, c0) = read_u8(&out.join("later0/change.tif"));
    let (_, _, c3) = read_u8(&out.join("later3/change.tif"));
    for i in 0..a.len() {
        let n = [&c0, &c3].iter().filter(|c| c[i] == 1 || c[i] == 3).count() as u8;
        assert_eq!(a[i], n, "cell {i}");
    }
    assert_eq!(a.iter().filter(|&&v| v == 2).count(), 24);
    let j = json(&out.join("summary.json"));
    assert_eq!(j["changes"].as_array().unwrap().len(), 2);
    assert_eq!(j["changes"][1]["cells"]["lost"], 18);
    let sub = json(&out.join("later3/summary.json"));
    assert_eq!(sub["change"]["cells"]["gained_within_reach"], 18);
    // The folder with its per-future subfolders is ours: --overwrite replaces it.
    let mut args = vec![
        "change",
        "--present",
        s(&pp),
        "--future",
        s(&f3),
        "--records",
        s(&rec),
    ];
    args.extend([
        "--threshold",
        "0.5",
        "--out",
        s(&out),
        "--overwrite",
        "--quiet",
    ]);
    let o = run(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(!out.join("later3").exists() && out.join("change.tif").is_file());
}

fn refused(args: &[&str], out: &Path, needle: &[&str]) {
    let o = run(args);
    assert!(!o.status.success());
    let e = stderr(&o);
    for n in needle {
        assert!(e.contains(n), "{e:?} lacks {n:?}");
    }
    assert!(!e.contains("panicked"));
    assert!(!out.exists(), "nothing written");
}

#[test]
fn bad_inputs_are_refused_and_nothing_is_written() {
    let dir = tempfile::tempdir().unwrap();
    let (pp, fp, rec) = block(dir.path(), 0, 0.9);
    let out = dir.path().join("out");
    let base = |f: &Path, extra: &[&str]| -> Vec<String> {
        let mut v: Vec<String> = [
            "change",
            "--present",
            s(&pp),
            "--future",
            s(f),
            "--records",
            s(&rec),
            "--threshold",
            "0.5",
            "--out",
            s(&out),
        ]
        .iter()
        .map(|x| x.to_string())
        .collect();
        v.extend(extra.iter().map(|x| x.to_string()));
        v
    };
    let go = |v: Vec<String>, needle: &[&str]| {
        let a: Vec<&str> = v.iter().map(|x| x.as_str()).collect();
        refused(&a, &out, needle);
    };
    for d in ["-1", "NaN"] {
        go(base(&fp, &["--dispersal-km", d]), &["--dispersal-km"]);
    }
    let w = |name: &str, wd: usize, gt: [f64; 6], epsg: Option<u32>| {
        let p = dir.path().join(name);
        write_raster(&p, wd, 16, gt, epsg, None, &vec![0.5f32; wd * 16]);
        p
    };
    let other_size = w(
        "wide.tif",
        21,
        [30.0, 0.05, 0.0, -10.0, 0.0, -0.05],
        Some(4326),
    );
    go(base(&other_size, &[]), &["wide.tif", "now.tif", "size"]);
    let shifted = w(
        "moved.tif",
        20,
        [30.5, 0.05, 0.0, -10.0, 0.0, -0.05],
        Some(4326),
    );
    go(
        base(&shifted, &[]),
        &["moved.tif", "now.tif", "geotransform"],
    );
    let other_crs = w(
        "crs.tif",
        20,
        [30.0, 0.05, 0.0, -10.0, 0.0, -0.05],
        Some(4269),
    );
    go(base(&other_crs, &[]), &["crs.tif", "now.tif", "CRS"]);
    let no_crs = w("nocrs.tif", 20, [30.0, 0.05, 0.0, -10.0, 0.0, -0.05], None);
    go(base(&no_crs, &[]), &["nocrs.tif", "no CRS"]);
    // Two futures with one file name would share a folder.
    std::fs::create_dir(dir.path().join("b")).unwrap();
    let twin = dir.path().join("b").join("later0.tif");
    std::fs::copy(&fp, &twin).unwrap();
    go(base(&fp, &["--future", s(&twin)]), &["--future", "later0"]);
}

#[test]
fn change_tif_is_tiled_compressed_styled_with_overviews() {
    use gdal::Metadata;
    let dir = tempfile::tempdir().unwrap();
    let (w, h) = (600, 520);
    let gt = [0.0, 0.01, 0.0, 10.0, 0.0, -0.01];
    let present: Vec<f32> = (0..w * h)
        .map(|i| if i % w < 300 { 0.9 } else { 0.1 })
        .collect();
    let future: Vec<f32> = (0..w * h)
        .map(|i| {
            let c = i % w;
            if c < 200 || (300..320).contains(&c) || c > 400 {
                0.9
            } else {
                0.1
            }
        })
        .collect();
    let (pp, fp) = (dir.path().join("now.tif"), dir.path().join("later.tif"));
    write_raster(&pp, w, h, gt, Some(4326), None, &present);
    write_raster(&fp, w, h, gt, Some(4326), None, &future);
    let rec = records(dir.path(), &[(1.0, 8.0)]);
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "30", "--no-metrics"],
    );
    let ds = gdal::Dataset::open(out.join("change.tif")).unwrap();
    let band = ds.rasterband(1).unwrap();
    assert_eq!(band.block_size(), (256, 256));
    assert_eq!(
        ds.metadata_item("COMPRESSION", "IMAGE_STRUCTURE")
            .as_deref(),
        Some("ZSTD")
    );
    assert_eq!(
        band.overview_count().unwrap(),
        1,
        "600 x 520: one 2x overview"
    );
    assert_eq!(band.no_data_value(), Some(255.0));
    let ct = band.color_table().expect("a colour table");
    let lost = ct.entry_as_rgb(2).unwrap();
    assert_eq!((lost.r, lost.g, lost.b), (186, 64, 47));
    // Category names (GDAL keeps them in the .aux.xml sidecar).
    let names = unsafe {
        let p = gdal_sys::GDALGetRasterCategoryNames(band.c_rasterband());
        let mut v = Vec::new();
        let mut i = 0;
        while !(*p.add(i)).is_null() {
            v.push(
                std::ffi::CStr::from_ptr(*p.add(i))
                    .to_string_lossy()
                    .into_owned(),
            );
            i += 1;
        }
        v
    };
    assert_eq!(names.len(), 5);
    assert!(names[1].starts_with("stable") && names[4].starts_with("gained beyond"));
    // Columns 300..320 gained 1 to 21 cells (1.1 to 23 km at 5-10 N) east of the present
    // range, within 30 km; columns 401.. more than 100 cells away.
    let (_, _, k) = read_u8(&out.join("change.tif"));
    assert_eq!(
        [k[0], k[250], k[300], k[319], k[350], k[410]],
        [1, 2, 3, 3, 0, 4]
    );
}
