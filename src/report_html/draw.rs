//! Drawing `map.png`: the decimated classes pixel for pixel (exact palette colours, no
//! resampling), the outline of M, the graticule with degree labels, the records, a scale
//! bar true at the map's centre, the legend with each class's area, the title and, when the
//! frame is smaller than the raster, a locator of the whole raster.

use super::geo::{degree_label, graticule_step, round_length, MapGeo};
use super::image::ClassImage;
use super::palette::{self, Rgb};
use super::{fmt_num, text, MapRecord};
use crate::{Error, GridSpec, Result};
use tiny_skia::{
    FillRule, Mask, Paint, PathBuilder, Pixmap, PremultipliedColorU8, Rect, Stroke, Transform,
};

/// Largest map panel, pixels.
pub const PANEL_MAX: (usize, usize) = (900, 560);
const LEFT: usize = 58;
const TOP: usize = 44;
const RIGHT: usize = 24;
const BELOW_PANEL: usize = 28;
const LEGEND_H: usize = 118;
const MIN_WIDTH: usize = 900;
/// Largest locator, pixels.
pub const LOCATOR: (usize, usize) = (200, 90);

/// What the map shows.
pub struct MapInput<'a> {
    /// The grid.
    pub grid: &'a GridSpec,
    /// Title line.
    pub title: String,
    /// The framed classes.
    pub image: &'a ClassImage,
    /// M on the image's pixels; None when M is the whole raster.
    pub access: Option<&'a [bool]>,
    /// The whole raster, when the frame is smaller.
    pub locator: Option<&'a ClassImage>,
    /// The records.
    pub records: &'a [MapRecord],
    /// Areas of classes 0, 1, 2, km2.
    pub areas_km2: [f64; 3],
}

/// The drawn map.
pub struct MapPng {
    /// PNG bytes (RGBA, opaque).
    pub png: Vec<u8>,
    /// The class panel in the PNG: x, y, width, height (pixels).
    pub panel: [usize; 4],
    /// PNG pixels per class-image pixel.
    pub scale: usize,
    /// The scale bar: its length in km and in PNG pixels (None when it could not be measured).
    pub scale_bar: Option<(f64, f64)>,
    /// The graticule's step in degrees (None without a graticule).
    pub graticule_step: Option<f64>,
}

fn paint(c: Rgb, alpha: u8) -> Paint<'static> {
    let mut p = Paint::default();
    p.set_color_rgba8(c[0], c[1], c[2], alpha);
    p.anti_alias = true;
    p
}

fn stroke(w: f32) -> Stroke {
    Stroke {
        width: w,
        ..Stroke::default()
    }
}

fn put(pm: &mut Pixmap, x: usize, y: usize, c: Rgb) {
    let w = pm.width() as usize;
    if let Some(px) = pm.pixels_mut().get_mut(y * w + x) {
        *px = PremultipliedColorU8::from_rgba(c[0], c[1], c[2], 255).expect("opaque colour");
    }
}

/// Class pixels, `s` PNG pixels per image pixel, top-left at (x0, y0).
fn blit(pm: &mut Pixmap, img: &ClassImage, x0: usize, y0: usize, s: usize) {
    for r in 0..img.rows {
        for c in 0..img.cols {
            let col = palette::class_colour(img.pixels[r * img.cols + c]);
            for dy in 0..s {
                for dx in 0..s {
                    put(pm, x0 + c * s + dx, y0 + r * s + dy, col);
                }
            }
        }
    }
}

/// The pixel edges between M and not-M, as one path.
fn access_outline(
    m: &[bool],
    iw: usize,
    ih: usize,
    x0: f32,
    y0: f32,
    s: f32,
) -> Option<tiny_skia::Path> {
    let mut pb = PathBuilder::new();
    let at = |c: usize, r: usize| m[r * iw + c];
    for r in 0..ih {
        for c in 0..iw {
            let here = at(c, r);
            let (x, y) = (x0 + c as f32 * s, y0 + r as f32 * s);
            // Right edge and bottom edge of each pixel; outer edges of the panel too.
            let right = if c + 1 < iw { at(c + 1, r) } else { false };
            if here != right && (here || c + 1 < iw) {
                pb.move_to(x + s, y);
                pb.line_to(x + s, y + s);
            }
            let below = if r + 1 < ih { at(c, r + 1) } else { false };
            if here != below && (here || r + 1 < ih) {
                pb.move_to(x, y + s);
                pb.line_to(x + s, y + s);
            }
            if here && c == 0 {
                pb.move_to(x, y);
                pb.line_to(x, y + s);
            }
            if here && r == 0 {
                pb.move_to(x, y);
                pb.line_to(x + s, y);
            }
        }
    }
    pb.finish()
}

