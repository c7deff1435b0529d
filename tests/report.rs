//! The HTML report end to end: the page's numbers read back against summary.json,
//! `areal report DIR` against the run's own files, bad folders, `--no-report`, and the
//! colour table of classes.tif. (The map's pixels, the PNG decoded by Pillow and the page
//! in headless Chromium are checked by tests/py/check_report.py.)

mod common;
use common::*;
use std::path::{Path, PathBuf};

fn run_demo(out: &Path, extra: &[&str]) -> serde_json::Value {
    let mut args = vec![
        "range".to_string(),
        "--suitability".into(),
        demo("suitability.tif").display().to_string(),
        "--records".into(),
        demo("records.csv").display().to_string(),
        "--omission".into(),
        "5".into(),
        "--accessible".into(),
        demo("accessible.geojson").display().to_string(),
        "--out".into(),
        out.display().to_string(),
        "--quiet".into(),
    ];
    args.extend(extra.iter().map(|s| s.to_string()));
    let a: Vec<&str> = args.iter().map(String::as_str).collect();
    let o = run(&a);
    assert!(o.status.success(), "demo failed: {}", stderr(&o));
    json(&out.join("summary.json"))
}

/// Every `data-key="pointer">text<` of the page.
fn numbers(html: &str) -> Vec<(String, String)> {
    let mut out = Vec::new();
    let mut rest = html;
    while let Some(i) = rest.find("data-key=\"") {
        rest = &rest[i + 10..];
        let q = rest.find('"').unwrap();
        let key = rest[..q].to_string();
        let gt = rest.find('>').unwrap();
        let lt = rest[gt..].find('<').unwrap();
        out.push((key, rest[gt + 1..gt + lt].to_string()));
    }
    out
}

/// Text as HTML shows it (the five characters HTML escapes; WHATWG HTML, "escaping a string").
fn escaped(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

#[test]
fn every_number_on_the_page_is_the_summary_value_rounded_as_shown() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    let s = run_demo(&out, &["--gap-km", "20"]);
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    let nums = numbers(&html);
    assert!(nums.len() >= 30, "only {} numbers on the page", nums.len());
    for (key, text) in &nums {
        let want = s
            .pointer(key)
            .and_then(|v| v.as_f64())
            .unwrap_or_else(|| panic!("{key} is not a number in summary.json"));
        let shown: f64 = text
            .replace(',', "")
            .parse()
            .unwrap_or_else(|_| panic!("{key}: {text}"));
        let decimals = text.split_once('.').map_or(0, |(_, f)| f.len());
        // Half a unit of the last digit shown (plus float slack for exact values).
        let tol = 0.5 * 10f64.powi(-(decimals as i32)) + 1e-12 * want.abs();
        assert!(
            (shown - want).abs() <= tol,
            "{key}: page {text}, summary {want}"
        );
    }
    // The threshold is shown exactly, and the areas every reader looks for are there.
    let keys: Vec<&str> = nums.iter().map(|(k, _)| k.as_str()).collect();
    for k in [
        "/threshold/value",
        "/area_km2/inside_accessible",
        "/area_km2/outside_accessible",
        "/patches/inside_accessible",
        "/metrics/eoo_km2",
        "/metrics/aoo_km2",
        "/metrics/modelled/eoo_km2",
        "/metrics/reach/reachable_km2",
    ] {
        assert!(keys.contains(&k), "{k} missing from the page");
    }
    let t_shown = &nums
        .iter()
        .find(|(k, _)| k == "/threshold/value")
        .unwrap()
        .1;
    assert_eq!(
        t_shown.parse::<f64>().unwrap(),
        s["threshold"]["value"].as_f64().unwrap()
    );
    // Criterion B statements, its caution, the cautions and the command line appear verbatim.
    for st in s["metrics"]["criterion_b"]["statements"]
        .as_array()
        .unwrap()
    {
        assert!(
            html.contains(&escaped(st.as_str().unwrap())),
            "missing {st}"
        );
    }
    assert!(html.contains("Being below an area threshold is not a listing"));
    for c in s["cautions"].as_array().unwrap() {
        assert!(
            html.contains(&escaped(c.as_str().unwrap())),
            "missing caution {c}"
        );
    }
    let cmd = s["command_line"].as_array().unwrap();
    assert!(cmd.iter().any(|a| a == "--gap-km"));
    assert!(html.contains(&format!(
        "--accessible {}",
        demo("accessible.geojson").display()
    )));
    assert!(html.contains(&format!(
        "<span id=\"version\">{}</span>",
        env!("CARGO_PKG_VERSION")
    )));
    assert_self_contained(&html);
    // The inlined map is map.png, byte for byte.
    let b64 = html.split("data:image/png;base64,").nth(1).unwrap();
    let b64 = &b64[..b64.find('"').unwrap()];
    use base64::Engine as _;
    let png = base64::engine::general_purpose::STANDARD
        .decode(b64)
        .unwrap();
    assert_eq!(png, std::fs::read(out.join("map.png")).unwrap());
}

