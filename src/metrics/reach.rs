//! Edge-to-edge distances between patches and stepping-stone reach.
//!
//! Input: for each patch (index 0..n, id = index + 1) the corners of its boundary cells as
//! WGS84 (lat, lon) degrees. Two patches are as far apart as their nearest corners: on a
//! north-up grid the nearest points of two unions of cells are always cell corners (when the
//! cells overlap in one axis they share grid lines in it), so this is the edge-to-edge gap,
//! 0 for patches that touch. Distances are geodesics on WGS84 (Karney 2013, geographiclib-rs
//! `Inverse`), in metres inside, km at the interface.
//!
//! Search: corners are indexed in an R-tree (rstar) by their unit normals. A geodesic of
//! length s has an angle σ between the end points' normals with `M_MIN·σ <= s` (the smallest
//! radius of curvature, see `access::buffer`), so the chord-distance nearest-neighbour
//! order can stop as soon as `M_MIN·σ` exceeds the best geodesic found: the result is exact.
//! A patch's own corners are taken out of the tree while it looks for its nearest neighbour.
//!
//! Reach: starting from the occupied patches (jump 0), a patch is reached when one of its
//! corners lies within G of a corner of a reached patch; reached patches leave the tree, so
//! each corner is found once. The jump count is the fewest jumps (breadth-first order).

use crate::access::buffer::{m_min, unit};
use geographiclib_rs::{Geodesic, InverseGeodesic};
use rstar::primitives::GeomWithData;
use rstar::RTree;
use std::collections::VecDeque;

type Elem = GeomWithData<[f64; 3], (u32, u32)>; // (patch index, point index)

/// The corners of every patch.
pub(crate) struct Corners {
    /// (lat, lon) degrees.
    pts: Vec<(f64, f64)>,
    /// Unit normals of `pts`.
    xyz: Vec<[f64; 3]>,
    /// Points of patch p: `start[p]..start[p + 1]`.
    start: Vec<usize>,
}

impl Corners {
    /// From (patch index, lat, lon) triples sorted by patch index; `n` patches.
    pub(crate) fn new(sorted: &[(u32, f64, f64)], n: usize) -> Corners {
        let mut start = vec![0usize; n + 1];
        for &(p, _, _) in sorted {
            start[p as usize + 1] += 1;
        }
        for p in 0..n {
            start[p + 1] += start[p];
        }
        let pts: Vec<(f64, f64)> = sorted.iter().map(|&(_, la, lo)| (la, lo)).collect();
        let xyz = pts.iter().map(|&(la, lo)| unit(la, lo)).collect();
        Corners { pts, xyz, start }
    }

    fn n(&self) -> usize {
        self.start.len() - 1
    }

    fn elems(&self, p: usize) -> impl Iterator<Item = Elem> + '_ {
        (self.start[p]..self.start[p + 1])
            .map(move |i| Elem::new(self.xyz[i], (p as u32, i as u32)))
    }

    fn tree(&self, keep: impl Fn(usize) -> bool) -> RTree<Elem> {
        RTree::bulk_load(
            (0..self.n())
                .filter(|&p| keep(p))
                .flat_map(|p| self.elems(p))
                .collect(),
        )
    }

    fn dist(&self, g: &Geodesic, i: usize, j: usize) -> f64 {
        let (a, b) = (self.pts[i], self.pts[j]);
        g.inverse(a.0, a.1, b.0, b.1)
    }
}

/// Angle between unit vectors from their squared chord.
fn angle(d2: f64) -> f64 {
    2.0 * (d2.sqrt() / 2.0).min(1.0).asin()
}

/// For each patch, the distance (km) to the nearest patch among those `target` selects
/// (other than itself); None when there is none.
pub(crate) fn nearest(c: &Corners, target: impl Fn(usize) -> bool) -> Vec<Option<f64>> {
    let g = Geodesic::wgs84();
    let mut tree = c.tree(&target);
    let mmin = m_min();
    let mut out = vec![None; c.n()];
    for (p, slot) in out.iter_mut().enumerate() {
        let own: Vec<Elem> = c.elems(p).collect();
        if own.is_empty() {
            continue;
        }
        let mine = target(p);
        if mine {
            for e in &own {
                tree.remove(e);
            }
        }
        let mut best = f64::INFINITY;
        for e in &own {
            let i = e.data.1 as usize;
            for (cand, d2) in tree.nearest_neighbor_iter_with_distance_2(e.geom()) {
                if mmin * angle(d2) > best {
                    break;
                }
                best = best.min(c.dist(&g, i, cand.data.1 as usize));
            }
        }
        if mine {
            for e in own {
                tree.insert(e);
            }
        }
        if best.is_finite() {
            *slot = Some(best / 1000.0);
        }
    }
    out
}

/// Jumps of at most `gap_km` from the patches `start` selects: for each patch the fewest
/// jumps that reach it (0 for a start patch), None when it cannot be reached.
pub(crate) fn reach(c: &Corners, start: impl Fn(usize) -> bool, gap_km: f64) -> Vec<Option<u32>> {
    let g = Geodesic::wgs84();
    let gap_m = gap_km * 1000.0;
    let sigma = (gap_m / m_min()).min(std::f64::consts::PI);
    let chord = 2.0 * (sigma / 2.0).sin();
    let r2 = chord * chord * (1.0 + 1e-9) + 1e-24;
    let n = c.n();
    let mut jumps: Vec<Option<u32>> = vec![None; n];
    let mut queue = VecDeque::new();
    for (p, j) in jumps.iter_mut().enumerate() {
        if start(p) {
            *j = Some(0);
            queue.push_back(p);
        }
    }
    let mut tree = c.tree(|p| !start(p));
    while let Some(p) = queue.pop_front() {
        let next = jumps[p].map(|j| j + 1);
        let mut found = Vec::new();
        for e in c.elems(p) {
            let i = e.data.1 as usize;
            for cand in tree.locate_within_distance(*e.geom(), r2) {
                let q = cand.data.0 as usize;
                if jumps[q].is_none() && c.dist(&g, i, cand.data.1 as usize) <= gap_m {
                    jumps[q] = next;
                    found.push(q);
                }
            }
        }
        for q in found {
            for e in c.elems(q) {
                tree.remove(&e);
            }
            queue.push_back(q);
        }
    }
    jumps
}
