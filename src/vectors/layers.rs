//! Assembling the five layers from a run's outputs and writing every file.
//!
//! Order: label the classes (the ids of patches.csv, checked cell count by cell count), measure
//! the unreachable distances, polygonize, rebuild M row by row (checked against the classes),
//! then write `range.gpkg` (raster CRS), the GeoJSON files (lon/lat) and, when asked, the
//! equal-area GeoPackage.

use super::crs::{choose, Target};
use super::distance::unreachable_distances_km;
use super::inputs::{Kind, RunInputs, Table, Value};
use super::lonlat::{densify, grid_srs, wgs84, ToLonLat};
use super::polygonize::{polygonize_labels, polygons_of};
use super::write::{write_geojson, write_gpkg, Geom, LayerData};
use super::{VectorOptions, VectorReport};
use crate::access::{AccessMask, AccessSpec};
use crate::patches::{label_grid, Connectivity};
use crate::raster_io::class;
use crate::{Error, Result};
use gdal::spatial_ref::CoordTransform;
use gdal::vector::ToGdal;
use geo::orient::{Direction, Orient};
use geo_types::{MultiPolygon, Polygon};
use std::path::Path;

/// Metres in one degree of latitude at most (at the poles, WGS84): a tolerance of t m is
/// t / this in degrees, which never moves a point by more than t m on a lon/lat grid.
const MAX_M_PER_DEG_LAT: f64 = 111_694.0;

fn mismatch(run: &RunInputs, what: String) -> Error {
    Error::UnsupportedRaster {
        path: run.classes_path.clone(),
        reason: format!(
            "does not match {}: {what}; give the classes.tif, patches.csv and summary.json of one run (and its --connectivity)",
            run.patches_path.display()
        ),
    }
}