/// Nothing fetched from elsewhere: every `src`, `href` and CSS `url(` is a `data:` URL and
/// the only `http` text is SVG's namespace name (an identifier, never fetched: W3C SVG 1.1,
/// "SVG namespace").
fn assert_self_contained(html: &str) {
    for bad in [
        "<script", "<link ", "@import", "<iframe", "<object", "<embed",
    ] {
        assert!(!html.contains(bad), "the page has {bad}");
    }
    for opener in ["src=\"", "href=\"", "url("] {
        for (i, _) in html.match_indices(opener) {
            let rest = &html[i + opener.len()..];
            assert!(
                rest.starts_with("data:"),
                "{opener}{} is not inline",
                &rest[..rest.len().min(40)]
            );
        }
    }
    let without_ns = html.replace("xmlns=\"http://www.w3.org/2000/svg\"", "");
    for scheme in ["http://", "https://", "ftp://", "file:", "//fonts."] {
        assert!(!without_ns.contains(scheme), "the page names {scheme}");
    }
}

/// The characters the page shows: its text outside tags and the `<style>` element, with the
/// five references HTML escapes decoded (WHATWG HTML, "named character references").
fn shown_chars(html: &str) -> std::collections::BTreeSet<char> {
    let body = &html[html.find("</style>").unwrap()..];
    let mut text = String::new();
    for piece in body.split('<').skip(1) {
        text += &piece[piece.find('>').unwrap() + 1..];
    }
    let text = text
        .replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&apos;", "'")
        .replace("&amp;", "&");
    text.chars().filter(|c| !c.is_control()).collect()
}

/// A glyph's outline as ttf-parser reads it: every path command with its points.
#[derive(Default, PartialEq, Debug)]
struct Outline(Vec<(char, Vec<f32>)>);
impl ttf_parser::OutlineBuilder for Outline {
    fn move_to(&mut self, x: f32, y: f32) {
        self.0.push(('M', vec![x, y]));
    }
    fn line_to(&mut self, x: f32, y: f32) {
        self.0.push(('L', vec![x, y]));
    }
    fn quad_to(&mut self, x1: f32, y1: f32, x: f32, y: f32) {
        self.0.push(('Q', vec![x1, y1, x, y]));
    }
    fn curve_to(&mut self, x1: f32, y1: f32, x2: f32, y2: f32, x: f32, y: f32) {
        self.0.push(('C', vec![x1, y1, x2, y2, x, y]));
    }
    fn close(&mut self) {
        self.0.push(('Z', vec![]));
    }
}

/// The outline and advance of `c`'s glyph in `face`.
fn glyph(face: &ttf_parser::Face, c: char) -> (Outline, u16) {
    let id = face
        .glyph_index(c)
        .unwrap_or_else(|| panic!("no glyph for {c:?}"));
    let mut o = Outline::default();
    face.outline_glyph(id, &mut o);
    (o, face.glyph_hor_advance(id).unwrap())
}

