//! The report's one font: DejaVu Sans, shipped in `assets/fonts` (unmodified; licence in
//! `assets/fonts/LICENSE-DejaVu.txt`), never one from the system. The map's text is drawn
//! with it here; the page embeds the same file once as a base64 `@font-face` ([`css_face`])
//! under [`FAMILY`], which the page's CSS and the charts' SVG `<text>` name, and the charts
//! are laid out with its metrics ([`register_for_charts`]).

use ab_glyph::{point, Font, FontRef, PxScale, ScaleFont};
use base64::Engine as _;
use tiny_skia::Pixmap;

static TTF: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

/// The family name the page gives the embedded font (a CSS identifier, no quotes needed).
pub const FAMILY: &str = "areal-dejavu-sans";

/// The CSS `@font-face` rule embedding the font in the page (a `data:` URL, nothing fetched).
pub fn css_face() -> String {
    format!(
        "@font-face{{font-family:{FAMILY};font-style:normal;font-weight:400;src:url(data:font/ttf;base64,{}) format(\"truetype\")}}",
        base64::engine::general_purpose::STANDARD.encode(TTF)
    )
}

/// Makes the font known to plotters under [`FAMILY`], so the charts measure their labels
/// with it (idempotent).
pub fn register_for_charts() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| {
        plotters::style::register_font(FAMILY, plotters::style::FontStyle::Normal, TTF)
            .unwrap_or_else(|_| panic!("the bundled DejaVu Sans parses"));
    });
}

fn font() -> FontRef<'static> {
    FontRef::try_from_slice(TTF).expect("the bundled DejaVu Sans parses")
}

/// Width of `text` at `size` px, with kerning.
pub fn width(text: &str, size: f32) -> f32 {
    let f = font();
    let sf = f.as_scaled(PxScale::from(size));
    let mut w = 0.0;
    let mut prev = None;
    for ch in text.chars() {
        let id = sf.glyph_id(ch);
        if let Some(p) = prev {
            w += sf.kern(p, id);
        }
        w += sf.h_advance(id);
        prev = Some(id);
    }
    w
}

/// Draw `text` with its baseline at `y`; `anchor` 0 puts its start at `x`, 0.5 its middle,
/// 1 its end.
pub fn draw(pm: &mut Pixmap, text: &str, x: f32, y: f32, size: f32, rgb: [u8; 3], anchor: f32) {
    let f = font();
    let sf = f.as_scaled(PxScale::from(size));
    let mut caret = x - anchor * width(text, size);
    let (pw, ph) = (pm.width() as i32, pm.height() as i32);
    let data = pm.data_mut();
    let mut prev = None;
    for ch in text.chars() {
        let id = sf.glyph_id(ch);
        if let Some(p) = prev {
            caret += sf.kern(p, id);
        }
        prev = Some(id);
        let g = id.with_scale_and_position(sf.scale(), point(caret, y));
        caret += sf.h_advance(id);
        let Some(og) = f.outline_glyph(g) else {
            continue;
        };
        let b = og.px_bounds();
        og.draw(|gx, gy, cov| {
            let (px, py) = (b.min.x as i32 + gx as i32, b.min.y as i32 + gy as i32);
            if px < 0 || py < 0 || px >= pw || py >= ph {
                return;
            }
            let i = 4 * (py * pw + px) as usize;
            let a = cov.clamp(0.0, 1.0);
            // The page is opaque: blend straight into the colour channels.
            for k in 0..3 {
                let d = data[i + k] as f32;
                data[i + k] = (rgb[k] as f32 * a + d * (1.0 - a)).round() as u8;
            }
            data[i + 3] = 255;
        });
    }
}
