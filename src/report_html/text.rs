//! The report's one font: DejaVu Sans, shipped in `assets/fonts` (unmodified; licence in
//! `assets/fonts/LICENSE-DejaVu.txt`), never one from the system. The map's text is drawn
//! with the whole file here; the page embeds, as a base64 `@font-face` ([`css_face`]) under
//! [`FAMILY`] (which the page's CSS and the charts' SVG `<text>` name), a subset of it holding
//! only the characters of the page's own text ([`page_chars`]), its outlines unchanged. The
//! charts are laid out with the font's metrics ([`register_for_charts`]).

use ab_glyph::{point, Font, FontRef, PxScale, ScaleFont};
use base64::Engine as _;
use read_fonts::collections::IntSet;
use read_fonts::types::{NameId, Tag};
use std::collections::BTreeSet;
use tiny_skia::Pixmap;

static TTF: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

/// The family name the page gives the embedded font (a CSS identifier, no quotes needed).
pub const FAMILY: &str = "areal-dejavu-sans";

/// Characters the browser sets in the page's font without them being in the markup: the
/// space and the disc of `<ul>` markers (CSS Lists 3, `list-style-type: disc`, U+2022).
const ALWAYS: [char; 2] = [' ', '\u{2022}'];

/// The characters of a page's text: everything outside its tags and its `<style>` element,
/// with character references (`&amp;`, `&#8722;`, `&#x2212;` ...) decoded, plus [`ALWAYS`].
pub fn page_chars(markup: &str) -> BTreeSet<char> {
    let mut out: BTreeSet<char> = ALWAYS.into_iter().collect();
    let mut rest = markup;
    while !rest.is_empty() {
        if let Some(tail) = rest.strip_prefix('<') {
            let end = if tail.starts_with("style") {
                tail.find("</style>").map_or(tail.len(), |i| i + 8)
            } else {
                tail.find('>').map_or(tail.len(), |i| i + 1)
            };
            rest = &tail[end..];
            continue;
        }
        let ch = rest.chars().next().expect("rest is not empty");
        if ch == '&' {
            if let Some((decoded, len)) = reference(rest) {
                out.insert(decoded);
                rest = &rest[len..];
                continue;
            }
        }
        out.insert(ch);
        rest = &rest[ch.len_utf8()..];
    }
    out
}

/// The character a reference at the start of `s` stands for, and its length in bytes.
fn reference(s: &str) -> Option<(char, usize)> {
    let end = s.bytes().take(12).position(|b| b == b';')?;
    let name = &s[1..end];
    let ch = match name {
        "amp" => '&',
        "lt" => '<',
        "gt" => '>',
        "quot" => '"',
        "apos" => '\'',
        "nbsp" => '\u{a0}',
        _ => {
            let num = name.strip_prefix('#')?;
            let code = match num.strip_prefix(['x', 'X']) {
                Some(hex) => u32::from_str_radix(hex, 16).ok()?,
                None => num.parse().ok()?,
            };
            char::from_u32(code)?
        }
    };
    Some((ch, end + 1))
}

/// The shipped font cut down to the glyphs of `chars` (with the glyphs its composites and
/// layout rules reach, and `.notdef`); the outlines, metrics, hints and the name records
/// with the copyright and licence are kept. Characters the font lacks are left out (the
/// browser sets them in a fallback font, as it would with the whole file).
pub fn subset(chars: &BTreeSet<char>) -> crate::Result<Vec<u8>> {
    let fail = |reason: String| crate::Error::Processing {
        what: "the report's font".into(),
        reason: format!(
            "subsetting the shipped DejaVu Sans failed ({reason}); write the run with --no-report"
        ),
    };
    let font = read_fonts::FontRef::new(TTF).map_err(|e| fail(e.to_string()))?;
    let unicodes: IntSet<u32> = chars.iter().map(|&c| c as u32).collect();
    // Name records kept: 0-6 (copyright, family, style, id, full name, version, PostScript
    // name) and 13-14 (licence and its URL), as the licence asks of every copy.
    let mut names = IntSet::<NameId>::empty();
    names.insert_range(NameId::new(0)..=NameId::new(6));
    names.insert_range(NameId::new(13)..=NameId::new(14));
    let mut languages = IntSet::<u16>::empty();
    languages.insert(0x409);
    // The tables HarfBuzz's hb-subset drops by default, as skera's own command line does
    // (DejaVu Sans's kerning stays: its GPOS holds a `kern` feature beside the legacy table).
    let drop: IntSet<Tag> = [
        b"morx", b"mort", b"kerx", b"kern", b"JSTF", b"DSIG", b"EBDT", b"EBLC", b"EBSC", b"SVG ",
        b"PCLT", b"LTSH", b"feat", b"Glat", b"Gloc", b"Silf", b"Sill",
    ]
    .into_iter()
    .map(Tag::new)
    .collect();
    let plan = skera::Plan::new(
        &IntSet::empty(),
        &unicodes,
        &font,
        skera::SubsetFlags::default(),
        &drop,
        &IntSet::all(),
        &skera::DEFAULT_LAYOUT_FEATURES.iter().copied().collect(),
        &names,
        &languages,
    );
    skera::subset_font(&font, &plan).map_err(|e| fail(e.to_string()))
}

/// The CSS `@font-face` rule embedding the subset of the font for `chars` in the page (a
/// `data:` URL, nothing fetched).
pub fn css_face(chars: &BTreeSet<char>) -> crate::Result<String> {
    Ok(format!(
        "@font-face{{font-family:{FAMILY};font-style:normal;font-weight:400;src:url(data:font/ttf;base64,{}) format(\"truetype\")}}",
        base64::engine::general_purpose::STANDARD.encode(subset(chars)?)
    ))
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn page_chars_reads_text_and_references_and_skips_tags_and_style() {
        // Character references as WHATWG HTML defines them: named, decimal and hexadecimal
        // (U+2212 MINUS SIGN, U+00B2 SUPERSCRIPT TWO).
        let got = page_chars(
            "<style>@font-face{q:z}</style><p class=\"k\">a&amp;b&#8722;&#xB2;&apos;&zz&éééééé;</p>\n",
        );
        let want: BTreeSet<char> =
            [' ', '•', 'a', '&', 'b', '−', '²', '\'', 'z', 'é', ';', '\n'].into();
        assert_eq!(got, want);
    }

    #[test]
    fn the_subset_maps_the_characters_asked_for_and_no_others() {
        // Read back with ttf-parser's cmap lookup, the parser ab_glyph uses on the whole file.
        let chars: BTreeSet<char> = ['k', '²', '€'].into();
        let sub = subset(&chars).unwrap();
        let face = ab_glyph::FontRef::try_from_slice(&sub).unwrap();
        for c in chars {
            assert_ne!(face.glyph_id(c).0, 0, "{c:?}");
        }
        assert_eq!(face.glyph_id('x').0, 0);
        assert!(sub.len() < TTF.len() / 50, "{} bytes", sub.len());
    }
}
