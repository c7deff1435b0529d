//! Records from a GDAL vector layer (GeoJSON, GeoPackage, Shapefile, ...).
//!
//! - The layer is `--records-layer` or the first one. Geometries must be Point or MultiPoint (Z/M
//!   allowed, ignored); a MultiPoint gives one record per point.
//! - Null or empty geometries are skipped with a warning; any other geometry type is an
//!   error naming the feature.
//! - Origins are "feature N" with N the feature id GDAL reports (as `ogrinfo` shows it); a
//!   MultiPoint member is "feature N point k" (k from 1).
//! - The CRS is the layer's own (GeoJSON without a `crs` member is EPSG:4326); a layer
//!   without one uses `--records-crs`, with a warning.

use super::{RawPoint, RawRecords, DEFAULT_CRS};
use crate::{Error, Result};
use gdal::vector::{geometry_type_flatten, Geometry, LayerAccess, OGRwkbGeometryType};
use gdal::{Dataset, DatasetOptions, GdalOpenFlags};
use std::path::Path;

/// Id fields in order of preference (compared case-insensitively), as for delimited files.
const ID_FIELDS: [&str; 3] = ["occurrenceID", "gbifID", "id"];

/// Read the point layer of a vector file into raw points in the layer's CRS.
pub(super) fn read(path: &Path, opts: &super::RecordOptions) -> Result<RawRecords> {
    let ds = Dataset::open_ex(
        path,
        DatasetOptions {
            open_flags: GdalOpenFlags::GDAL_OF_VECTOR | GdalOpenFlags::GDAL_OF_VERBOSE_ERROR,
            ..Default::default()
        },
    )
    .map_err(Error::gdal(
        path,
        "open as records (a .csv/.tsv/.txt table or a vector file GDAL can read)",
    ))?;
    let names: Vec<String> = ds.layers().map(|l| l.name()).collect();
    let mut layer = match &opts.layer {
        Some(name) => ds.layer_by_name(name).map_err(|_| Error::InvalidOption {
            option: "--records-layer",
            reason: format!(
                "no layer '{name}' in {}; layers found: {}",
                path.display(),
                names.join(", ")
            ),
        })?,
        None => ds.layer(0).map_err(|_| Error::Records {
            path: path.to_path_buf(),
            reason: "no records: the file has no vector layer".into(),
        })?,
    };
    let mut warnings = Vec::new();
    if opts.lon_col.is_some() || opts.lat_col.is_some() {
        warnings.push(format!(
            "{}: --lon-col/--lat-col ignored for a vector layer; its point geometries are used",
            path.display()
        ));
    }
    let (srs, crs_label) = match layer.spatial_ref() {
        Some(s) => {
            if opts.crs != DEFAULT_CRS {
                warnings.push(format!(
                    "{}: layer '{}' has its own CRS; --records-crs {} ignored",
                    path.display(),
                    layer.name(),
                    opts.crs
                ));
            }
            (
                crate::crs::traditional(s),
                format!("CRS of layer '{}'", layer.name()),
            )
        }
        None => {
            warnings.push(format!(
                "{}: layer '{}' has no CRS; assuming --records-crs {}",
                path.display(),
                layer.name(),
                opts.crs
            ));
            (
                crate::crs::from_definition(&opts.crs, "--records-crs")?,
                format!("--records-crs {}", opts.crs),
            )
        }
    };
    let fields: Vec<String> = layer.defn().fields().map(|f| f.name()).collect();
    let id_field = ID_FIELDS
        .iter()
        .find_map(|c| fields.iter().position(|n| n.eq_ignore_ascii_case(c)));

    let mut points = Vec::new();
    let mut rows = 0usize;
    for (index, feature) in layer.features().enumerate() {
        rows += 1;
        let origin = format!("feature {}", feature.fid().unwrap_or(index as u64));
        let id = id_field
            .and_then(|i| feature.field_as_string(i).ok().flatten())
            .unwrap_or_default();
        let geom = feature
            .geometry()
            .filter(|g| unsafe { !g.c_geometry().is_null() });
        let Some(geom) = geom else {
            warnings.push(format!(
                "{} {origin}: no geometry; record skipped",
                path.display()
            ));
            continue;
        };
        if geom.is_empty() {
            warnings.push(format!(
                "{} {origin}: empty geometry; record skipped",
                path.display()
            ));
            continue;
        }
        match geometry_type_flatten(geom.geometry_type()) {
            OGRwkbGeometryType::wkbPoint => {
                let (x, y) = xy(geom);
                points.push(RawPoint { origin, id, x, y });
            }
            OGRwkbGeometryType::wkbMultiPoint => {
                for k in 0..geom.geometry_count() {
                    let member = geom.get_geometry(k);
                    let member_origin = format!("{origin} point {}", k + 1);
                    if member.is_empty() {
                        warnings.push(format!(
                            "{} {member_origin}: empty point; record skipped",
                            path.display()
                        ));
                        continue;
                    }
                    let (x, y) = xy(&member);
                    points.push(RawPoint {
                        origin: member_origin,
                        id: id.clone(),
                        x,
                        y,
                    });
                }
            }
            _ => {
                return Err(Error::Records {
                    path: path.to_path_buf(),
                    reason: format!(
                        "{origin} of layer '{}' is a {}; records must be Point or MultiPoint \
                         geometries (use the points themselves, not areas or lines)",
                        layer_name(&names, opts),
                        geom.geometry_name()
                    ),
                })
            }
        }
    }
    Ok(RawRecords {
        points,
        rows,
        columns: ("geometry".into(), "geometry".into()),
        warnings,
        srs,
        crs_label,
        swap_hint: "are longitude and latitude swapped in the file, or is its CRS wrong?",
    })
}

fn xy(point: &Geometry) -> (f64, f64) {
    let (x, y, _) = point.get_point(0);
    (x, y)
}

fn layer_name<'a>(names: &'a [String], opts: &'a super::RecordOptions) -> &'a str {
    opts.layer
        .as_deref()
        .or(names.first().map(String::as_str))
        .unwrap_or("")
}
