//! Making the outputs readable in GIS without guesswork: the class palette (one definition),
//! the description of `classes.tif` (a GDAL raster attribute table and category names, and
//! the class names in the GeoTIFF's own metadata), and QGIS style files (`.qml`, which QGIS
//! loads as a layer's default style when it sits beside the file with the same base name).
//!
//! The QML files follow the layout QGIS itself writes for a paletted raster renderer and for
//! single-symbol / categorized vector renderers (QGIS 3 project file format).

use crate::raster_io::class;
use crate::report_html::palette;
use crate::{Error, Result, Summary};
use gdal::Metadata;
use std::ffi::CString;
use std::fmt::Write as _;
use std::path::Path;

/// One class of `classes.tif`: value, name, colour (RGBA).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ClassStyle {
    /// Cell value.
    pub value: u8,
    /// Category name.
    pub name: &'static str,
    /// Colour, RGBA.
    pub rgba: [u8; 4],
}

/// The class colours of `report_html::palette` (Okabe and Ito 2008; pale grey from Paul Tol):
/// pale grey below the threshold, bluish green for the accessible range, orange for suitable
/// land beyond M. Nodata (255) is transparent.
pub const CLASS_STYLES: [ClassStyle; 3] = [
    ClassStyle {
        value: class::UNSUITABLE,
        name: class::NAMES[0],
        rgba: palette::opaque(palette::UNSUITABLE),
    },
    ClassStyle {
        value: class::INSIDE,
        name: class::NAMES[1],
        rgba: palette::opaque(palette::INSIDE),
    },
    ClassStyle {
        value: class::OUTSIDE,
        name: class::NAMES[2],
        rgba: palette::opaque(palette::OUTSIDE),
    },
];

/// Outline and marker colour for the records that were used (dark teal).
const DARK_TEAL: [u8; 4] = [0, 70, 77, 255];
/// Grey for records that could not be used.
const GREY: [u8; 4] = [128, 128, 128, 255];

/// The style files written beside the outputs (also in `OUTPUT_NAMES`).
pub const STYLE_NAMES: [&str; 6] = [
    "classes.qml",
    "range.qml",
    "patches.qml",
    "unreachable.qml",
    "accessible.qml",
    "records.qml",
];

fn hex(c: [u8; 4]) -> String {
    format!("#{:02x}{:02x}{:02x}", c[0], c[1], c[2])
}

