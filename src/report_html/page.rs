//! `report.html`: one self-contained page (no network, no external files): the map as a
//! base64 PNG, the charts as inline SVG, and the figures of summary.json as a table. Each
//! number cell carries `data-key`, the JSON pointer of the summary value it shows.

use super::charts::{self, Sensitivity};
use super::draw::MapPng;
use super::image::ClassImage;
use super::{fmt_num, palette, text, ReportData};
use crate::Result;
use base64::Engine as _;
use serde_json::Value;

/// HTML-escape text.
pub fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// A command line argument quoted for a POSIX shell when it needs it.
fn shell_quote(a: &str) -> String {
    if !a.is_empty()
        && a.chars()
            .all(|c| c.is_ascii_alphanumeric() || "-_./=:,+@%".contains(c))
    {
        a.to_string()
    } else {
        format!("'{}'", a.replace('\'', "'\\''"))
    }
}

struct Table {
    html: String,
}

impl Table {
    fn new() -> Self {
        Table {
            html: String::from("<table class=\"figures\">\n"),
        }
    }
    fn head(&mut self, t: &str) {
        self.html += &format!("<tr><th colspan=\"2\">{}</th></tr>\n", escape(t));
    }
    fn text(&mut self, label: &str, v: &str) {
        self.html += &format!(
            "<tr><td>{}</td><td>{}</td></tr>\n",
            escape(label),
            escape(v)
        );
    }
    /// A number from the summary at `pointer`, with `decimals` (None: exact).
    fn num(&mut self, s: &Value, label: &str, pointer: &str, decimals: Option<usize>, unit: &str) {
        let Some(v) = s.pointer(pointer).and_then(Value::as_f64) else {
            return;
        };
        let shown = match decimals {
            Some(d) => fmt_num(v, d),
            None => format!("{v}"),
        };
        self.html += &format!(
            "<tr><td>{}</td><td><span class=\"num\" data-key=\"{}\">{}</span>{}</td></tr>\n",
            escape(label),
            escape(pointer),
            shown,
            if unit.is_empty() {
                String::new()
            } else {
                format!(" {unit}")
            }
        );
    }
}

