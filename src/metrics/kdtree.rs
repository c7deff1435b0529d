//! A static k-d tree over labelled 3-D points (unit normals of patch corners), whose nodes
//! know when all their points carry one label.
//!
//! Searches skip whole nodes whose single label the caller rejects: a patch looking for its
//! nearest neighbour skips the parts of the tree that hold only its own corners, and reach
//! skips the parts that hold only patches already reached. Distances are squared chords
//! (Euclidean in 3-D); the caller turns them into geodesics and keeps its own bound.

/// Points per leaf (at most).
pub(crate) const BUCKET: usize = 16;
/// Label of a node holding several labels.
const MIXED: u32 = u32::MAX;

struct Node {
    lo: [f64; 3],
    hi: [f64; 3],
    /// Centre of the box and half its diagonal: the ball round it that the cone search
    /// tests, worked out once.
    mid: [f64; 3],
    r: f64,
    start: u32,
    end: u32,
    /// Children (0 for a leaf; the root is never a child).
    kids: [u32; 2],
    label: u32,
}

/// The tree: nodes and the points' order.
pub(crate) struct KdTree {
    nodes: Vec<Node>,
    items: Vec<u32>,
}

/// Squared distance between two points.
pub(crate) fn d2(a: &[f64; 3], b: &[f64; 3]) -> f64 {
    (a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)
}

impl Node {
    fn min_d2(&self, x: &[f64; 3]) -> f64 {
        (0..3)
            .map(|k| (self.lo[k] - x[k]).max(x[k] - self.hi[k]).max(0.0).powi(2))
            .sum()
    }

    /// Smallest squared distance between this node's box and the box `lo..hi`.
    fn min_d2_box(&self, lo: &[f64; 3], hi: &[f64; 3]) -> f64 {
        (0..3)
            .map(|k| {
                (self.lo[k] - hi[k])
                    .max(lo[k] - self.hi[k])
                    .max(0.0)
                    .powi(2)
            })
            .sum()
    }
}

impl KdTree {
    /// A tree over points `items` (indices into `xyz` and `label`).
    pub(crate) fn new(xyz: &[[f64; 3]], label: &[u32], mut items: Vec<u32>) -> KdTree {
        let mut nodes = Vec::with_capacity(2 * items.len() / BUCKET + 1);
        if !items.is_empty() {
            build(xyz, label, &mut items, 0, &mut nodes);
        }
        KdTree { nodes, items }
    }

    /// Visit, nearest nodes first, every point whose label `skip` does not reject and whose
    /// squared chord to `x` is at most the bound. `visit(point, d2)` returns the new bound
    /// (it may only shrink).
    pub(crate) fn search(
        &self,
        xyz: &[[f64; 3]],
        label: &[u32],
        x: &[f64; 3],
        mut bound: f64,
        skip: impl Fn(u32) -> bool,
        mut visit: impl FnMut(usize, f64) -> f64,
    ) {
        if self.nodes.is_empty() {
            return;
        }
        let mut stack: Vec<(u32, f64)> = vec![(0, self.nodes[0].min_d2(x))];
        while let Some((n, dmin)) = stack.pop() {
            let node = &self.nodes[n as usize];
            if dmin > bound || (node.label != MIXED && skip(node.label)) {
                continue;
            }
            if node.kids[0] == 0 {
                for &i in &self.items[node.start as usize..node.end as usize] {
                    let i = i as usize;
                    if skip(label[i]) {
                        continue;
                    }
                    let d = d2(&xyz[i], x);
                    if d <= bound {
                        bound = visit(i, d);
                    }
                }
            } else {
                let (a, b) = (node.kids[0], node.kids[1]);
                let (da, db) = (
                    self.nodes[a as usize].min_d2(x),
                    self.nodes[b as usize].min_d2(x),
                );
                // Nearer child last, so it is searched first.
                if da <= db {
                    stack.push((b, db));
                    stack.push((a, da));
                } else {
                    stack.push((a, da));
                    stack.push((b, db));
                }
            }
        }
    }
}