/// Draw the map.
pub fn draw_map(input: &MapInput<'_>) -> Result<MapPng> {
    let img = input.image;
    let s = (PANEL_MAX.0 / img.cols).min(PANEL_MAX.1 / img.rows).max(1);
    let (pw, ph) = (img.cols * s, img.rows * s);
    let width = (LEFT + pw + RIGHT).max(MIN_WIDTH);
    let height = TOP + ph + BELOW_PANEL + LEGEND_H;
    let mut pm = Pixmap::new(width as u32, height as u32).ok_or_else(|| Error::Processing {
        what: "map".into(),
        reason: format!("cannot make a {width} x {height} image"),
    })?;
    pm.fill(tiny_skia::Color::WHITE);
    let (x0, y0) = (LEFT, TOP);
    blit(&mut pm, img, x0, y0, s);
    let id = Transform::identity();
    let mut clip = Mask::new(width as u32, height as u32).expect("mask size");
    let panel_rect = Rect::from_xywh(x0 as f32, y0 as f32, pw as f32, ph as f32).expect("panel");
    clip.fill_path(
        &PathBuilder::from_rect(panel_rect),
        FillRule::Winding,
        false,
        id,
    );
    let geo = MapGeo::new(input.grid, img.window)?;
    let sf = s as f32;
    let to_png = |x: f64, y: f64| (x0 as f32 + x as f32 * sf, y0 as f32 + y as f32 * sf);

    // Graticule: lines of constant lon and lat, sampled so projected grids curve right.
    let mut graticule = None;
    let corners: Vec<(f64, f64)> = (0..=20)
        .flat_map(|i| {
            let t = i as f64 / 20.0;
            let (w, h) = (img.cols as f64, img.rows as f64);
            [(t * w, 0.0), (t * w, h), (0.0, t * h), (w, t * h)]
        })
        .filter_map(|(x, y)| geo.px_to_lonlat(x, y))
        .collect();
    if !corners.is_empty() {
        let lon_min = corners.iter().map(|p| p.0).fold(f64::MAX, f64::min);
        let lon_max = corners.iter().map(|p| p.0).fold(f64::MIN, f64::max);
        let lat_min = corners
            .iter()
            .map(|p| p.1)
            .fold(f64::MAX, f64::min)
            .max(-90.0);
        let lat_max = corners
            .iter()
            .map(|p| p.1)
            .fold(f64::MIN, f64::max)
            .min(90.0);
        let step = graticule_step((lon_max - lon_min).max(lat_max - lat_min));
        graticule = Some(step);
        let line_paint = paint(palette::GRATICULE, 150);
        let mut labels: Vec<(String, f32, f32, f32)> = Vec::new();
        for (is_lon, lo, hi, a, b) in [
            (true, lon_min, lon_max, lat_min, lat_max),
            (false, lat_min, lat_max, lon_min, lon_max),
        ] {
            let mut v = (lo / step).ceil() * step;
            while v <= hi + 1e-9 {
                let mut pb = PathBuilder::new();
                let mut pts = Vec::new();
                for i in 0..=100 {
                    let u = a + (b - a) * i as f64 / 100.0;
                    let (lon, lat) = if is_lon { (v, u) } else { (u, v) };
                    if let Some((x, y)) = geo.lonlat_to_px(lon, lat) {
                        pts.push(to_png(x, y));
                    }
                }
                for (i, &(x, y)) in pts.iter().enumerate() {
                    if i == 0 {
                        pb.move_to(x, y);
                    } else {
                        pb.line_to(x, y);
                    }
                }
                if let Some(path) = pb.finish() {
                    pm.stroke_path(&path, &line_paint, &stroke(1.0), id, Some(&clip));
                }
                // Label where the line meets the bottom (longitude) or left (latitude) edge.
                let inside = |p: &&(f32, f32)| {
                    p.0 >= x0 as f32
                        && p.0 <= (x0 + pw) as f32
                        && p.1 >= y0 as f32
                        && p.1 <= (y0 + ph) as f32
                };
                if is_lon {
                    if let Some(p) = pts.iter().filter(inside).max_by(|p, q| p.1.total_cmp(&q.1)) {
                        if p.1 > (y0 + ph) as f32 - 0.2 * ph as f32 {
                            labels.push((degree_label(v, true), p.0, (y0 + ph) as f32 + 15.0, 0.5));
                        }
                    }
                } else if let Some(p) = pts.iter().filter(inside).min_by(|p, q| p.0.total_cmp(&q.0))
                {
                    if p.0 < x0 as f32 + 0.2 * pw as f32 {
                        labels.push((degree_label(v, false), x0 as f32 - 5.0, p.1 + 4.0, 1.0));
                    }
                }
                v += step;
            }
        }
        for (t, x, y, anchor) in labels {
            text::draw(&mut pm, &t, x, y, 11.0, palette::INK, anchor);
        }
    }

    // M outline.
    if let Some(m) = input.access {
        if let Some(path) = access_outline(m, img.cols, img.rows, x0 as f32, y0 as f32, sf) {
            pm.stroke_path(
                &path,
                &paint(palette::ACCESSIBLE, 255),
                &stroke(2.0),
                id,
                Some(&clip),
            );
        }
    }

    // Records: used (black dot, white ring), dropped (vermillion cross), excluded (purple square).
    let white = paint(palette::NODATA, 255);
    // Many records: smaller symbols, so the classes beneath stay readable.
    let size = if input.records.len() > 300 { 0.6 } else { 1.0 };
    for kind in ["excluded", "below_threshold", "used"] {
        for r in input.records.iter().filter(|r| r.kind() == kind) {
            let pos = match r.cell {
                Some((row, col)) => Some(geo.cell_to_px(col as f64 + 0.5, row as f64 + 0.5)),
                None => geo.lonlat_to_px(r.lon, r.lat),
            };
            let Some((x, y)) = pos else { continue };
            let (x, y) = to_png(x, y);
            if x < x0 as f32 || y < y0 as f32 || x > (x0 + pw) as f32 || y > (y0 + ph) as f32 {
                continue;
            }
            marker(&mut pm, kind, x, y, size, &white, Some(&clip));
        }
    }
    // Frame.
    pm.stroke_path(
        &PathBuilder::from_rect(panel_rect),
        &paint(palette::INK, 255),
        &stroke(1.0),
        id,
        None,
    );

    // Title.
    text::draw(
        &mut pm,
        &input.title,
        LEFT as f32,
        26.0,
        16.0,
        palette::INK,
        0.0,
    );

    // Legend.
    let ly = (TOP + ph + BELOW_PANEL) as f32 + 6.0;
    let lx = LEFT as f32;
    let rows: [(Rgb, String); 4] = [
        (
            palette::INSIDE,
            format!("suitable inside M: {} km²", fmt_num(input.areas_km2[1], 1)),
        ),
        (
            palette::OUTSIDE,
            format!("suitable beyond M: {} km²", fmt_num(input.areas_km2[2], 1)),
        ),
        (
            palette::UNSUITABLE,
            format!("below threshold: {} km²", fmt_num(input.areas_km2[0], 1)),
        ),
        (palette::NODATA, "no data".to_string()),
    ];
    for (i, (c, t)) in rows.iter().enumerate() {
        let y = ly + i as f32 * 20.0;
        let r = Rect::from_xywh(lx, y, 16.0, 14.0).expect("swatch");
        pm.fill_rect(r, &paint(*c, 255), id, None);
        pm.stroke_path(
            &PathBuilder::from_rect(r),
            &paint(palette::GRATICULE, 255),
            &stroke(1.0),
            id,
            None,
        );
        text::draw(&mut pm, t, lx + 24.0, y + 12.0, 12.0, palette::INK, 0.0);
    }
    let lx2 = lx + 300.0;
    let mut pb = PathBuilder::new();
    pb.move_to(lx2, ly + 7.0);
    pb.line_to(lx2 + 16.0, ly + 7.0);
    if let Some(p) = pb.finish() {
        pm.stroke_path(&p, &paint(palette::ACCESSIBLE, 255), &stroke(2.0), id, None);
    }
    let m_text = if input.access.is_some() {
        "accessible area M"
    } else {
        "M: the whole raster"
    };
    text::draw(
        &mut pm,
        m_text,
        lx2 + 24.0,
        ly + 12.0,
        12.0,
        palette::INK,
        0.0,
    );
    for (i, (kind, t)) in [
        ("used", "record used"),
        ("below_threshold", "record dropped by the threshold"),
        ("excluded", "record excluded (nodata)"),
    ]
    .iter()
    .enumerate()
    {
        let y = ly + 20.0 * (i + 1) as f32;
        marker(&mut pm, kind, lx2 + 8.0, y + 7.0, 1.0, &white, None);
        text::draw(&mut pm, t, lx2 + 24.0, y + 12.0, 12.0, palette::INK, 0.0);
    }
    // Scale bar, true along the horizontal through the map's centre.
    let mut scale_bar = None;
    if let Some(kmpp) = geo.km_per_px_at_centre(img.cols as f64, img.rows as f64) {
        let km_per_png_px = kmpp / s as f64;
        let len_km = round_length(km_per_png_px * 120.0);
        let len_px = (len_km / km_per_png_px) as f32;
        scale_bar = Some((len_km, len_px as f64));
        let (bx, by) = (lx, ly + 98.0);
        let mut pb = PathBuilder::new();
        pb.move_to(bx, by - 5.0);
        pb.line_to(bx, by);
        pb.line_to(bx + len_px, by);
        pb.line_to(bx + len_px, by - 5.0);
        if let Some(p) = pb.finish() {
            pm.stroke_path(&p, &paint(palette::INK, 255), &stroke(1.5), id, None);
        }
        let label = format!(
            "{} km (true at the map centre)",
            fmt_num(len_km, if len_km < 1.0 { 2 } else { 0 })
        );
        text::draw(
            &mut pm,
            &label,
            bx + len_px + 8.0,
            by + 1.0,
            12.0,
            palette::INK,
            0.0,
        );
    }
    // Locator of the whole raster with the frame.
    if let Some(loc) = input.locator {
        let ls = (LOCATOR.0 / loc.cols).min(LOCATOR.1 / loc.rows).max(1);
        let (lw, lh) = (loc.cols * ls, loc.rows * ls);
        let lx0 = width - RIGHT - lw;
        let ly0 = ly as usize;
        blit(&mut pm, loc, lx0, ly0, ls);
        let lr = Rect::from_xywh(lx0 as f32, ly0 as f32, lw as f32, lh as f32).expect("locator");
        pm.stroke_path(
            &PathBuilder::from_rect(lr),
            &paint(palette::INK, 255),
            &stroke(1.0),
            id,
            None,
        );
        let w = img.window;
        let (lf, gw) = (loc.window.factor as f32 * 1.0, input.grid.width);
        let fx = |c: usize| lx0 as f32 + (c % gw.max(1)) as f32 / lf * ls as f32;
        let fy = |r: usize| ly0 as f32 + r as f32 / lf * ls as f32;
        let (ax, ay) = (fx(w.col0), fy(w.row0));
        let fw = (w.cols as f32 / lf * ls as f32).max(3.0);
        let fh = ((w.row0 + w.rows) as f32 / lf * ls as f32 + ly0 as f32 - ay).max(3.0);
        // A frame across the seam of a wrapping grid is drawn on both sides.
        let loc_clip = {
            let mut m = Mask::new(width as u32, height as u32).expect("mask size");
            m.fill_path(&PathBuilder::from_rect(lr), FillRule::Winding, false, id);
            m
        };
        for shift in [0.0, -(lw as f32)] {
            if let Some(r) = Rect::from_xywh(ax + shift, ay, fw, fh) {
                pm.stroke_path(
                    &PathBuilder::from_rect(r),
                    &paint(palette::DROPPED, 255),
                    &stroke(2.0),
                    id,
                    Some(&loc_clip),
                );
            }
        }
        text::draw(
            &mut pm,
            "whole raster",
            (lx0 + lw / 2) as f32,
            ly0 as f32 + lh as f32 + 13.0,
            11.0,
            palette::INK,
            0.5,
        );
    }
    let png = pm.encode_png().map_err(|e| Error::Processing {
        what: "map".into(),
        reason: format!("encoding map.png: {e}"),
    })?;
    Ok(MapPng {
        png,
        panel: [x0, y0, pw, ph],
        scale: s,
        scale_bar,
        graticule_step: graticule,
    })
}

