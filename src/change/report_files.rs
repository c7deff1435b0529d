//! report.html of a change run: the present run's report (map, charts, figures) with one
//! change section per future, and each future's change-map.png, drawn from the maps the
//! change pass decimated (nothing written by the run is read back).

use crate::report_html::change::{insert_sections, section, ChangeThumb};
use crate::report_html::runs::{ClassRuns, ModelRows};
use crate::report_html::{image, render, ReportData};
use crate::{OutputDir, RangeModel, RangeResult, Result};
use std::path::PathBuf;

/// Write map.png, report.html and `maps[f]` (future f's change map).
pub(crate) fn write(
    dir: &OutputDir,
    result: &RangeResult,
    model: &RangeModel,
    nodata: &ClassRuns,
    summary: serde_json::Value,
    thumbs: &[ChangeThumb],
    maps: &[PathBuf],
) -> Result<()> {
    let grid = model.grid();
    let mut data = ReportData::from_result(result, grid);
    // The numbers' data-key pointers refer to summary.json as written, change included.
    data.summary = summary;
    let whole = result.summary.accessible.whole_raster || !model.has_m();
    let mut factory = || -> Result<Option<Box<dyn image::AccessRows + '_>>> {
        Ok((!whole).then(|| Box::new(image::ModelAccess(model)) as Box<dyn image::AccessRows>))
    };
    let files = render(&data, &ModelRows { model, nodata }, &mut factory)?;
    let several = thumbs.len() > 1;
    let mut sections = String::new();
    for (k, (t, path)) in thumbs.iter().zip(maps).enumerate() {
        let png = t.png()?;
        std::fs::write(path, &png).map_err(crate::Error::io(path))?;
        let key = if several {
            format!("/changes/{k}")
        } else {
            "/change".to_string()
        };
        sections += &section(&data.summary, &key, &png);
    }
    let png = dir.file("map.png");
    std::fs::write(&png, &files.map_png).map_err(crate::Error::io(&png))?;
    crate::output::write_text(
        &dir.file("report.html"),
        &insert_sections(&files.html, &sections)?,
    )
}
