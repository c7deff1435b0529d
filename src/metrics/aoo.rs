//! Area of occupancy: occupied cells of a square grid in an equal-area CRS.
//!
//! CRS: a Lambert azimuthal equal-area projection on the WGS84 ellipsoid (EPSG method 9820,
//! through PROJ), centred on the records: the geodetic latitude and longitude of the
//! normalised mean of the records' unit normals, rounded to 0.01 degrees so the grid is easy
//! to state and to rebuild. LAEA keeps areas exact everywhere, keeps cell shapes square near
//! its centre, and has no seam at the antimeridian or the poles; a single global grid
//! (EPSG:6933) would stretch cells into thin slivers at high latitudes.
//!
//! Grid: cells `w` metres wide (default 2 km), lines at `x = ox + i·w`, `y = oy + j·w` in
//! projected metres. A point belongs to cell `(floor((x-ox)/w), floor((y-oy)/w))`. AOO is
//! (occupied cells) × w². Grid placement changes AOO, so 16 origins are evaluated:
//! `ox, oy ∈ {0, w/4, w/2, 3w/4}` (for 2 km: 0, 0.5, 1, 1.5 km). The reported AOO is the
//! minimum over them (common practice, no published rule; the Guidelines fix only the 2 km
//! reference scale), with the maximum and the origin that gave the minimum (the first in
//! the order ox, then oy, increasing, when several tie).

pub(crate) use super::laea::RowProjector;
use crate::{GridSpec, Result};
use gdal::spatial_ref::{CoordTransform, SpatialRef};

/// The AOO grid's CRS as plain data, shareable between threads.
#[derive(Debug, Clone)]
pub(crate) struct AooSpec {
    /// PROJ definition of the LAEA.
    pub(crate) proj: String,
    /// Centre (lon, lat), degrees.
    pub(crate) centre: (f64, f64),
}

impl AooSpec {
    /// Projects the cell centres of rows of `grid` into the grid's CRS (one per thread).
    pub(crate) fn projector(&self, grid: &GridSpec) -> Result<RowProjector> {
        RowProjector::new(self, grid)
    }
}

/// Grid-origin offsets as fractions of the cell width, for x and for y.
pub const ORIGIN_FRACTIONS: [f64; 4] = [0.0, 0.25, 0.5, 0.75];

/// The equal-area CRS and cell width of an AOO grid.
pub(crate) struct AooGrid {
    /// PROJ definition of the LAEA.
    pub(crate) proj: String,
    /// Cell width, metres.
    pub(crate) cell_m: f64,
    srs: SpatialRef,
    /// Centre (lon, lat), degrees.
    centre: (f64, f64),
}

/// The centre of `points` ((lon, lat) degrees): normalised mean of their unit normals as
/// (lon, lat), rounded to 0.01 degrees; the first point when the mean vanishes.
pub(crate) fn centre_of(points: &[(f64, f64)]) -> (f64, f64) {
    let mut s = [0.0f64; 3];
    for &(lon, lat) in points {
        let v = crate::access::buffer::unit(lat, lon);
        for k in 0..3 {
            s[k] += v[k];
        }
    }
    let (lon, lat) = if s.iter().map(|x| x * x).sum::<f64>() < 1e-20 * (points.len() as f64) {
        points.first().copied().unwrap_or((0.0, 0.0))
    } else {
        let (lat, lon) = crate::access::buffer::lat_lon(s);
        (lon, lat)
    };
    let r = |x: f64| (x * 100.0).round() / 100.0;
    (
        crate::grid::normalise_lon(r(lon)),
        r(lat).clamp(-90.0, 90.0),
    )
}

impl AooGrid {
    /// An LAEA grid centred at (`lon0`, `lat0`) degrees with cells `cell_km` wide.
    pub(crate) fn new(lon0: f64, lat0: f64, cell_km: f64) -> Result<AooGrid> {
        let proj = format!(
            "+proj=laea +lat_0={lat0:.2} +lon_0={lon0:.2} +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs"
        );
        let srs = crate::crs::from_proj4(&proj, "AOO grid CRS")?;
        Ok(AooGrid {
            proj,
            cell_m: cell_km * 1000.0,
            srs,
            centre: (lon0, lat0),
        })
    }

    /// What a thread needs to project rows into this grid's CRS (`Sync`, unlike the CRS).
    pub(crate) fn spec(&self) -> AooSpec {
        AooSpec {
            proj: self.proj.clone(),
            centre: self.centre,
        }
    }

    /// A transform from `src` (any CRS, traditional axis order) to the grid's CRS.
    pub(crate) fn transform_from(&self, src: &SpatialRef) -> Result<CoordTransform> {
        crate::crs::transform(src, &self.srs, "AOO grid CRS")
    }
}

/// Occupied cells for the 16 grid origins.
///
/// Every origin is a multiple of a quarter cell, so a point's cell under origin
/// (k·w/4, l·w/4) follows from its quarter-cell `(a, b) = (floor(4x/w), floor(4y/w))`:
/// `(floor((a - k)/4), floor((b - l)/4))` (floor(floor(v)/n) = floor(v/n) for integer n).
/// The distinct quarter cells are kept as packed keys, sorted and deduplicated as they grow,
/// so memory follows the occupied area, not the number of points.
pub(crate) struct AooCounter {
    cell_m: f64,
    fine: Vec<u64>,
    clean: usize,
}

