//! RFC 7946 GeoJSON files written straight from the layers, one feature at a time.
//!
//! GDAL's GeoJSON driver builds a JSON object tree per feature and prints every coordinate
//! through `printf`; on a continental 30" range that took longer than the raster pass. Here
//! each coordinate is rounded to [`GEOJSON_DECIMALS`] decimals (`round(x * 1e9) / 1e9`, the
//! double nearest to the decimal, so its shortest form has at most 9 decimals) and printed
//! by `serde_json`, which also writes the properties (numbers in their shortest exact form,
//! strings escaped as RFC 8259 asks, booleans as `true`/`false`, nulls).
//!
//! Layout as GDAL writes it: a FeatureCollection with the layer's `name` and no `crs` member
//! (RFC 7946 section 4: WGS84 lon/lat is implied). Geometries must already be lon/lat, cut at
//! the antimeridian and oriented (exteriors counter-clockwise, section 3.1.6).

use super::inputs::Value;
use super::write::{Geom, LayerData, GEOJSON_DECIMALS};
use crate::{Error, Result};
use geo_types::{LineString, MultiPolygon};
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;

/// Write one layer as an RFC 7946 GeoJSON file at `path` (which must not exist).
pub(crate) fn write_geojson(path: &Path, layer: &LayerData<'_>) -> Result<()> {
    if path.exists() {
        return Err(Error::Output {
            path: path.to_path_buf(),
            reason: "exists already; the vector step writes only new files".into(),
        });
    }
    let io = |e: std::io::Error| Error::Io {
        path: path.to_path_buf(),
        source: e,
    };
    let file = File::create(path).map_err(io)?;
    let mut w = BufWriter::with_capacity(1 << 20, file);
    write_all(&mut w, layer).map_err(io)?;
    w.flush().map_err(io)
}

fn write_all<W: Write>(w: &mut W, layer: &LayerData<'_>) -> std::io::Result<()> {
    let t = layer.table;
    write!(
        w,
        "{{\n\"type\": \"FeatureCollection\",\n\"name\": {},\n\"features\": [\n",
        json(layer.name)
    )?;
    let keys: Vec<String> = t.names.iter().map(|n| json(n)).collect();
    let mut num = String::new();
    for (i, (row, geom)) in t.rows.iter().zip(&layer.geoms).enumerate() {
        w.write_all(b"{ \"type\": \"Feature\", \"properties\": { ")?;
        for (k, (key, v)) in keys.iter().zip(row).enumerate() {
            if k > 0 {
                w.write_all(b", ")?;
            }
            let v = match v {
                Value::Int(x) => serde_json::Value::from(*x),
                Value::Real(x) => serde_json::Number::from_f64(*x)
                    .map_or(serde_json::Value::Null, serde_json::Value::Number),
                Value::Text(s) => serde_json::Value::from(s.as_str()),
                Value::Bool(b) => serde_json::Value::from(*b),
                Value::Null => serde_json::Value::Null,
            };
            write!(w, "{key}: {v}")?;
        }
        w.write_all(b" }, \"geometry\": ")?;
        let area = |w: &mut W, b: &[u8]| {
            w.write_all(b"{ \"type\": \"MultiPolygon\", \"coordinates\": ")?;
            w.write_all(b)?;
            w.write_all(b" }")
        };
        match geom {
            Some(Geom::Area(mp)) => match coordinates(mp) {
                Some(b) => area(w, &b)?,
                None => w.write_all(b"null")?,
            },
            Some(Geom::Encoded(b)) => area(w, b)?,
            Some(Geom::Point(x, y)) => {
                w.write_all(b"{ \"type\": \"Point\", \"coordinates\": ")?;
                pair(w, *x, *y, &mut num)?;
                w.write_all(b" }")?;
            }
            _ => w.write_all(b"null")?,
        }
        w.write_all(if i + 1 < t.rows.len() {
            b" },\n"
        } else {
            b" }\n"
        })?;
    }
    w.write_all(b"]\n}\n")
}