/// The whole page.
pub fn page(data: &ReportData, map: &MapPng, image: &ClassImage, title: &str) -> Result<String> {
    let s = &data.summary;
    let str_at = |p: &str| {
        s.pointer(p)
            .and_then(Value::as_str)
            .unwrap_or("")
            .to_string()
    };
    let version = str_at("/areal_version");
    let t = s
        .pointer("/threshold/value")
        .and_then(Value::as_f64)
        .unwrap_or(f64::NAN);
    // The body first: the embedded font holds only the characters of its text.
    let mut h = String::from("<body>\n");
    h += &format!("<h1>{}</h1>\n", escape(title));
    h += "<p class=\"caution\">Model-based estimates: every area below inherits the errors of the suitability model, the records, the threshold and the accessible area M. E is chosen before looking at the results. Any threat assessment belongs to the responsible authority and its reviewers.</p>\n";
    // Map.
    let b64 = base64::engine::general_purpose::STANDARD.encode(&map.png);
    let w = image.window;
    h += "<h2>Map</h2>\n";
    // Where the map's parts are, for checks from outside: the class panel, the window of the
    // grid it shows, the scale bar (km, PNG pixels) and the graticule step (degrees).
    let (bar_km, bar_px) = map.scale_bar.unwrap_or((f64::NAN, f64::NAN));
    h += &format!(
        "<img id=\"map\" src=\"data:image/png;base64,{b64}\" alt=\"map of the range classes, M and the records\" \
         data-panel=\"{},{},{},{}\" data-scale=\"{}\" data-window=\"{},{},{},{},{}\" data-scalebar=\"{bar_km},{bar_px}\" data-graticule=\"{}\">\n",
        map.panel[0], map.panel[1], map.panel[2], map.panel[3], map.scale, w.col0, w.row0, w.cols, w.rows, w.factor,
        map.graticule_step.unwrap_or(f64::NAN)
    );
    h += &format!(
        "<p class=\"note\">Each map pixel shows blocks of {f} x {f} raster cells; a block shows the highest of: suitable inside M, suitable beyond M, below threshold, no data, so a patch of one cell stays visible. \
         Colours: {} (the colour table of classes.tif). Dots: records used; crosses: records dropped by the threshold; squares: records excluded (on nodata). The scale bar is true along the horizontal through the map's centre.</p>\n",
        escape(palette::SOURCE),
        f = w.factor
    );
    // Charts.
    let records = charts::records_chart(&data.records, t);
    if let Some(svg) = records {
        h += "<h2>Record suitability and the threshold</h2>\n";
        h += &svg;
        h += "\n<p class=\"note\">The suitability of each record's cell, sorted; the line is the threshold T. Records below it are dropped by the threshold.</p>\n";
    }
    let sens: Vec<Sensitivity> = s["sensitivity"]
        .as_array()
        .map(|a| {
            a.iter()
                .filter_map(|r| {
                    Some(Sensitivity {
                        e: r["omission_percent"].as_f64()?,
                        suitable: r["area_km2_suitable"].as_f64()?,
                        inside: r["area_km2_inside_accessible"].as_f64()?,
                    })
                })
                .collect()
        })
        .unwrap_or_default();
    h += "<h2>Sensitivity of the area to E (not a way to choose E)</h2>\n";
    let chosen = s
        .pointer("/threshold/omission_percent")
        .and_then(Value::as_f64);
    match charts::sensitivity_chart(&sens, chosen) {
        Some(svg) => {
            h += &svg;
            h += "\n<p class=\"caution\">Sensitivity only: how the area would change with other values of E. E must be fixed before looking at the results, from what is known of the records' quality; choosing E from this chart defeats the purpose of an omission rule.</p>\n";
        }
        None => h += "<p class=\"note\">No sensitivity rows in summary.json (a fixed threshold or a binary input has no E to vary).</p>\n",
    }
    if let Some(svg) = charts::patch_chart(&data.patches) {
        h += "<h2>Patch sizes</h2>\n";
        h += &svg;
        h += "\n<p class=\"note\">Number of patches by true area (bins of half a decade), inside M (class 1) and beyond M (class 2).</p>\n";
    }
    if let Some(svg) = charts::reach_chart(&data.patches) {
        h += "<h2>Reach (--gap-km)</h2>\n";
        h += &svg;
        h += "\n<p class=\"note\">Patches by the fewest jumps of at most the gap that reach them from the occupied patches; the last group is not reached.</p>\n";
    }
    h += &figures(s);
    // Warnings, cautions, command line.
    h += "<h2>Warnings</h2>\n<ul>\n";
    let warnings = s["warnings"].as_array().cloned().unwrap_or_default();
    if warnings.is_empty() {
        h += "<li>none</li>\n";
    }
    for wv in warnings {
        h += &format!("<li>{}</li>\n", escape(wv.as_str().unwrap_or("")));
    }
    h += "</ul>\n<h2>Cautions</h2>\n<ul>\n";
    for c in s["cautions"].as_array().cloned().unwrap_or_default() {
        h += &format!("<li>{}</li>\n", escape(c.as_str().unwrap_or("")));
    }
    h += "</ul>\n<h2>How this was made</h2>\n";
    let cmd: Vec<String> = s["command_line"]
        .as_array()
        .map(|a| {
            a.iter()
                .filter_map(|x| x.as_str())
                .map(shell_quote)
                .collect()
        })
        .unwrap_or_default();
    if cmd.is_empty() {
        h += "<p class=\"note\">The command line was not recorded.</p>\n";
    } else {
        h += &format!(
            "<pre id=\"command-line\">{}</pre>\n",
            escape(&cmd.join(" "))
        );
    }
    h += &format!(
        "<p class=\"note\">areal <span id=\"version\">{}</span>. Text in DejaVu Sans (Bitstream Vera licence; shipped with areal, its glyphs for this page's text embedded in it). Colours: {}.</p>\n",
        escape(&version),
        escape(palette::SOURCE)
    );
    h += "</body>\n</html>\n";
    // The title's <title> copy shows in the browser's own font; its <h1> copy is in `h`.
    let face = text::css_face(&text::page_chars(&h))?;
    let mut head = String::new();
    head += "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n";
    head += "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n";
    head += &format!("<title>{}</title>\n", escape(title));
    head += "<style>\n";
    head += &face;
    head += &format!("\nbody{{font-family:{},sans-serif;", text::FAMILY);
    head += "max-width:980px;margin:1em auto;padding:0 1em;color:#000;line-height:1.4}\n\
          h1{font-size:1.5em}h2{font-size:1.2em;margin-top:1.6em;border-bottom:1px solid #ccc}\n\
          img,svg{max-width:100%;height:auto}\n.caution{background:#fff6e0;border-left:4px solid #E69F00;padding:.4em .8em}\n\
          table.figures{border-collapse:collapse;width:100%}table.figures td,table.figures th{border-bottom:1px solid #ddd;padding:.25em .5em;text-align:left;vertical-align:top}\n\
          table.figures th{background:#f2f2f2}table.figures td:first-child{width:34%}\n.num{font-variant-numeric:tabular-nums}\npre{font-family:inherit;white-space:pre-wrap;background:#f6f6f6;padding:.5em}\n.note{color:#555;font-size:.92em}\n</style>\n";
    head += "</head>\n";
    Ok(head + &h)
}

