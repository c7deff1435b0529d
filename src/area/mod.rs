//! True cell areas on the ellipsoid.
//!
//! Inputs: a [`GridSpec`] (north-up geotransform in CRS units, CRS as WKT). An empty `crs_wkt`
//! with `geographic = true` means WGS 84 lon/lat degrees. Outputs: areas in m², per row.
//!
//! Three methods, chosen from the CRS (see docs/area-method.md):
//! - geographic CRS: the exact ellipsoidal area of each lon/lat cell through Snyder's (1987)
//!   authalic function q, on the CRS's own ellipsoid; one value per row;
//! - projected CRS whose method PROJ computes as equal-area on the CRS's figure (Lambert
//!   cylindrical / azimuthal equal-area, Albers, Equal Earth, sinusoidal): the nominal cell
//!   size dx·dy converted to m²;
//! - any other projected CRS (Web Mercator, PROJ's spherical-only Mollweide on an ellipsoid, ...):
//!   each cell's boundary is transformed to the CRS's geographic base and measured as a
//!   geodesic polygon on the CRS's ellipsoid.

mod corners;
mod ellipsoid;
mod projection;

pub use ellipsoid::{authalic_q, lonlat_cell_area_m2, lonlat_cell_area_m2_on, Ellipsoid};

use crate::{GridSpec, Result};
use gdal::spatial_ref::SpatialRef;
use projection::crs_err;

/// How cell areas are obtained.
#[derive(Debug, Clone, PartialEq)]
pub enum AreaMethod {
    /// Lon/lat grid: exact ellipsoidal cell area through the authalic-latitude function q (Snyder 1987).
    EllipsoidAuthalic,
    /// Projected, equal-area CRS: every cell has the nominal cell size.
    EqualAreaProjection {
        /// The projection method's name as the CRS gives it.
        projection: String,
    },
    /// Projected, not equal-area: each cell's corners transformed to lon/lat, area on the ellipsoid.
    ProjectedCorners {
        /// The projection method's name as the CRS gives it.
        projection: String,
    },
}

/// Cell areas of one row.
#[derive(Debug, Clone, PartialEq)]
pub enum RowAreas {
    /// Every cell of the row has this area (m2).
    Uniform(f64),
    /// One area per cell (m2).
    PerCell(Vec<f64>),
}

impl RowAreas {
    /// Area of the cell in column `col`, m2.
    pub fn get(&self, col: usize) -> f64 {
        match self {
            RowAreas::Uniform(a) => *a,
            RowAreas::PerCell(v) => v[col],
        }
    }
}

enum Engine {
    /// One area per row (geographic grids).
    Rows(Vec<f64>),
    /// The same area for every cell.
    Uniform(f64),
    /// Corner transformation, row by row.
    Corners(Box<corners::Corners>),
}

/// Cell areas for a grid.
pub struct CellAreas {
    method: AreaMethod,
    engine: Engine,
    ellipsoid: Ellipsoid,
    crs_name: String,
    height: usize,
}

/// The grid's CRS (`crate::crs::grid_srs`: traditional x = lon/easting axis order), checked for
/// the area model; `None` for a lon/lat grid without a CRS.
fn grid_srs(grid: &GridSpec) -> Result<Option<SpatialRef>> {
    if grid.crs_wkt.trim().is_empty() && grid.geographic {
        return Ok(None); // WGS 84 lon/lat by convention (GridSpec::lonlat)
    }
    let srs = crate::crs::grid_srs(grid)?;
    if srs.is_geographic() != grid.geographic {
        return Err(crs_err(format!(
            "the grid is marked {} but its CRS \"{}\" is {}",
            if grid.geographic {
                "geographic"
            } else {
                "projected"
            },
            srs.name().unwrap_or_default(),
            if srs.is_geographic() {
                "geographic"
            } else {
                "not geographic"
            },
        )));
    }
    if !srs.is_geographic() && !srs.is_projected() {
        return Err(crs_err(format!(
            "the CRS \"{}\" is neither geographic nor projected; reproject the raster \
             to a lon/lat or projected CRS",
            srs.name().unwrap_or_default()
        )));
    }
    Ok(Some(srs))
}

