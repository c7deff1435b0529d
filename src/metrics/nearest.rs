//! The distance from each patch to the nearest other patch of a chosen set: the search behind
//! [`super::reach`]'s one definition of the distance between patches (the geodesic between
//! their nearest boundary corners, GeographicLib's Inverse, Karney 2013).
//!
//! Per patch, on both cores:
//! 1. Arithmetic only: the pair of corners nearest in chord; its geodesic is the first bound.
//! 2. Every pair that may be shorter than that bound, found with a cone round each group of
//!    the patch's corners (a ball inside the ellipsoid bounds every geodesic, see
//!    [`super::geodesics::ball_bound`]); of the pairs on one pair of latitudes
//!    only those nearest in longitude are kept ([`Candidates`]).
//! 3. The kept pairs in order of their rolling-ball bound ([`Corners::lower`]), until it reaches
//!    the best geodesic found; a pair is skipped when a pair measured before proves it longer
//!    than the best by the triangle inequality ([`Measured`]).
//!
//! The result is the exact minimum over corner pairs, to the last bit.

use super::geodesics::{midpoint_ball, search_bound, Geodesics};
use super::kdtree::{d2, leaves_in_place, KdTree, BUCKET};
use super::reach::Corners;
use crate::access::buffer::m_min;
use rayon::prelude::*;
use rustc_hash::FxHashMap;

/// Query corners per group (at most): a group is one leaf of a k-d tree over the patch's own
/// corners.
const GROUP: usize = BUCKET;

/// A set of patches to measure to: selects patch indices.
pub(crate) type Target<'a> = &'a (dyn Fn(usize) -> bool + Sync);

/// For each patch, the distance (km) to the nearest patch among those `target` selects
/// (other than itself); None when there is none.
pub(crate) fn nearest(c: &Corners, target: impl Fn(usize) -> bool + Sync) -> Vec<Option<f64>> {
    nearest_many(c, &[&target]).pop().unwrap_or_default()
}

/// [`nearest`] for several targets at once: one list per target, in the order given. Each
/// target's tree is built once, and each patch's corners are grouped once for all targets.
pub(crate) fn nearest_many(c: &Corners, targets: &[Target]) -> Vec<Vec<Option<f64>>> {
    let k = targets.len();
    let n = c.n();
    if k == 0 {
        return Vec::new();
    }
    let trees: Vec<KdTree> = targets.par_iter().map(|t| c.tree(t)).collect();
    // Per patch, its k distances side by side.
    let mut flat = vec![None; n * k];
    flat.par_chunks_mut(k)
        .enumerate()
        .for_each_init(Search::new, |search, (p, out)| {
            search.group(c, p);
            for (o, tree) in out.iter_mut().zip(&trees) {
                *o = search.nearest(c, tree, p).map(|s| s / 1000.0);
            }
        });
    (0..k)
        .map(|t| flat.iter().skip(t).step_by(k).copied().collect())
        .collect()
}

/// Query corners searched together: `items[range]`, sorted by latitude then longitude (so
/// each grid row is one run), and their bounding box in ECEF metres.
struct Group {
    range: std::ops::Range<usize>,
    lo: [f64; 3],
    hi: [f64; 3],
}

/// One thread's working state for [`nearest_many`].
struct Search {
    geodesics: Geodesics,
    stack: Vec<(u32, f64)>,
    items: Vec<u32>,
    groups: Vec<Group>,
    candidates: Candidates,
    order: Vec<(f64, u32, u32)>,
    measured: Vec<Measured>,
}

impl Search {
    fn new() -> Search {
        Search {
            geodesics: Geodesics::new(),
            stack: Vec::new(),
            items: Vec::new(),
            groups: Vec::new(),
            candidates: Candidates::default(),
            order: Vec::new(),
            measured: Vec::new(),
        }
    }

