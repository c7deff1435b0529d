//! Writing layers through GDAL: GeoPackage (several layers, one transaction). GeoJSON files
//! are written by `geojson.rs`.
//!
//! Each layer is a [`Table`] (its columns become fields, typed as the table says) and one
//! optional geometry per row. Geometries are written as given: callers pass them in the
//! layer's CRS, and, for GeoJSON, already in lon/lat, cut at the antimeridian and oriented.

use super::inputs::{Kind, Table, Value};
use crate::{Error, Result};
use gdal::spatial_ref::SpatialRef;
use gdal::vector::{
    Feature, Geometry, LayerAccess, LayerOptions, OGRFieldType, OGRwkbGeometryType, ToGdal,
};
use gdal::{Dataset, DriverManager};
use geo_types::{LineString, MultiPolygon};
use std::borrow::Cow;
use std::ffi::CString;
use std::path::Path;

/// Decimal places of GeoJSON coordinates: 1e-9 degree, about 0.1 mm on the ground. Rounding
/// moves a cell edge by at most 0.06 mm, so an area recomputed from the file stays within
/// 1e-6 (relative) of the cell sum for cells down to about 100 m.
pub const GEOJSON_DECIMALS: usize = 9;

/// A geometry of one feature.
#[derive(Debug, Clone)]
pub(crate) enum Geom<'a> {
    Area(MultiPolygon<f64>),
    /// A multipolygon already encoded for the file it goes to: [`wkb`] for a GeoPackage,
    /// `geojson::coordinates` for GeoJSON. Layers that repeat a patch's polygons (`patches`,
    /// `unreachable`, `range`) encode them once and copy the bytes.
    Encoded(Cow<'a, [u8]>),
    Point(f64, f64),
}

/// One layer to write.
pub(crate) struct LayerData<'a> {
    pub name: &'static str,
    pub points: bool,
    pub table: &'a Table,
    /// One per row of `table`.
    pub geoms: Vec<Option<Geom<'a>>>,
}

/// Bytes of a multipolygon's WKB header: byte order, type, number of polygons.
pub(crate) const WKB_HEADER: usize = 9;

/// `mp` as ISO WKB (little-endian 2D MultiPolygon, OGC 06-103r4 section 8.2), as OGR reads it;
/// None when it has no polygon (the feature then has no geometry).
pub(crate) fn wkb(mp: &MultiPolygon<f64>) -> Option<Vec<u8>> {
    if mp.0.is_empty() {
        return None;
    }
    let n: usize = mp.0.iter().map(|p| 1 + p.interiors().len()).sum::<usize>();
    let pts: usize = mp.0.iter().map(|p| p.exterior().0.len()).sum::<usize>()
        + mp.0
            .iter()
            .flat_map(|p| p.interiors())
            .map(|r| r.0.len())
            .sum::<usize>();
    let mut out = Vec::with_capacity(WKB_HEADER * (1 + mp.0.len()) + 4 * n + 16 * pts);
    let u32le = |out: &mut Vec<u8>, v: usize| out.extend_from_slice(&(v as u32).to_le_bytes());
    let ring = |out: &mut Vec<u8>, r: &LineString<f64>| {
        u32le(out, r.0.len());
        for c in &r.0 {
            out.extend_from_slice(&c.x.to_le_bytes());
            out.extend_from_slice(&c.y.to_le_bytes());
        }
    };
    out.push(1);
    u32le(&mut out, 6);
    u32le(&mut out, mp.0.len());
    for p in &mp.0 {
        out.push(1);
        u32le(&mut out, 3);
        u32le(&mut out, 1 + p.interiors().len());
        ring(&mut out, p.exterior());
        for h in p.interiors() {
            ring(&mut out, h);
        }
    }
    Some(out)
}

/// The WKB of the multipolygon made of every polygon of `parts` (each from [`wkb`]), in order.
pub(crate) fn wkb_union(parts: &[&[u8]]) -> Option<Vec<u8>> {
    let count = |b: &[u8]| u32::from_le_bytes(b[5..9].try_into().expect("4 bytes")) as usize;
    let n: usize = parts.iter().map(|b| count(b)).sum();
    if n == 0 {
        return None;
    }
    let len: usize = parts.iter().map(|b| b.len() - WKB_HEADER).sum();
    let mut out = Vec::with_capacity(WKB_HEADER + len);
    out.push(1);
    out.extend_from_slice(&6u32.to_le_bytes());
    out.extend_from_slice(&(n as u32).to_le_bytes());
    for b in parts {
        out.extend_from_slice(&b[WKB_HEADER..]);
    }
    Some(out)
}

