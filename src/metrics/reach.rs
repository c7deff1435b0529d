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
//! Search ([`nearest`], in [`super::nearest`]): the corners' earth-centred (ECEF) coordinates,
//! in metres on the WGS84 ellipsoid, go into a k-d tree ([`super::kdtree`]) whose nodes know
//! when they hold one patch only, so a patch never wades through its own corners. The straight
//! chord between two points is never longer than the geodesic between them, and the rolling
//! ball ([`super::geodesics::ball_bound`]) bounds it more closely, so most pairs are settled
//! with arithmetic alone. The results are exact minima over corner pairs.
//!
//! Reach: starting from the occupied patches (jump 0), a patch is reached when one of its
//! corners lies within G of a corner of a reached patch. A pair whose chord exceeds G is too
//! far; one whose chord is so short that even the longest geodesic with that chord is within G
//! is near enough without a geodesic: by Schur's comparison theorem a curve whose curvature is
//! at most 1/ρ (a geodesic of the ellipsoid) with chord d is at most 2ρ·asin(d / 2ρ) long.
//! Only the pairs in between are measured. Breadth-first order gives the fewest jumps; nodes
//! holding only reached patches are skipped.

use super::geodesics::{ball_bound, ecef, longest_geodesic, search_bound, Geodesics};
use super::kdtree::KdTree;
use rayon::prelude::*;
use std::collections::VecDeque;

pub(crate) use super::nearest::{nearest, nearest_many, Target};

/// The corners of every patch.
pub(crate) struct Corners {
    /// (lat, lon) degrees.
    pub(super) pts: Vec<(f64, f64)>,
    /// Earth-centred coordinates of `pts`, metres.
    pub(super) xyz: Vec<[f64; 3]>,
    /// Patch index of each corner.
    pub(super) label: Vec<u32>,
    /// Corners of patch p: `start[p]..start[p + 1]`.
    pub(super) start: Vec<usize>,
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
        let xyz = pts.par_iter().map(|&(la, lo)| ecef(la, lo)).collect();
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

    /// Number of patches.
    pub(super) fn n(&self) -> usize {
        self.start.len() - 1
    }

    /// The corners of patch index `p` (indices).
    pub(super) fn range(&self, p: usize) -> std::ops::Range<u32> {
        self.start[p] as u32..self.start[p + 1] as u32
    }

    /// The (lat, lon) corners of patch index `p`.
    #[cfg(test)]
    pub(crate) fn of_patch(&self, p: usize) -> &[(f64, f64)] {
        &self.pts[self.start[p]..self.start[p + 1]]
    }

    /// A lower bound (metres) on the geodesic between corners `i` and `j`.
    pub(super) fn lower(&self, i: usize, j: usize) -> f64 {
        ball_bound(self.pts[i], self.pts[j], &self.xyz[i], &self.xyz[j])
    }

    /// A k-d tree over the corners of the patches `keep` selects.
    pub(super) fn tree(&self, keep: impl Fn(usize) -> bool) -> KdTree {
        let items = (0..self.n())
            .filter(|&p| keep(p))
            .flat_map(|p| self.range(p))
            .collect();
        KdTree::new(&self.xyz, &self.label, items)
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