fn check_geotransform(grid: &GridSpec) -> Result<()> {
    let gt = grid.geo_transform;
    if gt.iter().any(|v| !v.is_finite()) || gt[1] == 0.0 || gt[5] == 0.0 {
        return Err(crs_err(format!(
            "the geotransform {gt:?} has a zero or non-finite cell size or origin"
        )));
    }
    if gt[2] != 0.0 || gt[4] != 0.0 {
        return Err(crs_err(
            "rotated or sheared geotransforms are not supported; warp the raster north-up first",
        ));
    }
    Ok(())
}

impl CellAreas {
    /// Build the area model for a grid (CRS from `grid.crs_wkt`).
    pub fn new(grid: &GridSpec) -> Result<CellAreas> {
        Self::build(grid, false)
    }

    /// As [`CellAreas::new`], but a projected grid always uses the corner method, even when the
    /// projection is equal-area. Meant for cross-checks of the two methods.
    pub fn new_projected_corners(grid: &GridSpec) -> Result<CellAreas> {
        Self::build(grid, true)
    }

    fn build(grid: &GridSpec, force_corners: bool) -> Result<CellAreas> {
        check_geotransform(grid)?;
        let srs = grid_srs(grid)?;
        let srs = match srs {
            Some(s) if !s.is_geographic() => s,
            other => return Self::geographic(grid, other.as_ref()),
        };
        let ell = projection::ellipsoid_of(&srs)?;
        let method = projection::projection_method(&srs)?;
        let crs_name = srs.name().unwrap_or_else(|| "unnamed projected CRS".into());
        let unit_m = srs.linear_units();
        if !(unit_m.is_finite() && unit_m > 0.0) {
            return Err(crs_err(format!(
                "the CRS \"{crs_name}\" has no usable linear unit"
            )));
        }
        let (method, engine) = if projection::is_equal_area(&method, &ell) && !force_corners {
            let area = grid.dx() * grid.dy() * unit_m * unit_m;
            (
                AreaMethod::EqualAreaProjection {
                    projection: method.name,
                },
                Engine::Uniform(area),
            )
        } else {
            let c = corners::Corners::new(grid, &srs, &ell)?;
            (
                AreaMethod::ProjectedCorners {
                    projection: method.name,
                },
                Engine::Corners(Box::new(c)),
            )
        };
        Ok(CellAreas {
            method,
            engine,
            ellipsoid: ell,
            crs_name,
            height: grid.height,
        })
    }

    fn geographic(grid: &GridSpec, srs: Option<&SpatialRef>) -> Result<CellAreas> {
        let (ell, crs_name, deg_per_unit) = match srs {
            None => (Ellipsoid::WGS84, "WGS 84".to_string(), 1.0),
            Some(s) => {
                let rad = s.angular_units();
                let deg = if (rad / 1f64.to_radians() - 1.0).abs() < 1e-12 {
                    1.0
                } else {
                    rad.to_degrees()
                };
                (
                    projection::ellipsoid_of(s)?,
                    s.name().unwrap_or_else(|| "unnamed geographic CRS".into()),
                    deg,
                )
            }
        };
        let dlon = grid.dx() * deg_per_unit;
        if dlon * grid.width as f64 > 360.0 * (1.0 + 1e-9) {
            return Err(crs_err(format!(
                "the grid spans {:.6}° of longitude, more than the 360° of the globe; \
                 crop it to one turn",
                dlon * grid.width as f64
            )));
        }
        let lat = |row: usize| {
            (grid.geo_transform[3] + row as f64 * grid.geo_transform[5]) * deg_per_unit
        };
        let (first, last) = (lat(0), lat(grid.height));
        let tol = 1e-9 * 90.0;
        if first.abs() > 90.0 + tol || last.abs() > 90.0 + tol {
            return Err(crs_err(format!(
                "the grid's rows run from latitude {first}° to {last}°, beyond ±90°; \
                 fix the raster's geotransform"
            )));
        }
        let rows = (0..grid.height)
            .map(|r| {
                let (a, b) = (lat(r).clamp(-90.0, 90.0), lat(r + 1).clamp(-90.0, 90.0));
                lonlat_cell_area_m2_on(&ell, a, b, dlon)
            })
            .collect();
        Ok(CellAreas {
            method: AreaMethod::EllipsoidAuthalic,
            engine: Engine::Rows(rows),
            ellipsoid: ell,
            crs_name,
            height: grid.height,
        })
    }

