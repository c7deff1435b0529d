//! Convex hull of the records on the sphere, for the hull-buffer form of M.
//!
//! Inputs: records as WGS84 (lon, lat) degrees. Each record is mapped to its unit normal
//! (geodetic latitude and longitude on the unit sphere); hull edges are great-circle arcs
//! of that sphere. The hull is found by projecting the points gnomonically around a
//! centre that sees all of them in its open hemisphere (great circles become straight
//! lines there, so the planar hull is the spherical hull) and running Andrew's monotone
//! chain. A point q is inside when it is left of every edge: `(v_i × v_{i+1}) · q >= 0`.
//! Fewer than three distinct records, or records on one great circle, give a point or a
//! segment instead of a polygon ([`HullShape`]).

use crate::access::buffer::{lat_lon, m_max, unit};
use crate::GridSpec;

type V3 = [f64; 3];

fn dot(a: V3, b: V3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
fn cross(a: V3, b: V3) -> V3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
fn norm(a: V3) -> V3 {
    let n = dot(a, a).sqrt();
    [a[0] / n, a[1] / n, a[2] / n]
}

/// What the hull of the records degenerates to, if anything.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum HullShape {
    /// All records at one place.
    Point,
    /// Records on one great circle: the arc between the two extremes.
    Segment,
    /// A proper spherical polygon.
    Polygon,
}

/// A spherical convex hull, vertices counter-clockwise seen from outside the sphere.
pub(crate) struct SphericalHull {
    pub(crate) shape: HullShape,
    verts: Vec<V3>,
    normals: Vec<V3>,
    centre: V3,
    cos_cap: f64,
}

/// Why a hull cannot be built.
#[derive(Debug, PartialEq, Eq)]
pub(crate) enum HullError {
    /// No records.
    Empty,
    /// The records do not fit in an open hemisphere.
    TooWide,
}

impl SphericalHull {
    /// The hull of `records` ((lon, lat) degrees, finite, |lat| <= 90).
    pub(crate) fn new(records: &[(f64, f64)]) -> Result<SphericalHull, HullError> {
        let pts: Vec<V3> = records.iter().map(|&(lon, lat)| unit(lat, lon)).collect();
        if pts.is_empty() {
            return Err(HullError::Empty);
        }
        let centre = find_centre(&pts).ok_or(HullError::TooWide)?;
        // Orthonormal basis (e1, e2, centre), right-handed.
        let helper = if centre[2].abs() < 0.9 {
            [0.0, 0.0, 1.0]
        } else {
            [1.0, 0.0, 0.0]
        };
        let e1 = norm(cross(helper, centre));
        let e2 = cross(centre, e1);
        let mut planar: Vec<(f64, f64, usize)> = pts
            .iter()
            .enumerate()
            .map(|(i, &p)| {
                let h = dot(p, centre);
                (dot(p, e1) / h, dot(p, e2) / h, i)
            })
            .collect();
        planar.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
        planar.dedup_by(|a, b| a.0 == b.0 && a.1 == b.1);
        let hull = monotone_chain(&planar);
        let (shape, idx): (HullShape, Vec<usize>) = match hull.len() {
            0 | 1 => (HullShape::Point, vec![planar[0].2]),
            2 => (HullShape::Segment, hull),
            _ => (HullShape::Polygon, hull),
        };
        let verts: Vec<V3> = idx.iter().map(|&i| pts[i]).collect();
        let normals = if shape == HullShape::Polygon {
            (0..verts.len())
                .map(|i| cross(verts[i], verts[(i + 1) % verts.len()]))
                .collect()
        } else {
            Vec::new()
        };
        let cos_cap = verts.iter().map(|&v| dot(v, centre)).fold(1.0f64, f64::min);
        Ok(SphericalHull {
            shape,
            verts,
            normals,
            centre,
            cos_cap,
        })
    }

