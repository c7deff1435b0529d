//! Assembling the five layers from the traced range and writing every file.
//!
//! Two halves: [`prepare`] traces the patches and M from the runs ([`super::source::trace`])
//! and encodes their polygons for `range.gpkg` (raster CRS) and the GeoJSON files (lon/lat);
//! it needs the range model only, so `areal range` runs it beside the metrics. [`write`] then
//! writes `range.gpkg` and the GeoJSON files (on two threads) with the run's tables and, when
//! asked, the equal-area GeoPackage.

use super::equal_area::{choose, Target};
use super::geojson::{coordinates, coordinates_union, write_geojson};
use super::inputs::{Kind, SummaryFacts, Table, Value};
use super::lonlat::ToLonLat;
use super::parallels::lonlat_polygon;
use super::polygonize::polygons_of;
use super::shapes::{
    concat, lonlat_points, native_points, transformed_points, Encoded, LayerTables, Shapes,
};
use super::source::{trace, RunSource};
use super::trace::PixelPolygon;
use super::write::{wkb, wkb_union, write_gpkg};
use super::{VectorOptions, VectorReport};
use crate::crs::{grid_srs, transform, wgs84};
use crate::raster_io::class;
use crate::{Error, GridSpec, Result};
use gdal::vector::ToGdal;
use geo_types::{Coord, LineString, MultiPolygon, Polygon};
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

/// The geometry half of the vector step, from the range model alone: the traced polygons
/// encoded for `range.gpkg` (WKB) and the GeoJSON files. `areal range --vectors` makes it on a
/// second thread while the metrics run; [`write`] adds the tables and writes the files.
pub struct PreparedVectors {
    grid: GridSpec,
    patches: usize,
    class1: Vec<usize>,
    class2: Vec<usize>,
    m_cells: i64,
    /// Cells of the class-1 patches.
    range_cells: i64,
    native: Encoded,
    lonlat: Encoded,
    /// The native polygons (patches, M), kept for `range-equal-area.gpkg` only.
    shapes: Option<(Vec<MultiPolygon<f64>>, MultiPolygon<f64>)>,
}

/// Trace `src` and encode its polygons for the GeoPackage and the GeoJSON files.
pub(crate) fn prepare(
    src: &dyn RunSource,
    opts: &VectorOptions,
    ctx: &Path,
) -> Result<PreparedVectors> {
    let grid = src.grid().clone();
    let patches = src.patches();
    let mut clock = crate::progress::StageClock::new();
    let traced = trace(src)?;
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
    let range_cells = class1.iter().map(|&i| patches[i].cells as i64).sum();
    let native = Shapes::native(&shapes, &accessible).encode(&class1, wkb, wkb_union, Vec::new());
    let to_ll = ToLonLat::new(&grid)?;
    let lonlat = Shapes::lonlat(&shapes, &accessible, &to_ll, 0.0, ctx)?.encode(
        &class1,
        coordinates,
        coordinates_union,
        Vec::new(),
    );
    clock.lap("vectors: trace and encode");
    Ok(PreparedVectors {
        patches: patches.len(),
        class1,
        class2,
        m_cells,
        range_cells,
        native,
        lonlat,
        shapes: opts.equal_area.is_some().then_some((shapes, accessible)),
        grid,
    })
}

/// Write every vector file of `prep` into `out_dir`, with the run's `tables`.
pub(crate) fn write(
    prep: PreparedVectors,
    tables: &RunTables,
    opts: &VectorOptions,
    out_dir: &Path,
    ctx: &Path,
) -> Result<VectorReport> {
    let PreparedVectors {
        grid,
        patches: n_patches,
        class1,
        class2,
        m_cells,
        range_cells,
        mut native,
        mut lonlat,
        shapes,
    } = prep;
    let t = &tables.patches;
    if t.rows.len() != n_patches {
        return Err(Error::Processing {
            what: "vector layers".into(),
            reason: format!(
                "{} patch rows for {} patches; give the patches.csv of the same run",
                t.rows.len(),
                n_patches
            ),
        });
    }
    let mut clock = crate::progress::StageClock::new();
    let f = &tables.facts;
    let range_table = Table {
        names: vec!["area_km2".into(), "cells".into(), "patches".into()],
        kinds: vec![Kind::Real, Kind::Int, Kind::Int],
        rows: vec![vec![
            Value::Real(f.inside_km2),
            Value::Int(range_cells),
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
    native.records = native_points(&record_lonlat, &grid)?;
    lonlat.records = lonlat_points(&record_lonlat, 0.0);
    // range.gpkg on a second thread while this one writes the GeoJSON files: the two share
    // nothing but the encoded polygons, and each is a single stream of writes.
    let (gpkg, json) = std::thread::scope(|s| {
        let gpkg = s.spawn(|| {
            write_gpkg(
                &out_dir.join("range.gpkg"),
                &grid_srs(&grid)?,
                &native.layers(&lt),
            )
        });
        let json = (|| -> Result<Vec<String>> {
            let mut names = Vec::new();
            for l in lonlat.layers(&lt) {
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
    drop((native, lonlat));
    let mut written = vec!["range.gpkg".to_string()];
    written.extend(json);
    clock.lap("vectors: range.gpkg and GeoJSON");
    let mut equal_area_crs = None;
    if let (Some(spec), Some((shapes, accessible))) = (&opts.equal_area, &shapes) {
        let Target {
            srs,
            centre_lon,
            label,
        } = choose(spec, &grid)?;
        let to_ll = ToLonLat::new(&grid)?;
        let mut ll = Shapes::lonlat(shapes, accessible, &to_ll, centre_lon, ctx)?;
        ll.range = Some(concat(&ll.patches, &class1));
        let ct = transform(&wgs84()?, &srs, "--vector-crs (from WGS84 lon/lat)")?;
        let seg = if grid.geographic {
            grid.dx().max(grid.dy())
        } else {
            f64::INFINITY
        };
        let ea = ll.transformed(&ct, seg, ctx)?;
        let points = transformed_points(&lonlat_points(&record_lonlat, centre_lon), &ct);
        write_gpkg(
            &out_dir.join("range-equal-area.gpkg"),
            &srs,
            &ea.encode(&class1, wkb, wkb_union, points).layers(&lt),
        )?;
        written.push("range-equal-area.gpkg".to_string());
        clock.lap("vectors: range-equal-area.gpkg");
        equal_area_crs = Some(label);
    }
    Ok(VectorReport {
        files: written,
        patches: n_patches,
        unreachable: class2.len(),
        records: tables.records.as_ref().map_or(0, |r| r.rows.len()),
        equal_area_crs,
    })
}

/// [`prepare`] and [`write`] in one go.
pub(crate) fn build_and_write(
    src: &dyn RunSource,
    tables: &RunTables,
    opts: &VectorOptions,
    out_dir: &Path,
    ctx: &Path,
) -> Result<VectorReport> {
    write(prepare(src, opts, ctx)?, tables, opts, out_dir, ctx)
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
