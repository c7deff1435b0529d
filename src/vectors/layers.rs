//! Assembling the five layers from the traced range and writing every file.
//!
//! Order: trace the patches and M from the runs ([`super::source::trace`]), then write
//! `range.gpkg` (raster CRS), the GeoJSON files (lon/lat) and, when asked, the equal-area
//! GeoPackage. The geometries of one CRS are made, written and dropped before the next.

use super::equal_area::{choose, Target};
use super::geojson::{coordinates, coordinates_union, write_geojson};
use super::inputs::{Kind, SummaryFacts, Table, Value};
use super::lonlat::{densify, ToLonLat};
use super::parallels::lonlat_polygon;
use super::polygonize::polygons_of;
use super::source::{trace, RunSource};
use super::trace::PixelPolygon;
use super::write::{wkb, wkb_union, write_gpkg, Geom, LayerData};
use super::{VectorOptions, VectorReport};
use crate::crs::{grid_srs, transform, wgs84};
use crate::raster_io::class;
use crate::{Error, GridSpec, Result};
use gdal::spatial_ref::CoordTransform;
use gdal::vector::ToGdal;
use geo::orient::{Direction, Orient};
use geo_types::{Coord, LineString, MultiPolygon, Polygon};
use rayon::prelude::*;
use std::borrow::Cow;
use std::path::Path;

/// Metres in one degree of latitude at most (at the poles, WGS84): a tolerance of t m is
/// t / this in degrees, which never moves a point by more than t m on a lon/lat grid.
const MAX_M_PER_DEG_LAT: f64 = 111_694.0;

/// The tables of a run, in the layers' schema (see `tables.rs`).
pub(crate) struct RunTables {
    pub patches: Table,
    pub records: Option<Table>,
    pub facts: SummaryFacts,
}

