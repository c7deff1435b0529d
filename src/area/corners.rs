//! Cell areas of a projected grid whose projection is not equal-area.
//!
//! Each cell's boundary (its four straight edges in the projected plane, each split into `k`
//! segments) is transformed to the CRS's own geographic base CRS and its area is taken as a
//! geodesic polygon on the CRS's ellipsoid (GeographicLib `PolygonArea`, Karney 2013).
//! Units: the grid's CRS units in, m² out. A boundary point that PROJ cannot transform, or that
//! does not come back to itself through the forward projection (the point lies outside the
//! projection's domain), makes the cell's area NaN; [`super::CellAreas::row`] turns that into an
//! error.

use super::ellipsoid::Ellipsoid;
use crate::crs::transform;
use crate::{GridSpec, Result};
use gdal::spatial_ref::{CoordTransform, SpatialRef};
use geographiclib_rs::{Geodesic, PolygonArea, Winding};

/// One horizontal edge line of the grid (a row boundary), densified, in lon/lat degrees.
#[derive(Debug, Clone)]
struct Edge {
    lon: Vec<f64>,
    lat: Vec<f64>,
    ok: Vec<bool>,
}

/// The corner-transforming area engine for one grid.
pub(crate) struct Corners {
    to_geo: CoordTransform,
    to_proj: CoordTransform,
    geod: Geodesic,
    /// Segments per cell edge.
    pub k: usize,
    /// Degrees per unit of the geographic base CRS's angular unit.
    deg_per_unit: f64,
    gt: [f64; 6],
    width: usize,
    /// Round-trip tolerance in CRS units.
    tol: f64,
    /// The bottom edge of the last row computed, as (index of that grid line, edge); it is the
    /// top edge of the next row.
    cache: Option<(usize, Edge)>,
}

/// Segments per edge for a cell of about `cell_m` metres a side. The difference between a
/// straight projected edge and the geodesic between its end points costs about
/// 3e-5·(θ/1°)² of the cell's area (GeographicLib 4-vertex polygons against the Snyder 1987
/// closed form: 2.6e-5, 1.3e-5 and 5.1e-5 for 1° cells at 0°, 45° and 89°; 2e-9 at 30″;
/// GeographicLib with PROJ gives 3.07e-5 for a 100 km LAEA square at 45°N); k segments divide
/// this by k². k is chosen for about 1e-8 and capped at 64.
pub(crate) fn segments_for(cell_m: f64) -> usize {
    let theta_deg = cell_m / 111_195.0;
    ((55.0 * theta_deg).ceil() as usize).clamp(1, 64)
}

impl Corners {
    pub(crate) fn new(grid: &GridSpec, srs: &SpatialRef, ell: &Ellipsoid) -> Result<Corners> {
        let proj = crate::crs::traditional(srs.clone());
        let geo = crate::crs::geographic_base(srs, "raster CRS")?;
        let to_geo = transform(
            &proj,
            &geo,
            "raster CRS to its geographic base (cell areas)",
        )?;
        let to_proj = transform(
            &geo,
            &proj,
            "geographic base to the raster CRS (cell areas)",
        )?;
        let rad_per_unit = geo.angular_units();
        let deg_per_unit = if (rad_per_unit / 1f64.to_radians() - 1.0).abs() < 1e-12 {
            1.0
        } else {
            rad_per_unit.to_degrees()
        };
        let unit_m = srs.linear_units();
        let cell_m = (grid.dx() * grid.dy()).sqrt() * unit_m;
        Ok(Corners {
            to_geo,
            to_proj,
            geod: Geodesic::new(ell.a, ell.f),
            k: segments_for(cell_m),
            deg_per_unit,
            gt: grid.geo_transform,
            width: grid.width,
            tol: 1e-3 * grid.dx().min(grid.dy()),
            cache: None,
        })
    }

    /// Transform projected points to lon/lat degrees in place; `ok[i]` says whether point i
    /// transformed and came back to itself through the forward projection.
    pub(crate) fn to_lonlat(&self, x: &mut [f64], y: &mut [f64]) -> Vec<bool> {
        let n = x.len();
        let (x0, y0) = (x.to_vec(), y.to_vec());
        let mut ok1 = transform_quiet(&self.to_geo, x, y);
        // Forward again to check the round trip.
        let (mut fx, mut fy) = (x.to_vec(), y.to_vec());
        for i in 0..n {
            if !ok1[i] || !fx[i].is_finite() || !fy[i].is_finite() {
                ok1[i] = false;
                fx[i] = 0.0;
                fy[i] = 0.0;
            }
        }
        let ok2 = transform_quiet(&self.to_proj, &mut fx, &mut fy);
        let mut ok = vec![false; n];
        for i in 0..n {
            x[i] *= self.deg_per_unit;
            y[i] *= self.deg_per_unit;
            ok[i] = ok1[i]
                && ok2[i]
                && (fx[i] - x0[i]).abs() <= self.tol
                && (fy[i] - y0[i]).abs() <= self.tol
                && y[i].abs() <= 90.0 + 1e-9;
            if ok[i] {
                y[i] = y[i].clamp(-90.0, 90.0);
            }
        }
        ok
    }

