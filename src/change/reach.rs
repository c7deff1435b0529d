//! Within reach: is a cell centre within D km (geodesic, WGS84) of the centre of some
//! present-range cell? The same construction as the record buffer of `access::buffer`
//! (spherical bounds pick candidates, exact Karney Inverse decides near the edge), with the
//! present range as the source points. Never a distance raster.
//!
//! Two ways, chosen from the grid:
//! - **lon/lat grid with a whole number of columns in 360°** (every usual grid): the distance
//!   between two cell centres depends only on their two latitudes and on their column
//!   difference. For a target row t and a source row s, the source cells within D of a target
//!   column are those with |Δcol| <= h(s, t), h found once per row pair by a binary search of
//!   exact Inverse distances between the two spherical bounds (distance grows with |Δlon| up
//!   to 180° along a parallel). Each source row's range runs, widened by h(s, t), give the
//!   target row's intervals; columns wrap by the period (antimeridian).
//! - **other grids** (projected, or lon/lat with an odd cell size): the boundary cells of the
//!   present range (cells with a 4-neighbour outside it) go as points into
//!   [`PointBuffer`], which answers per cell with exact distances near the edge. Only cells
//!   that need the answer (gains) are asked.

use super::present::PresentRuns;
use crate::access::buffer::{m_max, m_min, PointBuffer};
use crate::{GridSpec, Result};
use gdal::spatial_ref::CoordTransform;
use geographiclib_rs::{Geodesic, InverseGeodesic};
use std::collections::HashMap;
use std::sync::Arc;

/// Row-pair cache entries kept per worker before it is cleared.
const CACHE_MAX: usize = 1 << 22;

/// What the workers share.
#[derive(Clone)]
pub(crate) enum ReachSpec {
    /// Lon/lat grid with a whole number of columns in 360°.
    Rows(Arc<RowReach>),
    /// Any other grid: exact distances to the boundary cells.
    Points(Arc<PointReach>),
}

pub(crate) struct RowReach {
    grid: GridSpec,
    present: Arc<PresentRuns>,
    d_m: f64,
    /// Columns in 360° of longitude.
    period: i64,
    /// Largest column difference below or at 180° of longitude.
    jmax: i64,
    /// Rows on either side that can hold a source within D.
    band: usize,
    sigma_out: f64,
    sigma_in: f64,
}

pub(crate) struct PointReach {
    grid: GridSpec,
    buffer: PointBuffer,
}

/// A worker's own state.
pub(crate) enum ReachWorker {
    Rows {
        spec: Arc<RowReach>,
        geod: Box<Geodesic>,
        cache: HashMap<(u32, u32), i64>,
        intervals: Vec<(i64, i64)>,
        diff: Vec<i32>,
    },
    Points {
        spec: Arc<PointReach>,
        to_lonlat: Option<CoordTransform>,
        cols: Vec<usize>,
        lon: Vec<f64>,
        lat: Vec<f64>,
    },
}

/// Grid CRS to WGS84 lon/lat (None on geographic grids, read as WGS84 lon/lat).
fn lonlat_transform(grid: &GridSpec) -> Result<Option<CoordTransform>> {
    if grid.geographic {
        return Ok(None);
    }
    let src = crate::crs::grid_srs(grid)?;
    let dst = crate::crs::wgs84()?;
    Ok(Some(crate::crs::transform(
        &src,
        &dst,
        "raster CRS to WGS84 lon/lat for --dispersal-km",
    )?))
}

