//! The geometries of the layers in one CRS ([`Shapes`]), and encoded for one file
//! ([`Encoded`]): each patch's polygons are encoded once, and the `patches`, `unreachable` and
//! `range` layers copy those bytes.

use super::inputs::Table;
use super::lonlat::{densify, ToLonLat};
use super::polygonize::polygons_of;
use super::write::{Geom, LayerData};
use crate::crs::{grid_srs, transform, wgs84};
use crate::{Error, GridSpec, Result};
use gdal::spatial_ref::CoordTransform;
use gdal::vector::ToGdal;
use geo::orient::{Direction, Orient};
use geo_types::{MultiPolygon, Polygon};
use rayon::prelude::*;
use std::borrow::Cow;
use std::path::Path;

/// The records' WGS84 (lon, lat) in the grid's CRS (None: no coordinates, or none there).
pub(super) fn native_points(
    records: &[(f64, f64)],
    grid: &GridSpec,
) -> Result<Vec<Option<(f64, f64)>>> {
    let to_native: Option<CoordTransform> = if grid.geographic {
        None
    } else {
        Some(transform(
            &wgs84()?,
            &grid_srs(grid)?,
            "WGS84 lon/lat to the raster CRS (records layer)",
        )?)
    };
    let west = grid.geo_transform[0];
    Ok(records
        .iter()
        .map(|&(lon, lat)| {
            if !(lon.is_finite() && lat.is_finite()) {
                return None;
            }
            match &to_native {
                None if grid.wraps_antimeridian() => {
                    Some((west + (lon - west).rem_euclid(360.0), lat))
                }
                None => Some((lon, lat)),
                Some(ct) => {
                    let (mut x, mut y) = ([lon], [lat]);
                    ct.transform_coords(&mut x, &mut y, &mut []).ok()?;
                    Some((x[0], y[0])).filter(|p| p.0.is_finite() && p.1.is_finite())
                }
            }
        })
        .collect())
}

/// The records' (lon, lat) with longitudes in [centre - 180, centre + 180).
pub(super) fn lonlat_points(records: &[(f64, f64)], centre: f64) -> Vec<Option<(f64, f64)>> {
    let wrap = |lon: f64| {
        let l = centre - 180.0 + (lon - (centre - 180.0)).rem_euclid(360.0);
        if l == centre + 180.0 {
            centre - 180.0
        } else {
            l
        }
    };
    records
        .iter()
        .map(|&(lon, lat)| (lon.is_finite() && lat.is_finite()).then(|| (wrap(lon), lat)))
        .collect()
}

/// `points` transformed by `ct` (None where it fails).
pub(super) fn transformed_points(
    points: &[Option<(f64, f64)>],
    ct: &CoordTransform,
) -> Vec<Option<(f64, f64)>> {
    points
        .iter()
        .map(|p| {
            let (lon, lat) = (*p)?;
            let (mut x, mut y) = ([lon], [lat]);
            ct.transform_coords(&mut x, &mut y, &mut []).ok()?;
            Some((x[0], y[0]))
        })
        .collect()
}

/// The geometries of every layer in one CRS.
pub(super) struct Shapes {
    pub patches: Vec<MultiPolygon<f64>>,
    /// The `range` feature when it is not simply the class-1 patches' polygons in order.
    pub range: Option<MultiPolygon<f64>>,
    accessible: MultiPolygon<f64>,
}

pub(super) fn concat(parts: &[MultiPolygon<f64>], ids: &[usize]) -> MultiPolygon<f64> {
    MultiPolygon(
        ids.iter()
            .flat_map(|&i| parts[i].0.iter().cloned())
            .collect::<Vec<Polygon<f64>>>(),
    )
}

impl Shapes {
    /// The native polygons, oriented (exteriors counter-clockwise).
    pub(super) fn native(shapes: &[MultiPolygon<f64>], accessible: &MultiPolygon<f64>) -> Shapes {
        Shapes {
            range: None,
            patches: shapes
                .iter()
                .map(|s| s.orient(Direction::Default))
                .collect(),
            accessible: accessible.orient(Direction::Default),
        }
    }