/// One record symbol at (x, y).
fn marker(
    pm: &mut Pixmap,
    kind: &str,
    x: f32,
    y: f32,
    k: f32,
    white: &Paint<'_>,
    clip: Option<&Mask>,
) {
    let id = Transform::identity();
    match kind {
        "used" => {
            if let Some(p) = PathBuilder::from_circle(x, y, 4.5 * k) {
                pm.fill_path(&p, white, FillRule::Winding, id, clip);
            }
            if let Some(p) = PathBuilder::from_circle(x, y, 3.0 * k) {
                pm.fill_path(&p, &paint(palette::INK, 255), FillRule::Winding, id, clip);
            }
        }
        "below_threshold" => {
            let mut pb = PathBuilder::new();
            pb.move_to(x - 4.5 * k, y - 4.5 * k);
            pb.line_to(x + 4.5 * k, y + 4.5 * k);
            pb.move_to(x - 4.5 * k, y + 4.5 * k);
            pb.line_to(x + 4.5 * k, y - 4.5 * k);
            if let Some(p) = pb.finish() {
                pm.stroke_path(&p, white, &stroke(4.5 * k), id, clip);
                pm.stroke_path(
                    &p,
                    &paint(palette::DROPPED, 255),
                    &stroke(2.2 * k),
                    id,
                    clip,
                );
            }
        }
        _ => {
            if let Some(r) = Rect::from_xywh(x - 4.0 * k, y - 4.0 * k, 8.0 * k, 8.0 * k) {
                let p = PathBuilder::from_rect(r);
                pm.stroke_path(&p, white, &stroke(3.5 * k), id, clip);
                pm.stroke_path(
                    &p,
                    &paint(palette::EXCLUDED, 255),
                    &stroke(1.8 * k),
                    id,
                    clip,
                );
            }
        }
    }
}
