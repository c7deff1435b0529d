//! The raster grid: size, north-up geotransform and CRS, shared by every stage.
//!
//! Rows run north to south (row 0 is the top), columns west to east. Cell (row, col)
//! has its centre at pixel coordinates (col + 0.5, row + 0.5). Rotated or sheared
//! geotransforms are refused when the grid is built.

/// Longitude in degrees into [-180, 180): the longitude normaliser for cells, grid edges and
/// geometry (180 becomes -180, so a column at 180 lands on the first column of a
/// 360-degree grid). Every value goes through the arithmetic, so one already in range may
/// move by an ulp or so (0.1 gives 0.09999999999999432). Its sibling for records is
/// [`normalise_lon_closed`].
pub fn normalise_lon(lon: f64) -> f64 {
    let l = (lon + 180.0).rem_euclid(360.0) - 180.0;
    if l >= 180.0 {
        l - 360.0
    } else {
        l
    }
}

/// Longitude in degrees into [-180, 180], for record coordinates written back to the user
/// (records.csv, the records layers): a longitude already in [-180, 180] is returned bit for
/// bit, so a record at 180 stays 180 and 0.1 stays 0.1; others wrap by whole turns, and one
/// that lands on the seam from the east (540) keeps 180.
pub(crate) fn normalise_lon_closed(lon: f64) -> f64 {
    if (-180.0..=180.0).contains(&lon) {
        lon
    } else {
        let w = (lon + 180.0).rem_euclid(360.0) - 180.0;
        // rem_euclid maps 180 to -180; keep a value that was exactly on the seam positive.
        if w == -180.0 && lon > 0.0 {
            180.0
        } else {
            w
        }
    }
}

/// A north-up raster grid with its CRS.
#[derive(Debug, Clone, PartialEq)]
pub struct GridSpec {
    /// Number of columns.
    pub width: usize,
    /// Number of rows.
    pub height: usize,
    /// GDAL geotransform `[x0, dx, 0, y0, 0, dy]` (dy < 0 for north-up).
    pub geo_transform: [f64; 6],
    /// The CRS as WKT (GDAL's export).
    pub crs_wkt: String,
    /// Whether the CRS is geographic (lon/lat degrees, x = longitude).
    pub geographic: bool,
}

impl GridSpec {
    /// A geographic (lon/lat, WGS84) grid with its north-west corner at (`west`, `north`)
    /// and square cells of `cell_deg` degrees. Meant for tests and examples.
    pub fn lonlat(width: usize, height: usize, west: f64, north: f64, cell_deg: f64) -> Self {
        GridSpec {
            width,
            height,
            geo_transform: [west, cell_deg, 0.0, north, 0.0, -cell_deg],
            crs_wkt: String::new(),
            geographic: true,
        }
    }

    /// The grid of a raster file, checked as `areal range` checks the suitability raster.
    pub fn of_raster(path: &std::path::Path) -> crate::Result<Self> {
        Ok(crate::raster_io::SuitabilityRaster::open(path)?
            .grid()
            .clone())
    }

    /// A grid from its size, GDAL geotransform and a CRS as the user gives it (EPSG code,
    /// WKT or PROJ string), checked north-up; for callers that hold an array, not a file
    /// (the Python package's cell areas).
    pub fn with_crs(
        width: usize,
        height: usize,
        geo_transform: [f64; 6],
        crs: &str,
    ) -> crate::Result<Self> {
        let gt = geo_transform;
        if width == 0
            || height == 0
            || gt[2] != 0.0
            || gt[4] != 0.0
            || !(gt[1] > 0.0 && gt[5] < 0.0)
        {
            return Err(crate::Error::InvalidOption {
                option: "transform",
                reason: format!(
                    "{width} x {height} cells with geotransform {gt:?}: give a non-empty north-up \
                     grid (GDAL order [x0, dx, 0, y0, 0, dy], dx > 0, dy < 0)"
                ),
            });
        }
        let srs = crate::crs::from_definition(crs, "crs")?;
        let crs_wkt = srs.to_wkt().map_err(|e| crate::Error::Crs {
            what: "crs".into(),
            reason: format!("cannot export '{crs}' as WKT ({e})"),
        })?;
        Ok(GridSpec {
            width,
            height,
            geo_transform: gt,
            crs_wkt,
            geographic: srs.is_geographic(),
        })
    }

    /// Cell width in CRS units (positive).
    pub fn dx(&self) -> f64 {
        self.geo_transform[1].abs()
    }

    /// Cell height in CRS units (positive).
    pub fn dy(&self) -> f64 {
        self.geo_transform[5].abs()
    }

    /// The x coordinate of the centre of column `col`.
    pub fn col_centre_x(&self, col: usize) -> f64 {
        self.geo_transform[0] + (col as f64 + 0.5) * self.geo_transform[1]
    }

    /// The y coordinate of the centre of row `row`.
    pub fn row_centre_y(&self, row: usize) -> f64 {
        self.geo_transform[3] + (row as f64 + 0.5) * self.geo_transform[5]
    }