fn xml_escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Describe the open `classes.tif` before it is closed: the raster attribute table (value,
/// name, red, green, blue, alpha, cells, area_km2; GDAL keeps it in the `.aux.xml` sidecar)
/// and the class names as band metadata (`CLASS_0=below threshold`, ...; GeoTIFF keeps these
/// in the file's own GDAL_METADATA tag, so a lone `.tif` still names its classes). Then
/// write `classes.qml` beside it.
pub fn describe_classes(ds: &gdal::Dataset, path: &Path, summary: &Summary) -> Result<()> {
    let fail = |what: &str| Error::Output {
        path: path.to_path_buf(),
        reason: format!("could not set {what}; is the disk full or the folder not writable?"),
    };
    let mut band = ds.rasterband(1).map_err(|_| fail("band 1"))?;
    for c in CLASS_STYLES {
        band.set_metadata_item(&format!("CLASS_{}", c.value), c.name, "")
            .map_err(|_| fail("the class names"))?;
    }
    band.set_metadata_item("CLASS_255", "nodata", "")
        .map_err(|_| fail("the class names"))?;
    let cells = [
        summary.cells.unsuitable,
        summary.cells.inside_accessible,
        summary.cells.outside_accessible,
    ];
    let areas = [
        summary.area_km2.unsuitable,
        summary.area_km2.inside_accessible,
        summary.area_km2.outside_accessible,
    ];
    if !set_rat(&band, &cells, &areas) {
        return Err(fail("the raster attribute table"));
    }
    let qml = path.with_extension("qml");
    crate::output::write_text(&qml, &class_qml())
}

/// Build and attach the thematic raster attribute table through GDAL's C API (the gdal
/// crate has no wrapper for it). False when GDAL refused it.
fn set_rat(band: &gdal::raster::RasterBand, cells: &[u64; 3], areas: &[f64; 3]) -> bool {
    use gdal_sys::GDALRATFieldType::*;
    use gdal_sys::GDALRATFieldUsage::*;
    let columns = [
        ("value", GFT_Integer, GFU_MinMax),
        ("name", GFT_String, GFU_Name),
        ("red", GFT_Integer, GFU_Red),
        ("green", GFT_Integer, GFU_Green),
        ("blue", GFT_Integer, GFU_Blue),
        ("alpha", GFT_Integer, GFU_Alpha),
        ("cells", GFT_Real, GFU_PixelCount),
        ("area_km2", GFT_Real, GFU_Generic),
    ];
    // SAFETY: the table is created, filled and handed to GDAL (which copies it) and then
    // destroyed here; every string passed outlives its call.
    unsafe {
        let rat = gdal_sys::GDALCreateRasterAttributeTable();
        let mut ok = gdal_sys::GDALRATSetTableType(rat, gdal_sys::GDALRATTableType::GRTT_THEMATIC)
            == gdal_sys::CPLErr::CE_None;
        for (name, t, u) in columns {
            let n = CString::new(name).expect("no NUL in column names");
            ok &= gdal_sys::GDALRATCreateColumn(rat, n.as_ptr(), t, u) == gdal_sys::CPLErr::CE_None;
        }
        gdal_sys::GDALRATSetRowCount(rat, CLASS_STYLES.len() as i32);
        for (row, c) in CLASS_STYLES.iter().enumerate() {
            let r = row as i32;
            gdal_sys::GDALRATSetValueAsInt(rat, r, 0, c.value as i32);
            let name = CString::new(c.name).expect("no NUL in class names");
            gdal_sys::GDALRATSetValueAsString(rat, r, 1, name.as_ptr());
            for (k, v) in c.rgba.iter().enumerate() {
                gdal_sys::GDALRATSetValueAsInt(rat, r, 2 + k as i32, *v as i32);
            }
            // Real, not Integer: a global 30" grid has more cells than an i32 holds.
            gdal_sys::GDALRATSetValueAsDouble(rat, r, 6, cells[row] as f64);
            gdal_sys::GDALRATSetValueAsDouble(rat, r, 7, areas[row]);
        }
        ok &= gdal_sys::GDALSetDefaultRAT(band.c_rasterband(), rat) == gdal_sys::CPLErr::CE_None;
        gdal_sys::GDALDestroyRasterAttributeTable(rat);
        ok
    }
}

/// QGIS style of `classes.tif`: a paletted renderer with the three classes only (the
/// GeoTIFF colour table has 256 entries, as the format requires; this lists the used ones).
pub fn class_qml() -> String {
    let mut entries = String::new();
    for c in CLASS_STYLES {
        let _ = writeln!(
            entries,
            "        <paletteEntry value=\"{}\" color=\"{}\" alpha=\"{}\" label=\"{}\"/>",
            c.value,
            hex(c.rgba),
            c.rgba[3],
            xml_escape(c.name)
        );
    }
    format!(
        "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>
<qgis version=\"3.22.0\" styleCategories=\"AllStyleCategories\" hasScaleBasedVisibilityFlag=\"0\" minScale=\"1e+08\" maxScale=\"0\">
  <pipe>
    <rasterrenderer type=\"paletted\" band=\"1\" opacity=\"1\" alphaBand=\"-1\" nodataColor=\"\">
      <rasterTransparency/>
      <minMaxOrigin>
        <limits>None</limits>
        <extent>WholeRaster</extent>
        <statAccuracy>Estimated</statAccuracy>
        <cumulativeCutLower>0.02</cumulativeCutLower>
        <cumulativeCutUpper>0.98</cumulativeCutUpper>
        <stdDevFactor>2</stdDevFactor>
      </minMaxOrigin>
      <colorPalette>
{entries}      </colorPalette>
    </rasterrenderer>
    <brightnesscontrast brightness=\"0\" contrast=\"0\" gamma=\"1\"/>
    <huesaturation saturation=\"0\" grayscaleMode=\"0\" colorizeOn=\"0\" colorizeRed=\"255\" colorizeGreen=\"128\" colorizeBlue=\"128\" colorizeStrength=\"100\"/>
    <rasterresampler maxOversampling=\"2\"/>
  </pipe>
  <blendMode>0</blendMode>
</qgis>
"
    )
}

/// A symbol of one layer: a fill (polygons) or a circle marker (points).
enum Symbol {
    Fill { fill: [u8; 4], outline: [u8; 4] },
    Marker { fill: [u8; 4] },
}

fn colour(c: [u8; 4]) -> String {
    format!("{},{},{},{}", c[0], c[1], c[2], c[3])
}

/// One `<symbol>`; properties both as `<Option>` (QGIS >= 3.26) and `<prop>` (older).
fn symbol_xml(name: &str, s: &Symbol) -> String {
    let (kind, class, props): (&str, &str, Vec<(&str, String)>) = match s {
        Symbol::Fill { fill, outline } => (
            "fill",
            "SimpleFill",
            vec![
                ("color", colour(*fill)),
                (
                    "style",
                    if fill[3] == 0 { "no" } else { "solid" }.to_string(),
                ),
                ("outline_color", colour(*outline)),
                ("outline_style", "solid".into()),
                ("outline_width", "0.4".into()),
                ("outline_width_unit", "MM".into()),
                ("joinstyle", "miter".into()),
            ],
        ),
        Symbol::Marker { fill } => (
            "marker",
            "SimpleMarker",
            vec![
                ("name", "circle".into()),
                ("color", colour(*fill)),
                ("outline_color", "255,255,255,255".into()),
                ("outline_style", "solid".into()),
                ("outline_width", "0.3".into()),
                ("outline_width_unit", "MM".into()),
                ("size", "2.4".into()),
                ("size_unit", "MM".into()),
            ],
        ),
    };
    let mut x = format!(
        "      <symbol type=\"{kind}\" name=\"{name}\" alpha=\"1\" clip_to_extent=\"1\" force_rhr=\"0\">\n        <layer class=\"{class}\" pass=\"0\" locked=\"0\" enabled=\"1\">\n          <Option type=\"Map\">\n"
    );
    for (k, v) in &props {
        let _ = writeln!(
            x,
            "            <Option name=\"{k}\" type=\"QString\" value=\"{v}\"/>"
        );
    }
    x.push_str("          </Option>\n");
    for (k, v) in &props {
        let _ = writeln!(x, "          <prop k=\"{k}\" v=\"{v}\"/>");
    }
    x.push_str("        </layer>\n      </symbol>\n");
    x
}

fn vector_qml(renderer: String) -> String {
    format!(
        "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>
<qgis version=\"3.22.0\" styleCategories=\"Symbology\">
{renderer}  <blendMode>0</blendMode>
  <featureBlendMode>0</featureBlendMode>
  <layerGeometryType>{}</layerGeometryType>
</qgis>
",
        if renderer.contains("type=\"marker\"") {
            0
        } else {
            2
        }
    )
}

fn single(s: Symbol) -> String {
    vector_qml(format!(
        "  <renderer-v2 type=\"singleSymbol\" symbollevels=\"0\" enableorderby=\"0\" forceraster=\"0\">\n    <symbols>\n{}    </symbols>\n  </renderer-v2>\n",
        symbol_xml("0", &s)
    ))
}

/// A categorized renderer on `attr`; `categories`: (value, label, symbol).
fn categorized(attr: &str, categories: Vec<(&str, &str, Symbol)>) -> String {
    let mut cats = String::new();
    let mut syms = String::new();
    for (i, (value, label, s)) in categories.iter().enumerate() {
        let _ = writeln!(
            cats,
            "      <category render=\"true\" symbol=\"{i}\" value=\"{}\" label=\"{}\"/>",
            xml_escape(value),
            xml_escape(label)
        );
        syms.push_str(&symbol_xml(&i.to_string(), s));
    }
    vector_qml(format!(
        "  <renderer-v2 type=\"categorizedSymbol\" attr=\"{attr}\" symbollevels=\"0\" enableorderby=\"0\" forceraster=\"0\">\n    <categories>\n{cats}    </categories>\n    <symbols>\n{syms}    </symbols>\n  </renderer-v2>\n"
    ))
}

/// The QGIS style of each vector layer, by layer name (`range`, `patches`, `unreachable`,
/// `accessible`, `records`), in the class palette.
pub fn layer_qml(layer: &str) -> Option<String> {
    let [_, inside, outside] = CLASS_STYLES.map(|c| c.rgba);
    let translucent = |mut c: [u8; 4]| {
        c[3] = 190;
        c
    };
    let fill = |c: [u8; 4]| Symbol::Fill {
        fill: translucent(c),
        outline: c,
    };
    Some(match layer {
        "range" => single(fill(inside)),
        "unreachable" => single(fill(outside)),
        "accessible" => single(Symbol::Fill {
            fill: [0, 0, 0, 0],
            outline: DARK_TEAL,
        }),
        "patches" => categorized(
            "class",
            vec![
                ("1", CLASS_STYLES[1].name, fill(inside)),
                ("2", CLASS_STYLES[2].name, fill(outside)),
            ],
        ),
        "records" => categorized(
            "status",
            vec![
                ("used", "used", Symbol::Marker { fill: DARK_TEAL }),
                (
                    "below_threshold",
                    "below threshold (dropped)",
                    Symbol::Marker { fill: outside },
                ),
                (
                    "outside_raster",
                    "outside the raster",
                    Symbol::Marker { fill: GREY },
                ),
                ("on_nodata", "on nodata", Symbol::Marker { fill: GREY }),
            ],
        ),
        _ => return None,
    })
}

/// Write `<layer>.qml` beside each `<layer>.geojson` present in `dir` (QGIS loads it as the
/// layer's default style).
pub fn write_layer_styles(dir: &Path) -> Result<()> {
    for layer in ["range", "patches", "unreachable", "accessible", "records"] {
        if dir.join(format!("{layer}.geojson")).exists() {
            let qml = layer_qml(layer).expect("every layer has a style");
            crate::output::write_text(&dir.join(format!("{layer}.qml")), &qml)?;
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn class_style_lists_exactly_the_three_classes() {
        let q = class_qml();
        assert_eq!(q.matches("<paletteEntry").count(), 3);
        assert!(q.contains("value=\"1\" color=\"#009e73\""));
        assert!(q.contains("label=\"suitable, beyond M\""));
    }

    #[test]
    fn every_layer_has_a_style_with_the_right_geometry() {
        for l in ["range", "patches", "unreachable", "accessible"] {
            let q = layer_qml(l).unwrap();
            assert!(q.contains("<layerGeometryType>2<"), "{l}");
        }
        let r = layer_qml("records").unwrap();
        assert!(r.contains("<layerGeometryType>0<") && r.matches("<category ").count() == 4);
        assert!(layer_qml("nothing").is_none());
    }
}
