//! Geodesic buffers around points: the cells whose centre lies within D metres of at
//! least one point, distance measured on the WGS84 ellipsoid (Karney 2013, through
//! geographiclib-rs `Geodesic::wgs84()` Inverse).
//!
//! Inputs: points as WGS84 (lon, lat) degrees, D in metres (> 0). Two ways to ask:
//! [`PointBuffer::fill_row_lonlat_grid`] for a grid whose x is longitude and y latitude
//! (degrees, taken as WGS84), and [`PointBuffer::contains`] for one lon/lat point (used for
//! projected grids after their cell centres were transformed to lon/lat).
//!
//! Exactness: every decision "in" or "out" near the circle's edge is made with an exact
//! ellipsoidal Inverse. Spherical bounds only pick candidates and settle cells that are
//! certainly inside or certainly outside:
//! map each ellipsoid point to its unit normal (geodetic lat/lon on the unit sphere);
//! on WGS84 the line element satisfies `M_MIN dσ <= ds <= M_MAX dσ` with
//! `M_MIN = a(1-e²)` and `M_MAX = a/sqrt(1-e²)` (the smallest and largest radii of
//! curvature), so a geodesic of length s has spherical angle `σ <= s/M_MIN`, and any
//! spherical angle σ gives a distance `s <= M_MAX σ`.

use geographiclib_rs::{Geodesic, InverseGeodesic};
use rstar::primitives::GeomWithData;
use rstar::{RTree, AABB};

use crate::GridSpec;

/// WGS84 semi-major axis, metres.
const WGS84_A: f64 = 6_378_137.0;
/// WGS84 flattening.
const WGS84_F: f64 = 1.0 / 298.257_223_563;

/// Square of the WGS84 first eccentricity.
fn e2() -> f64 {
    WGS84_F * (2.0 - WGS84_F)
}
/// Smallest radius of curvature on WGS84 (meridional, at the equator), metres.
pub(crate) fn m_min() -> f64 {
    WGS84_A * (1.0 - e2())
}
/// Largest radius of curvature on WGS84 (at the poles), metres.
pub(crate) fn m_max() -> f64 {
    WGS84_A / (1.0 - e2()).sqrt()
}

/// Unit normal of the ellipsoid at geodetic (lat, lon) degrees.
pub(crate) fn unit(lat: f64, lon: f64) -> [f64; 3] {
    let (sp, cp) = lat.to_radians().sin_cos();
    let (sl, cl) = lon.to_radians().sin_cos();
    [cp * cl, cp * sl, sp]
}

/// Geodetic (lat, lon) degrees of a unit normal.
pub(crate) fn lat_lon(v: [f64; 3]) -> (f64, f64) {
    let lat = v[2].atan2(v[0].hypot(v[1])).to_degrees();
    let lon = v[1].atan2(v[0]).to_degrees();
    (lat, lon)
}

type Indexed = GeomWithData<[f64; 3], usize>;

/// Points with a geodesic buffer distance, indexed for row and point queries.
#[derive(Clone)]
pub(crate) struct PointBuffer {
    /// (lat, lon) degrees, longitudes in [-180, 180].
    pts: Vec<(f64, f64)>,
    d_m: f64,
    geod: Geodesic,
    /// Unit normals of the points (see module doc).
    tree: RTree<Indexed>,
    /// Spherical angle beyond which no point can be within D (radians).
    sigma_out: f64,
    /// Spherical angle within which every point is within D (radians).
    sigma_in: f64,
    /// Sine and cosine of each point's latitude.
    sin_cos_lat: Vec<(f64, f64)>,
    /// Cosines of `sigma_out` and `sigma_in` (each at most pi).
    cos_sigma: (f64, f64),
    intervals: Vec<(usize, usize)>,
    sides: Vec<Side>,
    row_out: Vec<(usize, usize)>,
    cands: Vec<usize>,
}

/// The columns of one side of a point's circle on one row: column `c0 + step * j` for
/// j = `j_a`.. moves away from the point's meridian; j < `lo` are certainly within D,
/// j >= `hi` certainly not, and j in `lo..hi` need the exact distance.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Side {
    i: usize,
    c0: i64,
    step: i64,
    j_a: i64,
    lo: i64,
    hi: i64,
}

/// Whether columns a..=b all lie in the merged half-open intervals `v`.
fn covered(v: &[(usize, usize)], a: usize, b: usize) -> bool {
    let k = v.partition_point(|&(_, end)| end <= a);
    k < v.len() && v[k].0 <= a && v[k].1 > b
}