pub(crate) fn build_and_write(
    run: RunInputs,
    conn: Connectivity,
    access: &AccessSpec,
    opts: &VectorOptions,
    out_dir: &Path,
) -> Result<VectorReport> {
    let grid = run.grid.clone();
    let ctx = run.classes_path.clone();
    let wrap = grid.wraps_antimeridian();
    let (mut labels, patches) = label_grid(&run.classes, grid.width, conn, wrap);

    // The label ids must be the patch ids of patches.csv.
    let t = &run.patches;
    let (c_id, c_class, c_cells) = (
        t.col("patch_id", &run.patches_path)?,
        t.col("class", &run.patches_path)?,
        t.col("cells", &run.patches_path)?,
    );
    if t.rows.len() != patches.len() {
        return Err(mismatch(
            &run,
            format!(
                "{} patches in the table, {} in the raster",
                t.rows.len(),
                patches.len()
            ),
        ));
    }
    for (i, p) in patches.iter().enumerate() {
        let (id, k, n) = (t.num(i, c_id), t.num(i, c_class), t.num(i, c_cells));
        if id != Some(p.id as f64) || k != Some(p.class as f64) || n != Some(p.cells as f64) {
            return Err(mismatch(
                &run,
                format!(
                    "row {} of the table is patch {id:?} (class {k:?}, {n:?} cells), the raster's patch {} has class {} and {} cells",
                    i + 1, p.id, p.class, p.cells
                ),
            ));
        }
    }

    let to_ll = ToLonLat::new(&grid)?;
    let distances =
        unreachable_distances_km(&run.classes, &labels, &grid, wrap, patches.len(), &to_ll);
    let mut shapes = polygonize_labels(&mut labels, &grid, conn, patches.len(), &ctx)?;
    drop(labels);
    if let Some(tol_m) = opts.simplify_m {
        let tol = if grid.geographic {
            tol_m / MAX_M_PER_DEG_LAT
        } else {
            tol_m / grid_srs(&grid)?.linear_units()
        };
        for s in shapes.iter_mut() {
            let g = s.to_gdal().map_err(Error::gdal(&ctx, "simplifying"))?;
            let simple = g
                .simplify_preserve_topology(tol)
                .map_err(Error::gdal(&ctx, "simplifying"))?;
            *s = polygons_of(&simple, &ctx)?;
        }
    }

    // M as used: the data cells whose centre is in M.
    let records_lonlat = match &run.records {
        Some(r) => {
            let (lon, lat) = (
                r.col("lon", &run.records_path)?,
                r.col("lat", &run.records_path)?,
            );
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
    let no_m_options = access == &AccessSpec::default();
    if no_m_options && !run.summary.whole_raster {
        return Err(Error::InvalidOption {
            option: "--accessible",
            reason: format!(
                "the run's M was \"{}\"; give the same --accessible / --buffer-km / --hull-buffer-km to rebuild it",
                run.summary.access_description
            ),
        });
    }
    let mut mask = AccessMask::build(&grid, access, &records_lonlat)?;
    if mask.description() != run.summary.access_description {
        return Err(Error::InvalidOption {
            option: "--accessible",
            reason: format!(
                "these M options give \"{}\", but the run's M was \"{}\"; give the run's own M options",
                mask.description(),
                run.summary.access_description
            ),
        });
    }
    let mut m_cells = vec![0u32; run.classes.len()];
    let mut row = vec![false; grid.width];
    for r in 0..grid.height {
        mask.fill_row(r, &mut row)?;
        for (c, &in_m) in row.iter().enumerate() {
            let i = r * grid.width + c;
            let k = run.classes[i];
            if (k == class::INSIDE && !in_m) || (k == class::OUTSIDE && in_m) {
                return Err(Error::InvalidOption {
                    option: "--accessible",
                    reason: format!(
                        "the rebuilt M disagrees with {} at row {r}, column {c} (class {k}); give the run's own M options and inputs",
                        ctx.display()
                    ),
                });
            }
            m_cells[i] = u32::from(in_m && k != class::NODATA);
        }
    }
    let n_m = m_cells.iter().filter(|&&v| v == 1).count();
    let accessible = polygonize_labels(&mut m_cells, &grid, Connectivity::Four, 1, &ctx)?
        .pop()
        .expect("one id");
    drop(m_cells);

    // Tables.
    let class1: Vec<usize> = (0..patches.len())
        .filter(|&i| patches[i].class == class::INSIDE)
        .collect();
    let class2: Vec<usize> = (0..patches.len())
        .filter(|&i| patches[i].class == class::OUTSIDE)
        .collect();
    let range_table = Table {
        names: vec!["area_km2".into(), "cells".into(), "patches".into()],
        kinds: vec![Kind::Real, Kind::Int, Kind::Int],
        rows: vec![vec![
            Value::Real(run.summary.inside_km2),
            Value::Int(class1.iter().map(|&i| patches[i].cells as i64).sum()),
            Value::Int(class1.len() as i64),
        ]],
    };
    let mut unreach_table = Table {
        names: t.names.clone(),
        kinds: t.kinds.clone(),
        rows: class2.iter().map(|&i| t.rows[i].clone()).collect(),
    };
    unreach_table.push_column(
        "distance_km",
        Kind::Real,
        class2
            .iter()
            .map(|&i| distances[i].map_or(Value::Null, Value::Real))
            .collect(),
    );
    let access_table = Table {
        names: vec!["area_km2".into(), "cells".into(), "description".into()],
        kinds: vec![Kind::Real, Kind::Int, Kind::Text],
        rows: vec![vec![
            Value::Real(run.summary.accessible_km2),
            Value::Int(n_m as i64),
            Value::Text(run.summary.access_description.clone()),
        ]],
    };
    let (records_table, record_lonlat) = match &run.records {
        Some(r) => {
            let mut r = r.clone();
            let st = r.col("status", &run.records_path)?;
            let dropped = (0..r.rows.len())
                .map(|i| Value::Bool(r.rows[i][st] == Value::Text("below_threshold".into())))
                .collect();
            r.push_column("dropped_by_threshold", Kind::Bool, dropped);
            (Some(r), records_lonlat)
        }
        None => (None, Vec::new()),
    };

    // Geometries per CRS: native, lon/lat (centre 0), equal-area.
    let native = Shapes::native(&shapes, &class1, &accessible, &record_lonlat, &grid)?;
    let mut written = Vec::new();
    let layers_of = |s: &Shapes| {
        s.layers(
            &range_table,
            t,
            &unreach_table,
            &class2,
            &access_table,
            records_table.as_ref(),
        )
    };
    write_gpkg(
        &out_dir.join("range.gpkg"),
        &grid_srs(&grid)?,
        &layers_of(&native),
    )?;
    written.push("range.gpkg".to_string());

    let ll = Shapes::lonlat(
        &shapes,
        &class1,
        &accessible,
        &record_lonlat,
        &to_ll,
        0.0,
        &ctx,
    )?;
    let w84 = wgs84()?;
    for l in layers_of(&ll) {
        let name = format!("{}.geojson", l.name);
        write_geojson(&out_dir.join(&name), &w84, &l)?;
        written.push(name);
    }
    let mut equal_area_crs = None;
    if let Some(spec) = &opts.equal_area {
        let Target {
            srs,
            centre_lon,
            label,
        } = choose(spec, &grid)?;
        let ll = Shapes::lonlat(
            &shapes,
            &class1,
            &accessible,
            &record_lonlat,
            &to_ll,
            centre_lon,
            &ctx,
        )?;
        let ct = CoordTransform::new(&w84, &srs).map_err(|e| Error::Crs {
            what: "--vector-crs".into(),
            reason: format!("no transformation from WGS84: {e}"),
        })?;
        let seg = if grid.geographic {
            grid.dx().max(grid.dy())
        } else {
            f64::INFINITY
        };
        let ea = ll.transformed(&ct, seg, &ctx)?;
        write_gpkg(
            &out_dir.join("range-equal-area.gpkg"),
            &srs,
            &layers_of(&ea),
        )?;
        written.push("range-equal-area.gpkg".to_string());
        equal_area_crs = Some(label);
    }
    Ok(VectorReport {
        files: written,
        patches: patches.len(),
        unreachable: class2.len(),
        records: records_table.map_or(0, |r| r.rows.len()),
        equal_area_crs,
    })
}

/// The geometries of every layer in one CRS.
struct Shapes {
    patches: Vec<MultiPolygon<f64>>,
    range: MultiPolygon<f64>,
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
        class1: &[usize],
        accessible: &MultiPolygon<f64>,
        records: &[(f64, f64)],
        grid: &crate::GridSpec,
    ) -> Result<Shapes> {
        let to_native: Option<CoordTransform> = if grid.geographic {
            None
        } else {
            Some(
                CoordTransform::new(&wgs84()?, &grid_srs(grid)?).map_err(|e| Error::Crs {
                    what: "raster CRS".into(),
                    reason: format!("no transformation from WGS84 for the records: {e}"),
                })?,
            )
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
            range: concat(&patches, class1),
            patches,
            accessible: accessible.orient(Direction::Default),
            records: recs,
        })
    }

    fn lonlat(
        shapes: &[MultiPolygon<f64>],
        class1: &[usize],
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
            range: concat(&patches, class1),
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
            range: tr(&self.range)?,
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

    fn layers<'a>(
        &self,
        range: &'a Table,
        patches: &'a Table,
        unreachable: &'a Table,
        class2: &[usize],
        accessible: &'a Table,
        records: Option<&'a Table>,
    ) -> Vec<LayerData<'a>> {
        let area = |mp: &MultiPolygon<f64>| Some(Geom::Area(mp.clone()));
        let mut out = vec![
            LayerData {
                name: "range",
                points: false,
                table: range,
                geoms: vec![area(&self.range)],
            },
            LayerData {
                name: "patches",
                points: false,
                table: patches,
                geoms: self.patches.iter().map(area).collect(),
            },
            LayerData {
                name: "unreachable",
                points: false,
                table: unreachable,
                geoms: class2.iter().map(|&i| area(&self.patches[i])).collect(),
            },
            LayerData {
                name: "accessible",
                points: false,
                table: accessible,
                geoms: vec![area(&self.accessible)],
            },
        ];
        if let Some(r) = records {
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