    /// The method in use.
    pub fn method(&self) -> &AreaMethod {
        &self.method
    }

    /// The ellipsoid the areas are measured on (the CRS's own).
    pub fn ellipsoid(&self) -> Ellipsoid {
        self.ellipsoid
    }

    /// Areas of the cells of `row`, m2.
    ///
    /// On the corner method, a cell with a boundary point outside the projection's domain (e.g.
    /// the corners of a world Mollweide raster) gives an error; use
    /// [`CellAreas::row_allow_outside`] to get NaN for such cells instead.
    pub fn row(&mut self, row: usize) -> Result<RowAreas> {
        let areas = self.row_allow_outside(row)?;
        if let RowAreas::PerCell(v) = &areas {
            if let Some(col) = v.iter().position(|a| a.is_nan()) {
                let (x, y) = match &self.engine {
                    Engine::Corners(c) => c.failing_corner(row, col),
                    _ => (f64::NAN, f64::NAN),
                };
                return Err(crs_err(format!(
                    "cell (row {row}, column {col}) of the grid in \"{}\" has a boundary point \
                     near ({x}, {y}) that PROJ cannot transform to longitude/latitude \
                     (outside the projection's domain); crop the raster to the projection's \
                     valid area or reproject it",
                    self.crs_name
                )));
            }
        }
        Ok(areas)
    }

    /// Whether every cell of a row has the same area (lon/lat grids and equal-area
    /// projections): [`CellAreas::row`] then always gives [`RowAreas::Uniform`].
    pub fn per_row(&self) -> bool {
        !matches!(self.engine, Engine::Corners(_))
    }

    /// As [`CellAreas::row`], but on the corner method a cell whose boundary leaves the
    /// projection's domain gets the area NaN instead of an error. Such cells hold no data in a
    /// valid raster; a caller that meets NaN for a data cell must report it.
    pub fn row_allow_outside(&mut self, row: usize) -> Result<RowAreas> {
        if row >= self.height {
            return Err(crs_err(format!(
                "row {row} asked for, but the grid has {} rows",
                self.height
            )));
        }
        Ok(match &mut self.engine {
            Engine::Rows(v) => RowAreas::Uniform(v[row]),
            Engine::Uniform(a) => RowAreas::Uniform(*a),
            Engine::Corners(c) => RowAreas::PerCell(c.row(row)),
        })
    }

    /// One sentence for the report naming the method and its source.
    pub fn describe(&self) -> String {
        let ell = &self.ellipsoid;
        let figure = if ell.is_sphere() {
            format!("the sphere of radius {} m", ell.a)
        } else {
            format!("the ellipsoid a = {} m, 1/f = {:.9}", ell.a, 1.0 / ell.f)
        };
        match (&self.method, &self.engine) {
            (AreaMethod::EllipsoidAuthalic, _) => format!(
                "Exact ellipsoidal cell areas on {} ({figure}) via the authalic-latitude \
                 function q (Snyder 1987, USGS PP 1395, eq. 3-12).",
                self.crs_name
            ),
            (AreaMethod::EqualAreaProjection { projection }, _) => format!(
                "Nominal cell size of the equal-area projection {projection} (CRS \"{}\", \
                 {figure}), which PROJ computes as equal-area on that figure.",
                self.crs_name
            ),
            (AreaMethod::ProjectedCorners { projection }, Engine::Corners(c)) => format!(
                "Cell boundaries of the {projection} projection (CRS \"{}\", not equal-area) \
                 transformed to longitude/latitude with {} point(s) per edge and measured as \
                 geodesic polygons on {figure} (GeographicLib, Karney 2013).",
                self.crs_name, c.k
            ),
            (AreaMethod::ProjectedCorners { projection }, _) => {
                format!("Cell corners of the {projection} projection measured on {figure}.")
            }
        }
    }
}

#[cfg(test)]
mod tests;