    /// The polygons in lon/lat within [centre - 180, centre + 180] (see `lonlat.rs`).
    pub(super) fn lonlat(
        shapes: &[MultiPolygon<f64>],
        accessible: &MultiPolygon<f64>,
        to_ll: &ToLonLat,
        centre: f64,
        ctx: &Path,
    ) -> Result<Shapes> {
        let patches = shapes
            .iter()
            .enumerate()
            .map(|(i, s)| to_ll.polygons(s, centre, &format!("patch {}", i + 1), ctx))
            .collect::<Result<Vec<_>>>()?;
        Ok(Shapes {
            range: None,
            patches,
            accessible: to_ll.polygons(accessible, centre, "the accessible area M", ctx)?,
        })
    }

    /// Every geometry transformed by `ct`, edges first cut to at most `seg` (input units).
    pub(super) fn transformed(&self, ct: &CoordTransform, seg: f64, ctx: &Path) -> Result<Shapes> {
        let tr = |mp: &MultiPolygon<f64>| -> Result<MultiPolygon<f64>> {
            let dense = MultiPolygon(
                mp.0.iter()
                    .map(|p| {
                        Polygon::new(
                            densify(p.exterior(), seg),
                            p.interiors().iter().map(|h| densify(h, seg)).collect(),
                        )
                    })
                    .collect(),
            );
            let g = dense
                .to_gdal()
                .map_err(Error::gdal(ctx, "to the equal-area CRS"))?
                .transform(ct)
                .map_err(Error::gdal(ctx, "transforming to the equal-area CRS"))?;
            Ok(polygons_of(&g, ctx)?.orient(Direction::Default))
        };
        Ok(Shapes {
            patches: self.patches.iter().map(tr).collect::<Result<_>>()?,
            range: self.range.as_ref().map(tr).transpose()?,
            accessible: tr(&self.accessible)?,
        })
    }

    /// Every polygon geometry encoded once by `enc`, the patches on both cores; `range` from
    /// the class-1 patches' encodings by `union` unless it has its own.
    pub(super) fn encode(
        &self,
        class1: &[usize],
        enc: fn(&MultiPolygon<f64>) -> Option<Vec<u8>>,
        union: fn(&[&[u8]]) -> Option<Vec<u8>>,
        records: Vec<Option<(f64, f64)>>,
    ) -> Encoded {
        let patches: Vec<Option<Vec<u8>>> = self.patches.par_iter().map(enc).collect();
        let range = match &self.range {
            Some(r) => enc(r),
            None => union(
                &class1
                    .iter()
                    .filter_map(|&i| patches[i].as_deref())
                    .collect::<Vec<_>>(),
            ),
        };
        Encoded {
            range,
            accessible: enc(&self.accessible),
            records,
            patches,
        }
    }
}

/// The tables of the five layers, and which patches are unreachable (class 2).
pub(super) struct LayerTables<'a> {
    pub range: &'a Table,
    pub patches: &'a Table,
    pub unreachable: &'a Table,
    pub class2: &'a [usize],
    pub accessible: &'a Table,
    pub records: Option<&'a Table>,
}

/// The geometries of every layer encoded for one file (see [`Geom::Encoded`]); None: no
/// geometry (an empty multipolygon, or a record without coordinates).
pub(super) struct Encoded {
    pub records: Vec<Option<(f64, f64)>>,
    patches: Vec<Option<Vec<u8>>>,
    range: Option<Vec<u8>>,
    accessible: Option<Vec<u8>>,
}

impl Encoded {
    pub(super) fn layers<'a>(&'a self, t: &LayerTables<'a>) -> Vec<LayerData<'a>> {
        let area = |b: &'a Option<Vec<u8>>| b.as_deref().map(|b| Geom::Encoded(Cow::Borrowed(b)));
        let mut out = vec![
            LayerData {
                name: "range",
                points: false,
                table: t.range,
                geoms: vec![area(&self.range)],
            },
            LayerData {
                name: "patches",
                points: false,
                table: t.patches,
                geoms: self.patches.iter().map(area).collect(),
            },
            LayerData {
                name: "unreachable",
                points: false,
                table: t.unreachable,
                geoms: t.class2.iter().map(|&i| area(&self.patches[i])).collect(),
            },
            LayerData {
                name: "accessible",
                points: false,
                table: t.accessible,
                geoms: vec![area(&self.accessible)],
            },
        ];
        if let Some(r) = t.records {
            out.push(LayerData {
                name: "records",
                points: true,
                table: r,
                geoms: self
                    .records
                    .iter()
                    .map(|p| p.map(|(x, y)| Geom::Point(x, y)))
                    .collect(),
            });
        }
        out
    }
}