#[test]
fn the_page_embeds_the_glyphs_of_its_text_from_the_shipped_font_and_all_its_text_uses_it() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    run_demo(&out, &["--gap-km", "20"]);
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert_self_contained(&html);
    // One @font-face, whose data is a subset of the shipped TTF.
    assert_eq!(html.matches("@font-face").count(), 1);
    let face = &html[html.find("@font-face{").unwrap()..];
    let face = &face[..face.find('}').unwrap()];
    let family = face
        .split("font-family:")
        .nth(1)
        .unwrap()
        .split(';')
        .next()
        .unwrap()
        .to_string();
    let b64 = face.split("base64,").nth(1).unwrap();
    let b64 = &b64[..b64.find(')').unwrap()];
    use base64::Engine as _;
    let font = base64::engine::general_purpose::STANDARD
        .decode(b64)
        .unwrap();
    let fonts = Path::new(env!("CARGO_MANIFEST_DIR")).join("assets/fonts");
    let shipped = std::fs::read(fonts.join("DejaVuSans.ttf")).unwrap();
    // A TrueType sfnt: version 0x00010000 (OpenType spec, "Organization of an OpenType
    // font"), read by ttf-parser, a parser independent of the one that wrote it.
    assert_eq!(&font[..4], &[0, 1, 0, 0]);
    let sub = ttf_parser::Face::parse(&font, 0).expect("the embedded font parses");
    let full = ttf_parser::Face::parse(&shipped, 0).unwrap();
    // Every character the page shows (the demo's are all in DejaVu Sans) has its glyph, with
    // the shipped glyph's outline and advance; the disc of the list markers too.
    let chars = shown_chars(&html);
    assert!(chars.len() > 60 && chars.contains(&'²'));
    for &c in chars.iter().chain(&['•']) {
        assert!(full.glyph_index(c).is_some(), "DejaVu Sans lacks {c:?}");
        assert_eq!(glyph(&sub, c), glyph(&full, c), "the glyph of {c:?}");
    }
    assert!(!glyph(&sub, 'g').0 .0.is_empty(), "an empty outline");
    // Only those glyphs: DejaVu Sans has thousands; its Greek and Cyrillic are left out.
    assert!(full.number_of_glyphs() > 5000);
    assert!((chars.len()..400).contains(&(sub.number_of_glyphs() as usize)));
    assert!(sub.glyph_index('Ж').is_none() && sub.glyph_index('λ').is_none());
    // The copyright and licence records stay with the copy (the Bitstream Vera terms); the
    // licence shipped beside the font holds the Bitstream Vera and Arev terms.
    let name = |id| {
        sub.names()
            .into_iter()
            .filter(|n| n.name_id == id)
            .find_map(|n| n.to_string())
            .unwrap_or_default()
    };
    assert!(name(0).contains("Bitstream") && name(13).contains("Bitstream Vera"));
    assert_eq!(name(1), "DejaVu Sans");
    let licence = std::fs::read_to_string(fonts.join("LICENSE-DejaVu.txt")).unwrap();
    assert!(licence.contains("Bitstream Vera") && licence.contains("Arev"));
    // The page: 1.2 MB with the whole font (a 760 KB TTF), now the subset's 29 KB
    // (measured on the demo, docs/report.md).
    assert!(font.len() < 40_000, "the subset is {} bytes", font.len());
    assert!(html.len() < 250_000, "report.html is {} bytes", html.len());
    // The page's text and every SVG <text> of every chart use that family.
    assert!(
        html.contains(&format!("body{{font-family:{family},")),
        "body font"
    );
    assert!(
        html.contains("pre{font-family:inherit"),
        "the command line font"
    );
    let svgs: Vec<&str> = html.split("<svg").skip(1).collect();
    assert!(svgs.len() >= 4, "{} charts", svgs.len());
    let mut texts = 0;
    for svg in &svgs {
        let svg = &svg[..svg.find("</svg>").unwrap()];
        for tag in svg.split("<text").skip(1) {
            let tag = &tag[..tag.find('>').unwrap()];
            assert!(
                tag.contains(&format!("font-family=\"{family}\"")),
                "a chart label in another font: <text{tag}>"
            );
            texts += 1;
        }
    }
    assert!(texts >= 20, "only {texts} chart labels");
    assert!(
        !html.contains("sans-serif\""),
        "a chart names the system font"
    );
}

#[test]
fn areal_report_dir_writes_the_same_files_as_the_run() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    run_demo(&out, &["--gap-km", "20"]);
    let (map, html) = (
        std::fs::read(out.join("map.png")).unwrap(),
        std::fs::read(out.join("report.html")).unwrap(),
    );
    std::fs::remove_file(out.join("map.png")).unwrap();
    std::fs::remove_file(out.join("report.html")).unwrap();
    let o = run(&["report", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        std::fs::read(out.join("map.png")).unwrap() == map,
        "map.png differs"
    );
    assert!(
        std::fs::read(out.join("report.html")).unwrap() == html,
        "report.html differs"
    );
}

#[test]
fn no_report_leaves_the_report_out_and_the_colour_table_is_the_palette() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    run_demo(&out, &["--no-report", "--no-metrics"]);
    assert!(!out.join("report.html").exists() && !out.join("map.png").exists());
    // Okabe and Ito (2008) bluish green and orange, Tol's pale grey: the published hex codes.
    let ds = gdal::Dataset::open(out.join("classes.tif")).unwrap();
    let band = ds.rasterband(1).unwrap();
    let ct = band.color_table().unwrap();
    let rgb = |i: usize| {
        let c = ct.entry_as_rgb(i).unwrap();
        (c.r, c.g, c.b, c.a)
    };
    assert_eq!(rgb(0), (0xDD, 0xDD, 0xDD, 255));
    assert_eq!(rgb(1), (0x00, 0x9E, 0x73, 255));
    assert_eq!(rgb(2), (0xE6, 0x9F, 0x00, 255));
    assert_eq!(rgb(255).3, 0);
}