impl PointBuffer {
    /// Index `points` ((lon, lat) degrees, finite, |lat| <= 90) for a buffer of `d_m` metres.
    pub(crate) fn new(points: &[(f64, f64)], d_m: f64) -> PointBuffer {
        let sigma_out = d_m / m_min() * (1.0 + 1e-9) + 1e-12;
        let sigma_in = d_m / m_max() * (1.0 - 1e-9);
        let pts: Vec<(f64, f64)> = points
            .iter()
            .map(|&(lon, lat)| (lat, (lon + 180.0).rem_euclid(360.0) - 180.0))
            .collect();
        let items = pts
            .iter()
            .enumerate()
            .map(|(i, &(lat, lon))| GeomWithData::new(unit(lat, lon), i))
            .collect();
        PointBuffer {
            d_m,
            geod: Geodesic::wgs84(),
            tree: RTree::bulk_load(items),
            sigma_out,
            sigma_in,
            cos_sigma: (
                sigma_out.min(std::f64::consts::PI).cos(),
                sigma_in.min(std::f64::consts::PI).cos(),
            ),
            sin_cos_lat: pts
                .iter()
                .map(|&(lat, _)| lat.to_radians().sin_cos())
                .collect(),
            pts,
            intervals: Vec::new(),
            sides: Vec::new(),
            row_out: Vec::new(),
            cands: Vec::new(),
        }
    }

    /// Exact test: is geodetic (lat, lon) within D of point `i`?
    fn within(&self, lat: f64, lon: f64, i: usize) -> bool {
        let (plat, plon) = self.pts[i];
        let s: f64 = self.geod.inverse(lat, lon, plat, plon);
        s <= self.d_m
    }

    /// Whether (lon, lat) degrees lies within D of any point (exact near the edge).
    pub(crate) fn contains(&self, lon: f64, lat: f64) -> bool {
        if !lon.is_finite() || !lat.is_finite() || lat.abs() > 90.0 {
            return false;
        }
        let q = unit(lat, lon);
        let chord = |s: f64| 2.0 * (s.min(std::f64::consts::PI) / 2.0).sin();
        let out2 = chord(self.sigma_out).powi(2);
        let in2 = chord(self.sigma_in).powi(2);
        for (p, d2) in self.tree.nearest_neighbor_iter_with_distance_2(&q) {
            if d2 > out2 && self.sigma_out < std::f64::consts::PI {
                break;
            }
            if d2 <= in2 || self.within(lat, lon, p.data) {
                return true;
            }
        }
        false
    }

    /// Set `out[c] = true` for every column `c` of `row` whose centre is within D of a
    /// point, on a grid whose x is longitude and y latitude (degrees). Other entries are
    /// left as they are.
    pub(crate) fn fill_row_lonlat_grid(&mut self, grid: &GridSpec, row: usize, out: &mut [bool]) {
        let mut iv = std::mem::take(&mut self.row_out);
        self.row_intervals_lonlat_grid(grid, row, &mut iv);
        let n = out.len();
        for &(a, b) in &iv {
            out[a.min(n)..b.min(n)].fill(true);
        }
        self.row_out = iv;
    }

    /// The columns of `row` whose centres are within D of a point, on a grid whose x is
    /// longitude and y latitude (degrees), as sorted, disjoint, half-open intervals `[a, b)`
    /// (the one definition behind [`PointBuffer::fill_row_lonlat_grid`]).
    pub(crate) fn row_intervals_lonlat_grid(
        &mut self,
        grid: &GridSpec,
        row: usize,
        out: &mut Vec<(usize, usize)>,
    ) {
        out.clear();
        let lat = grid.row_centre_y(row);
        let w = grid.width;
        if w == 0 || !lat.is_finite() || lat.abs() > 90.0 {
            return;
        }
        let reach = self.sigma_out.to_degrees() + 1e-9;
        let z_lo = (lat - reach).max(-90.0).to_radians().sin();
        let z_hi = (lat + reach).min(90.0).to_radians().sin();
        let env = AABB::from_corners([-2.0, -2.0, z_lo - 1e-15], [2.0, 2.0, z_hi + 1e-15]);
        let mut cands = std::mem::take(&mut self.cands);
        cands.clear();
        cands.extend(self.tree.locate_in_envelope(&env).map(|p| p.data));
        let mut intervals = std::mem::take(&mut self.intervals);
        let mut sides = std::mem::take(&mut self.sides);
        intervals.clear();
        sides.clear();
        let (sp, cp) = lat.to_radians().sin_cos();
        for &i in &cands {
            if self.record_row(grid, lat, (sp, cp), i, &mut sides) {
                intervals.clear();
                intervals.push((0, w - 1));
                sides.clear();
                break;
            }
        }
        self.cands = cands;
        let (x0, dx) = (grid.geo_transform[0], grid.geo_transform[1]);
        let centre = |c: i64| x0 + (c as f64 + 0.5) * dx;
        // Columns certainly inside (within the inner spherical bound of some point).
        let span = |sd: &Side, from: i64, to: i64| {
            let (a, b) = (sd.c0 + sd.step * from, sd.c0 + sd.step * (to - 1));
            (a.min(b) as usize, a.max(b) as usize)
        };
        let mut inner: Vec<(usize, usize)> = sides
            .iter()
            .filter(|sd| sd.lo > sd.j_a)
            .map(|sd| span(sd, sd.j_a, sd.lo))
            .map(|(a, b)| (a, b + 1))
            .collect();
        super::merge_half_open(&mut inner);
        // Only the columns between the bounds need the exact distance, and not even those
        // when other points' inner discs already cover them (clustered records).
        for sd in &sides {
            let mut n = sd.lo;
            if sd.hi > sd.lo {
                let (a, b) = span(sd, sd.lo, sd.hi);
                if covered(&inner, a, b) {
                    n = sd.hi;
                } else {
                    let (mut lo, mut hi) = (sd.lo, sd.hi);
                    while lo < hi {
                        let mid = (lo + hi + 1) / 2;
                        if self.within(lat, centre(sd.c0 + sd.step * (mid - 1)), sd.i) {
                            lo = mid;
                        } else {
                            hi = mid - 1;
                        }
                    }
                    n = lo;
                }
            }
            if n > sd.j_a {
                intervals.push(span(sd, sd.j_a, n));
            }
        }
        self.sides = sides;
        out.extend(
            intervals
                .iter()
                .filter(|&&(a, _)| a < w)
                .map(|&(a, b)| (a, b.min(w - 1) + 1)),
        );
        super::merge_half_open(out);
        self.intervals = intervals;
    }