    /// The y coordinates of the top and bottom edges of row `row` (top first).
    pub fn row_edges_y(&self, row: usize) -> (f64, f64) {
        let top = self.geo_transform[3] + row as f64 * self.geo_transform[5];
        (top, top + self.geo_transform[5])
    }

    /// The x coordinates of the left and right edges of column `col`.
    pub fn col_edges_x(&self, col: usize) -> (f64, f64) {
        let left = self.geo_transform[0] + col as f64 * self.geo_transform[1];
        (left, left + self.geo_transform[1])
    }

    /// The (row, col) of the cell holding point (x, y) in the grid's CRS, or `None`
    /// when the point lies outside the grid. A point on an edge between two cells
    /// belongs to the cell to its south-east (GDAL's convention); points on the
    /// outer east and south edges are outside. On a grid that wraps the globe,
    /// longitudes are brought into the grid's range first.
    pub fn cell_of(&self, x: f64, y: f64) -> Option<(usize, usize)> {
        if !x.is_finite() || !y.is_finite() {
            return None;
        }
        let mut x = x;
        if self.wraps_antimeridian() {
            let west = self.geo_transform[0];
            x = west + (x - west).rem_euclid(360.0);
        }
        let c = ((x - self.geo_transform[0]) / self.geo_transform[1]).floor();
        let r = ((y - self.geo_transform[3]) / self.geo_transform[5]).floor();
        if c < 0.0 || r < 0.0 || c >= self.width as f64 || r >= self.height as f64 {
            return None;
        }
        Some((r as usize, c as usize))
    }

    /// Whether the grid is geographic and spans the full 360 degrees of longitude,
    /// so that its first and last columns are neighbours across the antimeridian.
    pub fn wraps_antimeridian(&self) -> bool {
        if !self.geographic {
            return false;
        }
        let span = self.width as f64 * self.dx();
        (span - 360.0).abs() <= 1e-6 * 360.0_f64.max(self.dx())
    }

    /// Total number of cells.
    pub fn n_cells(&self) -> u64 {
        self.width as u64 * self.height as u64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cell_lookup_follows_gdal_edge_convention() {
        let g = GridSpec::lonlat(4, 3, 10.0, 50.0, 1.0);
        assert_eq!(g.cell_of(10.0, 50.0), Some((0, 0)));
        assert_eq!(g.cell_of(10.999, 49.001), Some((0, 0)));
        assert_eq!(g.cell_of(11.0, 49.0), Some((1, 1)));
        assert_eq!(g.cell_of(14.0, 48.0), None); // east edge is outside
        assert_eq!(g.cell_of(13.5, 47.0), None); // south edge is outside
        assert_eq!(g.cell_of(9.99, 48.0), None);
        assert_eq!(g.cell_of(f64::NAN, 48.0), None);
    }

    #[test]
    fn global_grid_wraps_and_normalises_longitude() {
        let g = GridSpec::lonlat(360, 180, -180.0, 90.0, 1.0);
        assert!(g.wraps_antimeridian());
        assert_eq!(g.cell_of(190.5, 0.5), Some((89, 10)));
        assert_eq!(g.cell_of(-180.0, 0.5), Some((89, 0)));
        assert_eq!(g.cell_of(180.0, 0.5), Some((89, 0)));
        let regional = GridSpec::lonlat(10, 10, 0.0, 10.0, 1.0);
        assert!(!regional.wraps_antimeridian());
    }

    #[test]
    fn the_two_longitude_conventions() {
        // Common practice, no source: longitudes differing by 360 degrees are the same
        // meridian; the interval ends follow each function's stated convention.
        assert_eq!(normalise_lon(180.0), -180.0);
        assert_eq!(normalise_lon(-180.0), -180.0);
        assert_eq!(normalise_lon(190.0), -170.0);
        assert_eq!(normalise_lon(540.0), -180.0);
        assert_ne!(normalise_lon(0.1), 0.1);
        assert_eq!(normalise_lon_closed(180.0), 180.0);
        assert_eq!(normalise_lon_closed(-180.0), -180.0);
        assert_eq!(normalise_lon_closed(190.0), -170.0);
        assert_eq!(normalise_lon_closed(-190.0), 170.0);
        assert_eq!(normalise_lon_closed(540.0), 180.0);
        assert_eq!(normalise_lon_closed(-540.0), -180.0);
        assert_eq!(normalise_lon_closed(0.1), 0.1);
        assert_eq!(normalise_lon_closed(179.99999999999997), 179.99999999999997);
    }

    #[test]
    fn centres_and_edges() {
        let g = GridSpec::lonlat(4, 3, 10.0, 50.0, 0.5);
        assert_eq!(g.col_centre_x(1), 10.75);
        assert_eq!(g.row_centre_y(2), 48.75);
        assert_eq!(g.row_edges_y(1), (49.5, 49.0));
        assert_eq!(g.col_edges_x(3), (11.5, 12.0));
    }
}
