//! The accessible area M, rasterised row by row on the raster grid.
//!
//! Inputs: the grid ([`GridSpec`], north-up, its CRS), an [`AccessSpec`] and the records as
//! WGS84 (lon, lat) degrees. Distances are in km at the interface, metres inside.
//!
//! Rule: a cell is in M when its **centre** is in M. M is the intersection of the parts
//! the user gave:
//! - a polygon file (reprojected to the raster CRS, scanline-rasterised: [`polygon`]);
//! - a geodesic buffer of D km around each record ([`buffer`]);
//! - the convex hull of the records on the sphere, buffered by D km ([`hull`]).
//!
//! No part given: M is the whole raster. Geographic grids are read as WGS84 lon/lat;
//! cells of projected grids are transformed to WGS84 lon/lat for the geodesic parts.
//! See docs/accessible-area.md for the methods and their exactness.

pub(crate) mod buffer;
pub(crate) mod hull;
mod polygon;
#[cfg(test)]
mod tests;
#[cfg(test)]
mod tests_geo;

use crate::{crs, Error, GridSpec, Result};
use gdal::spatial_ref::CoordTransform;
use std::path::PathBuf;

use buffer::PointBuffer;
use hull::{HullError, HullShape, SphericalHull};
use polygon::Scanline;

/// Largest boundary error accepted for the hull buffer (metres) before points run out.
const HULL_ERROR_M: f64 = 1.0;
/// Most boundary points used to densify the hull.
const HULL_MAX_POINTS: usize = 2_000_000;

/// What the user asked M to be.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct AccessSpec {
    /// A polygon file (any GDAL vector format).
    pub polygon: Option<PathBuf>,
    /// Geodesic buffer around each record, km.
    pub buffer_km: Option<f64>,
    /// Geodesic buffer around the convex hull of the records, km.
    pub hull_buffer_km: Option<f64>,
}

struct PolygonPart {
    polygons: geo_types::MultiPolygon<f64>,
    scan: Scanline,
}

struct HullPart {
    hull: SphericalHull,
    /// Buffer around the densified boundary; None when D = 0.
    edge: Option<PointBuffer>,
}

/// A thread's own copy of M, for the M that can be cut into rows without a coordinate
/// transform: a polygon alone (any grid) or a record buffer alone on a lon/lat grid (see
/// [`AccessMask::row_filler`]). Gives each row exactly as [`AccessMask::fill_row`] does.
#[derive(Clone)]
pub struct RowFiller {
    grid: GridSpec,
    part: FillerPart,
    intervals: Vec<(usize, usize)>,
}

#[derive(Clone)]
enum FillerPart {
    Polygon(Scanline),
    Buffer(Box<PointBuffer>),
}

impl RowFiller {
    /// The columns of `row` whose centres lie in M, as sorted, disjoint, half-open
    /// intervals `[a, b)`.
    pub fn row_intervals(&mut self, row: usize, out: &mut Vec<(usize, usize)>) {
        match &mut self.part {
            FillerPart::Polygon(s) => s.row_intervals(row, out),
            FillerPart::Buffer(b) => b.row_intervals_lonlat_grid(&self.grid, row, out),
        }
    }

    /// Set `out[col] = true` for each cell of `row` whose centre lies in M, false otherwise.
    pub fn fill_row(&mut self, row: usize, out: &mut [bool]) {
        let mut iv = std::mem::take(&mut self.intervals);
        self.row_intervals(row, &mut iv);
        fill_from_intervals(&iv, out);
        self.intervals = iv;
    }
}

/// Sort half-open column intervals and merge those that overlap or touch, in place.
fn merge_half_open(v: &mut Vec<(usize, usize)>) {
    v.retain(|&(a, b)| a < b);
    v.sort_unstable();
    let mut n = 0;
    for i in 0..v.len() {
        let (a, b) = v[i];
        if n > 0 && a <= v[n - 1].1 {
            v[n - 1].1 = v[n - 1].1.max(b);
        } else {
            v[n] = (a, b);
            n += 1;
        }
    }
    v.truncate(n);
}

