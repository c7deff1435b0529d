//! The run's report: `report.html` (one self-contained page: the map inlined as a base64
//! PNG, the charts as inline SVG, no network) and `map.png`.
//!
//! Data flow: the report is drawn from the run's own figures (summary.json's content, the
//! record and patch rows) and from the range model's runs ([`runs::RowSource`]), decimated with
//! class priority ([`image::ClassImage`]); M is sampled at the map's pixels. `areal report DIR`
//! ([`folder::run_report`]) rebuilds the same inputs from a finished run folder.

pub mod change;
pub mod charts;
pub mod draw;
pub mod folder;
pub mod geo;
pub mod image;
pub mod page;
pub mod palette;
pub mod runs;
pub mod text;

use crate::{GridSpec, Result};
use image::{access_image, AccessRows, ClassImage, Window};
use runs::RowSource;

/// How the report is made.
#[derive(Debug, Clone, Default)]
pub struct ReportOptions {
    /// The command line of the run, as typed (shown in the report).
    pub command_line: Vec<String>,
}

/// A record as the report shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct MapRecord {
    /// WGS84 longitude.
    pub lon: f64,
    /// WGS84 latitude.
    pub lat: f64,
    /// (row, col) on the grid, None outside.
    pub cell: Option<(usize, usize)>,
    /// Suitability of its cell.
    pub suitability: Option<f64>,
    /// used, below_threshold, outside_raster, on_nodata.
    pub status: String,
}

impl MapRecord {
    /// "used", "below_threshold" or "excluded".
    pub fn kind(&self) -> &str {
        match self.status.as_str() {
            "used" => "used",
            "below_threshold" => "below_threshold",
            _ => "excluded",
        }
    }
}

/// A patch as the report shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct PatchInfo {
    /// 1 inside M, 2 beyond.
    pub class: u8,
    /// Area, km2.
    pub area_km2: f64,
    /// Reached with `--gap-km`.
    pub reachable: Option<bool>,
    /// Fewest jumps.
    pub reach_jumps: Option<u32>,
}

/// Everything the report is made of, besides the class runs and M.
#[derive(Debug, Clone)]
pub struct ReportData {
    /// summary.json, as written.
    pub summary: serde_json::Value,
    /// Every record.
    pub records: Vec<MapRecord>,
    /// Every patch.
    pub patches: Vec<PatchInfo>,
    /// The grid.
    pub grid: GridSpec,
}

impl ReportData {
    /// From a run's result (the summary as it is written to summary.json).
    pub fn from_result(r: &crate::RangeResult, grid: &GridSpec) -> Self {
        let json = serde_json::to_string_pretty(&r.summary).expect("summary serialises");
        ReportData {
            summary: serde_json::from_str(&json).expect("summary reads back"),
            records: r
                .records
                .iter()
                .map(|x| MapRecord {
                    lon: x.lon,
                    lat: x.lat,
                    cell: x.row.zip(x.col),
                    suitability: x.suitability,
                    status: x.status.as_str().to_string(),
                })
                .collect(),
            patches: r
                .patches
                .iter()
                .map(|p| PatchInfo {
                    class: p.class,
                    area_km2: p.area_km2,
                    reachable: p.reachable,
                    reach_jumps: p.reach_jumps,
                })
                .collect(),
            grid: grid.clone(),
        }
    }
}

/// Makes a fresh M to sample rows from (rows are asked in increasing order), or None when
/// M is the whole raster.
pub type AccessFactory<'a> = dyn FnMut() -> Result<Option<Box<dyn AccessRows + 'a>>> + 'a;

/// The finished report files.
pub struct ReportFiles {
    /// map.png bytes.
    pub map_png: Vec<u8>,
    /// report.html text.
    pub html: String,
}

/// Make the map and the page.
pub fn render(
    data: &ReportData,
    classes: &dyn RowSource,
    access: &mut AccessFactory<'_>,
) -> Result<ReportFiles> {
    let drawn = draw(data, classes, access)?;
    finish(data, drawn)
}

/// The map of a report: it needs the classes, M, the records and the area totals, not the
/// metrics, so a run draws it while its metrics are computed.
pub struct DrawnMap {
    map: draw::MapPng,
    image: ClassImage,
    title: String,
}