    /// Split the corners of patch `p` into groups: the leaves of a k-d tree over them, so a
    /// group is compact whatever the patch's size.
    fn group(&mut self, c: &Corners, p: usize) {
        self.items.clear();
        self.groups.clear();
        self.items.extend(c.range(p));
        let (items, groups) = (&mut self.items, &mut self.groups);
        leaves_in_place(&c.xyz, items, 0, &mut |range| {
            groups.push(Group {
                range,
                lo: [0.0; 3],
                hi: [0.0; 3],
            })
        });
        for g in groups.iter_mut() {
            let items = &mut items[g.range.clone()];
            items.sort_unstable_by(|&a, &b| {
                let (a, b) = (c.pts[a as usize], c.pts[b as usize]);
                a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1))
            });
            let mut lo = [f64::INFINITY; 3];
            let mut hi = [f64::NEG_INFINITY; 3];
            for &i in items.iter() {
                let x = &c.xyz[i as usize];
                for k in 0..3 {
                    lo[k] = lo[k].min(x[k]);
                    hi[k] = hi[k].max(x[k]);
                }
            }
            (g.lo, g.hi) = (lo, hi);
        }
    }

    /// The geodesic (metres) from patch `p` to the nearest corner in `tree` of another patch.
    /// The groups of `p` must be in place ([`Search::group`]).
    fn nearest(&mut self, c: &Corners, tree: &KdTree, p: usize) -> Option<f64> {
        let own = |l: u32| l as usize == p;
        // Phase 1, arithmetic only: the pair nearest in chord.
        let mut cbest = f64::INFINITY;
        let mut pair = None;
        for g in &self.groups {
            if cbest == 0.0 {
                break;
            }
            let items = &self.items[g.range.clone()];
            tree.search_box(
                &c.xyz,
                &c.label,
                &g.lo,
                &g.hi,
                cbest,
                own,
                |j, _| {
                    for &i in items {
                        let d = d2(&c.xyz[i as usize], &c.xyz[j]);
                        if d < cbest {
                            cbest = d;
                            pair = Some((i as usize, j));
                        }
                    }
                    cbest
                },
                &mut self.stack,
            );
        }
        let (i0, j0) = pair?;
        if cbest == 0.0 {
            return Some(0.0);
        }
        // Phase 2: the candidates below the geodesic of that pair.
        let mut best = self.geodesics.dist(c.pts[i0], c.pts[j0]);
        self.candidates.clear();
        let bound = search_bound(best);
        for g in &self.groups {
            let items = &self.items[g.range.clone()];
            // Only targets within the ball angle of `best` of some query corner can be nearer:
            // a geodesic s from query corner i is at least r times the angle it subtends at
            // the centre of any ball of radius r inside the ellipsoid (see `ball_bound`), so
            // the target lies within s / r of i's direction from the centre, and within that
            // plus the group's own spread of the group's axis u. The ball is the largest
            // touching halfway between the group and the pair nearest in chord: the closest
            // there, where the nearest targets lie.
            let i0 = items[0] as usize;
            let (apex, r) = midpoint_ball(c.pts[i0], c.pts[j0]);
            let x0 = &c.xyz[i0];
            let u = [x0[0] - apex[0], x0[1] - apex[1], x0[2] - apex[2]];
            let len = (u[0] * u[0] + u[1] * u[1] + u[2] * u[2]).sqrt();
            let u = [u[0] / len, u[1] / len, u[2] / len];
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
            let theta = (best + 1e-6) / (r * (1.0 - 1e-9)) + spread + 1e-9;
            let candidates = &mut self.candidates;
            let mut consider = |j: usize| candidates.offer_group(c, items, j, bound);
            if theta >= std::f64::consts::PI {
                // A cone this wide prunes nothing: search by chord.
                tree.search_box(
                    &c.xyz,
                    &c.label,
                    &g.lo,
                    &g.hi,
                    bound,
                    own,
                    |j, _| {
                        consider(j);
                        bound
                    },
                    &mut self.stack,
                );
            } else {
                tree.search_cone(
                    &c.xyz,
                    &c.label,
                    &apex,
                    &u,
                    theta,
                    own,
                    consider,
                    &mut self.stack,
                );
            }
        }
        // Measure in order of the lower bound; stop where it reaches the best.
        self.order.clear();
        for (i, j) in self.candidates.kept() {
            let lb = c.lower(i as usize, j as usize);
            if lb < best {
                self.order.push((lb, i, j));
            }
        }
        self.order.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
        self.measured.clear();
        for &(lb, i, j) in &self.order {
            if lb >= best {
                break;
            }
            let (xi, xj) = (&c.xyz[i as usize], &c.xyz[j as usize]);
            if Measured::rules_out(&self.measured, best, xi, xj) {
                continue;
            }
            let s = self.geodesics.dist(c.pts[i as usize], c.pts[j as usize]);
            best = best.min(s);
            if s > best {
                self.measured.push(Measured {
                    s,
                    xi: *xi,
                    xj: *xj,
                });
            }
        }
        Some(best)
    }
}