/// `out[c]` = whether column c lies in one of the half-open `intervals`.
pub(crate) fn fill_from_intervals(intervals: &[(usize, usize)], out: &mut [bool]) {
    out.fill(false);
    let n = out.len();
    for &(a, b) in intervals {
        out[a.min(n)..b.min(n)].fill(true);
    }
}

/// M, rasterised row by row on the grid (a cell is in M when its centre is).
pub struct AccessMask {
    grid: GridSpec,
    polygon: Option<PolygonPart>,
    buffer: Option<PointBuffer>,
    hull: Option<HullPart>,
    /// Grid CRS → WGS84 lon/lat, for geodesic parts on projected grids.
    to_lonlat: Option<CoordTransform>,
    description: String,
    warnings: Vec<String>,
    warned_transform: bool,
    scratch: Vec<bool>,
    lon: Vec<f64>,
    lat: Vec<f64>,
}

/// Records usable for the geodesic parts: finite, |lat| <= 90, exact duplicates removed.
fn clean_records(records: &[(f64, f64)], warnings: &mut Vec<String>) -> Vec<(f64, f64)> {
    let mut ok: Vec<(f64, f64)> = records
        .iter()
        .copied()
        .filter(|&(lon, lat)| lon.is_finite() && lat.is_finite() && lat.abs() <= 90.0)
        .collect();
    let bad = records.len() - ok.len();
    if bad > 0 {
        warnings.push(format!(
            "{bad} record(s) with non-finite or out-of-range coordinates were left out of M"
        ));
    }
    ok.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
    ok.dedup();
    ok
}

fn check_distance(option: &'static str, d: f64, zero_ok: bool) -> Result<f64> {
    let bad = !d.is_finite() || d < 0.0 || (!zero_ok && d == 0.0);
    if bad {
        let need = if zero_ok { ">= 0" } else { "> 0" };
        return Err(Error::InvalidOption {
            option,
            reason: format!("{d} is not a usable distance; give a finite number of km {need}"),
        });
    }
    Ok(d)
}

fn km(d: f64) -> String {
    format!("{}", (d * 1e6).round() / 1e6)
}

impl AccessMask {
    /// Build M for `grid` from the spec; `records` are WGS84 (lon, lat) degrees.
    pub fn build(grid: &GridSpec, spec: &AccessSpec, records: &[(f64, f64)]) -> Result<AccessMask> {
        let mut warnings = Vec::new();
        let mut parts: Vec<String> = Vec::new();
        let buffer_km = spec
            .buffer_km
            .map(|d| check_distance("--buffer-km", d, false))
            .transpose()?;
        let hull_km = spec
            .hull_buffer_km
            .map(|d| check_distance("--hull-buffer-km", d, true))
            .transpose()?;
        let polygon = match &spec.polygon {
            None => None,
            Some(path) => {
                let src = polygon::read_polygons(path, grid)?;
                warnings.extend(src.warnings);
                let name = path.file_name().map_or_else(
                    || path.display().to_string(),
                    |n| n.to_string_lossy().into_owned(),
                );
                let n = src.polygons.0.len();
                parts.push(format!(
                    "polygon {name} ({n} polygon{})",
                    if n == 1 { "" } else { "s" }
                ));
                let scan = Scanline::new(&src.polygons, grid);
                Some(PolygonPart {
                    polygons: src.polygons,
                    scan,
                })
            }
        };
        let recs = if buffer_km.is_some() || hull_km.is_some() {
            clean_records(records, &mut warnings)
        } else {
            Vec::new()
        };
        let buffer = match buffer_km {
            None => None,
            Some(d) => {
                if recs.is_empty() {
                    return Err(Error::InvalidOption {
                        option: "--buffer-km",
                        reason: "there are no usable records to buffer".into(),
                    });
                }
                parts.push(format!(
                    "a {} km geodesic buffer around {} record{}",
                    km(d),
                    recs.len(),
                    if recs.len() == 1 { "" } else { "s" }
                ));
                Some(PointBuffer::new(&recs, d * 1000.0))
            }
        };
        let hull = match hull_km {
            None => None,
            Some(d) => Some(Self::build_hull(&recs, d, &mut parts, &mut warnings)?),
        };
        let to_lonlat = if !grid.geographic && (buffer.is_some() || hull.is_some()) {
            Some(crs::transform(
                &crs::grid_srs(grid)?,
                &crs::wgs84()?,
                "raster CRS to WGS84 lon/lat for the buffers",
            )?)
        } else {
            None
        };
        if grid.geographic
            && !grid.crs_wkt.trim().is_empty()
            && (buffer.is_some() || hull.is_some())
        {
            if let Ok(srs) = crs::from_wkt(&grid.crs_wkt) {
                let same = crs::wgs84().is_ok_and(|w| crs::same_geographic_cs(&srs, &w));
                if !same {
                    warnings.push(
                        "the raster's geographic CRS is not WGS84; its lon/lat are used as WGS84 for the buffers (datum shifts are ignored)".into(),
                    );
                }
            }
        }
        let description = if parts.is_empty() {
            "whole raster (no accessible-area option given)".to_string()
        } else {
            let mut s = parts[0].clone();
            for p in &parts[1..] {
                s.push_str(" intersected with ");
                s.push_str(p);
            }
            s
        };
        Ok(AccessMask {
            grid: grid.clone(),
            polygon,
            buffer,
            hull,
            to_lonlat,
            description,
            warnings,
            warned_transform: false,
            scratch: vec![false; grid.width],
            lon: Vec::new(),
            lat: Vec::new(),
        })
    }