pub(crate) fn build_and_write(
    src: &dyn RunSource,
    tables: &RunTables,
    opts: &VectorOptions,
    out_dir: &Path,
    ctx: &Path,
) -> Result<VectorReport> {
    let grid = src.grid().clone();
    let patches = src.patches();
    let t = &tables.patches;
    if t.rows.len() != patches.len() {
        return Err(Error::Processing {
            what: "vector layers".into(),
            reason: format!(
                "{} patch rows for {} patches; give the patches.csv of the same run",
                t.rows.len(),
                patches.len()
            ),
        });
    }
    let mut clock = crate::progress::StageClock::new();
    let traced = trace(src)?;
    clock.lap("vectors: trace");
    let to_ll = ToLonLat::new(&grid)?;
    let tol = match opts.simplify_m {
        None => None,
        Some(m) if grid.geographic => Some(m / MAX_M_PER_DEG_LAT),
        Some(m) => Some(m / grid_srs(&grid)?.linear_units()),
    };
    let native_of = |ps: &[PixelPolygon]| native(ps, &grid, tol, ctx);
    let shapes: Vec<MultiPolygon<f64>> = traced
        .patches
        .iter()
        .map(|p| native_of(p))
        .collect::<Result<_>>()?;
    let accessible = native_of(&traced.accessible)?;
    let m_cells = traced.m_cells as i64;
    drop(traced);

    let class1: Vec<usize> = (0..patches.len())
        .filter(|&i| patches[i].class == class::INSIDE)
        .collect();
    let class2: Vec<usize> = (0..patches.len())
        .filter(|&i| patches[i].class == class::OUTSIDE)
        .collect();
    let f = &tables.facts;
    let range_table = Table {
        names: vec!["area_km2".into(), "cells".into(), "patches".into()],
        kinds: vec![Kind::Real, Kind::Int, Kind::Int],
        rows: vec![vec![
            Value::Real(f.inside_km2),
            Value::Int(class1.iter().map(|&i| patches[i].cells as i64).sum()),
            Value::Int(class1.len() as i64),
        ]],
    };
    let unreach_table = Table {
        names: t.names.clone(),
        kinds: t.kinds.clone(),
        rows: class2.iter().map(|&i| t.rows[i].clone()).collect(),
    };
    let access_table = Table {
        names: vec!["area_km2".into(), "cells".into(), "description".into()],
        kinds: vec![Kind::Real, Kind::Int, Kind::Text],
        rows: vec![vec![
            Value::Real(f.accessible_km2),
            Value::Int(m_cells),
            Value::Text(f.access_description.clone()),
        ]],
    };
    let record_lonlat: Vec<(f64, f64)> = match &tables.records {
        Some(r) => {
            let (lon, lat) = (col(r, "lon")?, col(r, "lat")?);
            (0..r.rows.len())
                .map(|i| {
                    (
                        r.num(i, lon).unwrap_or(f64::NAN),
                        r.num(i, lat).unwrap_or(f64::NAN),
                    )
                })
                .collect()
        }
        None => Vec::new(),
    };
    let lt = LayerTables {
        range: &range_table,
        patches: t,
        unreachable: &unreach_table,
        class2: &class2,
        accessible: &access_table,
        records: tables.records.as_ref(),
    };
    // range.gpkg on a second thread while this one writes the GeoJSON files: the two share
    // nothing but the traced polygons, and each is a single stream of writes.
    let (gpkg, json) = std::thread::scope(|s| {
        let gpkg = s.spawn(|| -> Result<()> {
            let native = Shapes::native(&shapes, &accessible, &record_lonlat, &grid)?;
            let enc = native.encode(&class1, wkb, wkb_union);
            drop(native);
            write_gpkg(
                &out_dir.join("range.gpkg"),
                &grid_srs(&grid)?,
                &enc.layers(&lt),
            )
        });
        let json = (|| -> Result<Vec<String>> {
            let ll = Shapes::lonlat(&shapes, &accessible, &record_lonlat, &to_ll, 0.0, ctx)?;
            let enc = ll.encode(&class1, coordinates, coordinates_union);
            drop(ll);
            let mut names = Vec::new();
            for l in enc.layers(&lt) {
                let name = format!("{}.geojson", l.name);
                write_geojson(&out_dir.join(&name), &l)?;
                names.push(name);
            }
            Ok(names)
        })();
        let gpkg = gpkg.join().unwrap_or_else(|p| std::panic::resume_unwind(p));
        (gpkg, json)
    });
    gpkg?;
    let json = json?;
    let mut written = vec!["range.gpkg".to_string()];
    written.extend(json);
    clock.lap("vectors: range.gpkg and GeoJSON");
    let w84 = wgs84()?;
    let mut equal_area_crs = None;
    if let Some(spec) = &opts.equal_area {
        let Target {
            srs,
            centre_lon,
            label,
        } = choose(spec, &grid)?;
        let mut ll = Shapes::lonlat(
            &shapes,
            &accessible,
            &record_lonlat,
            &to_ll,
            centre_lon,
            ctx,
        )?;
        ll.range = Some(concat(&ll.patches, &class1));
        let ct = transform(&w84, &srs, "--vector-crs (from WGS84 lon/lat)")?;
        let seg = if grid.geographic {
            grid.dx().max(grid.dy())
        } else {
            f64::INFINITY
        };
        let ea = ll.transformed(&ct, seg, ctx)?;
        write_gpkg(
            &out_dir.join("range-equal-area.gpkg"),
            &srs,
            &ea.encode(&class1, wkb, wkb_union).layers(&lt),
        )?;
        written.push("range-equal-area.gpkg".to_string());
        clock.lap("vectors: range-equal-area.gpkg");
        equal_area_crs = Some(label);
    }
    Ok(VectorReport {
        files: written,
        patches: patches.len(),
        unreachable: class2.len(),
        records: tables.records.as_ref().map_or(0, |r| r.rows.len()),
        equal_area_crs,
    })
}

fn col(t: &Table, name: &str) -> Result<usize> {
    t.names
        .iter()
        .position(|n| n == name)
        .ok_or_else(|| Error::Processing {
            what: "vector layers".into(),
            reason: format!("the records table has no field {name}"),
        })
}

/// Pixel polygons in the grid's CRS: on lon/lat grids with vertices along the parallels
/// (`parallels.rs`), elsewhere at the cell corners; simplified by `tol` (CRS units) when given.
pub(super) fn native(
    ps: &[PixelPolygon],
    grid: &GridSpec,
    tol: Option<f64>,
    ctx: &Path,
) -> Result<MultiPolygon<f64>> {
    let gt = grid.geo_transform;
    let corners = |ring: &[(u32, u32)]| {
        LineString(
            ring.iter()
                .map(|&(c, r)| Coord {
                    x: gt[0] + c as f64 * gt[1],
                    y: gt[3] + r as f64 * gt[5],
                })
                .collect(),
        )
    };
    if grid.geographic && tol.is_none() {
        return Ok(MultiPolygon(
            ps.iter().map(|p| lonlat_polygon(p, grid).0).collect(),
        ));
    }
    let mp = MultiPolygon(
        ps.iter()
            .map(|p| {
                Polygon::new(
                    corners(&p.exterior),
                    p.holes.iter().map(|h| corners(h)).collect(),
                )
            })
            .collect(),
    );
    let Some(tol) = tol else { return Ok(mp) };
    if mp.0.is_empty() {
        return Ok(mp);
    }
    let g = mp.to_gdal().map_err(Error::gdal(ctx, "simplifying"))?;
    let simple = g
        .simplify_preserve_topology(tol)
        .map_err(Error::gdal(ctx, "simplifying"))?;
    polygons_of(&simple, ctx)
}

