//! Distance from each unreachable (class-2) patch to the accessible range (class 1).
//!
//! Definition: the geodesic distance on the WGS84 ellipsoid (Karney 2013, geographiclib-rs)
//! between cell centres, minimised over every pair (cell of the class-2 patch, class-1 cell).
//! Cells that touch, even at a corner, are one cell-centre spacing apart, never 0.
//!
//! Only boundary cells take part: a cell with at least one of its 8 neighbours of another
//! value (or off a non-wrapping grid edge). On a square lattice the nearest cell of a set to a
//! point outside it is a boundary cell of that set (a neighbour one step towards the point is
//! closer), and likewise for the patch side, so the minimum is the same; on very oblong cells
//! (lon/lat grids near the poles) this is the minimum over boundary cells by definition.
//! The class-1 boundary cells go into an R-tree (rstar) on their geocentric (ECEF) points; the
//! chord between two points is never longer than the geodesic, so after the nearest chord's
//! geodesic `s0`, every cell within chord `s0` is checked and the true minimum found.

use super::lonlat::ToLonLat;
use crate::raster_io::class;
use crate::GridSpec;
use geographiclib_rs::{Geodesic, InverseGeodesic};
use rstar::primitives::GeomWithData;
use rstar::RTree;

type Node = GeomWithData<[f64; 3], (f64, f64)>;

/// WGS84 geocentric coordinates of (lon, lat) degrees at height 0, metres.
fn ecef(lon: f64, lat: f64) -> [f64; 3] {
    let a = 6_378_137.0;
    let f = 1.0 / 298.257_223_563;
    let e2 = f * (2.0 - f);
    let (sl, cl) = lat.to_radians().sin_cos();
    let (so, co) = lon.to_radians().sin_cos();
    let n = a / (1.0 - e2 * sl * sl).sqrt();
    [n * cl * co, n * cl * so, n * (1.0 - e2) * sl]
}

/// Whether cell i (row r, col c) has an 8-neighbour whose `key` differs, or lies on an edge
/// that does not wrap.
fn is_boundary(
    key: &dyn Fn(usize) -> u32,
    grid: &GridSpec,
    wrap: bool,
    r: usize,
    c: usize,
) -> bool {
    let (w, h) = (grid.width, grid.height);
    let me = key(r * w + c);
    for dr in [-1isize, 0, 1] {
        for dc in [-1isize, 0, 1] {
            if dr == 0 && dc == 0 {
                continue;
            }
            let Some(nr) = r.checked_add_signed(dr).filter(|&x| x < h) else {
                return true;
            };
            let nc = match c.checked_add_signed(dc).filter(|&x| x < w) {
                Some(x) => x,
                None if wrap => (c + w).wrapping_add_signed(dc) % w,
                None => return true,
            };
            if key(nr * w + nc) != me {
                return true;
            }
        }
    }
    false
}

/// For each patch id 1..=n_ids (index id - 1): the distance in km from that patch to the
/// nearest class-1 cell when the patch is of class 2, else None; None too when the grid has no
/// class-1 cell.
pub(crate) fn unreachable_distances_km(
    classes: &[u8],
    labels: &[u32],
    grid: &GridSpec,
    wrap: bool,
    n_ids: usize,
    to_ll: &ToLonLat,
) -> Vec<Option<f64>> {
    let w = grid.width;
    let centre = |i: usize| to_ll.point(grid.col_centre_x(i % w), grid.row_centre_y(i / w));
    let is1 = |i: usize| u32::from(classes[i] == class::INSIDE);
    let mut nodes = Vec::new();
    let mut queries: Vec<(u32, (f64, f64))> = Vec::new();
    for i in 0..classes.len() {
        let (r, c) = (i / w, i % w);
        if classes[i] == class::INSIDE && is_boundary(&is1, grid, wrap, r, c) {
            if let Some((lon, lat)) = centre(i) {
                nodes.push(Node::new(ecef(lon, lat), (lon, lat)));
            }
        } else if classes[i] == class::OUTSIDE && is_boundary(&|j| labels[j], grid, wrap, r, c) {
            if let Some(p) = centre(i) {
                queries.push((labels[i], p));
            }
        }
    }
    let mut out: Vec<Option<f64>> = vec![None; n_ids];
    if nodes.is_empty() {
        return out;
    }
    let tree = RTree::bulk_load(nodes);
    let geod = Geodesic::wgs84();
    let dist = |a: (f64, f64), b: (f64, f64)| -> f64 { geod.inverse(a.1, a.0, b.1, b.0) };
    for (id, p) in queries {
        let q = ecef(p.0, p.1);
        let nn = tree.nearest_neighbor(&q).expect("tree is not empty");
        let mut best = dist(p, nn.data);
        for cand in tree.locate_within_distance(q, best * best * (1.0 + 1e-12)) {
            best = best.min(dist(p, cand.data));
        }
        let slot = &mut out[id as usize - 1];
        let km = best / 1000.0;
        *slot = Some(slot.map_or(km, |s: f64| s.min(km)));
    }
    out
}