impl ReachSpec {
    /// Reach of `d_km` (finite, >= 0) around the present range on `grid`.
    pub(crate) fn new(grid: &GridSpec, present: Arc<PresentRuns>, d_km: f64) -> Result<Self> {
        let d_m = d_km * 1000.0;
        let dx = grid.geo_transform[1];
        let cols_360 = 360.0 / dx;
        let period = cols_360.round() as i64;
        let regular = grid.geographic
            && dx > 0.0
            && (cols_360 - period as f64).abs() <= 1e-6
            && period >= grid.width as i64;
        if regular {
            let sigma_out = d_m / m_min() * (1.0 + 1e-9) + 1e-12;
            let band = (sigma_out.to_degrees() / grid.dy()).ceil() as usize + 1;
            return Ok(ReachSpec::Rows(Arc::new(RowReach {
                grid: grid.clone(),
                present,
                d_m,
                period,
                jmax: period / 2,
                band,
                sigma_out,
                sigma_in: d_m / m_max() * (1.0 - 1e-9),
            })));
        }
        let cells = present.boundary_cells(grid.wraps_antimeridian());
        let mut lon: Vec<f64> = cells.iter().map(|&(_, c)| grid.col_centre_x(c)).collect();
        let mut lat: Vec<f64> = cells.iter().map(|&(r, _)| grid.row_centre_y(r)).collect();
        if let Some(ct) = lonlat_transform(grid)? {
            for (x, y) in lon.chunks_mut(65_536).zip(lat.chunks_mut(65_536)) {
                transform_or_nan(&ct, x, y);
            }
        }
        let pts: Vec<(f64, f64)> = lon
            .into_iter()
            .zip(lat)
            .filter(|&(x, y)| x.is_finite() && y.is_finite() && y.abs() <= 90.0)
            .collect();
        Ok(ReachSpec::Points(Arc::new(PointReach {
            grid: grid.clone(),
            buffer: PointBuffer::new(&pts, d_m),
        })))
    }

    /// A worker's own state (its own transform, caches and scratch).
    pub(crate) fn worker(&self) -> Result<ReachWorker> {
        Ok(match self {
            ReachSpec::Rows(s) => ReachWorker::Rows {
                spec: s.clone(),
                geod: Box::new(Geodesic::wgs84()),
                cache: HashMap::new(),
                intervals: Vec::new(),
                diff: Vec::new(),
            },
            ReachSpec::Points(s) => ReachWorker::Points {
                spec: s.clone(),
                to_lonlat: lonlat_transform(&s.grid)?,
                cols: Vec::new(),
                lon: Vec::new(),
                lat: Vec::new(),
            },
        })
    }
}

/// Transform in place; points that fail become NaN.
fn transform_or_nan(ct: &CoordTransform, x: &mut [f64], y: &mut [f64]) {
    if ct.transform_coords(x, y, &mut []).is_ok() {
        return;
    }
    for i in 0..x.len() {
        let (mut a, mut b) = ([x[i]], [y[i]]);
        if ct.transform_coords(&mut a, &mut b, &mut []).is_ok() {
            (x[i], y[i]) = (a[0], b[0]);
        } else {
            (x[i], y[i]) = (f64::NAN, f64::NAN);
        }
    }
}

impl RowReach {
    /// Largest column difference j (0..=jmax) at which a cell centre of row `s` lies within
    /// D of a cell centre of row `t`; -1 when even j = 0 is farther.
    fn half_width(&self, geod: &Geodesic, s: usize, t: usize) -> i64 {
        let (lat_s, lat_t) = (self.grid.row_centre_y(s), self.grid.row_centre_y(t));
        if (lat_s - lat_t).abs().to_radians() > self.sigma_out {
            return -1;
        }
        let dx = self.grid.geo_transform[1];
        let within = |j: i64| -> bool {
            let d: f64 = geod.inverse(lat_s, 0.0, lat_t, j as f64 * dx);
            d <= self.d_m
        };
        if !within(0) {
            return -1;
        }
        let (sps, cps) = lat_s.to_radians().sin_cos();
        let (spt, cpt) = lat_t.to_radians().sin_cos();
        let denom = cps * cpt;
        let (mut lo, mut hi) = (0i64, self.jmax);
        if denom > 1e-12 {
            // Longitude half-widths (degrees) of the spherical bounds.
            let half = |sigma: f64| -> Option<f64> {
                let rhs = (sigma.min(std::f64::consts::PI).cos() - sps * spt) / denom;
                (rhs <= 1.0).then(|| rhs.max(-1.0).acos().to_degrees())
            };
            hi = match half(self.sigma_out) {
                None => 0,
                Some(l) => ((l / dx).floor() as i64 + 1).min(self.jmax),
            };
            if let Some(l) = half(self.sigma_in) {
                lo = ((l / dx).floor() as i64 - 1).clamp(0, hi);
            }
        }
        // within(lo) holds (inner bound, or j = 0 tested); nothing beyond hi is within.
        while lo < hi {
            let mid = (lo + hi + 1) / 2;
            if within(mid) {
                lo = mid;
            } else {
                hi = mid - 1;
            }
        }
        lo
    }
}