/// Draw the map (see [`DrawnMap`]).
pub fn draw(
    data: &ReportData,
    classes: &dyn RowSource,
    access: &mut AccessFactory<'_>,
) -> Result<DrawnMap> {
    let grid = &data.grid;
    let (w, h) = (grid.width, grid.height);
    let (mw, mh) = draw::PANEL_MAX;
    let whole = Window::fit(0, 0, w, h, mw, mh);
    let whole_img = ClassImage::build(classes, whole)?;
    let whole_m = match access()? {
        Some(mut m) => Some(access_image(m.as_mut(), &whole, w, h)?),
        None => None,
    };
    // What the frame must hold: class-1 cells, M and the records on the grid.
    let f = whole.factor;
    let mut bins = vec![false; whole_img.cols];
    let mut rows: Option<(usize, usize)> = None;
    let mut add = |bins: &mut Vec<bool>, c: usize, r0: usize, r1: usize| {
        bins[c] = true;
        rows = Some(rows.map_or((r0, r1), |(a, b)| (a.min(r0), b.max(r1))));
    };
    for r in 0..whole_img.rows {
        for c in 0..whole_img.cols {
            let i = r * whole_img.cols + c;
            let in_m = whole_m.as_ref().is_some_and(|m| m[i]);
            if whole_img.pixels[i] == 1 || in_m {
                add(&mut bins, c, r * f, ((r + 1) * f).min(h) - 1);
            }
        }
    }
    for rec in &data.records {
        if let (Some((r, c)), "used" | "below_threshold") = (rec.cell, rec.kind()) {
            add(&mut bins, c / f, r, r);
        }
    }
    let (c0, r0, cols, nrows) = geo::choose_frame(grid, &bins, f, rows);
    let (image, m, locator) = if (c0, r0, cols, nrows) == (0, 0, w, h) {
        (whole_img, whole_m, None)
    } else {
        let win = Window::fit(c0, r0, cols, nrows, mw, mh);
        let img = ClassImage::build(classes, win)?;
        let m = match access()? {
            Some(mut m) => Some(access_image(m.as_mut(), &win, w, h)?),
            None => None,
        };
        let locator = if cols < w || nrows < h {
            Some(ClassImage::build(
                classes,
                Window::fit(0, 0, w, h, draw::LOCATOR.0, draw::LOCATOR.1),
            )?)
        } else {
            None
        };
        (img, m, locator)
    };
    let s = &data.summary;
    let name = |k: &str| {
        let p = s["inputs"][k].as_str().unwrap_or("");
        std::path::Path::new(p)
            .file_name()
            .map(|f| f.to_string_lossy().into_owned())
            .unwrap_or_else(|| p.to_string())
    };
    let title = format!("Range of {} on {}", name("records"), name("suitability"));
    let km2 = |k: &str| s["area_km2"][k].as_f64().unwrap_or(f64::NAN);
    let map = draw::draw_map(&draw::MapInput {
        grid,
        title: title.clone(),
        image: &image,
        access: m.as_deref(),
        locator: locator.as_ref(),
        records: &data.records,
        areas_km2: [
            km2("unsuitable"),
            km2("inside_accessible"),
            km2("outside_accessible"),
        ],
    })?;
    Ok(DrawnMap { map, image, title })
}

/// The page around a drawn map, from `data` (the run's figures, metrics included).
pub fn finish(data: &ReportData, drawn: DrawnMap) -> Result<ReportFiles> {
    let DrawnMap { map, image, title } = drawn;
    let html = page::page(data, &map, &image, &title)?;
    Ok(ReportFiles {
        map_png: map.png,
        html,
    })
}

/// `x` with `decimals` decimals and thousands separated by commas.
pub fn fmt_num(x: f64, decimals: usize) -> String {
    if !x.is_finite() {
        return "n/a".into();
    }
    let s = format!("{:.*}", decimals, x.abs());
    let (int, frac) = s
        .split_once('.')
        .map_or((s.as_str(), None), |(a, b)| (a, Some(b)));
    let mut out = String::new();
    for (i, ch) in int.chars().enumerate() {
        if i > 0 && (int.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(ch);
    }
    if let Some(f) = frac {
        out.push('.');
        out.push_str(f);
    }
    if x < 0.0 && out.chars().any(|c| c.is_ascii_digit() && c != '0') {
        out.insert(0, '-');
    }
    out
}

/// The map of a run in progress, drawn from the run's result before its metrics
/// ([`ReportData::from_result`]) and its range model (with the nodata runs kept during the
/// pass).
pub fn draw_run_map(
    data: &ReportData,
    model: &crate::RangeModel,
    nodata: &runs::ClassRuns,
) -> Result<DrawnMap> {
    let whole = data.summary["accessible"]["whole_raster"] == serde_json::Value::Bool(true)
        || !model.has_m();
    let mut factory = || -> Result<Option<Box<dyn AccessRows + '_>>> {
        Ok((!whole).then(|| Box::new(image::ModelAccess(model)) as Box<dyn AccessRows>))
    };
    draw(data, &runs::ModelRows { model, nodata }, &mut factory)
}

/// Write the report of a finished run (its map drawn by [`draw_run_map`]) into `dir`.
pub fn write_run_report(
    dir: &crate::OutputDir,
    result: &crate::RangeResult,
    model: &crate::RangeModel,
    drawn: DrawnMap,
) -> Result<()> {
    let data = ReportData::from_result(result, model.grid());
    let files = finish(&data, drawn)?;
    let png = dir.file("map.png");
    std::fs::write(&png, &files.map_png).map_err(crate::Error::io(&png))?;
    crate::output::write_text(&dir.file("report.html"), &files.html)
}

#[cfg(test)]
mod tests {
    #[test]
    fn numbers_are_grouped() {
        assert_eq!(super::fmt_num(11613.0139, 3), "11,613.014");
        assert_eq!(super::fmt_num(-1234567.0, 0), "-1,234,567");
        assert_eq!(super::fmt_num(0.5, 1), "0.5");
    }
}