/// Longest step (metres, in chord) between two query or two target corners that the triangle
/// bound of [`Measured`] uses.
const STEP_MAX: f64 = 100_000.0;

/// A measured pair longer than the best: (geodesic, ECEF of its query and target corners).
///
/// The geodesic distance obeys the triangle inequality, so a pair (i, j) is at least
/// s(i0, j0) - s(i, i0) - s(j, j0) long for a measured pair (i0, j0); when that reaches the
/// best, (i, j) cannot be shorter and needs no geodesic. s(i, i0) is bounded above from the
/// chord d: by Schur's comparison theorem (curvature at most 1/ρ, ρ the smallest radius of
/// curvature of WGS84) s ≤ 2ρ asin(d / 2ρ) ≤ d / sqrt(1 - x²) with x = d / 2ρ (asin x ≤
/// tan(asin x)), and for d ≤ [`STEP_MAX`] that is at most d / sqrt(1 - (STEP_MAX / 2ρ)²).
/// 10 µm and a relative 1e-9 are kept for rounding (GeographicLib is good to 15 nm).
struct Measured {
    s: f64,
    xi: [f64; 3],
    xj: [f64; 3],
}

impl Measured {
    /// Whether some pair of `measured` proves the pair at ECEF `xi`, `xj` no shorter than
    /// `best`.
    fn rules_out(measured: &[Measured], best: f64, xi: &[f64; 3], xj: &[f64; 3]) -> bool {
        let x = STEP_MAX / (2.0 * m_min());
        let factor = (1.0 + 1e-9) / (1.0 - x * x).sqrt();
        // Latest first: they are the nearest in the order of the bound.
        measured.iter().rev().any(|m| {
            // Room for the two steps, chord units: factor (d_i + d_j) must fit in it.
            let room = (m.s - best - 1e-5).min(STEP_MAX) / factor;
            if room <= 0.0 {
                return false;
            }
            let di2 = d2(xi, &m.xi);
            if di2 > room * room {
                return false;
            }
            let rest = room - di2.sqrt();
            d2(xj, &m.xj) <= rest * rest
        })
    }
}

/// Longitude differences (degrees) this close are one: two corners of one row at nominally
/// the same distance in longitude from a third may differ by rounding in their longitudes,
/// and GeographicLib then gives lengths that differ in the last bits either way. Distinct
/// corners of a row are a whole cell apart.
const SAME_LON_DIFF: f64 = 1e-9;

/// |λ2 - λ1| (degrees) reduced to [0°, 180°].
fn lon_diff(l1: f64, l2: f64) -> f64 {
    let mut dl = (l2 - l1).abs();
    if dl > 180.0 {
        dl = (dl - 360.0 * (dl / 360.0).round()).abs();
    }
    dl
}