impl KdTree {
    /// The points of every leaf, in tree order (points close in space come close in this
    /// order).
    #[cfg(test)]
    pub(crate) fn leaves(&self) -> impl Iterator<Item = &[u32]> + '_ {
        self.nodes
            .iter()
            .filter(|n| n.kids[0] == 0)
            .map(|n| &self.items[n.start as usize..n.end as usize])
    }

    /// Like [`KdTree::search`], for a query box `lo..hi` instead of a point: visits every
    /// point not rejected by `skip` whose squared distance to the box is at most the bound,
    /// as `visit(point, squared distance to the box)`, which returns the new bound.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn search_box(
        &self,
        xyz: &[[f64; 3]],
        label: &[u32],
        lo: &[f64; 3],
        hi: &[f64; 3],
        mut bound: f64,
        skip: impl Fn(u32) -> bool,
        mut visit: impl FnMut(usize, f64) -> f64,
        stack: &mut Vec<(u32, f64)>,
    ) {
        if self.nodes.is_empty() {
            return;
        }
        stack.clear();
        stack.push((0, self.nodes[0].min_d2_box(lo, hi)));
        while let Some((n, dmin)) = stack.pop() {
            let node = &self.nodes[n as usize];
            if dmin > bound || (node.label != MIXED && skip(node.label)) {
                continue;
            }
            if node.kids[0] == 0 {
                for &i in &self.items[node.start as usize..node.end as usize] {
                    let i = i as usize;
                    if skip(label[i]) {
                        continue;
                    }
                    let p = &xyz[i];
                    let d: f64 = (0..3)
                        .map(|k| (lo[k] - p[k]).max(p[k] - hi[k]).max(0.0).powi(2))
                        .sum();
                    if d <= bound {
                        bound = visit(i, d);
                    }
                }
            } else {
                let (a, b) = (node.kids[0], node.kids[1]);
                let (da, db) = (
                    self.nodes[a as usize].min_d2_box(lo, hi),
                    self.nodes[b as usize].min_d2_box(lo, hi),
                );
                if da <= db {
                    stack.push((b, db));
                    stack.push((a, da));
                } else {
                    stack.push((a, da));
                    stack.push((b, db));
                }
            }
        }
    }
}

impl KdTree {
    /// Visit every point not rejected by `skip` that lies within the cone of half-angle
    /// `theta` (radians) around direction `u` (a unit vector) from apex `c`; whole nodes whose
    /// box lies outside the cone are skipped (the box is taken as the ball round its centre).
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn search_cone(
        &self,
        xyz: &[[f64; 3]],
        label: &[u32],
        c: &[f64; 3],
        u: &[f64; 3],
        theta: f64,
        skip: impl Fn(u32) -> bool,
        mut visit: impl FnMut(usize),
        stack: &mut Vec<(u32, f64)>,
    ) {
        if self.nodes.is_empty() {
            return;
        }
        // Angles are compared through their cosines (no inverse trigonometry per point).
        let (sin_t, cos_t) = theta.min(std::f64::consts::PI).sin_cos();
        let cos_to = |x: &[f64; 3]| -> (f64, f64) {
            let v = [x[0] - c[0], x[1] - c[1], x[2] - c[2]];
            let len = (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
            ((u[0] * v[0] + u[1] * v[1] + u[2] * v[2]) / len, len)
        };
        stack.clear();
        stack.push((0, 0.0));
        while let Some((n, _)) = stack.pop() {
            let node = &self.nodes[n as usize];
            if node.label != MIXED && skip(node.label) {
                continue;
            }
            let r = node.r;
            let (cos_a, len) = cos_to(&node.mid);
            // The box lies outside the cone when the angle to its centre exceeds theta plus
            // the angle beta its enclosing ball subtends: cos a < cos(theta + beta).
            if len > r && theta < std::f64::consts::PI {
                let sin_b = r / len;
                let cos_b = (1.0 - sin_b * sin_b).sqrt();
                // theta + beta < pi exactly when cos(theta) > -cos(beta).
                if cos_t > -cos_b && cos_a < cos_t * cos_b - sin_t * sin_b {
                    continue;
                }
            }
            if node.kids[0] == 0 {
                for &i in &self.items[node.start as usize..node.end as usize] {
                    let i = i as usize;
                    if !skip(label[i]) && cos_to(&xyz[i]).0 >= cos_t {
                        visit(i);
                    }
                }
            } else {
                stack.push((node.kids[0], 0.0));
                stack.push((node.kids[1], 0.0));
            }
        }
    }
}

fn build(
    xyz: &[[f64; 3]],
    label: &[u32],
    items: &mut [u32],
    offset: usize,
    nodes: &mut Vec<Node>,
) -> u32 {
    let mut lo = [f64::INFINITY; 3];
    let mut hi = [f64::NEG_INFINITY; 3];
    let first = label[items[0] as usize];
    let mut one = true;
    for &i in items.iter() {
        let p = &xyz[i as usize];
        for k in 0..3 {
            lo[k] = lo[k].min(p[k]);
            hi[k] = hi[k].max(p[k]);
        }
        one &= label[i as usize] == first;
    }
    let id = nodes.len() as u32;
    nodes.push(Node {
        lo,
        hi,
        mid: [
            0.5 * (lo[0] + hi[0]),
            0.5 * (lo[1] + hi[1]),
            0.5 * (lo[2] + hi[2]),
        ],
        r: 0.5 * d2(&lo, &hi).sqrt(),
        start: offset as u32,
        end: (offset + items.len()) as u32,
        kids: [0, 0],
        label: if one { first } else { MIXED },
    });
    if items.len() > BUCKET {
        let mid = split(xyz, items, &lo, &hi);
        let (left, right) = items.split_at_mut(mid);
        let l = build(xyz, label, left, offset, nodes);
        let r = build(xyz, label, right, offset + mid, nodes);
        nodes[id as usize].kids = [l, r];
    }
    id
}

/// Split `items` (bounding box `lo..hi`) at its middle across the box's longest axis; returns
/// the middle: `items[..mid]` lie on the low side.
fn split(xyz: &[[f64; 3]], items: &mut [u32], lo: &[f64; 3], hi: &[f64; 3]) -> usize {
    let axis = (0..3)
        .max_by(|&a, &b| (hi[a] - lo[a]).total_cmp(&(hi[b] - lo[b])))
        .unwrap_or(0);
    let mid = items.len() / 2;
    items.select_nth_unstable_by(mid, |&a, &b| {
        xyz[a as usize][axis].total_cmp(&xyz[b as usize][axis])
    });
    mid
}

/// Order `items` as [`KdTree::new`] would and call `leaf(range)` for the points of each of its
/// leaves (`items[range]`), in the order of [`KdTree::leaves`], without building the nodes.
/// `offset` is the position of `items` in the caller's slice (0 at the top).
pub(crate) fn leaves_in_place(
    xyz: &[[f64; 3]],
    items: &mut [u32],
    offset: usize,
    leaf: &mut impl FnMut(std::ops::Range<usize>),
) {
    if items.len() <= BUCKET {
        if !items.is_empty() {
            leaf(offset..offset + items.len());
        }
        return;
    }
    let mut lo = [f64::INFINITY; 3];
    let mut hi = [f64::NEG_INFINITY; 3];
    for &i in items.iter() {
        let p = &xyz[i as usize];
        for k in 0..3 {
            lo[k] = lo[k].min(p[k]);
            hi[k] = hi[k].max(p[k]);
        }
    }
    let mid = split(xyz, items, &lo, &hi);
    let (left, right) = items.split_at_mut(mid);
    leaves_in_place(xyz, left, offset, leaf);
    leaves_in_place(xyz, right, offset + mid, leaf);
}

#[cfg(test)]
mod tests {
    use super::*;

