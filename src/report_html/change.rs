//! The change section of `areal change`'s report: a map of the change classes and the areas
//! under each dispersal rule, for each future.
//!
//! The map is decimated while the change pass runs, from the class rows it already holds (no
//! raster is read back): a pixel covers `factor` x `factor` cells and takes the highest-ranked
//! class among them, lost > gained within reach > stable > gained out of reach > unsuitable >
//! nodata, so a single lost or reachable cell still shows however large the grid. Its colours
//! are change.tif's colour table ([`crate::change::CHANGE_STYLES`]); nodata is white.

use super::draw::PANEL_MAX;
use super::image::Window;
use super::page::escape;
use super::{fmt_num, palette, text};
use crate::change::CHANGE_STYLES;
use crate::Result;
use base64::Engine as _;
use serde_json::Value;

/// Rank of a change class in decimation (higher wins).
fn rank(code: u8) -> u8 {
    match code {
        2 => 6,
        3 => 5,
        1 => 4,
        4 => 3,
        0 => 2,
        _ => 1,
    }
}

/// The colour of a change class: change.tif's colour table; nodata white.
pub fn change_colour(code: u8) -> palette::Rgb {
    CHANGE_STYLES
        .iter()
        .find(|s| s.value == code)
        .map_or(palette::NODATA, |s| [s.rgba[0], s.rgba[1], s.rgba[2]])
}

/// A decimated change image of the whole grid (0 = no cell yet, else rank).
#[derive(Debug, Clone)]
pub struct ChangeThumb {
    width: usize,
    /// Cells per pixel, each way.
    pub factor: usize,
    /// Pixels across.
    pub cols: usize,
    /// Pixels down.
    pub rows: usize,
    ranks: Vec<u8>,
}

impl ChangeThumb {
    /// An empty image of a `width` x `height` grid, fitted to the report's map panel.
    pub fn new(width: usize, height: usize) -> Self {
        let w = Window::fit(0, 0, width, height, PANEL_MAX.0, PANEL_MAX.1);
        let (cols, rows) = w.image_size();
        ChangeThumb {
            width,
            factor: w.factor,
            cols,
            rows,
            ranks: vec![0; cols * rows],
        }
    }

    /// Fold change rows `y0..` (whole rows of `codes`) in.
    pub fn add_rows(&mut self, y0: usize, codes: &[u8]) {
        for (r, row) in codes.chunks(self.width).enumerate() {
            let line = &mut self.ranks[((y0 + r) / self.factor) * self.cols..][..self.cols];
            for (block, px) in row.chunks(self.factor).zip(line.iter_mut()) {
                let best = block.iter().map(|&k| rank(k)).max().unwrap_or(0);
                *px = (*px).max(best);
            }
        }
    }

    /// The class codes, row-major (255 for nodata).
    pub fn classes(&self) -> Vec<u8> {
        let back = |k: u8| match k {
            6 => 2,
            5 => 3,
            4 => 1,
            3 => 4,
            2 => 0,
            _ => 255,
        };
        self.ranks.iter().map(|&k| back(k)).collect()
    }

    /// The image as a PNG, each pixel drawn `scale` x `scale` (the largest that fits the panel).
    pub fn png(&self) -> Result<Vec<u8>> {
        let s = (PANEL_MAX.0 / self.cols)
            .min(PANEL_MAX.1 / self.rows)
            .max(1);
        let (w, h) = ((self.cols * s) as u32, (self.rows * s) as u32);
        let mut pm = tiny_skia::Pixmap::new(w, h).ok_or_else(|| crate::Error::Output {
            path: "change map".into(),
            reason: format!("cannot make a {w} x {h} image"),
        })?;
        let classes = self.classes();
        let data = pm.data_mut();
        for y in 0..h as usize {
            for x in 0..w as usize {
                let c = change_colour(classes[(y / s) * self.cols + x / s]);
                let i = 4 * (y * w as usize + x);
                data[i..i + 4].copy_from_slice(&[c[0], c[1], c[2], 255]);
            }
        }
        pm.encode_png().map_err(|e| crate::Error::Output {
            path: "change map".into(),
            reason: e.to_string(),
        })
    }
}