/// The candidate pairs of one patch, by (query latitude, target latitude) bits: on each pair
/// of latitudes, only the pairs with the smallest longitude difference.
///
/// Between two given latitudes the geodesic is a non-decreasing function of the longitude
/// difference |λ12| in [0°, 180°]: by the first variation of arc length, moving the end point
/// east along its parallel changes the length at the rate N cos φ2 sin α2 (α2 the azimuth at
/// the end), and the shortest geodesic with λ12 in [0°, 180°] runs east, α2 in [0°, 180°]
/// (Karney 2013, section 3: the symmetries that reduce the inverse problem to λ12 ≥ 0 give
/// 0 ≤ α1 ≤ 180°, and sin α keeps its sign along a geodesic by Clairaut's relation). So of two
/// pairs on the same latitudes the one closer in longitude is never farther. Pairs tied within
/// [`SAME_LON_DIFF`] are all kept, so the minimum is GeographicLib's own to the last bit.
#[derive(Default)]
pub(super) struct Candidates {
    /// Smallest |longitude difference| and the first of its pairs in `pairs`.
    by_lats: FxHashMap<(u64, u64), (f64, u32)>,
    /// (query corner, target corner, next pair of the same latitudes or `u32::MAX`).
    pairs: Vec<(u32, u32, u32)>,
}

impl Candidates {
    fn clear(&mut self) {
        self.by_lats.clear();
        self.pairs.clear();
    }

    /// Offer target corner `j` with every query corner of `items` (sorted by latitude) whose
    /// squared chord to it is at most `bound`. On each row of `items` only the corners nearest
    /// `j` in longitude (within [`SAME_LON_DIFF`]) are offered: the others are on the same
    /// pair of latitudes and farther in longitude, and the rule drops them anyway.
    pub(super) fn offer_group(&mut self, c: &Corners, items: &[u32], j: usize, bound: f64) {
        let (lat_j, lon_j) = c.pts[j];
        let xj = &c.xyz[j];
        let mut dls = [f64::INFINITY; GROUP];
        let mut k = 0;
        while k < items.len() {
            let lat = c.pts[items[k] as usize].0;
            let mut e = k;
            let mut min = f64::INFINITY;
            while e < items.len() && c.pts[items[e] as usize].0.to_bits() == lat.to_bits() {
                let i = items[e] as usize;
                dls[e] = if d2(&c.xyz[i], xj) <= bound {
                    lon_diff(c.pts[i].1, lon_j)
                } else {
                    f64::INFINITY
                };
                min = min.min(dls[e]);
                e += 1;
            }
            if min.is_finite() {
                for t in k..e {
                    if dls[t] <= min + SAME_LON_DIFF {
                        self.offer(items[t], j as u32, (lat, lat_j), dls[t]);
                    }
                }
            }
            k = e;
        }
    }

    /// Offer the pair (query corner `i`, target corner `j`) at latitudes `lats`, `dl` apart
    /// in longitude.
    fn offer(&mut self, i: u32, j: u32, lats: (f64, f64), dl: f64) {
        let pairs = &mut self.pairs;
        let mut push = |next: u32| {
            pairs.push((i, j, next));
            (pairs.len() - 1) as u32
        };
        match self.by_lats.entry((lats.0.to_bits(), lats.1.to_bits())) {
            std::collections::hash_map::Entry::Vacant(e) => {
                e.insert((dl, push(u32::MAX)));
            }
            std::collections::hash_map::Entry::Occupied(mut e) => {
                let (best, head) = *e.get();
                if dl < best - SAME_LON_DIFF {
                    e.insert((dl, push(u32::MAX)));
                } else if dl <= best + SAME_LON_DIFF {
                    e.insert((best.min(dl), push(head)));
                }
            }
        }
    }