    fn build_hull(
        recs: &[(f64, f64)],
        d: f64,
        parts: &mut Vec<String>,
        warnings: &mut Vec<String>,
    ) -> Result<HullPart> {
        let err = |reason: String| Error::InvalidOption {
            option: "--hull-buffer-km",
            reason,
        };
        let hull = SphericalHull::new(recs).map_err(|e| match e {
            HullError::Empty => err("there are no usable records to build a hull from".into()),
            HullError::TooWide => err(
                "the records do not fit in one hemisphere, so their convex hull on the sphere is not defined; use --buffer-km or a polygon instead".into(),
            ),
        })?;
        if hull.shape != HullShape::Polygon && d == 0.0 {
            return Err(err(format!(
                "the {} distinct record(s) lie {}, so their hull has no area; give a distance > 0",
                recs.len(),
                if hull.shape == HullShape::Point {
                    "at one place"
                } else {
                    "on one great circle"
                }
            )));
        }
        let what = match hull.shape {
            HullShape::Polygon => format!("the convex hull ({} vertices)", hull.n_vertices()),
            HullShape::Segment => "the segment (collinear hull)".into(),
            HullShape::Point => "the single location".into(),
        };
        let edge = if d > 0.0 {
            let d_m = d * 1000.0;
            // A point at D from the boundary is at most sqrt(D² + (s/2)²) ≈ D + s²/(8D)
            // from the nearest boundary point, so spacing s keeps the error below HULL_ERROR_M.
            let mut spacing = (8.0 * d_m * HULL_ERROR_M).sqrt();
            let mut pts = hull.boundary_points(spacing);
            if pts.len() > HULL_MAX_POINTS {
                spacing *= pts.len() as f64 / HULL_MAX_POINTS as f64;
                pts = hull.boundary_points(spacing);
                warnings.push(format!(
                    "hull boundary densified to {} points; the buffer edge may fall short by up to {:.1} m",
                    pts.len(),
                    spacing * spacing / (8.0 * d_m)
                ));
            }
            Some(PointBuffer::new(&pts, d_m))
        } else {
            None
        };
        parts.push(if d > 0.0 {
            format!(
                "{what} of {} records buffered by {} km (geodesic)",
                recs.len(),
                km(d)
            )
        } else {
            format!("{what} of {} records", recs.len())
        });
        Ok(HullPart { hull, edge })
    }

    /// Whether M is the whole raster (no M option given).
    pub fn is_whole_raster(&self) -> bool {
        self.polygon.is_none() && self.buffer.is_none() && self.hull.is_none()
    }

    /// One line saying how M was made, for the report.
    pub fn description(&self) -> String {
        self.description.clone()
    }

    /// Warnings met while building M (repaired polygons, skipped features, ...).
    pub fn warnings(&self) -> &[String] {
        &self.warnings
    }

    /// The polygon part of M in the raster CRS, when a polygon file was given.
    pub fn polygons(&self) -> Option<&geo_types::MultiPolygon<f64>> {
        self.polygon.as_ref().map(|p| &p.polygons)
    }

