//! The report of `areal change`: change-map.png decoded independently (GDAL's PNG driver,
//! libpng) must show, pixel for pixel, the colours of change.tif's own colour table for the
//! classes change.tif holds; report.html carries the areas under each rule with their
//! summary.json pointers.

mod change_ref;
mod common;
use change_ref::fixtures::*;
use common::*;
use gdal::Dataset;

#[test]
fn change_map_shows_change_tif_colours_and_the_page_the_rules() {
    let dir = tempfile::tempdir().unwrap();
    // Shifted by 3 columns: stable, lost and gained cells (gains within 6 km, others beyond).
    let (pp, fp, rec) = block(dir.path(), 3, 0.9);
    let out = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--dispersal-km", "6"],
    );
    let (w, h, cls) = read_u8(&out.join("change.tif"));
    let ds = Dataset::open(out.join("change.tif")).unwrap();
    let rb = ds.rasterband(1).unwrap();
    let table = rb.color_table().unwrap();
    let colour_of = |k: u8| {
        let e = table.entry_as_rgb(k as usize).unwrap();
        [e.r as u8, e.g as u8, e.b as u8]
    };
    let png = Dataset::open(out.join("change-map.png")).unwrap();
    let (pw, ph) = png.raster_size();
    assert_eq!(pw % w, 0);
    let s = pw / w;
    assert_eq!((pw, ph), (w * s, h * s), "one block of pixels per cell");
    let band = |b: usize| -> Vec<u8> {
        png.rasterband(b)
            .unwrap()
            .read_as::<u8>((0, 0), (pw, ph), (pw, ph), None)
            .unwrap()
            .data()
            .to_vec()
    };
    let (r, g, b) = (band(1), band(2), band(3));
    let mut seen = std::collections::BTreeSet::new();
    for y in 0..ph {
        for x in 0..pw {
            let i = y * pw + x;
            let k = cls[(y / s) * w + x / s];
            assert_eq!(
                [r[i], g[i], b[i]],
                colour_of(k),
                "pixel {x},{y} (class {k})"
            );
            seen.insert(k);
        }
    }
    // The case holds unsuitable, stable, lost and both kinds of gain.
    assert_eq!(seen.into_iter().collect::<Vec<_>>(), vec![0, 1, 2, 3, 4]);
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    let j = json(&out.join("summary.json"));
    for k in ["no_dispersal", "limited_dispersal", "full_dispersal"] {
        for part in [
            "future_range_km2",
            "future_range_in_m_km2",
            "percent_change",
        ] {
            let ptr = format!("/change/{part}/{k}");
            assert!(j.pointer(&ptr).is_some());
            assert!(
                html.contains(&format!("data-key=\"{ptr}\"")),
                "{ptr} not shown"
            );
        }
    }
    assert!(html.contains("class=\"change-map\" src=\"data:image/png;base64,"));
    // The present run's own report is there too, and --no-report leaves every report file out.
    assert!(out.join("map.png").exists() && html.contains("id=\"map\""));
    let quiet = change(
        dir.path(),
        &pp,
        &[&fp],
        &rec,
        &["--threshold", "0.5", "--no-report"],
    );
    for f in ["report.html", "map.png", "change-map.png"] {
        assert!(!quiet.join(f).exists(), "{f} written with --no-report");
    }
}