#[test]
fn classes_tif_has_internal_overviews_that_keep_a_one_cell_patch() {
    // 1100 x 600 cells: level 4 (275 x 150) only (1100 / 8 < 256). Columns < 300 suitable,
    // plus one suitable cell at row 501, column 901, away from the others.
    let t = tempfile::tempdir().unwrap();
    let (w, h) = (1100usize, 600usize);
    let values: Vec<f32> = (0..w * h)
        .map(|i| {
            if (i % w) < 300 || i == 501 * w + 901 {
                0.9
            } else {
                0.1
            }
        })
        .collect();
    let tif = t.path().join("s.tif");
    write_raster(
        &tif,
        w,
        h,
        [0.0, 0.01, 0.0, 10.0, 0.0, -0.01],
        Some(4326),
        None,
        &values,
    );
    let rec = t.path().join("r.csv");
    std::fs::write(&rec, "lon,lat\n1.0,7.0\n").unwrap();
    let out = t.path().join("out");
    let o = run(&[
        "range",
        "--suitability",
        tif.to_str().unwrap(),
        "--records",
        rec.to_str().unwrap(),
        "--threshold",
        "0.5",
        "--no-metrics",
        "--no-report",
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    // Read back through GDAL: one internal overview, no external .ovr file.
    let ds = gdal::Dataset::open(out.join("classes.tif")).unwrap();
    let band = ds.rasterband(1).unwrap();
    assert_eq!(band.overview_count().unwrap(), 1);
    let ov = band.overview(0).unwrap();
    assert_eq!(ov.size(), (275, 150));
    let px = ov
        .read_as::<u8>((0, 0), (275, 150), (275, 150), None)
        .unwrap();
    let px = px.data();
    assert_eq!(px[10], 1); // the suitable columns
    assert_eq!(px[200], 0);
    // The one-cell patch is class 1 in its 4 x 4 block, and the only class-1 pixel there.
    assert_eq!(px[(501 / 4) * 275 + 901 / 4], 1);
    assert_eq!(
        px.iter()
            .enumerate()
            .filter(|(i, &k)| k == 1 && i % 275 >= 75)
            .count(),
        1
    );
    assert!(!out.join("classes.tif.ovr").exists());
}

/// Every file in `dir` with its bytes (empty when `dir` is missing).
fn contents(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let mut v: Vec<(PathBuf, Vec<u8>)> = std::fs::read_dir(dir)
        .into_iter()
        .flatten()
        .map(|d| d.unwrap().path())
        .map(|p| (p.clone(), std::fs::read(&p).unwrap_or_default()))
        .collect();
    v.sort();
    v
}

fn report_fails(dir: &Path, expect_in_message: &str) {
    let (existed, before) = (dir.exists(), contents(dir));
    let o = run(&["report", dir.to_str().unwrap()]);
    assert_eq!(dir.exists(), existed, "the folder was made or removed");
    assert!(contents(dir) == before, "a file in the folder changed");
    let e = stderr(&o);
    assert_eq!(o.status.code(), Some(3), "{e}");
    assert!(e.starts_with("areal: error: "), "{e}");
    assert!(e.contains(expect_in_message), "{e}");
    assert_eq!(e.lines().count(), 1, "{e}");
    if dir.is_dir() {
        let names: Vec<PathBuf> = std::fs::read_dir(dir)
            .unwrap()
            .map(|d| d.unwrap().path())
            .collect();
        for n in &names {
            let f = n.file_name().unwrap().to_string_lossy();
            assert!(
                f != "report.html" && f != "map.png" && !f.contains("areal-tmp"),
                "{f} was written"
            );
        }
    }
}

#[test]
fn bad_run_folders_are_refused_and_nothing_is_written() {
    let t = tempfile::tempdir().unwrap();
    report_fails(&t.path().join("nowhere"), "nowhere");
    // A folder that is not a run's.
    let stray = t.path().join("stray");
    std::fs::create_dir(&stray).unwrap();
    std::fs::write(stray.join("notes.txt"), "x").unwrap();
    report_fails(&stray, "classes.tif");
    // A run whose summary was changed by hand: one area off by one part in a million.
    let out = t.path().join("out");
    run_demo(&out, &["--no-metrics", "--no-report"]);
    let p = out.join("summary.json");
    let mut s = json(&p);
    let a = s["area_km2"]["inside_accessible"].as_f64().unwrap();
    s["area_km2"]["inside_accessible"] = serde_json::json!(a * (1.0 + 1e-6));
    std::fs::write(&p, serde_json::to_string_pretty(&s).unwrap()).unwrap();
    report_fails(&out, "area_km2.inside_accessible");
    // A changed cell count.
    let mut s = json(&p);
    s["area_km2"]["inside_accessible"] = serde_json::json!(a);
    s["cells"]["outside_accessible"] = serde_json::json!(1);
    std::fs::write(&p, serde_json::to_string_pretty(&s).unwrap()).unwrap();
    report_fails(&out, "cells.outside_accessible");
    // Not JSON at all.
    std::fs::write(&p, "{ not json").unwrap();
    report_fails(&out, "summary.json");
}