/// The geometries of every layer in one CRS.
struct Shapes {
    patches: Vec<MultiPolygon<f64>>,
    /// The `range` feature when it is not simply the class-1 patches' polygons in order.
    range: Option<MultiPolygon<f64>>,
    accessible: MultiPolygon<f64>,
    records: Vec<Option<(f64, f64)>>,
}

fn concat(parts: &[MultiPolygon<f64>], ids: &[usize]) -> MultiPolygon<f64> {
    MultiPolygon(
        ids.iter()
            .flat_map(|&i| parts[i].0.iter().cloned())
            .collect::<Vec<Polygon<f64>>>(),
    )
}

impl Shapes {
    fn native(
        shapes: &[MultiPolygon<f64>],
        accessible: &MultiPolygon<f64>,
        records: &[(f64, f64)],
        grid: &crate::GridSpec,
    ) -> Result<Shapes> {
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
        let recs = records
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
            .collect();
        let patches: Vec<MultiPolygon<f64>> = shapes
            .iter()
            .map(|s| s.orient(Direction::Default))
            .collect();
        Ok(Shapes {
            range: None,
            patches,
            accessible: accessible.orient(Direction::Default),
            records: recs,
        })
    }

    fn lonlat(
        shapes: &[MultiPolygon<f64>],
        accessible: &MultiPolygon<f64>,
        records: &[(f64, f64)],
        to_ll: &ToLonLat,
        centre: f64,
        ctx: &Path,
    ) -> Result<Shapes> {
        let patches = shapes
            .iter()
            .enumerate()
            .map(|(i, s)| to_ll.polygons(s, centre, &format!("patch {}", i + 1), ctx))
            .collect::<Result<Vec<_>>>()?;
        let wrap = |lon: f64| {
            let l = centre - 180.0 + (lon - (centre - 180.0)).rem_euclid(360.0);
            if l == centre + 180.0 {
                centre - 180.0
            } else {
                l
            }
        };
        Ok(Shapes {
            range: None,
            patches,
            accessible: to_ll.polygons(accessible, centre, "the accessible area M", ctx)?,
            records: records
                .iter()
                .map(|&(lon, lat)| (lon.is_finite() && lat.is_finite()).then(|| (wrap(lon), lat)))
                .collect(),
        })
    }

    /// Every geometry transformed by `ct`, edges first cut to at most `seg` (input units).
    fn transformed(&self, ct: &CoordTransform, seg: f64, ctx: &Path) -> Result<Shapes> {
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
            records: self
                .records
                .iter()
                .map(|p| {
                    let (lon, lat) = (*p)?;
                    let (mut x, mut y) = ([lon], [lat]);
                    ct.transform_coords(&mut x, &mut y, &mut []).ok()?;
                    Some((x[0], y[0]))
                })
                .collect(),
        })
    }

    /// Every polygon geometry encoded once by `enc`, the patches on both cores; `range` from
    /// the class-1 patches' encodings by `union` unless it has its own.
    fn encode(
        &self,
        class1: &[usize],
        enc: fn(&MultiPolygon<f64>) -> Option<Vec<u8>>,
        union: fn(&[&[u8]]) -> Option<Vec<u8>>,
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
            records: self.records.clone(),
            patches,
        }
    }
}

/// The tables of the five layers, and which patches are unreachable (class 2).
struct LayerTables<'a> {
    range: &'a Table,
    patches: &'a Table,
    unreachable: &'a Table,
    class2: &'a [usize],
    accessible: &'a Table,
    records: Option<&'a Table>,
}

/// The geometries of every layer encoded for one file (see [`Geom::Encoded`]); None: no
/// geometry (an empty multipolygon, or a record without coordinates).
struct Encoded {
    patches: Vec<Option<Vec<u8>>>,
    range: Option<Vec<u8>>,
    accessible: Option<Vec<u8>>,
    records: Vec<Option<(f64, f64)>>,
}

impl Encoded {
    fn layers<'a>(&'a self, t: &LayerTables<'a>) -> Vec<LayerData<'a>> {
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
