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

use super::geodesics::{ball_bound, ecef, longest_geodesic, search_bound, Geodesics};
use super::kdtree::{d2, KdTree};
use crate::access::buffer::m_min;
use rayon::prelude::*;
use rustc_hash::FxHashMap;
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
}

impl Corners {
    /// The boundary corners of every patch of `model`.
    pub(crate) fn from_model(model: &crate::model::RangeModel) -> crate::Result<Corners> {
        let bc = model.boundary_corners(&|_| true)?;
        let ll = model.corner_lonlat(&bc)?;
        let n = model.patches().len();
        let mut label = Vec::with_capacity(ll.len());
        for p in 0..n {
            label.extend(std::iter::repeat_n(p as u32, bc.start[p + 1] - bc.start[p]));
        }
        let pts: Vec<(f64, f64)> = ll.iter().map(|&(lon, lat)| (lat, lon)).collect();
        let xyz = pts.iter().map(|&(la, lo)| ecef(la, lo)).collect();
        Ok(Corners {
            pts,
            xyz,
            label,
            start: bc.start,
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

    /// The (lat, lon) corners of patch index `p`.
    #[cfg(test)]
    pub(crate) fn of_patch(&self, p: usize) -> &[(f64, f64)] {
        &self.pts[self.start[p]..self.start[p + 1]]
    }

    /// A lower bound (metres) on the geodesic between corners `i` and `j`.
    fn lower(&self, i: usize, j: usize) -> f64 {
        ball_bound(self.pts[i], self.pts[j], &self.xyz[i], &self.xyz[j])
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
/// The query corners go in groups (a leaf of a tree over every corner whose corners all belong
/// to one patch, or one corner of a mixed leaf), and the patches on both cores. For each
/// patch: first, arithmetic only, the pair of corners nearest in chord (a group is one box
/// query); its geodesic bounds the answer. Then every pair whose lower bound
/// ([`ball_bound`]) is below that is a candidate; of the candidates on one pair of latitudes
/// only the one with the smallest longitude difference is kept, because between two given
/// latitudes the geodesic grows with the longitude difference (see [`Candidates`]).
/// The candidates are measured in order of their bound, until the bound reaches the best
/// geodesic found. The result is the exact minimum over corner pairs.
pub(crate) fn nearest(c: &Corners, target: impl Fn(usize) -> bool) -> Vec<Option<f64>> {
    let tree = c.tree(&target);
    let queries = c.tree(|_| true);
    let mut groups: Vec<Vec<Group>> = (0..c.n()).map(|_| Vec::new()).collect();
    for_queries(&queries, c, |p, items, lo, hi| {
        groups[p].push(Group {
            items,
            lo: *lo,
            hi: *hi,
        })
    });
    groups
        .par_iter()
        .enumerate()
        .map_init(Search::new, |search, (p, gs)| {
            search.nearest(c, &tree, p, gs).map(|s| s / 1000.0)
        })
        .collect()
}

/// Query corners searched together: their bounding box in ECEF metres.
struct Group<'a> {
    items: &'a [u32],
    lo: [f64; 3],
    hi: [f64; 3],
}

/// One thread's working state for [`nearest`].
struct Search {
    geodesics: Geodesics,
    stack: Vec<(u32, f64)>,
    candidates: Candidates,
    order: Vec<(f64, u32, u32)>,
}

impl Search {
    fn new() -> Search {
        Search {
            geodesics: Geodesics::new(),
            stack: Vec::new(),
            candidates: Candidates::default(),
            order: Vec::new(),
        }
    }

    /// The geodesic (metres) from patch `p` (query corners `gs`) to the nearest corner in
    /// `tree` of another patch.
    fn nearest(&mut self, c: &Corners, tree: &KdTree, p: usize, gs: &[Group]) -> Option<f64> {
        let own = |l: u32| l as usize == p;
        // Phase 1, arithmetic only: the pair nearest in chord.
        let mut cbest = f64::INFINITY;
        let mut pair = None;
        for g in gs {
            if cbest == 0.0 {
                break;
            }
            tree.search_box(
                &c.xyz,
                &c.label,
                &g.lo,
                &g.hi,
                cbest,
                own,
                |j, _| {
                    for &i in g.items {
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
        let rho = m_min();
        for g in gs {
            // Only targets within the rolling-ball angle of `best` of some query corner can
            // be nearer (see `ball_bound`): with the ball touching at the group's first
            // corner, they lie in a cone round its normal, widened by the group's own spread.
            let i0 = g.items[0] as usize;
            let u = crate::access::buffer::unit(c.pts[i0].0, c.pts[i0].1);
            let apex = [
                c.xyz[i0][0] - rho * u[0],
                c.xyz[i0][1] - rho * u[1],
                c.xyz[i0][2] - rho * u[2],
            ];
            let spread = g
                .items
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
            let theta = (best + 1e-6) / (rho * (1.0 - 1e-9)) + spread + 1e-9;
            let candidates = &mut self.candidates;
            let mut consider = |j: usize| {
                for &i in g.items {
                    let i = i as usize;
                    if d2(&c.xyz[i], &c.xyz[j]) <= search_bound(best) {
                        candidates.offer(c, i, j);
                    }
                }
            };
            if theta >= std::f64::consts::PI {
                // A cone this wide prunes nothing: search by chord.
                let bound = search_bound(best);
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
        for &(lb, i, j) in &self.order {
            if lb >= best {
                break;
            }
            best = best.min(self.geodesics.dist(c.pts[i as usize], c.pts[j as usize]));
        }
        Some(best)
    }
}

/// Longitude differences (degrees) this close are one: two corners of one row at nominally
/// the same distance in longitude from a third may differ by rounding in their longitudes,
/// and GeographicLib then gives lengths that differ in the last bits either way. Distinct
/// corners of a row are a whole cell apart.
const SAME_LON_DIFF: f64 = 1e-9;

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
struct Candidates {
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

    fn offer(&mut self, c: &Corners, i: usize, j: usize) {
        let (a, b) = (c.pts[i], c.pts[j]);
        // |λ2 - λ1| reduced to [0°, 180°].
        let mut dl = (b.1 - a.1).abs();
        if dl > 180.0 {
            dl = (dl - 360.0 * (dl / 360.0).round()).abs();
        }
        let pairs = &mut self.pairs;
        let mut push = |next: u32| {
            pairs.push((i as u32, j as u32, next));
            (pairs.len() - 1) as u32
        };
        match self.by_lats.entry((a.0.to_bits(), b.0.to_bits())) {
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
    fn kept(&self) -> impl Iterator<Item = (u32, u32)> + '_ {
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

/// Call `f(patch, corners, box lo, box hi)` for each group of query corners: a pure leaf of
/// `queries` as one group, each corner of a mixed leaf on its own.
fn for_queries<'q>(
    queries: &'q KdTree,
    c: &Corners,
    mut f: impl FnMut(usize, &'q [u32], &[f64; 3], &[f64; 3]),
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
    let mut geodesics = Geodesics::new();
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
                            || (c.lower(i, j) <= gap_m
                                && geodesics.dist(c.pts[i], c.pts[j]) <= gap_m))
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

#[cfg(test)]
mod tests {
    use super::*;

    // Which pairs the candidate list keeps (no outside source: the rule itself, by hand).
    #[test]
    fn candidates_keep_the_pairs_nearest_in_longitude_per_pair_of_latitudes() {
        // Query corner 0 at (10, 0); targets on latitude 40 at lon 5, -3 and 3 + 1e-12, and
        // one on latitude 41 at lon 30.
        let pts = vec![
            (10.0, 0.0),
            (40.0, 5.0),
            (40.0, -3.0),
            (40.0, 3.0 + 1e-12),
            (41.0, 30.0),
        ];
        let c = Corners {
            xyz: pts.iter().map(|&(la, lo)| ecef(la, lo)).collect(),
            pts,
            label: vec![0, 1, 1, 1, 1],
            start: vec![0, 1, 5],
        };
        let mut kept = Candidates::default();
        for j in 1..5 {
            kept.offer(&c, 0, j);
        }
        let mut got: Vec<(u32, u32)> = kept.kept().collect();
        got.sort();
        // Latitude 40: lon -3 and 3 + 1e-12 tie within SAME_LON_DIFF, lon 5 is dropped.
        assert_eq!(got, [(0, 2), (0, 3), (0, 4)]);
    }
}
