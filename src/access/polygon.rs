//! Polygon part of M: read a GDAL polygon layer, reproject it to the raster CRS and
//! rasterise it row by row with a scanline (cell in when its centre is inside).
//!
//! Inputs: any GDAL vector file whose first layer holds Polygon / MultiPolygon features
//! (Z and M values are dropped), with a CRS. Output geometry is in the raster's CRS.
//! Edges are straight in the layer's CRS: when the layer is reprojected, edges are first
//! densified in the layer's CRS to about one raster cell, so curved images of straight
//! edges are followed to within a fraction of a cell.
//!
//! Scanline rule, in pixel coordinates (u, v) = ((x - x0)/dx, (y - y0)/dy): the centre of
//! row r is v = r + 0.5. An edge crosses the row when `min(v0, v1) <= v < max(v0, v1)`
//! (half-open, so a vertex exactly on the scanline is counted once and horizontal edges
//! never). Within one polygon (exterior ring and holes) crossings are paired even-odd;
//! a column is in when its centre u = c + 0.5 satisfies `u_a <= u < u_b` for a pair.
//! Polygons are OR-ed. Edges are kept sorted by their top v with an active list, so a row
//! costs O(edges crossing it + cells) when rows are asked in increasing order.

use std::path::Path;

use gdal::cpl::CslStringList;
use gdal::spatial_ref::SpatialRef;
use gdal::vector::{
    geometry_type_flatten, geometry_type_to_name, Geometry, LayerAccess, OGRwkbGeometryType,
};
use gdal::{Dataset, DatasetOptions, GdalOpenFlags};
use geo::Intersects;
use geo_types::{Coord, MultiPolygon, Polygon, Rect};

use crate::crs::{grid_srs, traditional, transform};
use crate::{Error, GridSpec, Result};

/// Polygons read from a file, in the raster CRS.
pub(crate) struct PolygonSource {
    pub(crate) polygons: MultiPolygon<f64>,
    pub(crate) warnings: Vec<String>,
}