/// Sign bit flipped, so unsigned order is signed order.
const FLIP: u32 = 0x8000_0000;

/// A quarter cell as one key whose unsigned order is (a, b) in signed order.
fn pack(a: i64, b: i64) -> u64 {
    (((a as i32 as u32) ^ FLIP) as u64) << 32 | ((b as i32 as u32) ^ FLIP) as u64
}

fn unpack(k: u64) -> (i64, i64) {
    (
        ((k >> 32) as u32 ^ FLIP) as i32 as i64,
        (k as u32 ^ FLIP) as i32 as i64,
    )
}

/// AOO over the 16 origins.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct AooFigures {
    /// Occupied cells at the origin giving the fewest.
    pub(crate) min_cells: usize,
    /// Occupied cells at the origin giving the most.
    pub(crate) max_cells: usize,
    /// The origin (ox, oy) giving the fewest, metres.
    pub(crate) origin_m: (f64, f64),
    /// Cell area, km2.
    pub(crate) cell_km2: f64,
}

impl AooFigures {
    /// Smallest AOO over the origins, km2.
    pub(crate) fn min_km2(&self) -> f64 {
        self.min_cells as f64 * self.cell_km2
    }
    /// Largest AOO over the origins, km2.
    pub(crate) fn max_km2(&self) -> f64 {
        self.max_cells as f64 * self.cell_km2
    }
}

impl AooCounter {
    /// No cells yet, for cells `cell_m` metres wide (>= 10 m, so quarter cells fit in i32).
    pub(crate) fn new(cell_m: f64) -> AooCounter {
        AooCounter {
            cell_m,
            fine: Vec::new(),
            clean: 0,
        }
    }

    /// The origin of set `k`, metres.
    fn origin(&self, k: usize) -> (f64, f64) {
        let n = ORIGIN_FRACTIONS.len();
        (
            ORIGIN_FRACTIONS[k / n] * self.cell_m,
            ORIGIN_FRACTIONS[k % n] * self.cell_m,
        )
    }

    /// Mark the cell holding projected point (x, y) metres, for every origin.
    pub(crate) fn add(&mut self, x: f64, y: f64) {
        let q = self.cell_m / 4.0;
        self.fine
            .push(pack((x / q).floor() as i64, (y / q).floor() as i64));
        if self.fine.len() >= 2 * self.clean + (1 << 22) {
            self.compact();
        }
    }

    /// Add every cell another counter (on the same grid) marked.
    pub(crate) fn merge(&mut self, other: AooCounter) {
        self.fine.extend(other.fine);
        self.compact();
    }

    fn compact(&mut self) {
        use rayon::slice::ParallelSliceMut;
        self.fine.par_sort_unstable();
        self.fine.dedup();
        self.clean = self.fine.len();
    }

    /// Occupied cells at each origin, in the order ox (outer), oy (inner), each increasing.
    ///
    /// One sort of the quarter cells, then linear sweeps: sorted by (a, b), the quarter cells
    /// of one grid column under x offset k (a in 4m + k .. 4m + k + 3) are consecutive, so
    /// each column's b values are merged once and the rows it occupies counted for each y
    /// offset.
    pub(crate) fn per_origin(&mut self) -> Vec<usize> {
        self.compact();
        let n = ORIGIN_FRACTIONS.len() as i64;
        let fine: Vec<(i64, i64)> = self.fine.iter().map(|&f| unpack(f)).collect();
        let mut out = vec![0usize; (n * n) as usize];
        let mut bs: Vec<i64> = Vec::new();
        for i in 0..n {
            let mut s = 0;
            while s < fine.len() {
                let col = (fine[s].0 - i).div_euclid(n);
                let mut e = s;
                while e < fine.len() && (fine[e].0 - i).div_euclid(n) == col {
                    e += 1;
                }
                // The b values of this grid column, sorted and distinct (at most 4 sorted runs).
                bs.clear();
                bs.extend(fine[s..e].iter().map(|f| f.1));
                bs.sort_unstable();
                bs.dedup();
                for j in 0..n {
                    let mut last = None;
                    let mut cells = 0usize;
                    for &b in &bs {
                        let row = (b - j).div_euclid(n);
                        if last != Some(row) {
                            cells += 1;
                            last = Some(row);
                        }
                    }
                    out[(i * n + j) as usize] += cells;
                }
                s = e;
            }
        }
        out
    }

    /// The figures over the origins.
    pub(crate) fn figures(&mut self) -> AooFigures {
        let per = self.per_origin();
        self.figures_of(per)
    }

    /// The figures from the occupied cells of each origin (in [`Self::per_origin`]'s order).
    pub(crate) fn figures_of(&self, per: Vec<usize>) -> AooFigures {
        let mut min_k = 0;
        for k in 1..per.len() {
            if per[k] < per[min_k] {
                min_k = k;
            }
        }
        AooFigures {
            min_cells: per[min_k],
            max_cells: per.iter().copied().max().unwrap_or(0),
            origin_m: self.origin(min_k),
            cell_km2: (self.cell_m / 1000.0).powi(2),
        }
    }
}