    /// Push the sides of point `i`'s circle on `row` (runs of columns growing away from
    /// the point's meridian, with what the spherical bounds settle); true when the whole
    /// row is covered.
    fn record_row(
        &self,
        grid: &GridSpec,
        lat: f64,
        (sp, cp): (f64, f64),
        i: usize,
        sides: &mut Vec<Side>,
    ) -> bool {
        let plon = self.pts[i].1;
        let (spr, cpr) = self.sin_cos_lat[i];
        let denom = cp * cpr;
        // Longitude half-widths (degrees): `l_up` bounds the covered set from outside,
        // `l_in` from inside (negative: nothing known to be inside).
        let (l_up, l_in) = if denom < 1e-12 {
            (180.0, -1.0)
        } else {
            let half = |cos_sigma: f64| -> Option<f64> {
                let rhs = (cos_sigma - sp * spr) / denom;
                if rhs > 1.0 {
                    None
                } else {
                    Some(rhs.max(-1.0).acos().to_degrees())
                }
            };
            let Some(up) = half(self.cos_sigma.0) else {
                return false;
            };
            let l_in = half(self.cos_sigma.1).map_or(-1.0, |v| v - 1e-5);
            ((up + 1e-5).min(180.0), l_in)
        };
        if l_up >= 180.0 && self.within(lat, plon + 180.0, i) {
            // Distance grows with |Δlon| along a parallel, so the farthest cell is in.
            return true;
        }
        let x0 = grid.geo_transform[0];
        let dx = grid.geo_transform[1];
        let w = grid.width as i64;
        let (gx_lo, gx_hi) = if dx > 0.0 {
            (x0, x0 + dx * w as f64)
        } else {
            (x0 + dx * w as f64, x0)
        };
        let k_lo = ((gx_lo - l_up - plon) / 360.0).ceil() as i64;
        let k_hi = ((gx_hi + l_up - plon) / 360.0).floor() as i64;
        let centre = |c: i64| x0 + (c as f64 + 0.5) * dx;
        let step_e: i64 = if dx > 0.0 { 1 } else { -1 };
        for k in k_lo..=k_hi {
            let lk = plon + 360.0 * k as f64;
            // First column (going east) whose centre is at or east of lk.
            let mut ce = ((lk - x0) / dx - 0.5).ceil() as i64;
            while centre(ce) < lk {
                ce += step_e;
            }
            while centre(ce - step_e) >= lk {
                ce -= step_e;
            }
            // Each side: columns in order of growing |Δlon| from lk, starting at c0.
            for (side, c0, step) in [(1.0, ce, step_e), (-1.0, ce - step_e, -step_e)] {
                let delta = |j: i64| side * (centre(c0 + step * j) - lk);
                // Number of columns j = 0.. with delta(j) <= lim.
                let count_upto = |lim: f64| -> i64 {
                    if lim < 0.0 {
                        return 0;
                    }
                    let mut n = (lim / dx.abs()).floor() as i64 + 2;
                    while n > 0 && delta(n - 1) > lim {
                        n -= 1;
                    }
                    n
                };
                // Range of j that falls inside the grid.
                let (j_a, j_b) = if step > 0 {
                    (-c0, w - 1 - c0)
                } else {
                    (c0 - (w - 1), c0)
                };
                let j_a = j_a.max(0);
                let hi = count_upto(l_up).min(j_b + 1);
                let lo = count_upto(l_in).min(hi).max(j_a);
                if lo > hi {
                    continue;
                }
                sides.push(Side {
                    i,
                    c0,
                    step,
                    j_a,
                    lo,
                    hi,
                });
            }
        }
        false
    }
}