    /// Every pair kept: the nearest in longitude on each pair of latitudes.
    pub(super) fn kept(&self) -> impl Iterator<Item = (u32, u32)> + '_ {
        self.by_lats.values().flat_map(move |&(_, head)| {
            let mut k = head;
            std::iter::from_fn(move || {
                let &(i, j, next) = self.pairs.get(k as usize)?;
                k = next;
                Some((i, j))
            })
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::geodesics::ecef;

    // Which pairs the candidate list keeps (no outside source: the rule itself, by hand).
    #[test]
    fn candidates_keep_the_pairs_nearest_in_longitude_per_pair_of_latitudes() {
        // Query corners at (10, 0) and (10, 0.5), one row; targets on latitude 40 at lon 5,
        // -3 and 3 + 1e-12, and one on latitude 41 at lon 30.
        let pts = vec![
            (10.0, 0.0),
            (10.0, 0.5),
            (40.0, 5.0),
            (40.0, -3.0),
            (40.0, 3.0 + 1e-12),
            (41.0, 30.0),
        ];
        let c = Corners {
            xyz: pts.iter().map(|&(la, lo)| ecef(la, lo)).collect(),
            pts,
            label: vec![0, 0, 1, 1, 1, 1],
            start: vec![0, 2, 6],
        };
        let mut kept = Candidates::default();
        for j in 2..6 {
            kept.offer_group(&c, &[0, 1], j, f64::INFINITY);
        }
        let mut got: Vec<(u32, u32)> = kept.kept().collect();
        got.sort();
        // Latitude 40: the nearest in longitude is lon 3 + 1e-12 from (10, 0.5), 2.5 apart;
        // latitude 41: lon 30, nearest to (10, 0.5).
        assert_eq!(got, [(1, 4), (1, 5)]);
        // One query corner: lon -3 and 3 + 1e-12 tie within SAME_LON_DIFF, lon 5 is dropped.
        let mut kept = Candidates::default();
        for j in 2..6 {
            kept.offer_group(&c, &[0], j, f64::INFINITY);
        }
        let mut got: Vec<(u32, u32)> = kept.kept().collect();
        got.sort();
        assert_eq!(got, [(0, 3), (0, 4), (0, 5)]);
        // A chord bound below every pair offers nothing.
        let mut kept = Candidates::default();
        kept.offer_group(&c, &[0, 1], 2, 1.0);
        assert_eq!(kept.kept().count(), 0);
    }

    // The triangle bound against GeographicLib's Inverse (Karney 2013, geographiclib-rs): a
    // far pair is measured, and pairs a few kilometres from it at either end are ruled out
    // only when their own geodesic is no shorter than the best.
    #[test]
    fn a_pair_ruled_out_by_a_measured_pair_is_no_shorter_than_the_best() {
        use geographiclib_rs::{Geodesic, InverseGeodesic};
        let g = Geodesic::wgs84();
        let mut s = 5u64;
        let mut rnd = || {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64
        };
        let mut ruled_out = 0;
        for _ in 0..2_000 {
            let a = (-80.0 + 160.0 * rnd(), -180.0 + 360.0 * rnd());
            let b = (-80.0 + 160.0 * rnd(), -180.0 + 360.0 * rnd());
            let s0: f64 = g.inverse(a.0, a.1, b.0, b.1);
            // A best up to 30 km below the measured pair, and a pair up to 0.2° away.
            let best = s0 - 30_000.0 * rnd();
            let m = [Measured {
                s: s0,
                xi: ecef(a.0, a.1),
                xj: ecef(b.0, b.1),
            }];
            let a2 = (a.0 + 0.2 * (rnd() - 0.5), a.1 + 0.2 * (rnd() - 0.5));
            let b2 = (b.0 + 0.2 * (rnd() - 0.5), b.1 + 0.2 * (rnd() - 0.5));
            if Measured::rules_out(&m, best, &ecef(a2.0, a2.1), &ecef(b2.0, b2.1)) {
                ruled_out += 1;
                let s2: f64 = g.inverse(a2.0, a2.1, b2.0, b2.1);
                assert!(s2 >= best, "{a2:?} {b2:?}: {s2} below {best}");
            }
        }
        // The bound is not empty: about half of these pairs are ruled out.
        assert!(ruled_out > 500, "{ruled_out}");
    }
}