    /// A copy of M that another thread can cut rows from, when M is a polygon alone or a
    /// record buffer alone on a lon/lat grid (the decode workers then apply it). `None`
    /// otherwise (no M, or an M that needs coordinate transforms or several parts).
    pub fn row_filler(&self) -> Option<RowFiller> {
        let part = match (&self.polygon, &self.buffer, &self.hull) {
            (Some(p), None, None) => FillerPart::Polygon(p.scan.clone()),
            (None, Some(b), None) if self.grid.geographic => {
                FillerPart::Buffer(Box::new(b.clone()))
            }
            _ => return None,
        };
        Some(RowFiller {
            grid: self.grid.clone(),
            part,
            intervals: Vec::new(),
        })
    }

    /// Set `out[col] = true` for each cell of `row` whose centre lies in M, false otherwise.
    pub fn fill_row(&mut self, row: usize, out: &mut [bool]) -> Result<()> {
        let w = self.grid.width;
        if row >= self.grid.height || out.len() != w {
            return Err(Error::Processing {
                what: "accessible area M (fill_row)".into(),
                reason: format!(
                    "row {row} with {} cells asked of a {}x{} grid",
                    out.len(),
                    w,
                    self.grid.height
                ),
            });
        }
        match &mut self.polygon {
            Some(p) => p.scan.fill_row(row, out),
            None => out.iter_mut().for_each(|v| *v = true),
        }
        if self.buffer.is_none() && self.hull.is_none() {
            return Ok(());
        }
        if self.grid.geographic {
            let scratch = &mut self.scratch;
            if let Some(b) = &mut self.buffer {
                scratch.iter_mut().for_each(|v| *v = false);
                b.fill_row_lonlat_grid(&self.grid, row, scratch);
                out.iter_mut()
                    .zip(scratch.iter())
                    .for_each(|(o, s)| *o &= *s);
            }
            if let Some(h) = &mut self.hull {
                scratch.iter_mut().for_each(|v| *v = false);
                h.hull.fill_row_lonlat_grid(&self.grid, row, scratch);
                if let Some(e) = &mut h.edge {
                    e.fill_row_lonlat_grid(&self.grid, row, scratch);
                }
                out.iter_mut()
                    .zip(scratch.iter())
                    .for_each(|(o, s)| *o &= *s);
            }
            return Ok(());
        }
        self.row_lonlat(row);
        for (c, o) in out.iter_mut().enumerate() {
            if !*o {
                continue;
            }
            let (lon, lat) = (self.lon[c], self.lat[c]);
            if let Some(b) = &self.buffer {
                *o = b.contains(lon, lat);
            }
            if let (true, Some(h)) = (*o, &self.hull) {
                *o = h.hull.contains(lat, lon)
                    || h.edge.as_ref().is_some_and(|e| e.contains(lon, lat));
            }
        }
        Ok(())
    }

    /// Lon/lat of the cell centres of `row` on a projected grid (NaN where the transform fails).
    fn row_lonlat(&mut self, row: usize) {
        let w = self.grid.width;
        let y = self.grid.row_centre_y(row);
        self.lon.clear();
        self.lon.extend((0..w).map(|c| self.grid.col_centre_x(c)));
        self.lat.clear();
        self.lat.resize(w, y);
        let Some(ct) = &self.to_lonlat else { return };
        if ct
            .transform_coords(&mut self.lon, &mut self.lat, &mut [])
            .is_ok()
        {
            return;
        }
        let mut failed = 0usize;
        for c in 0..w {
            let (mut x, mut yy) = ([self.grid.col_centre_x(c)], [y]);
            if ct.transform_coords(&mut x, &mut yy, &mut []).is_ok() {
                (self.lon[c], self.lat[c]) = (x[0], yy[0]);
            } else {
                (self.lon[c], self.lat[c]) = (f64::NAN, f64::NAN);
                failed += 1;
            }
        }
        if failed > 0 && !self.warned_transform {
            self.warned_transform = true;
            self.warnings.push(format!(
                "some cell centres (e.g. {failed} in row {row}) have no WGS84 lon/lat in the raster CRS and are outside M"
            ));
        }
    }
}
