//! Text on the map, drawn with the font shipped in `assets/fonts` (DejaVu Sans; licence in
//! `assets/fonts/LICENSE-DejaVu.txt`), never one from the system.

use ab_glyph::{point, Font, FontRef, PxScale, ScaleFont};
use tiny_skia::Pixmap;

static TTF: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

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