    /// The densified horizontal grid line at the top of row `row` (row = height: bottom line).
    fn edge(&self, row: usize) -> Edge {
        let y = self.gt[3] + row as f64 * self.gt[5];
        let n = self.width * self.k + 1;
        let step = self.gt[1] / self.k as f64;
        let mut xs: Vec<f64> = (0..n).map(|j| self.gt[0] + j as f64 * step).collect();
        let mut ys = vec![y; n];
        let ok = self.to_lonlat(&mut xs, &mut ys);
        Edge {
            lon: xs,
            lat: ys,
            ok,
        }
    }

    /// Areas (m²) of the cells of `row`; NaN where a boundary point failed to transform.
    pub(crate) fn row(&mut self, row: usize) -> Vec<f64> {
        let top = match self.cache.take() {
            Some((r, e)) if r == row => e,
            _ => self.edge(row),
        };
        let bottom = self.edge(row + 1);
        let k = self.k;
        let (w, m) = (self.width, k - 1);
        // Interior points of the vertical edges: boundary c, point i (i = 0 nearest the top).
        let (mut vx, mut vy) = (
            Vec::with_capacity((w + 1) * m),
            Vec::with_capacity((w + 1) * m),
        );
        let y_top = self.gt[3] + row as f64 * self.gt[5];
        for c in 0..=w {
            let x = self.gt[0] + c as f64 * self.gt[1];
            for i in 1..k {
                vx.push(x);
                vy.push(y_top + i as f64 * self.gt[5] / k as f64);
            }
        }
        let vok = if m > 0 {
            self.to_lonlat(&mut vx, &mut vy)
        } else {
            Vec::new()
        };
        let mut out = Vec::with_capacity(w);
        let mut ring: Vec<(f64, f64)> = Vec::with_capacity(4 * k);
        for c in 0..w {
            ring.clear();
            let mut good = true;
            for j in c * k..=(c + 1) * k {
                good &= top.ok[j];
                ring.push((top.lat[j], top.lon[j]));
            }
            for i in 0..m {
                let p = (c + 1) * m + i;
                good &= vok[p];
                ring.push((vy[p], vx[p]));
            }
            for j in (c * k..=(c + 1) * k).rev() {
                good &= bottom.ok[j];
                ring.push((bottom.lat[j], bottom.lon[j]));
            }
            for i in (0..m).rev() {
                let p = c * m + i;
                good &= vok[p];
                ring.push((vy[p], vx[p]));
            }
            if !good {
                out.push(f64::NAN);
                continue;
            }
            let mut pa = PolygonArea::new(&self.geod, Winding::CounterClockwise);
            for &(lat, lon) in &ring {
                pa.add_point(lat, lon);
            }
            let (_, area, _) = pa.compute(true);
            out.push(area.abs());
        }
        self.cache = Some((row + 1, bottom));
        out
    }

    /// The projected coordinates of the first failing boundary point of cell (row, col), and the
    /// lon/lat it gave, for error messages.
    pub(crate) fn failing_corner(&self, row: usize, col: usize) -> (f64, f64) {
        for (dr, dc) in [(0, 0), (0, 1), (1, 1), (1, 0)] {
            let x = self.gt[0] + (col + dc) as f64 * self.gt[1];
            let y = self.gt[3] + (row + dr) as f64 * self.gt[5];
            let (mut xs, mut ys) = ([x], [y]);
            if !self.to_lonlat(&mut xs, &mut ys)[0] {
                return (x, y);
            }
        }
        let x = self.gt[0] + (col as f64 + 0.5) * self.gt[1];
        let y = self.gt[3] + (row as f64 + 0.5) * self.gt[5];
        (x, y)
    }
}

/// `OCTTransformEx` with per-point success flags and GDAL's error messages silenced for the call
/// (points outside a projection's domain are expected at the corners of world grids).
fn transform_quiet(ct: &CoordTransform, x: &mut [f64], y: &mut [f64]) -> Vec<bool> {
    let n = x.len();
    let mut flags = vec![0 as std::ffi::c_int; n];
    if n == 0 {
        return Vec::new();
    }
    // SAFETY: x, y and flags hold n elements; the handle lives as long as `ct`. The error
    // handler stack is per thread, and the handler pushed here is popped before returning.
    unsafe {
        gdal_sys::CPLPushErrorHandler(Some(gdal_sys::CPLQuietErrorHandler));
        gdal_sys::OCTTransformEx(
            ct.to_c_hct(),
            n as std::ffi::c_int,
            x.as_mut_ptr(),
            y.as_mut_ptr(),
            std::ptr::null_mut(),
            flags.as_mut_ptr(),
        );
        gdal_sys::CPLPopErrorHandler();
        gdal_sys::CPLErrorReset();
    }
    flags.iter().map(|&f| f != 0).collect()
}
