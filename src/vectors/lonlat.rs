//! Native (raster CRS) polygons to WGS84 lon/lat, cut at the antimeridian of a chosen centre.
//!
//! Input: multipolygons in the grid's CRS. On a geographic grid x is longitude and y latitude
//! already (the grid's lon/lat are taken as WGS84, as the area model does); x may run past 180
//! (grids from 0 to 360, or a patch across the seam of a global grid). On a projected grid
//! every edge is first cut into pieces no longer than one cell, each vertex is transformed to
//! lon/lat, and each ring's longitudes are unwrapped so that consecutive vertices differ by
//! less than 180 degrees (a ring that then fails to close around encloses a pole, which a
//! lon/lat polygon cannot hold: refused).
//!
//! Output: polygons whose longitudes lie in [centre - 180, centre + 180]. Anything beyond is cut
//! on the meridians centre +- 180 (+ k 360) and shifted by whole turns, so a feature crossing
//! that meridian becomes a multipolygon with parts on both sides (RFC 7946 section 3.1.9 for
//! centre 0); parts that meet after the shift are merged. Exterior rings counter-clockwise,
//! holes clockwise. Pixel-edge lon/lat polygons are cut exactly: their edges are parallels and
//! meridians, so every new vertex is an existing latitude on the cutting meridian.

use super::polygonize::{is_valid_quiet, polygons_of};
use crate::crs::{grid_srs, transform, wgs84};
use crate::{Error, GridSpec, Result};
use gdal::spatial_ref::CoordTransform;
use gdal::vector::{Geometry, ToGdal};
use geo::orient::{Direction, Orient};
use geo::MapCoords;
use geo_types::{Coord, LineString, MultiPolygon, Polygon};
use std::path::Path;

/// Transforms native grid coordinates to WGS84 lon/lat.
pub(crate) struct ToLonLat {
    /// None on geographic grids (x, y are lon, lat).
    ct: Option<CoordTransform>,
    /// Longest edge kept before transforming (native units): one cell.
    max_edge: f64,
}

impl ToLonLat {
    /// For `grid`.
    pub(crate) fn new(grid: &GridSpec) -> Result<Self> {
        let ct = if grid.geographic {
            None
        } else {
            Some(transform(
                &grid_srs(grid)?,
                &wgs84()?,
                "raster CRS to WGS84 lon/lat (vector outputs)",
            )?)
        };
        Ok(ToLonLat {
            ct,
            max_edge: grid.dx().max(grid.dy()),
        })
    }

    /// `mp` (native) as lon/lat within [centre - 180, centre + 180]; `what` names the feature.
    pub(crate) fn polygons(
        &self,
        mp: &MultiPolygon<f64>,
        centre: f64,
        what: &str,
        ctx: &Path,
    ) -> Result<MultiPolygon<f64>> {
        let ll = match &self.ct {
            None => mp.clone(),
            Some(ct) => {
                let mut out = Vec::with_capacity(mp.0.len());
                for p in &mp.0 {
                    let ring = |ls: &LineString<f64>, reference: f64| -> Result<LineString<f64>> {
                        let dense = densify(ls, self.max_edge);
                        let (mut xs, mut ys): (Vec<f64>, Vec<f64>) =
                            dense.0.iter().map(|c| (c.x, c.y)).unzip();
                        ct.transform_coords(&mut xs, &mut ys, &mut [])
                            .map_err(|e| Error::Crs {
                                what: "raster CRS".into(),
                                reason: format!("{what} has points with no WGS84 lon/lat: {e}"),
                            })?;
                        unwrap_ring(&mut xs, reference).map_err(|()| Error::UnsupportedRaster {
                            path: ctx.to_path_buf(),
                            reason: format!(
                                "{what} encloses a pole, which a lon/lat polygon cannot hold; \
                                 use the GeoPackage in the raster's CRS instead of the lon/lat outputs"
                            ),
                        })?;
                        Ok(LineString(
                            xs.into_iter()
                                .zip(ys)
                                .map(|(x, y)| Coord { x, y })
                                .collect(),
                        ))
                    };
                    // Holes are unwrapped next to their exterior, not on their own.
                    let ext = ring(p.exterior(), centre)?;
                    let x0 = ext.0.first().map_or(centre, |c| c.x);
                    let holes = p
                        .interiors()
                        .iter()
                        .map(|h| ring(h, x0))
                        .collect::<Result<Vec<_>>>()?;
                    out.push(Polygon::new(ext, holes));
                }
                MultiPolygon(out)
            }
        };
        split_at(&ll, centre, ctx).map(|m| m.orient(Direction::Default))
    }
}