impl ReachWorker {
    /// Set `out[c]` to whether cell (row, c) is within D of the present range, for every
    /// column with `want[c]` (other entries may be set too, or left).
    pub(crate) fn fill_row(&mut self, row: usize, want: &[bool], out: &mut [bool]) {
        match self {
            ReachWorker::Rows {
                spec,
                geod,
                cache,
                intervals,
                diff,
            } => {
                out.iter_mut().for_each(|v| *v = false);
                if cache.len() > CACHE_MAX {
                    cache.clear();
                }
                let h = spec.grid.height;
                let w = spec.grid.width as i64;
                intervals.clear();
                let s0 = row.saturating_sub(spec.band);
                let s1 = (row + spec.band).min(h - 1);
                for s in s0..=s1 {
                    let runs = &spec.present.range[s];
                    if runs.is_empty() {
                        continue;
                    }
                    let key = (s.min(row) as u32, s.max(row) as u32);
                    let hw = *cache
                        .entry(key)
                        .or_insert_with(|| spec.half_width(geod, s, row));
                    if hw < 0 {
                        continue;
                    }
                    if hw >= spec.jmax {
                        // Every column pair of the two rows is within D.
                        out.iter_mut().for_each(|v| *v = true);
                        return;
                    }
                    for &(a, b) in runs {
                        let (lo, hi) = (a as i64 - hw, b as i64 - 1 + hw);
                        match intervals.last_mut() {
                            Some(last) if lo <= last.1 + 1 && lo >= last.0 => {
                                last.1 = last.1.max(hi)
                            }
                            _ => intervals.push((lo, hi)),
                        }
                    }
                }
                // Parts beyond the grid's sides wrap by one period (360°).
                let p = spec.period;
                let n = intervals.len();
                for i in 0..n {
                    let (lo, hi) = intervals[i];
                    if lo < 0 {
                        intervals.push((lo + p, hi + p));
                    }
                    if hi >= w {
                        intervals.push((lo - p, hi - p));
                    }
                }
                // Coverage counts by a difference array: intervals + columns, however
                // much the intervals overlap.
                diff.clear();
                diff.resize(w as usize + 1, 0);
                for &(lo, hi) in intervals.iter() {
                    let (a, b) = (lo.max(0), hi.min(w - 1));
                    if a <= b {
                        diff[a as usize] += 1;
                        diff[b as usize + 1] -= 1;
                    }
                }
                let mut k = 0i32;
                for (o, d) in out.iter_mut().zip(diff.iter()) {
                    k += d;
                    *o = k > 0;
                }
            }
            ReachWorker::Points {
                spec,
                to_lonlat,
                cols,
                lon,
                lat,
            } => {
                cols.clear();
                cols.extend(want.iter().enumerate().filter(|(_, &x)| x).map(|(c, _)| c));
                if cols.is_empty() {
                    return;
                }
                let y = spec.grid.row_centre_y(row);
                lon.clear();
                lon.extend(cols.iter().map(|&c| spec.grid.col_centre_x(c)));
                lat.clear();
                lat.resize(cols.len(), y);
                if let Some(ct) = to_lonlat {
                    transform_or_nan(ct, lon, lat);
                }
                for (k, &c) in cols.iter().enumerate() {
                    out[c] = spec.buffer.contains(lon[k], lat[k]);
                }
            }
        }
    }
}