/// The `coordinates` member of `mp` as a GeoJSON MultiPolygon (RFC 7946 section 3.1.7); None
/// when it has no polygon (the feature's geometry is then null).
pub(crate) fn coordinates(mp: &MultiPolygon<f64>) -> Option<Vec<u8>> {
    if mp.0.is_empty() {
        return None;
    }
    let mut w = Vec::new();
    let mut num = String::new();
    w.extend_from_slice(b"[ ");
    for (j, p) in mp.0.iter().enumerate() {
        w.extend_from_slice(if j > 0 { b", [ " } else { b"[ " });
        ring(&mut w, p.exterior(), &mut num).expect("writes to memory");
        for h in p.interiors() {
            w.extend_from_slice(b", ");
            ring(&mut w, h, &mut num).expect("writes to memory");
        }
        w.extend_from_slice(b" ]");
    }
    w.extend_from_slice(b" ]");
    Some(w)
}

/// The `coordinates` of the multipolygon made of every polygon of `parts` (each from
/// [`coordinates`]), in order.
pub(crate) fn coordinates_union(parts: &[&[u8]]) -> Option<Vec<u8>> {
    let mut w = b"[ ".to_vec();
    for b in parts {
        if w.len() > 2 {
            w.extend_from_slice(b", ");
        }
        w.extend_from_slice(&b[2..b.len() - 2]);
    }
    (w.len() > 2).then(|| {
        w.extend_from_slice(b" ]");
        w
    })
}

fn json(s: &str) -> String {
    serde_json::Value::from(s).to_string()
}

fn ring(w: &mut impl Write, r: &LineString<f64>, num: &mut String) -> std::io::Result<()> {
    w.write_all(b"[ ")?;
    for (k, c) in r.0.iter().enumerate() {
        if k > 0 {
            w.write_all(b", ")?;
        }
        pair(w, c.x, c.y, num)?;
    }
    w.write_all(b" ]")
}

fn pair(w: &mut impl Write, x: f64, y: f64, num: &mut String) -> std::io::Result<()> {
    num.clear();
    num.push_str("[ ");
    push_coord(num, x);
    num.push_str(", ");
    push_coord(num, y);
    num.push_str(" ]");
    w.write_all(num.as_bytes())
}

/// `v` rounded to GEOJSON_DECIMALS decimals, in its shortest exact form ("10.25", "-0.5", "3.0").
fn push_coord(out: &mut String, v: f64) {
    let scale = 10f64.powi(GEOJSON_DECIMALS as i32);
    let r = (v * scale).round() / scale;
    let r = if r == 0.0 { 0.0 } else { r }; // no "-0.0"
    match serde_json::Number::from_f64(r) {
        Some(n) => {
            use std::fmt::Write as _;
            write!(out, "{n}").expect("writes to a String");
        }
        None => out.push_str("null"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn coordinates_have_at_most_nine_decimals_and_round_to_nearest() {
        let mut s = String::new();
        for v in [
            96.391_666_666_666_7,
            -19.408_333_333_333,
            180.0,
            -0.000_000_000_4,
            1e-9,
        ] {
            s.clear();
            push_coord(&mut s, v);
            let dec = s.split('.').nth(1).map_or(0, |d| d.len());
            assert!(dec <= 9, "{s}");
            // Half a unit of the 9th decimal at most from the value (plus the double's own
            // rounding), by RFC 8259 number parsing (serde_json).
            let back: f64 = s.parse().unwrap();
            assert!((back - v).abs() <= 0.5e-9 + 1e-13, "{v} -> {s}");
        }
        s.clear();
        push_coord(&mut s, 96.391_666_666_666_7);
        assert_eq!(s, "96.391666667");
        s.clear();
        push_coord(&mut s, -0.000_000_000_4);
        assert_eq!(s, "0.0");
    }
}