/// Cut `mp` (lon/lat, longitudes unbounded) on the meridians centre + 180 + k 360 and shift each
/// part by whole turns into [centre - 180, centre + 180].
pub(crate) fn split_at(
    mp: &MultiPolygon<f64>,
    centre: f64,
    ctx: &Path,
) -> Result<MultiPolygon<f64>> {
    let fail = |what: &str| {
        Error::gdal(
            ctx,
            format!("cutting polygons at the antimeridian ({what})"),
        )
    };
    let (mut xmin, mut xmax) = (f64::INFINITY, f64::NEG_INFINITY);
    let (mut ymin, mut ymax) = (f64::INFINITY, f64::NEG_INFINITY);
    for p in &mp.0 {
        for c in &p.exterior().0 {
            xmin = xmin.min(c.x);
            xmax = xmax.max(c.x);
            ymin = ymin.min(c.y);
            ymax = ymax.max(c.y);
        }
    }
    if mp.0.is_empty() {
        return Ok(mp.clone());
    }
    let west = centre - 180.0;
    let k0 = ((xmin - west) / 360.0).floor() as i64;
    let k1 = ((xmax - west) / 360.0).ceil() as i64 - 1;
    if k0 == k1 {
        let shift = k0 as f64 * 360.0;
        return Ok(mp.map_coords(|c| Coord {
            x: c.x - shift,
            y: c.y,
        }));
    }
    let g = mp.to_gdal().map_err(fail("to OGR"))?;
    let mut parts: Vec<Polygon<f64>> = Vec::new();
    for k in k0..=k1 {
        let (w, e) = (west + 360.0 * k as f64, west + 360.0 * (k + 1) as f64);
        let window = Geometry::bbox(w, ymin - 1.0, e, ymax + 1.0).map_err(fail("window"))?;
        let Some(cut) = g.intersection(&window) else {
            return Err(Error::Output {
                path: ctx.to_path_buf(),
                reason: "GEOS could not cut a polygon at the antimeridian".into(),
            });
        };
        let shift = 360.0 * k as f64;
        let piece = polygons_of(&cut, ctx)?;
        parts.extend(
            piece
                .map_coords(|c| Coord {
                    x: c.x - shift,
                    y: c.y,
                })
                .0,
        );
    }
    let merged = MultiPolygon(parts);
    let mg = merged.to_gdal().map_err(fail("to OGR"))?;
    if is_valid_quiet(&mg) {
        return Ok(merged);
    }
    // Parts that met after the shift (a patch across the seam of the grid itself): dissolve.
    let mut acc: Option<Geometry> = None;
    for p in &merged.0 {
        let pg = p.to_gdal().map_err(fail("to OGR"))?;
        acc = Some(match acc {
            None => pg,
            Some(a) => a.union(&pg).ok_or_else(|| Error::Output {
                path: ctx.to_path_buf(),
                reason: "GEOS could not merge polygon parts at the antimeridian".into(),
            })?,
        });
    }
    polygons_of(&acc.expect("at least two parts"), ctx)
}

/// Unwrap a closed ring's longitudes in place: the first into [reference - 180, reference + 180),
/// each next one within 180 of the previous. Err when the ring does not close (a pole inside).
pub(crate) fn unwrap_ring(xs: &mut [f64], reference: f64) -> std::result::Result<(), ()> {
    if xs.is_empty() {
        return Ok(());
    }
    xs[0] = reference - 180.0 + (xs[0] - (reference - 180.0)).rem_euclid(360.0);
    for i in 1..xs.len() {
        let d = xs[i] - xs[i - 1];
        xs[i] = xs[i - 1] + (d + 180.0).rem_euclid(360.0) - 180.0;
    }
    let n = xs.len();
    if n > 1 && (xs[n - 1] - xs[0]).abs() > 1e-6 {
        return Err(());
    }
    Ok(())
}

/// `ls` with every edge cut into equal pieces no longer than `max_len`.
pub(crate) fn densify(ls: &LineString<f64>, max_len: f64) -> LineString<f64> {
    let mut out = Vec::with_capacity(ls.0.len());
    for w in ls.0.windows(2) {
        let (a, b) = (w[0], w[1]);
        let len = ((b.x - a.x).powi(2) + (b.y - a.y).powi(2)).sqrt();
        let n = ((len / max_len).ceil() as usize).max(1);
        for i in 0..n {
            let t = i as f64 / n as f64;
            out.push(Coord {
                x: a.x + t * (b.x - a.x),
                y: a.y + t * (b.y - a.y),
            });
        }
    }
    if let Some(&last) = ls.0.last() {
        out.push(last);
    }
    LineString(out)
}
