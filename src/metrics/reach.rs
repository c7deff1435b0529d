//! Edge-to-edge distances between patches and stepping-stone reach: the one definition of
//! the distance between two patches that every column and layer reports.
//!
//! Input: for each patch (index 0..n, id = index + 1) its boundary corners as WGS84 (lat, lon)
//! degrees. Two patches are as far apart as their nearest corners: on a north-up grid the
//! nearest points of two unions of cells are always cell corners on their boundaries (when
//! the cells overlap in one axis they share grid lines in it), so this is the edge-to-edge
//! gap, 0 for patches that touch. Distances are geodesics on WGS84 (Karney 2013,
//! geographiclib-rs `Inverse`), in metres inside, km at the interface.
//!
//! Search: the corners' earth-centred (ECEF) coordinates, in metres on the WGS84 ellipsoid, go
//! into a k-d tree ([`super::kdtree`]) whose nodes know when they hold one patch only, so a
//! patch never wades through its own corners. The straight chord d between two points is never
//! longer than the geodesic s between them, and for distances between patches the two differ
//! by about d³ / (24 ρ²) (ρ the smallest radius of curvature, 6,335 km): under a metre at
//! 100 km. So the pair nearest in chord is found with arithmetic alone, its geodesic gives a
//! bound, and only the pairs whose chord is below that bound (a sliver, usually none) get a
//! geodesic of their own. The results are exact minima over corner pairs.
//!
//! Reach: starting from the occupied patches (jump 0), a patch is reached when one of its
//! corners lies within G of a corner of a reached patch. A pair whose chord exceeds G is too
//! far; one whose chord is so short that even the longest geodesic with that chord is within G
//! is near enough without a geodesic: by Schur's comparison theorem a curve whose curvature is
//! at most 1/ρ (a geodesic of the ellipsoid) with chord d is at most 2ρ·asin(d / 2ρ) long.
//! Only the pairs in between are measured. Breadth-first order gives the fewest jumps; nodes
//! holding only reached patches are skipped.

use super::kdtree::{d2, KdTree};
use crate::access::buffer::m_min;
use crate::area::Ellipsoid;
use geographiclib_rs::{Geodesic, InverseGeodesic};
use std::collections::VecDeque;

/// The corners of every patch.
pub(crate) struct Corners {
    /// (lat, lon) degrees.
    pts: Vec<(f64, f64)>,
    /// Earth-centred coordinates of `pts`, metres.
    xyz: Vec<[f64; 3]>,

    /// Patch index of each corner.
    label: Vec<u32>,
    /// Corners of patch p: `start[p]..start[p + 1]`.
    start: Vec<usize>,
    geod: Geodesic,
    /// Geodesics already computed, by what GeographicLib's Inverse depends on (see
    /// [`inverse_key`]): pairs facing each other across a straight gap along a parallel all
    /// have one length, and are computed once.
    cache: std::cell::RefCell<std::collections::HashMap<[u64; 4], f64>>,
}

/// Geodesics kept for reuse (about 50 MB).
const CACHE_ENTRIES: usize = 1 << 20;

/// GeographicLib's `AngDiff` (geographiclib-rs `geomath::ang_diff`, which is not public):
/// `y - x` reduced to [-180, 180] as an exact sum `d + t`.
fn ang_diff(x: f64, y: f64) -> (f64, f64) {
    fn sum(u: f64, v: f64) -> (f64, f64) {
        let s = u + v;
        let up = s - v;
        let vpp = s - up;
        (s, -((up - u) + (vpp - v)))
    }
    fn normalise(x: f64) -> f64 {
        let z = if x.is_finite() { x % 360.0 } else { f64::NAN };
        let z = if x == 0.0 { x } else { z };
        let y = if z < -180.0 {
            z + 360.0
        } else if z < 180.0 {
            z
        } else {
            z - 360.0
        };
        if y == -180.0 {
            180.0
        } else {
            y
        }
    }
    let (d, t) = sum(normalise(-x), normalise(y));
    let d = normalise(d);
    if d == 180.0 && t > 0.0 {
        sum(-180.0, t)
    } else {
        sum(d, t)
    }
}

/// The inputs GeographicLib's Inverse uses (both latitudes and the longitude difference as
/// `AngDiff` gives it): equal keys give bit-identical geodesics, by the ellipsoid's symmetry
/// about its axis.
fn inverse_key(a: (f64, f64), b: (f64, f64)) -> [u64; 4] {
    let (d, t) = ang_diff(a.1, b.1);
    [a.0.to_bits(), b.0.to_bits(), d.to_bits(), t.to_bits()]
}