    /// The hull's vertices as geodetic (lon, lat) degrees, counter-clockwise seen from
    /// outside the sphere (one vertex for a point, the two ends for a segment).
    pub(crate) fn vertices_lonlat(&self) -> Vec<(f64, f64)> {
        self.verts
            .iter()
            .map(|&v| {
                let (lat, lon) = lat_lon(v);
                (lon, lat)
            })
            .collect()
    }

    /// Number of hull vertices (1 for a point, 2 for a segment).
    pub(crate) fn n_vertices(&self) -> usize {
        self.verts.len()
    }

    /// Whether geodetic (lat, lon) lies inside the hull polygon (false for a point or segment).
    pub(crate) fn contains(&self, lat: f64, lon: f64) -> bool {
        if self.shape != HullShape::Polygon || !lat.is_finite() || !lon.is_finite() {
            return false;
        }
        let q = unit(lat, lon);
        dot(q, self.centre) >= self.cos_cap - 1e-12
            && self.normals.iter().all(|&n| dot(n, q) >= 0.0)
    }

    /// Points along the hull boundary (or the point / segment), as (lon, lat) degrees,
    /// no more than `spacing_m` metres apart on the ellipsoid.
    pub(crate) fn boundary_points(&self, spacing_m: f64) -> Vec<(f64, f64)> {
        let mut out = Vec::new();
        let n_edges = match self.shape {
            HullShape::Point => 0,
            HullShape::Segment => 1,
            HullShape::Polygon => self.verts.len(),
        };
        for i in 0..n_edges {
            let (a, b) = (self.verts[i], self.verts[(i + 1) % self.verts.len()]);
            let theta = dot(a, b).clamp(-1.0, 1.0).acos();
            // An arc of angle θ on the unit sphere is at most M_MAX·θ long on the ellipsoid.
            let n = ((m_max() * theta / spacing_m).ceil() as usize).max(1);
            let s = theta.sin();
            for k in 0..n {
                let t = k as f64 / n as f64;
                let p = if s < 1e-15 {
                    a
                } else {
                    let (wa, wb) = (((1.0 - t) * theta).sin() / s, (t * theta).sin() / s);
                    norm([
                        wa * a[0] + wb * b[0],
                        wa * a[1] + wb * b[1],
                        wa * a[2] + wb * b[2],
                    ])
                };
                let (lat, lon) = lat_lon(p);
                out.push((lon, lat));
            }
        }
        if self.shape != HullShape::Polygon {
            let (lat, lon) = lat_lon(*self.verts.last().expect("hull has a vertex"));
            out.push((lon, lat));
        }
        out
    }