/// The HTML section of one future: the map, its legend and the areas under each rule.
/// `key` is the JSON pointer of the future's change section in summary.json (`/change` or
/// `/changes/<k>`); every number carries `data-key`.
pub fn section(summary: &Value, key: &str, png: &[u8]) -> String {
    let c = summary.pointer(key).cloned().unwrap_or(Value::Null);
    let future = c["future"].as_str().unwrap_or("");
    let b64 = base64::engine::general_purpose::STANDARD.encode(png);
    let mut h = format!(
        "<section class=\"change\">\n<h2>Range change to {}</h2>\n",
        escape(future)
    );
    h += &format!(
        "<img class=\"change-map\" src=\"data:image/png;base64,{b64}\" alt=\"map of the change classes to {}\">\n",
        escape(future)
    );
    h += "<ul class=\"legend\">\n";
    let keys = [
        "unsuitable",
        "stable",
        "lost",
        "gained_within_reach",
        "gained_out_of_reach",
    ];
    for (st, k) in CHANGE_STYLES.iter().zip(keys) {
        h += &format!(
            "<li><span class=\"swatch\" style=\"background:{}\"></span>{} ({} cells)</li>\n",
            palette::hex(change_colour(st.value)),
            escape(st.name),
            fmt_num(c["cells"][k].as_f64().unwrap_or(f64::NAN), 0)
        );
    }
    h += "</ul>\n<table class=\"figures\">\n";
    let num = |p: &str, d: usize| -> String {
        let ptr = format!("{key}/{p}");
        match summary.pointer(&ptr).and_then(Value::as_f64) {
            Some(v) => format!(
                "<span class=\"num\" data-key=\"{}\">{}</span>",
                escape(&ptr),
                fmt_num(v, d)
            ),
            None => "n/a".into(),
        }
    };
    let row = |label: &str, cells: &[String]| {
        let mut r = format!("<tr><td>{}</td>", escape(label));
        for x in cells {
            r += &format!("<td>{x}</td>");
        }
        r + "</tr>\n"
    };
    h += "<tr><th>area, km2</th><th colspan=\"3\"></th></tr>\n";
    for (label, k) in [
        ("present range", "present_range"),
        ("stable", "stable"),
        ("lost", "lost"),
        ("gained within reach", "gained_within_reach"),
        ("gained out of reach", "gained_out_of_reach"),
    ] {
        h += &row(label, &[num(&format!("area_km2/{k}"), 3)]);
    }
    h += "<tr><th>future range</th><th>km2</th><th>change, %</th><th>inside M, km2 (change, %)</th></tr>\n";
    for (label, k) in [
        ("no dispersal (stable)", "no_dispersal"),
        (
            "limited dispersal (stable + within reach)",
            "limited_dispersal",
        ),
        ("full dispersal (stable + every gain)", "full_dispersal"),
    ] {
        h += &row(
            label,
            &[
                num(&format!("future_range_km2/{k}"), 3),
                num(&format!("percent_change/{k}"), 1),
                format!(
                    "{} ({})",
                    num(&format!("future_range_in_m_km2/{k}"), 3),
                    num(&format!("percent_change_in_m/{k}"), 1)
                ),
            ],
        );
    }
    if c["aoo_km2"].is_object() {
        h += "<tr><th>modelled AOO</th><th>km2</th><th>change, %</th><th></th></tr>\n";
        h += &row("present range", &[num("aoo_km2/present_range", 0)]);
        for (label, k) in [
            ("no dispersal", "no_dispersal"),
            ("limited dispersal", "limited_dispersal"),
            ("full dispersal", "full_dispersal"),
        ] {
            h += &row(
                label,
                &[
                    num(&format!("aoo_km2/future_range/{k}"), 0),
                    num(&format!("aoo_km2/percent_change/{k}"), 1),
                ],
            );
        }
    }
    h += "</table>\n";
    h += &format!(
        "<p class=\"note\">The present threshold T = {} is applied unchanged to the future raster (the usual practice). Within reach: {}. Future ranges are model-based projections with the errors of both models; an assessment belongs to the responsible authority.</p>\n</section>\n",
        num("threshold", 4),
        match c["dispersal_km"].as_f64() {
            Some(_) => format!("at most {} km (geodesic, WGS84) from the present range", num("dispersal_km", 1)),
            None => "no dispersal distance given, so every gain is out of reach".into(),
        }
    );
    h
}

/// `page` with `sections` placed before its warnings (or at the end of the body). The page
/// embeds only the glyphs of its own text, so its font face is made again for the text with
/// the sections.
pub fn insert_sections(page: &str, sections: &str) -> Result<String> {
    let body_at = page.find("</head>\n").map_or(0, |i| i + "</head>\n".len());
    let at = page
        .find("<h2>Warnings</h2>")
        .or_else(|| page.rfind("</body>"))
        .unwrap_or(page.len())
        .max(body_at);
    let (head, body) = page.split_at(body_at);
    let new_body = format!(
        "{}{}{}",
        &body[..at - body_at],
        sections,
        &body[at - body_at..]
    );
    let old_face = text::css_face(&text::page_chars(body))?;
    let new_face = text::css_face(&text::page_chars(&new_body))?;
    Ok(head.replacen(&old_face, &new_face, 1) + &new_body)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_single_lost_cell_survives_decimation_and_keeps_its_colour() {
        // 3000 x 10 cells: factor 4; one lost cell among stable ones.
        let (w, h) = (3000, 10);
        let mut codes = vec![1u8; w * h];
        codes[5 * w + 2001] = 2;
        codes[9 * w + 2999] = 255;
        let mut t = ChangeThumb::new(w, h);
        assert_eq!(t.factor, 4);
        t.add_rows(0, &codes[..4 * w]);
        t.add_rows(4, &codes[4 * w..]);
        let px = t.classes();
        assert_eq!(px[t.cols + 2001 / 4], 2);
        assert_eq!(px.iter().filter(|&&k| k == 2).count(), 1);
        // A block holding nodata and stable shows stable.
        assert_eq!(px[2 * t.cols + 2999 / 4], 1);
        assert_eq!(change_colour(2), [186, 64, 47]);
        assert_eq!(change_colour(255), palette::NODATA);
    }

    #[test]
    fn the_embedded_face_covers_the_inserted_text() {
        let body = "<body>\n<p>abc</p>\n<h2>Warnings</h2>\n</body>\n</html>\n";
        let face = text::css_face(&text::page_chars(body)).unwrap();
        let page = format!("<html><head><style>{face}</style></head>\n{body}");
        let out = insert_sections(&page, "<p>xyz 42</p>\n").unwrap();
        let (_, new_body) = out.split_at(out.find("</head>\n").unwrap() + 8);
        assert!(new_body.starts_with("<body>\n<p>abc</p>\n<p>xyz 42</p>\n<h2>Warnings</h2>"));
        let want = text::css_face(&text::page_chars(new_body)).unwrap();
        assert!(out.contains(&want) && !out.contains(&face));
    }
}
