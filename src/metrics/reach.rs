//! Edge-to-edge distances between patches and stepping-stone reach.
//!
//! Input: for each patch (index 0..n, id = index + 1) the corners of its boundary cells as
//! WGS84 (lat, lon) degrees. Two patches are as far apart as their nearest corners: on a
//! north-up grid the nearest points of two unions of cells are always cell corners (when the
//! cells overlap in one axis they share grid lines in it), so this is the edge-to-edge gap,
//! 0 for patches that touch. Distances are geodesics on WGS84 (Karney 2013, geographiclib-rs
//! `Inverse`), in metres inside, km at the interface.
//!
//! Search: the corners' unit normals go into a k-d tree ([`super::kdtree`]) whose nodes know
//! when they hold one patch only, so a patch never wades through its own corners. A geodesic
//! of length s joins points whose normals make an angle σ with `M_MIN·σ <= s` (the smallest
//! radius of curvature, see `access::buffer`): a patch's search keeps the chord of
//! `best / M_MIN` as its bound, and every corner pair that could be nearer than `best` is
//! looked at. The results are exact minima over corner pairs.
//!
//! Reach: starting from the occupied patches (jump 0), a patch is reached when one of its
//! corners lies within G of a corner of a reached patch. Breadth-first order gives the fewest
//! jumps; nodes holding only reached patches are skipped.

use super::kdtree::KdTree;
use crate::access::buffer::{m_min, unit};
use geographiclib_rs::{Geodesic, InverseGeodesic};
use std::collections::VecDeque;

/// The corners of every patch.
pub(crate) struct Corners {
    /// (lat, lon) degrees.
    pts: Vec<(f64, f64)>,
    /// Unit normals of `pts`.
    xyz: Vec<[f64; 3]>,
    /// Patch index of each corner.
    label: Vec<u32>,
    /// Corners of patch p: `start[p]..start[p + 1]`.
    start: Vec<usize>,
    geod: Geodesic,
}

/// Squared chord (with a hair of margin) of the largest normal angle a geodesic of `s_m`
/// metres can span; infinite for an infinite distance.
fn chord2(s_m: f64) -> f64 {
    if !s_m.is_finite() {
        return f64::INFINITY;
    }
    let sigma = (s_m / m_min()).min(std::f64::consts::PI);
    let c = 2.0 * (sigma / 2.0).sin();
    c * c * (1.0 + 1e-9) + 1e-24
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
        Corners {
            pts,
            xyz,
            label: sorted.iter().map(|c| c.0).collect(),
            start,
            geod: Geodesic::wgs84(),
        }
    }

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
        let xyz = pts.iter().map(|&(la, lo)| unit(la, lo)).collect();
        Ok(Corners {
            pts,
            xyz,
            label,
            start: bc.start,
            geod: Geodesic::wgs84(),
        })
    }

    fn n(&self) -> usize {
        self.start.len() - 1
    }

    fn dist(&self, i: usize, j: usize) -> f64 {
        let (a, b) = (self.pts[i], self.pts[j]);
        self.geod.inverse(a.0, a.1, b.0, b.1)
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
pub(crate) fn nearest(c: &Corners, target: impl Fn(usize) -> bool) -> Vec<Option<f64>> {
    let tree = c.tree(&target);
    let mut out = vec![None; c.n()];
    for (p, slot) in out.iter_mut().enumerate() {
        // Phase 1, arithmetic only: the pair nearest in chord gives a tight first bound, so
        // phase 2 computes exact distances only for near-ties (the chord bound is within
        // 0.7 % of the geodesic one), not for every corner's first candidates.
        let (mut cbest, mut pair) = (f64::INFINITY, None);
        for i in c.start[p]..c.start[p + 1] {
            tree.search(
                &c.xyz,
                &c.label,
                &c.xyz[i],
                cbest,
                |l| l as usize == p,
                |j, d| {
                    if d < cbest {
                        (cbest, pair) = (d, Some((i, j)));
                    }
                    cbest
                },
            );
            if cbest == 0.0 {
                break; // touching patches: nothing is nearer
            }
        }
        let Some((i0, j0)) = pair else { continue };
        let mut best = if cbest == 0.0 { 0.0 } else { c.dist(i0, j0) };
        // Phase 2: the exact minimum over corners, searched within the bound of `best`.
        for i in c.start[p]..c.start[p + 1] {
            if best == 0.0 {
                break;
            }
            tree.search(
                &c.xyz,
                &c.label,
                &c.xyz[i],
                chord2(best),
                |l| l as usize == p,
                |j, _| {
                    best = best.min(c.dist(i, j));
                    chord2(best)
                },
            );
        }
        *slot = Some(best / 1000.0);
    }
    out
}

/// Jumps of at most `gap_km` from the patches `start` selects: for each patch the fewest
/// jumps that reach it (0 for a start patch), None when it cannot be reached.
pub(crate) fn reach(c: &Corners, start: impl Fn(usize) -> bool, gap_km: f64) -> Vec<Option<u32>> {
    let gap_m = gap_km * 1000.0;
    let r2 = chord2(gap_m);
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
                |j, _| {
                    let q = c.label[j] as usize;
                    if !found.contains(&q) && c.dist(i, j) <= gap_m {
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
