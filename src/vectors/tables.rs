//! The attribute tables of the layers: one schema per layer, filled from the run's rows in
//! memory (`areal range --vectors`) or from an earlier run's CSV files (`areal polygons`), so
//! both give the same fields with the same types.
//!
//! Field names are those of patches.csv and records.csv, except where two names would share
//! their first 10 characters (the limit of a Shapefile's field names, so a Shapefile export
//! keeps every field): `centroid_lon`, `centroid_lat` become `cen_lon`, `cen_lat`.

use super::inputs::{Kind, Table, Value};
use crate::report::{PatchRow, RecordRow};
use crate::{Error, Result};
use std::path::Path;

/// (column of patches.csv, field of the layers, type)
pub(crate) const PATCH_FIELDS: [(&str, &str, Kind); 16] = [
    ("patch_id", "patch_id", Kind::Int),
    ("class", "class", Kind::Int),
    ("cells", "cells", Kind::Int),
    ("area_km2", "area_km2", Kind::Real),
    ("centroid_lon", "cen_lon", Kind::Real),
    ("centroid_lat", "cen_lat", Kind::Real),
    ("min_lon", "min_lon", Kind::Real),
    ("min_lat", "min_lat", Kind::Real),
    ("max_lon", "max_lon", Kind::Real),
    ("max_lat", "max_lat", Kind::Real),
    ("records", "records", Kind::Int),
    ("nearest_patch_km", "nearest_patch_km", Kind::Real),
    ("nearest_occupied_km", "nearest_occupied_km", Kind::Real),
    ("nearest_range_km", "nearest_range_km", Kind::Real),
    ("reachable", "reachable", Kind::Bool),
    ("reach_jumps", "reach_jumps", Kind::Int),
];

/// (column of records.csv, field of the `records` layer, type); `dropped_by_threshold` is added.
pub(crate) const RECORD_FIELDS: [(&str, &str, Kind); 9] = [
    ("origin", "origin", Kind::Text),
    ("id", "id", Kind::Text),
    ("lon", "lon", Kind::Real),
    ("lat", "lat", Kind::Real),
    ("row", "row", Kind::Int),
    ("col", "col", Kind::Int),
    ("suitability", "suitability", Kind::Real),
    ("class", "class", Kind::Int),
    ("status", "status", Kind::Text),
];

fn schema(fields: &[(&str, &str, Kind)]) -> Table {
    Table {
        names: fields.iter().map(|f| f.1.to_string()).collect(),
        kinds: fields.iter().map(|f| f.2).collect(),
        rows: Vec::new(),
    }
}

fn opt<T>(v: Option<T>, f: impl Fn(T) -> Value) -> Value {
    v.map_or(Value::Null, f)
}

/// The patch table from the run's rows; `nearest_range_km[i]` is patch i + 1's distance to
/// the nearest class-1 patch (edge to edge), empty when not computed.
pub(crate) fn patch_table(rows: &[PatchRow], nearest_range_km: &[Option<f64>]) -> Table {
    let mut t = schema(&PATCH_FIELDS);
    for (i, r) in rows.iter().enumerate() {
        t.rows.push(vec![
            Value::Int(r.patch_id.into()),
            Value::Int(r.class.into()),
            Value::Int(r.cells as i64),
            Value::Real(r.area_km2),
            Value::Real(r.centroid_lon),
            Value::Real(r.centroid_lat),
            Value::Real(r.min_lon),
            Value::Real(r.min_lat),
            Value::Real(r.max_lon),
            Value::Real(r.max_lat),
            Value::Int(r.records as i64),
            opt(r.nearest_patch_km, Value::Real),
            opt(r.nearest_occupied_km, Value::Real),
            opt(nearest_range_km.get(i).copied().flatten(), Value::Real),
            opt(r.reachable, Value::Bool),
            opt(r.reach_jumps, |j| Value::Int(j.into())),
        ]);
    }
    t
}

/// Text, with an empty string as null (as an empty CSV cell reads).
fn text(s: &str) -> Value {
    if s.is_empty() {
        Value::Null
    } else {
        Value::Text(s.to_string())
    }
}