/// Earth-centred coordinates (metres) of the point at geodetic (lat, lon) degrees on WGS84.
pub(crate) fn ecef(lat: f64, lon: f64) -> [f64; 3] {
    let ell = Ellipsoid::WGS84;
    let e2 = ell.e2();
    let (sp, cp) = lat.to_radians().sin_cos();
    let (sl, cl) = lon.to_radians().sin_cos();
    let n = ell.a / (1.0 - e2 * sp * sp).sqrt();
    [n * cp * cl, n * cp * sl, n * (1.0 - e2) * sp]
}

/// The squared chord to search within for geodesics up to `s_m` metres (a chord is never
/// longer than its geodesic), with a hair of margin for rounding.
fn search_bound(s_m: f64) -> f64 {
    if !s_m.is_finite() {
        return f64::INFINITY;
    }
    let b = s_m * (1.0 + 1e-9) + 1e-6;
    b * b
}

/// Whether the geodesic between corners at (lat, lon) `a` and `b` (ECEF `xa`, `xb`, metres)
/// may be shorter than `bound` metres: false when a lower bound reaches it.
///
/// Every principal radius of curvature of WGS84 is at least ρ = a(1 - e²), so by Blaschke's
/// rolling-ball theorem the ball of radius ρ touching the ellipsoid from inside (centre
/// `t - ρ n` for the touching point t with normal n) lies inside it. Projecting onto a convex set never lengthens a curve, and the
/// geodesic projects to a curve on that ball's sphere joining the projections of `a` and `b`,
/// so the geodesic is at least the great-circle arc between them: ρ times the angle they make
/// at the centre. The ball may touch the ellipsoid anywhere; touching it between the two
/// corners keeps the bound tightest. The bound is far tighter than the chord at long range (about 10 m short at
/// 1,000 km, where the chord is 1 km short), so few pairs need a geodesic of their own.
fn may_be_below(a: (f64, f64), b: (f64, f64), xa: &[f64; 3], xb: &[f64; 3], bound: f64) -> bool {
    let rho = m_min();
    let theta = (bound + 1e-6) / (rho * (1.0 - 1e-9));
    if theta >= std::f64::consts::PI {
        return true;
    }
    // The ball touches the ellipsoid at the point of mean latitude and longitude (any point of
    // the ellipsoid would do; one between the two keeps the bound tight).
    let lat = 0.5 * (a.0 + b.0);
    let mut dl = b.1 - a.1;
    if dl > 180.0 {
        dl -= 360.0;
    } else if dl < -180.0 {
        dl += 360.0;
    }
    let lon = a.1 + 0.5 * dl;
    let t = ecef(lat, lon);
    let n = crate::access::buffer::unit(lat, lon);
    let c = [t[0] - rho * n[0], t[1] - rho * n[1], t[2] - rho * n[2]];
    let u = [xa[0] - c[0], xa[1] - c[1], xa[2] - c[2]];
    let v = [xb[0] - c[0], xb[1] - c[1], xb[2] - c[2]];
    let dot = u[0] * v[0] + u[1] * v[1] + u[2] * v[2];
    let (lu, lv) = (
        (u[0] * u[0] + u[1] * u[1] + u[2] * u[2]).sqrt(),
        (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt(),
    );
    // Angle below theta exactly when its cosine is above cos(theta).
    dot > lu * lv * theta.cos()
}

/// The longest geodesic whose chord is `d_m` metres (Schur's comparison theorem with the
/// smallest radius of curvature of WGS84); infinite past a half turn.
fn longest_geodesic(d_m: f64) -> f64 {
    let rho = m_min();
    let x = d_m / (2.0 * rho);
    if x >= 1.0 {
        return f64::INFINITY;
    }
    2.0 * rho * x.asin() * (1.0 + 1e-9) + 1e-6
}

impl Corners {
    /// The boundary corners of every patch of `model`.
    pub(crate) fn from_model(model: &crate::model::RangeModel) -> crate::Result<Corners> {
        let bc = model.boundary_corners(&|_| true)?;
        let ll = model.corner_lonlat(&bc)?;
        let n = model.patches().len();
        let mut label = Vec::with_capacity(ll.len());
        for p in 0..n {
            label.extend(std::iter::repeat(p as u32).take(bc.start[p + 1] - bc.start[p]));
        }
        let pts: Vec<(f64, f64)> = ll.iter().map(|&(lon, lat)| (lat, lon)).collect();
        let xyz = pts.iter().map(|&(la, lo)| ecef(la, lo)).collect();
        Ok(Corners {
            pts,
            xyz,
            label,
            start: bc.start,
            geod: Geodesic::wgs84(),
            cache: Default::default(),
        })
    }

    /// (lon, lat) of the corners of the patches `keep` selects (by index): the points the
    /// modelled EOO hull is built from, when `keep` selects the occupied patches.
    pub(crate) fn lonlat_of(&self, keep: impl Fn(usize) -> bool) -> Vec<(f64, f64)> {
        (0..self.n())
            .filter(|&p| keep(p))
            .flat_map(|p| self.pts[self.start[p]..self.start[p + 1]].iter())
            .map(|&(lat, lon)| (lon, lat))
            .collect()
    }

    fn n(&self) -> usize {
        self.start.len() - 1
    }

    /// The geodesic between corners `i` and `j` when it may be below `bound` metres, else
    /// `None` (a lower bound already reaches `bound`).
    fn dist_below(&self, i: usize, j: usize, bound: f64) -> Option<f64> {
        if !may_be_below(self.pts[i], self.pts[j], &self.xyz[i], &self.xyz[j], bound) {
            return None;
        }
        Some(self.dist(i, j))
    }

    fn dist(&self, i: usize, j: usize) -> f64 {
        let (a, b) = (self.pts[i], self.pts[j]);
        let key = inverse_key(a, b);
        if let Some(&s) = self.cache.borrow().get(&key) {
            return s;
        }
        let s: f64 = self.geod.inverse(a.0, a.1, b.0, b.1);
        let mut cache = self.cache.borrow_mut();
        if cache.len() >= CACHE_ENTRIES {
            cache.clear(); // memory stays bounded; ties are met close together
        }
        cache.insert(key, s);
        s
    }

    /// A k-d tree over the corners of the patches `keep` selects.
    fn tree(&self, keep: impl Fn(usize) -> bool) -> KdTree {
        let items = (0..self.n())
            .filter(|&p| keep(p))
            .flat_map(|p| (self.start[p] as u32)..(self.start[p + 1] as u32))
            .collect();
        KdTree::new(&self.xyz, &self.label, items)
    }
}

/// For each patch, the distance (km) to the nearest patch among those `target` selects
/// (other than itself); None when there is none.
///
/// The queries go leaf by leaf through a tree over every corner: a leaf whose corners all
/// belong to one patch is one box query (its corners are compared with each candidate only
/// when the candidate is near the box), a mixed leaf one query per corner.
pub(crate) fn nearest(c: &Corners, target: impl Fn(usize) -> bool) -> Vec<Option<f64>> {
    let tree = c.tree(&target);
    let queries = c.tree(|_| true);
    let n = c.n();
    let mut stack = Vec::new();
    // Phase 1, arithmetic only: the pair nearest in chord for each patch.
    let mut cbest = vec![f64::INFINITY; n];
    let mut pair: Vec<Option<(usize, usize)>> = vec![None; n];
    for_queries(&queries, c, |p, items, lo, hi| {
        if cbest[p] == 0.0 {
            return;
        }
        let bound = cbest[p];
        tree.search_box(
            &c.xyz,
            &c.label,
            lo,
            hi,
            bound,
            |l| l as usize == p,
            |j, _| {
                for &i in items {
                    let d = d2(&c.xyz[i as usize], &c.xyz[j]);
                    if d < cbest[p] {
                        cbest[p] = d;
                        pair[p] = Some((i as usize, j));
                    }
                }
                cbest[p]
            },
            &mut stack,
        );
    });
    // Phase 2: geodesics, only for the pairs whose chord is below the best geodesic so far
    // (a chord is never longer than its geodesic).
    let mut best: Vec<f64> = (0..n)
        .map(|p| match pair[p] {
            None => f64::INFINITY,
            Some(_) if cbest[p] == 0.0 => 0.0,
            Some((i, j)) => c.dist(i, j),
        })
        .collect();
    for_queries(&queries, c, |p, items, lo, hi| {
        let (Some(first), true) = (pair[p], best[p] > 0.0) else {
            return;
        };
        let check = |j: usize, best: &mut f64| {
            for &i in items {
                let i = i as usize;
                if (i, j) != first && d2(&c.xyz[i], &c.xyz[j]) <= search_bound(*best) {
                    if let Some(s) = c.dist_below(i, j, *best) {
                        *best = best.min(s);
                    }
                }
            }
        };
        // Only targets within the rolling-ball angle of `best` of some query corner can be
        // nearer (see `may_be_below`): with the ball touching at the group's first corner,
        // they lie in a cone round its normal, widened by the group's own spread.
        let rho = m_min();
        let i0 = items[0] as usize;
        let u = crate::access::buffer::unit(c.pts[i0].0, c.pts[i0].1);
        let apex = [
            c.xyz[i0][0] - rho * u[0],
            c.xyz[i0][1] - rho * u[1],
            c.xyz[i0][2] - rho * u[2],
        ];
        let spread = items
            .iter()
            .map(|&i| {
                let x = &c.xyz[i as usize];
                let v = [x[0] - apex[0], x[1] - apex[1], x[2] - apex[2]];
                let len = (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
                ((u[0] * v[0] + u[1] * v[1] + u[2] * v[2]) / len)
                    .clamp(-1.0, 1.0)
                    .acos()
            })
            .fold(0.0, f64::max);
        let theta = (best[p] + 1e-6) / (rho * (1.0 - 1e-9)) + spread + 1e-9;
        let mut b = best[p];
        if theta >= std::f64::consts::PI {
            // A cone this wide prunes nothing: search by chord.
            tree.search_box(
                &c.xyz,
                &c.label,
                lo,
                hi,
                search_bound(b),
                |l| l as usize == p,
                |j, _| {
                    check(j, &mut b);
                    search_bound(b)
                },
                &mut stack,
            );
        } else {
            tree.search_cone(
                &c.xyz,
                &c.label,
                &apex,
                &u,
                theta,
                |l| l as usize == p,
                |j| check(j, &mut b),
                &mut stack,
            );
        }
        best[p] = b;
    });
    (0..n).map(|p| pair[p].map(|_| best[p] / 1000.0)).collect()
}

/// Call `f(patch, corners, box lo, box hi)` for each group of query corners: a pure leaf of
/// `queries` as one group, each corner of a mixed leaf on its own.
fn for_queries(
    queries: &KdTree,
    c: &Corners,
    mut f: impl FnMut(usize, &[u32], &[f64; 3], &[f64; 3]),
) {
    for leaf in queries.leaves() {
        match leaf.label {
            Some(p) => f(p as usize, leaf.items, &leaf.lo, &leaf.hi),
            None => {
                for k in 0..leaf.items.len() {
                    let i = leaf.items[k] as usize;
                    let x = &c.xyz[i];
                    f(c.label[i] as usize, &leaf.items[k..k + 1], x, x);
                }
            }
        }
    }
}

/// Jumps of at most `gap_km` from the patches `start` selects: for each patch the fewest
/// jumps that reach it (0 for a start patch), None when it cannot be reached.
pub(crate) fn reach(c: &Corners, start: impl Fn(usize) -> bool, gap_km: f64) -> Vec<Option<u32>> {
    let gap_m = gap_km * 1000.0;
    let r2 = search_bound(gap_m);
    let n = c.n();
    let mut jumps: Vec<Option<u32>> = vec![None; n];
    let mut queue = VecDeque::new();
    for (p, j) in jumps.iter_mut().enumerate() {
        if start(p) {
            *j = Some(0);
            queue.push_back(p);
        }
    }
    let tree = c.tree(|_| true);
    let mut found = Vec::new();
    while let Some(p) = queue.pop_front() {
        let next = jumps[p].map(|j| j + 1);
        for i in c.start[p]..c.start[p + 1] {
            tree.search(
                &c.xyz,
                &c.label,
                &c.xyz[i],
                r2,
                |l| jumps[l as usize].is_some(),
                |j, d2| {
                    let q = c.label[j] as usize;
                    if !found.contains(&q)
                        && (longest_geodesic(d2.sqrt()) <= gap_m
                            || c.dist_below(i, j, gap_m * (1.0 + 1e-12) + 1e-9)
                                .is_some_and(|s| s <= gap_m))
                    {
                        found.push(q);
                    }
                    r2
                },
            );
            for q in found.drain(..) {
                jumps[q] = next;
                queue.push_back(q);
            }
        }
    }
    jumps
}