/// Read the first layer of `path` into polygons in the grid's CRS.
pub(crate) fn read_polygons(path: &Path, grid: &GridSpec) -> Result<PolygonSource> {
    let bad = |reason: String| Error::Accessible {
        path: path.to_path_buf(),
        reason,
    };
    if !path.exists() {
        return Err(Error::MissingInput {
            path: path.to_path_buf(),
            what: "accessible-area polygon file",
        });
    }
    let opts = DatasetOptions {
        open_flags: GdalOpenFlags::GDAL_OF_VECTOR | GdalOpenFlags::GDAL_OF_VERBOSE_ERROR,
        ..Default::default()
    };
    let ds = Dataset::open_ex(path, opts).map_err(Error::gdal(path, "open as a vector file"))?;
    let mut warnings = Vec::new();
    let n_layers = ds.layer_count();
    if n_layers == 0 {
        return Err(bad(
            "the file holds no vector layer; give a polygon layer".into()
        ));
    }
    let mut layer = ds.layer(0).map_err(Error::gdal(path, "read layer 0"))?;
    let lname = layer.name();
    if n_layers > 1 {
        warnings.push(format!(
            "{}: {n_layers} layers, only the first ('{lname}') is used for M",
            path.display()
        ));
    }
    let Some(src) = layer.spatial_ref().map(traditional) else {
        return Err(bad(format!(
            "layer '{lname}' has no CRS; assign one (e.g. ogr2ogr -a_srs EPSG:4326 OUT IN) and run again"
        )));
    };
    let dst = grid_srs(grid)?;
    let to_grid = if src == dst {
        None
    } else {
        Some(transform(
            &src,
            &dst,
            &format!("{} (layer '{lname}') to the raster CRS", path.display()),
        )?)
    };
    let seg_len = match &to_grid {
        Some(_) => densify_length(grid, &dst, &src),
        None => None,
    };
    let mut polys: Vec<Polygon<f64>> = Vec::new();
    let mut n_null = 0usize;
    for feature in layer.features() {
        let fid = feature
            .fid()
            .map_or_else(|| "?".to_string(), |f| f.to_string());
        let Some(g) = feature
            .geometry()
            .filter(|g| unsafe { !g.c_geometry().is_null() })
        else {
            n_null += 1;
            continue;
        };
        let flat = geometry_type_flatten(g.geometry_type());
        if flat != OGRwkbGeometryType::wkbPolygon && flat != OGRwkbGeometryType::wkbMultiPolygon {
            return Err(bad(format!(
                "feature {fid} of layer '{lname}' is a {}, not a polygon; M needs a layer of Polygon or MultiPolygon features",
                geometry_type_to_name(g.geometry_type())
            )));
        }
        let mut g: Geometry = g.clone();
        g.flatten_to_2d();
        if let Ok(geo) = g.to_geo() {
            if let Some(why) = coordinate_problem(&geo, src.is_geographic()) {
                return Err(bad(format!("feature {fid}: {why}")));
            }
        }
        if !g.is_valid() {
            g = g.make_valid(&CslStringList::new()).map_err(|e| {
                bad(format!(
                    "feature {fid}: invalid polygon that GEOS make_valid could not repair ({e}); fix it in a GIS"
                ))
            })?;
            warnings.push(format!(
                "{}: feature {fid} was an invalid polygon (e.g. self-intersecting); repaired with GEOS make_valid",
                path.display()
            ));
        }
        if let Some(ct) = &to_grid {
            if let Some(len) = seg_len {
                unsafe { gdal_sys::OGR_G_Segmentize(g.c_geometry(), len) };
            }
            g = g.transform(ct).map_err(|e| {
                bad(format!(
                    "feature {fid}: cannot reproject to the raster CRS ({}); clip the polygon to the raster's area",
                    crate::error::gdal_text(&e)
                ))
            })?;
        }
        let geo = g
            .to_geo()
            .map_err(|e| bad(format!("feature {fid}: unreadable geometry ({e})")))?;
        collect_polygons(geo, &mut polys);
    }
    if n_null > 0 {
        warnings.push(format!(
            "{}: {n_null} feature(s) without geometry were skipped",
            path.display()
        ));
    }
    if polys.is_empty() {
        return Err(bad(format!(
            "layer '{lname}' holds no polygon; give a layer of Polygon or MultiPolygon features"
        )));
    }
    let polygons = MultiPolygon(polys);
    if !overlaps_grid(&polygons, grid) {
        return Err(bad(format!(
            "the polygons of layer '{lname}' do not overlap the raster (after reprojection to the raster CRS); check the file and its CRS"
        )));
    }
    Ok(PolygonSource { polygons, warnings })
}

/// Largest coordinate magnitude accepted in a projected layer, in its units: no CRS in use
/// comes near it (4e7 m, 1.3e8 ft round the Earth), and beyond it PROJ 9.1 can take
/// endless time and densifying an edge to about a cell endless memory.
const MAX_PROJECTED: f64 = 1e10;

/// Why the coordinates of a feature cannot be used, if they cannot: a latitude outside
/// -90..90 or an edge across the antimeridian written as a jump (geographic layers), a
/// coordinate beyond [`MAX_PROJECTED`] (projected layers), or a non-finite value.
fn coordinate_problem(g: &geo_types::Geometry<f64>, geographic: bool) -> Option<String> {
    use geo::CoordsIter;
    for c in g.coords_iter() {
        if !c.x.is_finite() || !c.y.is_finite() {
            return Some(format!("vertex ({}, {}) is not a finite number", c.x, c.y));
        }
        if geographic && c.y.abs() > 90.0 + 1e-9 {
            return Some(format!(
                "latitude {} is outside -90..90; check the coordinates and the layer's CRS",
                short(c.y)
            ));
        }
        if !geographic && (c.x.abs() > MAX_PROJECTED || c.y.abs() > MAX_PROJECTED) {
            return Some(format!(
                "vertex ({}, {}) lies beyond 1e10 units of the layer's CRS, far off the Earth; \
                 check the coordinates and the layer's CRS",
                short(c.x),
                short(c.y)
            ));
        }
    }
    if geographic {
        if let Some((a, b)) = seam_jump(g) {
            return Some(format!(
                "an edge goes from longitude {a} to {b}, more than 180 degrees; a polygon \
                 crossing the antimeridian must be written with longitudes beyond 180 (e.g. 170 \
                 to 190) or split at 180 (RFC 7946); if the edge really spans more than 180 \
                 degrees, add vertices along it"
            ));
        }
    }
    None
}