    /// Set `out[c] = true` for each column of `row` whose centre is inside the hull, on a
    /// grid whose x is longitude and y latitude. Other entries are left as they are.
    /// Crossings of the parallel with the edges split the row into runs; the cells
    /// next to a crossing are tested one by one, each other run by one of its cells.
    pub(crate) fn fill_row_lonlat_grid(&self, grid: &GridSpec, row: usize, out: &mut [bool]) {
        let w = grid.width.min(out.len());
        let lat = grid.row_centre_y(row);
        if self.shape != HullShape::Polygon || w == 0 || !lat.is_finite() || lat.abs() > 90.0 {
            return;
        }
        let (clat, _) = lat_lon(self.centre);
        let rho = self.cos_cap.clamp(-1.0, 1.0).acos().to_degrees() + 1e-6;
        if (lat - clat).abs() > rho {
            return;
        }
        let (sp, cp) = lat.to_radians().sin_cos();
        let mut lons = Vec::new();
        for (i, &n) in self.normals.iter().enumerate() {
            let (a, b) = (self.verts[i], self.verts[(i + 1) % self.verts.len()]);
            let (ca, cb, cc) = (n[0] * cp, n[1] * cp, -n[2] * sp);
            let r = ca.hypot(cb);
            let scale = dot(n, n).sqrt();
            if r <= 1e-15 * scale || cc.abs() > r * (1.0 + 1e-12) {
                continue;
            }
            let base = cb.atan2(ca);
            let off = (cc / r).clamp(-1.0, 1.0).acos();
            for l in [base + off, base - off] {
                let p = [cp * l.cos(), cp * l.sin(), sp];
                let tol = -1e-12 * scale;
                if dot(cross(a, p), n) >= tol && dot(cross(p, b), n) >= tol {
                    lons.push(l.to_degrees());
                }
            }
        }
        let x0 = grid.geo_transform[0];
        let dx = grid.geo_transform[1];
        let span = dx.abs() * w as f64;
        let mut test_cols: Vec<i64> = Vec::new();
        for l in lons {
            // Every copy of the crossing longitude that falls on the grid, ±360°.
            let base_u = (l - x0) / dx;
            let per = 360.0 / dx.abs();
            let k0 = ((-1.0 - base_u) / per).ceil() as i64;
            let k1 = ((w as f64 + 1.0 - base_u) / per).floor() as i64;
            for k in k0..=k1.min(k0 + 2 + (span / 360.0) as i64) {
                let u = base_u + k as f64 * per - 0.5;
                test_cols.push(u.floor() as i64);
                test_cols.push(u.ceil() as i64);
            }
        }
        test_cols.retain(|&c| c >= 0 && (c as usize) < w);
        test_cols.sort_unstable();
        test_cols.dedup();
        let inside = |c: usize| self.contains(lat, grid.col_centre_x(c));
        let mut start = 0usize; // first column of the current untested run
        for &c in test_cols.iter().chain(std::iter::once(&(w as i64))) {
            let c = c as usize;
            if c > start {
                let mid = (start + c - 1) / 2;
                if inside(mid) {
                    out[start..c].iter_mut().for_each(|v| *v = true);
                }
            }
            if c < w && inside(c) {
                out[c] = true;
            }
            start = c + 1;
        }
    }
}

/// A unit vector c with `c · p >= 1e-3` for every p, or None when the points do not fit
/// in an open hemisphere (perceptron on the worst point).
fn find_centre(pts: &[V3]) -> Option<V3> {
    let mut c = [0.0; 3];
    for p in pts {
        c = [c[0] + p[0], c[1] + p[1], c[2] + p[2]];
    }
    if dot(c, c) < 1e-20 {
        c = pts[0];
    }
    c = norm(c);
    for _ in 0..20_000 {
        let (worst, wd) =
            pts.iter()
                .map(|&p| (p, dot(p, c)))
                .fold(
                    (pts[0], f64::INFINITY),
                    |a, b| if b.1 < a.1 { b } else { a },
                );
        if wd >= 1e-3 {
            return Some(c);
        }
        let s = 0.5 * (1.0 - wd);
        c = [
            c[0] + s * worst[0],
            c[1] + s * worst[1],
            c[2] + s * worst[2],
        ];
        if dot(c, c) < 1e-20 {
            return None;
        }
        c = norm(c);
    }
    None
}

/// Indices of the strictly convex hull, counter-clockwise, of sorted distinct points.
fn monotone_chain(p: &[(f64, f64, usize)]) -> Vec<usize> {
    if p.len() < 3 {
        return p.iter().map(|q| q.2).collect();
    }
    let turn = |o: &(f64, f64, usize), a: &(f64, f64, usize), b: &(f64, f64, usize)| {
        (a.0 - o.0) * (b.1 - o.1) - (a.1 - o.1) * (b.0 - o.0)
    };
    let mut h: Vec<&(f64, f64, usize)> = Vec::with_capacity(2 * p.len());
    for q in p.iter() {
        while h.len() >= 2 && turn(h[h.len() - 2], h[h.len() - 1], q) <= 0.0 {
            h.pop();
        }
        h.push(q);
    }
    let lower = h.len() + 1;
    for q in p.iter().rev().skip(1) {
        while h.len() >= lower && turn(h[h.len() - 2], h[h.len() - 1], q) <= 0.0 {
            h.pop();
        }
        h.push(q);
    }
    h.pop();
    if h.len() == 2 && h[0].2 == h[1].2 {
        h.pop();
    }
    h.iter().map(|q| q.2).collect()
}