/// The figures table.
fn figures(s: &Value) -> String {
    let mut t = Table::new();
    t.head("Threshold");
    if let Some(m) = s.pointer("/threshold/method").and_then(Value::as_str) {
        t.text("rule", m);
    }
    t.num(s, "T", "/threshold/value", None, "");
    t.num(
        s,
        "tolerated omission E",
        "/threshold/omission_percent",
        None,
        "%",
    );
    t.num(
        s,
        "values the rule saw (n)",
        "/threshold/records_used",
        Some(0),
        "",
    );
    t.num(
        s,
        "lowest values dropped (k)",
        "/threshold/records_dropped",
        Some(0),
        "",
    );
    t.num(
        s,
        "record values below T",
        "/threshold/records_omitted",
        Some(0),
        "",
    );
    t.head("Records");
    for (l, k) in [
        ("read", "total"),
        ("on a data cell", "usable"),
        ("outside the raster (excluded)", "outside_raster"),
        ("on nodata (excluded)", "on_nodata"),
        ("occupied cells", "occupied_cells"),
    ] {
        t.num(s, l, &format!("/records/{k}"), Some(0), "");
    }
    t.head("Accessible area M");
    t.text(
        "M",
        s.pointer("/accessible/description")
            .and_then(Value::as_str)
            .unwrap_or(""),
    );
    t.head("Areas (true areas on the ellipsoid)");
    for (l, k) in [
        ("suitable (classes 1 + 2)", "suitable"),
        ("suitable inside M (class 1)", "inside_accessible"),
        ("suitable beyond M (class 2)", "outside_accessible"),
        ("occupied (class-1 patches holding records)", "occupied"),
        ("below threshold (class 0)", "unsuitable"),
        ("M on data cells", "accessible"),
    ] {
        t.num(s, l, &format!("/area_km2/{k}"), Some(3), "km²");
    }
    t.head("Patches");
    for (l, k) in [
        ("inside M", "inside_accessible"),
        ("beyond M", "outside_accessible"),
        ("occupied", "occupied"),
        ("connectivity (neighbours)", "connectivity"),
    ] {
        t.num(s, l, &format!("/patches/{k}"), Some(0), "");
    }
    if let Some(rows) = s["sensitivity"].as_array().filter(|a| !a.is_empty()) {
        t.head("Sensitivity to E (for reading only; E is fixed before looking)");
        for (i, r) in rows.iter().enumerate() {
            let e = r["omission_percent"].as_f64().unwrap_or(f64::NAN);
            t.num(
                s,
                &format!("E = {e}%: T"),
                &format!("/sensitivity/{i}/threshold"),
                None,
                "",
            );
            t.num(
                s,
                &format!("E = {e}%: records dropped"),
                &format!("/sensitivity/{i}/records_dropped"),
                Some(0),
                "",
            );
            t.num(
                s,
                &format!("E = {e}%: suitable"),
                &format!("/sensitivity/{i}/area_km2_suitable"),
                Some(3),
                "km²",
            );
            t.num(
                s,
                &format!("E = {e}%: suitable inside M"),
                &format!("/sensitivity/{i}/area_km2_inside_accessible"),
                Some(3),
                "km²",
            );
        }
    }
    if s["metrics"].is_object() {
        for (base, what) in [
            ("/metrics", "records"),
            ("/metrics/modelled", "occupied modelled range"),
        ] {
            if s.pointer(base).is_none_or(Value::is_null) {
                continue;
            }
            t.head(&format!("EOO and AOO of the {what}"));
            t.num(s, "EOO", &format!("{base}/eoo_km2"), Some(3), "km²");
            t.num(s, "AOO", &format!("{base}/aoo_km2"), Some(3), "km²");
            t.num(
                s,
                "AOO, largest over the grid origins",
                &format!("{base}/aoo_max_km2"),
                Some(3),
                "km²",
            );
            t.num(
                s,
                "AOO grid cell",
                &format!("{base}/aoo_cell_km"),
                None,
                "km",
            );
            for st in s
                .pointer(&format!("{base}/criterion_b/statements"))
                .and_then(Value::as_array)
                .into_iter()
                .flatten()
            {
                t.text("criterion B", st.as_str().unwrap_or(""));
            }
            if let Some(c) = s
                .pointer(&format!("{base}/criterion_b/caution"))
                .and_then(Value::as_str)
            {
                t.text("caution", c);
            }
        }
        if let Some(src) = s
            .pointer("/metrics/criterion_b/source")
            .and_then(Value::as_str)
        {
            t.text("thresholds from", src);
        }
        if s.pointer("/metrics/reach").is_some_and(Value::is_object) {
            t.head("Reach");
            t.num(s, "largest jump", "/metrics/reach/gap_km", None, "km");
            t.num(
                s,
                "patches reached",
                "/metrics/reach/reachable_patches",
                Some(0),
                "",
            );
            t.num(
                s,
                "area reached",
                "/metrics/reach/reachable_km2",
                Some(3),
                "km²",
            );
            t.num(
                s,
                "of it beyond M",
                "/metrics/reach/reachable_outside_accessible_km2",
                Some(3),
                "km²",
            );
            t.num(
                s,
                "patches not reached",
                "/metrics/reach/unreachable_patches",
                Some(0),
                "",
            );
            t.num(
                s,
                "area not reached",
                "/metrics/reach/unreachable_km2",
                Some(3),
                "km²",
            );
        }
    }
    t.head("Method");
    t.text(
        "area method",
        s.pointer("/area_method")
            .and_then(Value::as_str)
            .unwrap_or(""),
    );
    t.html += "</table>\n";
    format!("<h2>Figures</h2>\n{}", t.html)
}