/// The record table from the run's rows, with `dropped_by_threshold`.
pub(crate) fn record_table(rows: &[RecordRow]) -> Table {
    let mut t = schema(&RECORD_FIELDS);
    for r in rows {
        t.rows.push(vec![
            text(&r.origin),
            text(&r.id),
            Value::Real(r.lon),
            Value::Real(r.lat),
            opt(r.row, |v| Value::Int(v as i64)),
            opt(r.col, |v| Value::Int(v as i64)),
            opt(r.suitability, Value::Real),
            opt(r.class, |v| Value::Int(v.into())),
            Value::Text(r.status.as_str().to_string()),
        ]);
    }
    add_dropped(&mut t);
    t
}

fn add_dropped(t: &mut Table) {
    let st = t
        .names
        .iter()
        .position(|n| n == "status")
        .expect("status field");
    let dropped = t
        .rows
        .iter()
        .map(|r| Value::Bool(r[st] == Value::Text("below_threshold".into())))
        .collect();
    t.push_column("dropped_by_threshold", Kind::Bool, dropped);
}

/// A table of an earlier run (patches.csv or records.csv) read into the layer schema;
/// columns the file lacks (an older run) are null.
pub(crate) fn read_table(path: &Path, fields: &[(&str, &str, Kind)]) -> Result<Table> {
    let bad = |reason: String| Error::Records {
        path: path.to_path_buf(),
        reason,
    };
    let mut rd = csv::Reader::from_path(path)
        .map_err(|e| bad(format!("cannot read this areal table: {e}")))?;
    let header: Vec<String> = rd
        .headers()
        .map_err(|e| bad(format!("cannot read this areal table: {e}")))?
        .iter()
        .map(String::from)
        .collect();
    let cols: Vec<Option<usize>> = fields
        .iter()
        .map(|f| header.iter().position(|h| h == f.0))
        .collect();
    if cols[0].is_none() {
        return Err(bad(format!(
            "has no column {}; give the table areal wrote for this run",
            fields[0].0
        )));
    }
    let mut t = schema(fields);
    for (line, rec) in rd.records().enumerate() {
        let rec = rec.map_err(|e| bad(format!("cannot read this areal table: {e}")))?;
        let mut row = Vec::with_capacity(fields.len());
        for (f, c) in fields.iter().zip(&cols) {
            let text = c.and_then(|c| rec.get(c)).unwrap_or("");
            let v = match (text.is_empty(), f.2) {
                (true, _) => Some(Value::Null),
                (_, Kind::Int) => text.parse().ok().map(Value::Int),
                (_, Kind::Real) => text.parse().ok().map(Value::Real),
                (_, Kind::Bool) => match text.to_ascii_lowercase().as_str() {
                    "true" | "1" => Some(Value::Bool(true)),
                    "false" | "0" => Some(Value::Bool(false)),
                    _ => None,
                },
                (_, Kind::Text) => Some(Value::Text(text.to_string())),
            };
            row.push(v.ok_or_else(|| {
                bad(format!(
                    "line {}: column {} holds {text:?}, not a {}; give the table areal wrote",
                    line + 2,
                    f.0,
                    match f.2 {
                        Kind::Int => "whole number",
                        Kind::Real => "number",
                        _ => "true/false value",
                    }
                ))
            })?);
        }
        t.rows.push(row);
    }
    if fields[0].0 == RECORD_FIELDS[0].0 {
        add_dropped(&mut t);
    }
    Ok(t)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn field_names_are_distinct_in_their_first_10_characters() {
        // ESRI Shapefile (dBase III) field names hold at most 10 characters; GDAL's writer
        // truncates longer ones, so names must differ within the first 10.
        let patch: Vec<&str> = PATCH_FIELDS.iter().map(|f| f.1).collect();
        let mut rec: Vec<&str> = RECORD_FIELDS.iter().map(|f| f.1).collect();
        rec.push("dropped_by_threshold");
        for names in [
            &patch,
            &rec,
            &vec!["area_km2", "cells", "patches", "description"],
        ] {
            let mut short: Vec<String> =
                names.iter().map(|n| n.chars().take(10).collect()).collect();
            short.sort();
            let before = short.len();
            short.dedup();
            assert_eq!(short.len(), before, "{names:?}");
        }
        assert_eq!(PATCH_FIELDS[4].1, "cen_lon");
    }
}