    // Against brute force (no outside source: every point is compared by hand-written loop).
    #[test]
    fn nearest_with_a_skipped_label_matches_brute_force() {
        // A deterministic scatter of 2,000 points on a patch of the unit sphere, 7 labels.
        let mut s = 12345u64;
        let mut rnd = || {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64
        };
        let xyz: Vec<[f64; 3]> = (0..2000)
            .map(|_| crate::access::buffer::unit(40.0 + 5.0 * rnd(), 10.0 + 5.0 * rnd()))
            .collect();
        let label: Vec<u32> = (0..2000).map(|i| (i * 7 / 2000) as u32).collect();
        let tree = KdTree::new(&xyz, &label, (0..2000).collect());
        for q in (0..2000).step_by(97) {
            let own = label[q];
            let brute = (0..2000)
                .filter(|&j| label[j] != own)
                .map(|j| d2(&xyz[j], &xyz[q]))
                .fold(f64::INFINITY, f64::min);
            let mut best = f64::INFINITY;
            tree.search(
                &xyz,
                &label,
                &xyz[q],
                best,
                |l| l == own,
                |_, d| {
                    best = best.min(d);
                    best
                },
            );
            assert_eq!(best, brute);
        }
    }

    // The leaves without the nodes are the tree's own leaves (no outside source: the tree
    // built with its nodes is the reference), and together hold every point once.
    #[test]
    fn leaves_in_place_are_the_leaves_of_the_tree() {
        let mut s = 7u64;
        let mut rnd = || {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64
        };
        for n in [0usize, 1, 16, 17, 100, 1000] {
            let xyz: Vec<[f64; 3]> = (0..n)
                .map(|_| crate::access::buffer::unit(-60.0 + 120.0 * rnd(), 360.0 * rnd()))
                .collect();
            let label = vec![0u32; n];
            let tree = KdTree::new(&xyz, &label, (0..n as u32).collect());
            let want: Vec<Vec<u32>> = tree.leaves().map(|l| l.to_vec()).collect();
            let mut items: Vec<u32> = (0..n as u32).collect();
            let mut ranges = Vec::new();
            leaves_in_place(&xyz, &mut items, 0, &mut |r| ranges.push(r));
            let got: Vec<Vec<u32>> = ranges.iter().map(|r| items[r.clone()].to_vec()).collect();
            assert_eq!(got, want, "{n} points");
            assert!(got.iter().all(|l| !l.is_empty() && l.len() <= BUCKET));
            let mut all: Vec<u32> = got.concat();
            all.sort_unstable();
            assert_eq!(all, (0..n as u32).collect::<Vec<_>>());
        }
    }
}