fn out_err(path: &Path, what: &str) -> impl FnOnce(gdal::errors::GdalError) -> Error {
    Error::gdal(path.to_path_buf(), format!("writing {what}"))
}

fn create_field(layer: &impl LayerAccess, name: &str, kind: Kind, path: &Path) -> Result<()> {
    let ty = match kind {
        Kind::Int => OGRFieldType::OFTInteger64,
        Kind::Real => OGRFieldType::OFTReal,
        Kind::Text => OGRFieldType::OFTString,
        Kind::Bool => OGRFieldType::OFTInteger,
    };
    let c_name = CString::new(name).map_err(|_| Error::Output {
        path: path.to_path_buf(),
        reason: format!("the column name {name:?} holds a NUL byte"),
    })?;
    // SAFETY: the field definition is created, handed to OGR (which copies it) and destroyed here.
    let rv = unsafe {
        let fld = gdal_sys::OGR_Fld_Create(c_name.as_ptr(), ty);
        if kind == Kind::Bool {
            gdal_sys::OGR_Fld_SetSubType(fld, gdal_sys::OGRFieldSubType::OFSTBoolean);
        }
        let rv = gdal_sys::OGR_L_CreateField(layer.c_layer(), fld, 1);
        gdal_sys::OGR_Fld_Destroy(fld);
        rv
    };
    if rv != gdal_sys::OGRErr::OGRERR_NONE {
        return Err(Error::Output {
            path: path.to_path_buf(),
            reason: format!("GDAL could not create the field {name}"),
        });
    }
    Ok(())
}

/// Write one layer into `ds`.
fn write_layer(
    ds: &mut Dataset,
    srs: &SpatialRef,
    data: &LayerData<'_>,
    options: &[&str],
    path: &Path,
) -> Result<()> {
    let what = format!("layer {}", data.name);
    let layer = ds
        .create_layer(LayerOptions {
            name: data.name,
            srs: Some(srs),
            ty: if data.points {
                OGRwkbGeometryType::wkbPoint
            } else {
                OGRwkbGeometryType::wkbMultiPolygon
            },
            options: Some(options),
        })
        .map_err(out_err(path, &what))?;
    let t = data.table;
    for (name, kind) in t.names.iter().zip(&t.kinds) {
        create_field(&layer, name, *kind, path)?;
    }
    let defn = layer.defn();
    for (row, geom) in t.rows.iter().zip(&data.geoms) {
        let mut ft = Feature::new(defn).map_err(out_err(path, &what))?;
        for (i, v) in row.iter().enumerate() {
            match v {
                Value::Int(x) => ft.set_field_integer64(i, *x),
                Value::Real(x) => ft.set_field_double(i, *x),
                Value::Text(s) => ft.set_field_string(i, s),
                Value::Bool(b) => ft.set_field_integer(i, i32::from(*b)),
                Value::Null => ft.set_field_null(i),
            }
            .map_err(out_err(path, &what))?;
        }
        let area = |b: &[u8]| Geometry::from_wkb(b).map_err(out_err(path, &what));
        match geom {
            Some(Geom::Area(mp)) => {
                if let Some(b) = wkb(mp) {
                    ft.set_geometry(area(&b)?).map_err(out_err(path, &what))?;
                }
            }
            Some(Geom::Encoded(b)) => {
                ft.set_geometry(area(b)?).map_err(out_err(path, &what))?;
            }
            Some(Geom::Point(x, y)) => {
                let p = geo_types::Point::new(*x, *y)
                    .to_gdal()
                    .map_err(out_err(path, &what))?;
                ft.set_geometry(p).map_err(out_err(path, &what))?;
            }
            _ => {}
        }
        ft.create(&layer).map_err(out_err(path, &what))?;
    }
    Ok(())
}

/// Write `layers` into a new GeoPackage at `path`, all in `srs`, in one transaction.
pub(crate) fn write_gpkg(path: &Path, srs: &SpatialRef, layers: &[LayerData<'_>]) -> Result<()> {
    if path.exists() {
        return Err(Error::Output {
            path: path.to_path_buf(),
            reason: "exists already; the vector step writes only new files".into(),
        });
    }
    let driver = DriverManager::get_driver_by_name("GPKG").map_err(out_err(path, "GeoPackage"))?;
    let mut ds = driver
        .create_vector_only(path)
        .map_err(out_err(path, "GeoPackage"))?;
    {
        let mut txn = ds
            .start_transaction()
            .map_err(out_err(path, "GeoPackage"))?;
        for l in layers {
            write_layer(&mut txn, srs, l, &[], path)?;
        }
        txn.commit().map_err(out_err(path, "GeoPackage"))?;
    }
    ds.close().map_err(out_err(path, "GeoPackage"))?;
    Ok(())
}