/// A coordinate for a message: as written, or in exponent form when huge (1e20).
fn short(v: f64) -> String {
    if v.abs() >= 1e15 {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

/// The first edge whose longitudes differ by more than 180 degrees: almost always a ring
/// drawn across the antimeridian as 170 -> -170, which read literally covers the other
/// side of the globe (or a coordinate that is no longitude at all). Edges of exactly 360
/// degrees (-180 to 180, as in polar caps and global bands) are meant and pass.
fn seam_jump(g: &geo_types::Geometry<f64>) -> Option<(f64, f64)> {
    let ring_jump = |ring: &geo_types::LineString<f64>| {
        ring.lines().find_map(|l| {
            let d = (l.end.x - l.start.x).abs();
            (d > 180.0 && (d - 360.0).abs() > 1e-9).then_some((l.start.x, l.end.x))
        })
    };
    let poly_jump = |p: &Polygon<f64>| {
        std::iter::once(p.exterior())
            .chain(p.interiors())
            .find_map(ring_jump)
    };
    match g {
        geo_types::Geometry::Polygon(p) => poly_jump(p),
        geo_types::Geometry::MultiPolygon(mp) => mp.0.iter().find_map(poly_jump),
        _ => None,
    }
}

/// Keep the polygons of a geometry (make_valid may return a collection with lines).
fn collect_polygons(g: geo_types::Geometry<f64>, out: &mut Vec<Polygon<f64>>) {
    match g {
        geo_types::Geometry::Polygon(p) => out.push(p),
        geo_types::Geometry::MultiPolygon(mp) => out.extend(mp.0),
        geo_types::Geometry::GeometryCollection(gc) => {
            for g in gc.0 {
                collect_polygons(g, out);
            }
        }
        _ => {}
    }
}

/// About one raster cell, expressed in the layer's CRS units (for densifying edges).
fn densify_length(grid: &GridSpec, dst: &SpatialRef, src: &SpatialRef) -> Option<f64> {
    let back = transform(dst, src, "raster CRS to the layer CRS").ok()?;
    let (xa, xb) = (grid.col_edges_x(0).0, grid.col_edges_x(grid.width - 1).1);
    let (ya, yb) = (grid.row_edges_y(0).0, grid.row_edges_y(grid.height - 1).1);
    let b = back
        .transform_bounds(&[xa.min(xb), ya.min(yb), xa.max(xb), ya.max(yb)], 21)
        .ok()?;
    let len = ((b[2] - b[0]) / grid.width as f64).min((b[3] - b[1]) / grid.height as f64);
    (len.is_finite() && len > 0.0).then_some(len)
}

/// Whether the polygons touch the raster's extent (shifted by ±360° on a global grid).
fn overlaps_grid(mp: &MultiPolygon<f64>, grid: &GridSpec) -> bool {
    let (xa, xb) = (grid.col_edges_x(0).0, grid.col_edges_x(grid.width - 1).1);
    let (ya, yb) = (grid.row_edges_y(0).0, grid.row_edges_y(grid.height - 1).1);
    let shifts: &[f64] = if grid.wraps_antimeridian() {
        &[-360.0, 0.0, 360.0]
    } else {
        &[0.0]
    };
    shifts.iter().any(|s| {
        let r = Rect::new(Coord { x: xa + s, y: ya }, Coord { x: xb + s, y: yb });
        r.to_polygon().intersects(mp)
    })
}

/// One edge in pixel space, `v_top < v_bot`.
#[derive(Clone)]
struct Edge {
    v_top: f64,
    v_bot: f64,
    u_top: f64,
    du_dv: f64,
    poly: u32,
}

/// Row-by-row scanline rasteriser of polygons on a grid (see the module doc).
#[derive(Clone)]
pub(crate) struct Scanline {
    edges: Vec<Edge>,
    next: usize,
    active: Vec<usize>,
    last_row: Option<usize>,
    width: usize,
    wraps: bool,
    crossings: Vec<(u32, f64)>,
    intervals: Vec<(usize, usize)>,
}

impl Scanline {
    /// Prepare the edges of `mp` (grid CRS) for `grid`.
    pub(crate) fn new(mp: &MultiPolygon<f64>, grid: &GridSpec) -> Scanline {
        let gt = grid.geo_transform;
        let to_uv = |c: &Coord<f64>| ((c.x - gt[0]) / gt[1], (c.y - gt[3]) / gt[5]);
        let mut edges = Vec::new();
        for (k, p) in mp.0.iter().enumerate() {
            for ring in std::iter::once(p.exterior()).chain(p.interiors()) {
                for l in ring.lines() {
                    let (a, b) = (to_uv(&l.start), to_uv(&l.end));
                    if !(a.0.is_finite() && a.1.is_finite() && b.0.is_finite() && b.1.is_finite())
                        || a.1 == b.1
                    {
                        continue;
                    }
                    let (t, d) = if a.1 < b.1 { (a, b) } else { (b, a) };
                    edges.push(Edge {
                        v_top: t.1,
                        v_bot: d.1,
                        u_top: t.0,
                        du_dv: (d.0 - t.0) / (d.1 - t.1),
                        poly: k as u32,
                    });
                }
            }
        }
        edges.sort_by(|a, b| a.v_top.total_cmp(&b.v_top));
        Scanline {
            edges,
            next: 0,
            active: Vec::new(),
            last_row: None,
            width: grid.width,
            wraps: grid.wraps_antimeridian(),
            crossings: Vec::new(),
            intervals: Vec::new(),
        }
    }

    /// Set `out[c]` to whether the centre of cell (row, c) is inside the polygons.
    pub(crate) fn fill_row(&mut self, row: usize, out: &mut [bool]) {
        let mut iv = std::mem::take(&mut self.intervals);
        self.row_intervals(row, &mut iv);
        super::fill_from_intervals(&iv, out);
        self.intervals = iv;
    }

    /// The columns of `row` whose centres are inside the polygons, as sorted, disjoint,
    /// half-open intervals `[a, b)` (the one definition behind [`Scanline::fill_row`]).
    pub(crate) fn row_intervals(&mut self, row: usize, out: &mut Vec<(usize, usize)>) {
        out.clear();
        if self.last_row.is_some_and(|r| row < r) {
            self.next = 0;
            self.active.clear();
        }
        self.last_row = Some(row);
        let v = row as f64 + 0.5;
        while self.next < self.edges.len() && self.edges[self.next].v_top <= v {
            self.active.push(self.next);
            self.next += 1;
        }
        let edges = &self.edges;
        self.active.retain(|&i| edges[i].v_bot > v);
        self.crossings.clear();
        for &i in &self.active {
            let e = &edges[i];
            if e.v_top <= v {
                self.crossings
                    .push((e.poly, e.u_top + (v - e.v_top) * e.du_dv));
            }
        }
        self.crossings
            .sort_by(|a, b| a.0.cmp(&b.0).then(a.1.total_cmp(&b.1)));
        let w = self.width as i64;
        let mut i = 0;
        while i + 1 < self.crossings.len() {
            let (pa, ua) = self.crossings[i];
            let (pb, ub) = self.crossings[i + 1];
            if pa != pb {
                i += 1; // odd count for a polygon (unclosed ring): drop the last crossing
                continue;
            }
            // Columns with centre c + 0.5 in [ua, ub).
            let c_first = (ua - 0.5).ceil();
            let c_end = (ub - 0.5).ceil(); // exclusive
            if self.wraps {
                let n = (c_end - c_first).min(w as f64);
                if n > 0.0 {
                    // Columns c_first .. c_first + n taken modulo the width: one or two pieces.
                    let a = (c_first as i64).rem_euclid(w);
                    let b = a + n as i64;
                    out.push((a as usize, b.min(w) as usize));
                    if b > w {
                        out.push((0, (b - w) as usize));
                    }
                }
            } else {
                let a = c_first.max(0.0);
                let b = c_end.min(w as f64);
                if a < b {
                    out.push((a as usize, b as usize));
                }
            }
            i += 2;
        }
        super::merge_half_open(out);
    }
}
